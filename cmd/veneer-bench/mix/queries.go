package mix

import (
	"fmt"
	"strings"
	"time"

	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// Short names of the column kinds, for the twins' Kinds.
const (
	str  = source.TypeString
	num  = source.TypeInteger
	dec  = source.TypeDecimal
	dbl  = source.TypeFloat
	day  = source.TypeDate
	ts   = source.TypeTimestamp
	blob = source.TypeBinary
)

// Queries returns the mix for the resources p, with the twins written for
// dialect d. Every value in a twin travels as a bind parameter.
func Queries(p Params, d source.Dialect) []Query {
	turbine := Resource("turbine/", p.Turbine)
	site := Resource("site/", p.Site)
	workOrder := Resource("work-order/", p.WorkOrder)
	technician := Resource("technician/", fmt.Sprint(p.Technician))
	weekFrom, weekTo := date(2024, 3, 4), date(2024, 3, 11)

	var values, marks []string
	var serials []any
	for _, s := range p.Turbines {
		values = append(values, Resource("turbine/", s).String())
		marks = append(marks, "?")
		serials = append(serials, s)
	}

	queries := []Query{
		{
			Name: "01-point", Kind: "point lookup by IRI", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?status ?priority ?category ?openedAt WHERE {
  %s wf:status ?status ; wf:priority ?priority ; wf:category ?category ; wf:openedAt ?openedAt .
}`, workOrder),
			Twin: Twin{
				SQL:   "SELECT status, priority, category, opened_at FROM work_order WHERE order_number = ?",
				Args:  []any{p.WorkOrder},
				Kinds: source.Kinds{str, str, str, ts},
				Vars:  []string{"status", "priority", "category", "openedAt"},
				Terms: []TermFunc{natural(0), natural(1), natural(2), natural(3)},
			},
		},
		{
			Name: "02-star", Kind: "star over one entity", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?t ?model ?power ?height ?status ?site WHERE {
  ?t wf:serialNumber %q ; wf:model ?model ; wf:ratedPowerKW ?power ; wf:hubHeightM ?height ;
     wf:status ?status ; wf:locatedAt ?site .
}`, p.Turbine),
			Twin: Twin{
				SQL: `SELECT t.serial, t.model, t.rated_power_kw, t.hub_height_m, t.status, s.code
FROM turbine t JOIN site s ON s.site_id = t.site_id WHERE t.serial = ?`,
				Args:  []any{p.Turbine},
				Kinds: source.Kinds{str, str, num, dec, str, str},
				Vars:  []string{"t", "model", "power", "height", "status", "site"},
				Terms: []TermFunc{resource("turbine/", 0), natural(1), natural(2), natural(3), natural(4), resource("site/", 5)},
			},
		},
		{
			Name: "03-chain2", Kind: "chain across two foreign keys", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?wo ?number ?priority ?turbine WHERE {
  ?wo wf:onTurbine ?turbine ; wf:orderNumber ?number ; wf:priority ?priority ; wf:status "open" .
  ?turbine wf:locatedAt %s .
}`, site),
			Twin: Twin{
				SQL: `SELECT w.order_number, w.priority, t.serial
FROM work_order w JOIN turbine t ON t.turbine_id = w.turbine_id JOIN site s ON s.site_id = t.site_id
WHERE s.code = ? AND w.status = ?`,
				Args:  []any{p.Site, "open"},
				Kinds: source.Kinds{str, str, str},
				Vars:  []string{"wo", "number", "priority", "turbine"},
				Terms: []TermFunc{resource("work-order/", 0), natural(0), natural(1), resource("turbine/", 2)},
			},
		},
		{
			Name: "04-chain3", Kind: "chain across three foreign keys", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?usage ?partNumber ?quantity WHERE {
  ?usage wf:usedIn ?wo ; wf:part ?part ; wf:quantity ?quantity .
  ?part wf:partNumber ?partNumber .
  ?wo wf:onTurbine ?turbine .
  ?turbine wf:locatedAt %s .
}`, site),
			Twin: Twin{
				SQL: `SELECT u.work_order_id, u.part_id, p.part_number, u.quantity
FROM part_usage u JOIN part p ON p.part_id = u.part_id
JOIN work_order w ON w.work_order_id = u.work_order_id
JOIN turbine t ON t.turbine_id = w.turbine_id JOIN site s ON s.site_id = t.site_id
WHERE s.code = ?`,
				Args:  []any{p.Site},
				Kinds: source.Kinds{num, num, str, num},
				Vars:  []string{"usage", "partNumber", "quantity"},
				Terms: []TermFunc{resource("part-usage/", 0, 1), natural(2), natural(3)},
			},
		},
		{
			Name: "05-optional", Kind: "OPTIONAL attributes", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?wo ?opened ?closed ?techName WHERE {
  ?wo wf:onTurbine %s ; wf:openedAt ?opened .
  OPTIONAL { ?wo wf:closedAt ?closed }
  OPTIONAL { ?wo wf:assignedTo ?tech . ?tech rdfs:label ?techName }
}`, turbine),
			Twin: Twin{
				SQL: `SELECT w.order_number, w.opened_at, w.closed_at, h.full_name
FROM work_order w JOIN turbine t ON t.turbine_id = w.turbine_id
LEFT JOIN technician h ON h.technician_id = w.technician_id
WHERE t.serial = ?`,
				Args:  []any{p.Turbine},
				Kinds: source.Kinds{str, ts, ts, str},
				Vars:  []string{"wo", "opened", "closed", "techName"},
				Terms: []TermFunc{resource("work-order/", 0), natural(1), natural(2), natural(3)},
			},
		},
		{
			Name: "06-union", Kind: "UNION of two entity kinds", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?event ?day WHERE {
  { ?event a wf:WorkOrder ; wf:onTurbine %[1]s ; wf:openedAt ?day }
  UNION
  { ?event a wf:Inspection ; wf:onTurbine %[1]s ; wf:inspectedOn ?day }
}`, turbine),
			Twin: Twin{
				SQL: `SELECT w.order_number, w.opened_at, NULL, NULL
FROM work_order w JOIN turbine t ON t.turbine_id = w.turbine_id WHERE t.serial = ?
UNION ALL
SELECT NULL, NULL, i.inspection_id, i.inspected_on
FROM inspection i JOIN turbine t ON t.turbine_id = i.turbine_id WHERE t.serial = ?`,
				Args:  []any{p.Turbine, p.Turbine},
				Kinds: source.Kinds{str, ts, num, day},
				Vars:  []string{"event", "day"},
				Terms: []TermFunc{either(resource("work-order/", 0), resource("inspection/", 2)), either(natural(1), natural(3))},
			},
		},
		{
			Name: "07-date-range", Kind: "range FILTER on dates", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?wo ?opened ?priority WHERE {
  ?wo wf:openedAt ?opened ; wf:priority ?priority .
  FILTER (?opened >= "%s"^^xsd:dateTime && ?opened < "%s"^^xsd:dateTime)
}`, weekFrom.Format("2006-01-02T15:04:05"), weekTo.Format("2006-01-02T15:04:05")),
			Twin: Twin{
				SQL:   "SELECT order_number, opened_at, priority FROM work_order WHERE opened_at >= ? AND opened_at < ?",
				Args:  []any{timestamp(d, weekFrom), timestamp(d, weekTo)},
				Kinds: source.Kinds{str, ts, str},
				Vars:  []string{"wo", "opened", "priority"},
				Terms: []TermFunc{resource("work-order/", 0), natural(1), natural(2)},
			},
		},
		{
			Name: "08-number-range", Kind: "range FILTER on numbers", Form: Select,
			SPARQL: `SELECT ?i ?vibration ?blade WHERE {
  ?i wf:vibration ?vibration ; wf:bladeCondition ?blade .
  FILTER (?vibration >= 6.5 && ?blade <= 2)
}`,
			Twin: Twin{
				SQL:   "SELECT inspection_id, vibration_mm_s, blade_condition FROM inspection WHERE vibration_mm_s >= ? AND blade_condition <= ?",
				Args:  []any{6.5, int64(2)},
				Kinds: source.Kinds{num, dbl, num},
				Vars:  []string{"i", "vibration", "blade"},
				Terms: []TermFunc{resource("inspection/", 0), natural(1), natural(2)},
			},
		},
		{
			Name: "09-contains", Kind: "string CONTAINS", Form: Select,
			SPARQL: `SELECT ?i ?note WHERE {
  ?i rdfs:comment ?note .
  FILTER (CONTAINS(?note, "lightning receptor"))
}`,
			Twin: Twin{
				// A substring test, case-sensitive like CONTAINS: SQLite's LIKE
				// ignores ASCII case, so it will not do.
				SQL:   "SELECT inspection_id, notes FROM inspection WHERE " + position(d, "notes") + " > 0",
				Args:  []any{"lightning receptor"},
				Kinds: source.Kinds{num, str},
				Vars:  []string{"i", "note"},
				Terms: []TermFunc{resource("inspection/", 0), natural(1)},
			},
		},
		{
			Name: "10-group", Kind: "GROUP BY with COUNT/SUM/AVG", Form: Select,
			SPARQL: `SELECT ?model (COUNT(?i) AS ?inspections) (SUM(?blade) AS ?bladeSum) (AVG(?blade) AS ?bladeAvg) WHERE {
  ?i wf:onTurbine ?t ; wf:bladeCondition ?blade .
  ?t wf:model ?model .
}
GROUP BY ?model`,
			Twin: Twin{
				// The average in floating point: MySQL's AVG of integers keeps four
				// decimals only, and SPARQL's average of integers is a decimal
				// quotient; the answers are compared to 1e-9.
				SQL: `SELECT t.model, COUNT(*), SUM(i.blade_condition), AVG(i.blade_condition * 1.0e0)
FROM inspection i JOIN turbine t ON t.turbine_id = i.turbine_id GROUP BY t.model`,
				Kinds: source.Kinds{str, num, num, dbl},
				Vars:  []string{"model", "inspections", "bladeSum", "bladeAvg"},
				Terms: []TermFunc{natural(0), natural(1), natural(2), as(3, dec)},
			},
		},
		{
			Name: "11-top-k", Kind: "top-k ORDER BY + LIMIT", Form: Select, Ordered: true,
			SPARQL: `SELECT ?wo ?number ?opened ?serial WHERE {
  ?wo wf:priority "critical" ; wf:openedAt ?opened ; wf:orderNumber ?number ; wf:onTurbine ?t .
  ?t wf:serialNumber ?serial .
}
ORDER BY DESC(?opened) DESC(?number)
LIMIT 10`,
			Twin: Twin{
				SQL: `SELECT w.order_number, w.opened_at, t.serial
FROM work_order w JOIN turbine t ON t.turbine_id = w.turbine_id
WHERE w.priority = ? ORDER BY w.opened_at DESC, w.order_number DESC LIMIT ?`,
				Args:  []any{"critical", int64(10)},
				Kinds: source.Kinds{str, ts, str},
				Vars:  []string{"wo", "number", "opened", "serial"},
				Terms: []TermFunc{resource("work-order/", 0), natural(0), natural(1), natural(2)},
			},
		},
		{
			Name: "12-distinct", Kind: "DISTINCT", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT DISTINCT ?tech ?name WHERE {
  ?wo wf:onTurbine ?t ; wf:assignedTo ?tech .
  ?t wf:locatedAt %s .
  ?tech rdfs:label ?name .
}`, site),
			Twin: Twin{
				SQL: `SELECT DISTINCT h.technician_id, h.full_name
FROM work_order w JOIN turbine t ON t.turbine_id = w.turbine_id JOIN site s ON s.site_id = t.site_id
JOIN technician h ON h.technician_id = w.technician_id
WHERE s.code = ?`,
				Args:  []any{p.Site},
				Kinds: source.Kinds{num, str},
				Vars:  []string{"tech", "name"},
				Terms: []TermFunc{resource("technician/", 0), natural(1)},
			},
		},
		{
			Name: "13-values", Kind: "VALUES-bound join (federation)", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?t ?wo ?priority WHERE {
  VALUES ?t { %s }
  ?wo wf:onTurbine ?t ; wf:priority ?priority ; wf:status "open" .
}`, strings.Join(values, " ")),
			Twin: Twin{
				SQL: `SELECT t.serial, w.order_number, w.priority
FROM work_order w JOIN turbine t ON t.turbine_id = w.turbine_id
WHERE t.serial IN (` + strings.Join(marks, ", ") + `) AND w.status = ?`,
				Args:  append(serials, "open"),
				Kinds: source.Kinds{str, str, str},
				Vars:  []string{"t", "wo", "priority"},
				Terms: []TermFunc{resource("turbine/", 0), resource("work-order/", 1), natural(2)},
			},
		},
		{
			Name: "14-ask", Kind: "ASK probe", Form: Ask,
			SPARQL: fmt.Sprintf(`ASK { ?wo wf:onTurbine %s ; wf:priority "critical" }`, turbine),
			Twin: Twin{
				SQL: `SELECT 1 FROM work_order w JOIN turbine t ON t.turbine_id = w.turbine_id
WHERE t.serial = ? AND w.priority = ? LIMIT 1`,
				Args:  []any{p.Turbine, "critical"},
				Kinds: source.Kinds{num},
			},
		},
		construct(p, turbine),
		{
			Name: "16-path-seq", Kind: "property path (inverse sequence)", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?usage ?quantity WHERE {
  %s ^wf:locatedAt/^wf:onTurbine/^wf:usedIn ?usage .
  ?usage wf:quantity ?quantity .
}`, site),
			Twin: Twin{
				SQL: `SELECT u.work_order_id, u.part_id, u.quantity
FROM part_usage u JOIN work_order w ON w.work_order_id = u.work_order_id
JOIN turbine t ON t.turbine_id = w.turbine_id JOIN site s ON s.site_id = t.site_id
WHERE s.code = ?`,
				Args:  []any{p.Site},
				Kinds: source.Kinds{num, num, num},
				Vars:  []string{"usage", "quantity"},
				Terms: []TermFunc{resource("part-usage/", 0, 1), natural(2)},
			},
		},
		{
			Name: "17-path-alt", Kind: "property path (alternative)", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?event WHERE { ?event wf:assignedTo|wf:inspectedBy %s }`, technician),
			Twin: Twin{
				SQL: `SELECT order_number, NULL FROM work_order WHERE technician_id = ?
UNION ALL
SELECT NULL, inspection_id FROM inspection WHERE technician_id = ?`,
				Args:  []any{p.Technician, p.Technician},
				Kinds: source.Kinds{str, num},
				Vars:  []string{"event"},
				Terms: []TermFunc{either(resource("work-order/", 0), resource("inspection/", 1))},
			},
		},
	}
	for i := range queries {
		queries[i].SPARQL = prologue + queries[i].SPARQL
	}
	return append(queries, federationProbes(p)...)
}

// federationProbes are the requests a federating engine sends per triple
// pattern before and during a join (issue 10 describes them): a COUNT probe,
// an ASK probe, and a sub-query whose join values arrive in a VALUES block of
// 16 rows that also binds a variable the pattern does not use, strings typed
// as xsd:string. They are written as the engine writes them: full IRIs, no
// prologue.
func federationProbes(p Params) []Query {
	const xsdString = "<http://www.w3.org/2001/XMLSchema#string>"
	var rows, marks []string
	var args []any
	for _, s := range p.Turbines[:min(16, len(p.Turbines))] {
		rows = append(rows, fmt.Sprintf("(%s %q^^%s)", Resource("turbine/", s), s, xsdString))
		marks = append(marks, "?")
		args = append(args, s)
	}
	return []Query{
		{
			Name: "18-count-probe", Kind: "COUNT probe of a triple pattern (federation)", Form: Select,
			// wf:onTurbine comes from two triples maps, work orders and
			// inspections, whose subjects never coincide: the count is a sum.
			SPARQL: "SELECT (COUNT(*) AS ?count) WHERE { ?s <" + vocab + "onTurbine> ?o . }",
			Twin: Twin{
				SQL:   "SELECT (SELECT COUNT(turbine_id) FROM work_order) + (SELECT COUNT(turbine_id) FROM inspection)",
				Kinds: source.Kinds{num},
				Vars:  []string{"count"},
				Terms: []TermFunc{natural(0)},
			},
		},
		{
			Name: "19-ask-probe", Kind: "ASK probe of a triple pattern (federation)", Form: Ask,
			SPARQL: "ASK WHERE { ?x <" + vocab + "assignedTo> ?y . }",
			Twin: Twin{
				SQL:   "SELECT 1 FROM work_order WHERE technician_id IS NOT NULL LIMIT 1",
				Kinds: source.Kinds{num},
			},
		},
		{
			Name: "20-values-16", Kind: "16-row VALUES sub-query (federation)", Form: Select,
			SPARQL: fmt.Sprintf(`SELECT ?t ?serial ?kw WHERE { VALUES (?t ?serial) {
  %s
} { ?t <%sratedPowerKW> ?kw . FILTER(?kw >= 3000) } }`, strings.Join(rows, "\n  "), vocab),
			Twin: Twin{
				SQL:   "SELECT serial, rated_power_kw FROM turbine WHERE serial IN (" + strings.Join(marks, ", ") + ") AND rated_power_kw >= ?",
				Args:  append(args, int64(3000)),
				Kinds: source.Kinds{str, num},
				Vars:  []string{"t", "serial", "kw"},
				Terms: []TermFunc{resource("turbine/", 0), natural(0), natural(1)},
			},
		},
	}
}

// construct is the CONSTRUCT of one turbine's neighbourhood: its own triples and
// the work orders and inspections that point at it.
func construct(p Params, turbine rdf.IRI) Query {
	wf := func(local string) Slot { return Slot{Term: rdf.IRI(vocab + local)} }
	v := func(i int) Slot { return Slot{Var: i} }
	const (
		tt = iota
		serial
		model
		power
		height
		commissioned
		status
		digest
		site
		order
		inspection
	)
	of := func(pred Slot, obj int) Triple { return Triple{v(tt), pred, v(obj)} }
	return Query{
		Name: "15-construct", Kind: "CONSTRUCT of a neighbourhood", Form: Construct,
		SPARQL: fmt.Sprintf(`CONSTRUCT { %[1]s ?p ?o . ?x wf:onTurbine %[1]s }
WHERE { { %[1]s ?p ?o } UNION { ?x wf:onTurbine %[1]s } }`, turbine),
		Twin: Twin{
			// PostgreSQL types a UNION's columns branch by branch, and two NULLs
			// make text: the cast keeps the last column an integer.
			SQL: `SELECT t.serial, t.model, t.rated_power_kw, t.hub_height_m, t.commissioned_on, t.status,
  t.firmware_digest, s.code, NULL, CAST(NULL AS INTEGER)
FROM turbine t JOIN site s ON s.site_id = t.site_id WHERE t.serial = ?
UNION ALL
SELECT NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, w.order_number, NULL
FROM work_order w JOIN turbine t ON t.turbine_id = w.turbine_id WHERE t.serial = ?
UNION ALL
SELECT NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, NULL, i.inspection_id
FROM inspection i JOIN turbine t ON t.turbine_id = i.turbine_id WHERE t.serial = ?`,
			Args:  []any{p.Turbine, p.Turbine, p.Turbine},
			Kinds: source.Kinds{str, str, num, dec, day, str, blob, str, str, num},
			Vars: []string{"tt", "serial", "model", "power", "height", "commissioned", "status",
				"digest", "site", "order", "inspection"},
			Terms: []TermFunc{resource("turbine/", 0), natural(0), natural(1), natural(2), natural(3),
				natural(4), natural(5), natural(6), resource("site/", 7), resource("work-order/", 8),
				resource("inspection/", 9)},
			Template: []Triple{
				{v(tt), Slot{Term: rdf.IRI(rdf.RDFNS + "type")}, wf("Turbine")},
				of(Slot{Term: rdf.IRI("http://www.w3.org/2000/01/rdf-schema#label")}, serial),
				of(wf("serialNumber"), serial),
				of(wf("model"), model),
				of(wf("ratedPowerKW"), power),
				of(wf("hubHeightM"), height),
				of(wf("commissionedOn"), commissioned),
				of(wf("status"), status),
				of(wf("firmwareDigest"), digest),
				of(wf("locatedAt"), site),
				{v(order), wf("onTurbine"), Slot{Term: turbine}},
				{v(inspection), wf("onTurbine"), Slot{Term: turbine}},
			},
		},
	}
}

func date(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

// timestamp binds a timestamp for a dialect: pgx encodes time.Time for a
// TIMESTAMP parameter; SQLite stores timestamps as ISO text and compares them
// as text, and MySQL reads the same text into a DATETIME.
func timestamp(d source.Dialect, t time.Time) any {
	if d == source.Postgres {
		return t
	}
	return t.Format("2006-01-02 15:04:05")
}

// position is the dialect's case-sensitive substring search of a bind
// parameter in column col, 0 when absent.
func position(d source.Dialect, col string) string {
	if d == source.Postgres {
		return "strpos(" + col + ", ?)"
	}
	return "instr(" + col + ", ?)"
}
