// The query page: sends the editor's query to the endpoint by POST and shows
// the answer. Everything here runs in the browser; nothing is fetched from
// elsewhere.
"use strict";

(function () {
  const $ = (id) => document.getElementById(id);
  const endpoint = document.body.dataset.endpoint;
  const explainURL = document.body.dataset.explain;
  const query = $("query"), format = $("format"), output = $("output"), status = $("status");
  const examples = JSON.parse($("examples").textContent || "[]");

  for (const [i, ex] of examples.entries()) {
    const opt = document.createElement("option");
    opt.value = String(i);
    opt.textContent = ex.name;
    $("example").append(opt);
  }
  $("example").addEventListener("change", (e) => { query.value = examples[+e.target.value].query; });
  if (examples.length > 0) query.value = examples[0].query;

  const token = $("token");
  token.value = sessionStorage.getItem("veneer.token") || "";
  token.addEventListener("change", () => sessionStorage.setItem("veneer.token", token.value));

  function headers(accept) {
    const h = { "Content-Type": "application/x-www-form-urlencoded", "Accept": accept };
    if (token.value) h["Authorization"] = "Bearer " + token.value;
    return h;
  }

  function body() {
    const p = new URLSearchParams({ query: query.value });
    const t = $("timeout").value;
    if (t) p.set("timeout", t);
    return p;
  }

  function say(text, kind) {
    status.textContent = text;
    status.className = "status" + (kind ? " " + kind : "");
  }

  function pre(text) {
    const el = document.createElement("pre");
    el.textContent = text;
    output.replaceChildren(el);
  }

  // A term of the SPARQL JSON results format as a table cell.
  function cell(term) {
    const td = document.createElement("td");
    if (!term) { td.className = "unbound"; return td; }
    const v = document.createElement("span");
    v.textContent = term.type === "bnode" ? "_:" + term.value : term.value;
    v.className = term.type;
    td.append(v);
    const note = term["xml:lang"] ? "@" + term["xml:lang"] : term.datatype ? shortType(term.datatype) : "";
    if (note) {
      const n = document.createElement("small");
      n.textContent = note;
      td.append(n);
    }
    return td;
  }

  function shortType(dt) {
    const xsd = "http://www.w3.org/2001/XMLSchema#";
    return dt.startsWith(xsd) ? "xsd:" + dt.slice(xsd.length) : "<" + dt + ">";
  }

  function table(doc) {
    if ("boolean" in doc) {
      const p = document.createElement("p");
      p.className = "boolean";
      p.textContent = doc.boolean ? "yes (true)" : "no (false)";
      output.replaceChildren(p);
      return "1 boolean";
    }
    const vars = doc.head.vars, rows = doc.results.bindings;
    const t = document.createElement("table");
    const head = t.createTHead().insertRow();
    for (const v of vars) {
      const th = document.createElement("th");
      th.textContent = "?" + v;
      head.append(th);
    }
    const tb = t.createTBody();
    for (const b of rows) {
      const tr = tb.insertRow();
      for (const v of vars) tr.append(cell(b[v]));
    }
    output.replaceChildren(t);
    return rows.length + (rows.length === 1 ? " solution" : " solutions");
  }

  async function send(url, accept, render) {
    say("Running…", "busy");
    output.replaceChildren();
    const started = performance.now();
    let resp;
    try {
      resp = await fetch(url, { method: "POST", headers: headers(accept), body: body() });
    } catch (e) {
      say("The request failed: " + e.message, "bad");
      return;
    }
    const id = resp.headers.get("X-Request-Id") || "";
    let text;
    try {
      text = await resp.text();
    } catch (e) {
      say("The answer was cut off (" + e.message + "): the server stopped it part way. Request " + id, "bad");
      return;
    }
    const ms = Math.round(performance.now() - started);
    if (!resp.ok) {
      say(resp.status + " " + resp.statusText + " after " + ms + " ms · request " + id, "bad");
      pre(text);
      return;
    }
    const what = render(text, resp.headers.get("Content-Type") || "");
    say(what + " in " + ms + " ms · request " + id, "good");
  }

  function run() {
    const f = format.value;
    if (f === "table") {
      send(endpoint, "application/sparql-results+json, text/turtle;q=0.9", (text, ctype) => {
        if (ctype.startsWith("application/sparql-results+json")) return table(JSON.parse(text));
        pre(text);
        return "graph";
      });
    } else {
      send(endpoint, f, (text) => { pre(text); return text.length + " bytes"; });
    }
  }

  function explain() {
    send(explainURL, "application/json", (text) => {
      const e = JSON.parse(text);
      pre("Algebra\n\n" + e.algebra + "\n\nPlan\n\n" + e.plan);
      return "explained";
    });
  }

  $("run").addEventListener("click", run);
  $("explain").addEventListener("click", explain);
  query.addEventListener("keydown", (e) => {
    if (e.key === "Enter" && (e.ctrlKey || e.metaKey)) { e.preventDefault(); run(); }
  });
})();
