// answer.js: the reference engine of veneer's differential tests.
//
//   node answer.js GRAPH.nt
//
// It loads the N-Triples file GRAPH.nt into an in-memory store, prints one line
// {"ready": N} (N: the number of triples), then answers queries: each line of
// standard input is a JSON object {"query": TEXT, "graph": BOOL}, and each answer
// is one line on standard output, {"answer": TEXT} or {"error": MESSAGE}, in the
// order asked. SELECT and ASK answers are SPARQL 1.1 Query Results JSON; a query
// sent with "graph": true (CONSTRUCT, DESCRIBE) is answered in N-Triples.
'use strict';

const fs = require('fs');
const readline = require('readline');
const oxigraph = require('oxigraph');

function main() {
  const path = process.argv[2];
  if (!path) {
    process.stderr.write('usage: node answer.js GRAPH.nt\n');
    process.exit(2);
  }
  const store = new oxigraph.Store();
  store.load(fs.readFileSync(path, 'utf8'), { format: 'application/n-triples' });
  process.stdout.write(JSON.stringify({ ready: store.size }) + '\n');

  const lines = readline.createInterface({ input: process.stdin, crlfDelay: Infinity });
  lines.on('line', (line) => {
    if (line.trim() === '') {
      return;
    }
    process.stdout.write(JSON.stringify(answer(store, line)) + '\n');
  });
}

// answer runs one request line against the store.
function answer(store, line) {
  let request;
  try {
    request = JSON.parse(line);
  } catch (e) {
    return { error: 'the request is not JSON: ' + e.message };
  }
  if (typeof request.query !== 'string') {
    return { error: 'the request has no "query" string' };
  }
  const format = request.graph ? 'application/n-triples' : 'application/sparql-results+json';
  try {
    return { answer: store.query(request.query, { results_format: format }) };
  } catch (e) {
    return { error: String(e && e.message ? e.message : e) };
  }
}

main();
