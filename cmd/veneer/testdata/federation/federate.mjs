// Runs a federated SPARQL query with the query engine from the npm registry
// and prints its solutions as JSON, for TestFederatedQuery.
//
//   node federate.mjs SOURCE QUERY
//
// SOURCE is a SPARQL endpoint the engine is given as its source; the query
// reaches other endpoints with SERVICE. A solution prints as
// {variable: [kind, value, tag]}, the form of ../clients/check.mjs.
import { QueryEngine } from '@comunica/query-sparql'

const [source, query] = process.argv.slice(2)

function term (t) {
  switch (t.termType) {
    case 'NamedNode': return ['iri', t.value]
    case 'BlankNode': return ['bnode']
    case 'Literal': return ['literal', t.value, t.language ? '@' + t.language : t.datatype.value]
  }
  throw new Error('unexpected term type ' + t.termType)
}

try {
  const engine = new QueryEngine()
  const stream = await engine.queryBindings(query, { sources: [{ type: 'sparql', value: source }] })
  const rows = []
  for (const b of await stream.toArray()) {
    const row = {}
    for (const [v, t] of b) row[v.value] = term(t)
    rows.push(row)
  }
  process.stdout.write(JSON.stringify(rows) + '\n')
} catch (e) {
  process.stderr.write(String(e && e.stack || e) + '\n')
  process.exit(1)
}
