// Reads SELECT, ASK and CONSTRUCT answers from a live veneer through two
// SPARQL clients from the npm registry and prints what each client parsed,
// as JSON, for TestRealClients to compare with veneer's own answer.
//
//   node check.mjs ENDPOINT < JOBS
//
// JOBS is a JSON list of {client, form, query}: client is
// fetch-sparql-endpoint or sparql-http-client, form select, ask or construct.
// The output is a JSON list with, for each job, {result} or {error}: a SELECT
// answer as a list of {variable: term}, ASK as a boolean, CONSTRUCT as a list
// of [subject, predicate, object]. One process runs every job, since starting
// node takes longer than the checks.
import { SparqlEndpointFetcher } from 'fetch-sparql-endpoint'
import ParsingClient from 'sparql-http-client/ParsingClient.js'

const [endpoint] = process.argv.slice(2)

// term writes an RDF/JS term as [kind, value, tag]: ["iri", IRI],
// ["bnode"] (labels are local to a document) or ["literal", lexical form,
// "@" + language tag or datatype IRI].
function term (t) {
  switch (t.termType) {
    case 'NamedNode': return ['iri', t.value]
    case 'BlankNode': return ['bnode']
    case 'Literal': return ['literal', t.value, t.language ? '@' + t.language : t.datatype.value]
  }
  throw new Error('unexpected term type ' + t.termType)
}

function row (bindings) {
  const out = {}
  for (const [k, v] of Object.entries(bindings)) out[k.replace(/^\?/, '')] = term(v)
  return out
}

function collect (stream, map) {
  return new Promise((resolve, reject) => {
    const out = []
    stream.on('data', (d) => out.push(map(d)))
    stream.on('error', reject)
    stream.on('end', () => resolve(out))
  })
}

const triple = (q) => [term(q.subject), term(q.predicate), term(q.object)]

async function viaFetcher (form, query) {
  const f = new SparqlEndpointFetcher()
  switch (form) {
    case 'select': return collect(await f.fetchBindings(endpoint, query), row)
    case 'ask': return f.fetchAsk(endpoint, query)
    case 'construct': return collect(await f.fetchTriples(endpoint, query), triple)
  }
}

async function viaHTTPClient (form, query) {
  const c = new ParsingClient({ endpointUrl: endpoint })
  switch (form) {
    case 'select': return (await c.query.select(query)).map(row)
    case 'ask': return c.query.ask(query)
    case 'construct': return [...await c.query.construct(query)].map(triple)
  }
}

let input = ''
for await (const chunk of process.stdin) input += chunk
const out = []
for (const { client, form, query } of JSON.parse(input)) {
  try {
    const result = client === 'fetch-sparql-endpoint' ? await viaFetcher(form, query) : await viaHTTPClient(form, query)
    out.push({ result })
  } catch (e) {
    out.push({ error: String(e && e.message || e).split('\n').slice(0, 3).join(' ') })
  }
}
process.stdout.write(JSON.stringify(out) + '\n')
