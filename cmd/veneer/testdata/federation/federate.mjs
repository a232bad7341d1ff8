// Runs a federated SPARQL query with the query engine from the npm registry
// and prints its solutions as JSON, for TestFederatedQuery and
// TestFederatedSources.
//
//   node federate.mjs SOURCE QUERY [SOURCE...]
//
// Each SOURCE is a SPARQL endpoint the engine is given as a source; the query
// may reach other endpoints with SERVICE. A solution prints as
// {variable: [kind, value, tag]}, the form of ../clients/check.mjs.
import { QueryEngine } from '@comunica/query-sparql'

const [first, query, ...more] = process.argv.slice(2)
const sources = [first, ...more].map(value => ({ type: 'sparql', value }))

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
  const stream = await engine.queryBindings(query, { sources })
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
