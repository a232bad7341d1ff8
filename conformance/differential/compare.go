package differential

import (
	"fmt"
	"math"
	"math/big"
	"slices"
	"strconv"
	"strings"

	"veneer/catalog/rdf"
)

// How answers are compared:
//
//   - Solutions are compared as multisets (SPARQL 1.1 §18.5: without ORDER BY
//     the order of solutions is not defined), unless the query's ORDER BY keys
//     make the order total, when they are compared as sequences.
//   - A LIMIT or OFFSET over an order that is not total picks solutions the
//     specification leaves open: such an answer must have the reference's number
//     of solutions, each of them a solution of the query without the slice.
//   - Two RDF terms are equal when they are the same term, except that numeric
//     literals (xsd:integer, xsd:decimal, xsd:double, xsd:float and the integer
//     types derived from xsd:integer) and xsd:boolean literals are compared by
//     datatype and value: "1.98E0" and "1.98" are the same xsd:double. The
//     reference engine keeps numbers by value and writes them in forms of its
//     own, so their lexical forms say nothing about veneer. Language tags are
//     compared without regard to case (RDF 1.1 Concepts §3.3).
//   - Blank nodes are equal up to a renaming that is one-to-one over the whole
//     answer (SPARQL 1.1 Query Results, and RDF 1.1 graph isomorphism for
//     CONSTRUCT).
//   - Variables the generator marks approximate (AVG, SUM of doubles, and
//     division) must have the same datatype and values within a relative
//     tolerance of 1e-9: the engines may round a mean of decimals to different
//     digits, and add doubles in different orders. This tolerance is our own
//     choice, not from a specification.
//   - Variables holding GROUP_CONCAT are compared as multisets of the parts
//     between separators, since SPARQL does not define the order of a group's
//     values (§18.5.1.7).
//   - The heads must list the same variables, in any order.

// tolerance is the relative tolerance for approximate variables.
const tolerance = 1e-9

// Compare checks the answer got against the reference's answer want to query q.
// all is the reference's answer to q.Unlimited, for Limited queries. It returns
// nil when they agree and otherwise an error describing the shortest difference
// found.
func Compare(q Query, want, got, all *Answer) error {
	switch {
	case want.Boolean != nil || got.Boolean != nil:
		if want.Boolean == nil || got.Boolean == nil {
			return fmt.Errorf("expected %s, got %s", describeKind(want), describeKind(got))
		}
		if *want.Boolean != *got.Boolean {
			return fmt.Errorf("expected %t, got %t", *want.Boolean, *got.Boolean)
		}
		return nil
	case want.Graph || got.Graph:
		if !want.Graph || !got.Graph {
			return fmt.Errorf("expected %s, got %s", describeKind(want), describeKind(got))
		}
		return compareRows(tripleRows(want.Triples), tripleRows(got.Triples), nil, "triple")
	}
	if err := sameVars(want.Vars, got.Vars); err != nil {
		return err
	}
	vars := slices.Clone(want.Vars)
	slices.Sort(vars)
	c := comparer{q: q, vars: vars}
	w, g := c.rows(want.Solutions), c.rows(got.Solutions)
	switch q.Mode {
	case Ordered:
		return c.ordered(w, g)
	case Limited:
		if len(w) != len(g) {
			return fmt.Errorf("expected %d solutions, got %d", len(w), len(g))
		}
		if all == nil {
			return fmt.Errorf("no reference answer to the query without its slice")
		}
		return c.within(c.rows(all.Solutions), g)
	}
	return compareRows(w, g, c.approx(), "solution")
}

func describeKind(a *Answer) string {
	switch {
	case a.Boolean != nil:
		return "a boolean"
	case a.Graph:
		return "triples"
	}
	return "solutions"
}

func sameVars(want, got []string) error {
	w, g := slices.Clone(want), slices.Clone(got)
	slices.Sort(w)
	slices.Sort(g)
	if !slices.Equal(w, g) {
		return fmt.Errorf("expected the variables %v, got %v", want, got)
	}
	return nil
}

// termRow is one solution (its terms in the order of comparer.vars) or one triple.
type termRow []rdf.Term

func tripleRows(ts []rdf.Triple) []termRow {
	seen := map[string]bool{}
	var rows []termRow
	for _, t := range ts {
		r := termRow{t.S, t.P, t.O}
		if k := exactKey(r, nil); !seen[k] {
			seen[k] = true
			rows = append(rows, r)
		}
	}
	return rows
}

type comparer struct {
	q    Query
	vars []string
}

func (c comparer) rows(sols []Solution) []termRow {
	rows := make([]termRow, len(sols))
	for i, s := range sols {
		r := make(termRow, len(c.vars))
		for j, v := range c.vars {
			r[j] = s[v]
			if sep, ok := c.q.Concat[v]; ok && r[j] != nil {
				r[j] = sortedParts(r[j], sep)
			}
		}
		rows[i] = r
	}
	return rows
}

// sortedParts puts the parts of a GROUP_CONCAT value in order.
func sortedParts(t rdf.Term, sep string) rdf.Term {
	l, ok := t.(rdf.Literal)
	if !ok || sep == "" {
		return t
	}
	parts := strings.Split(l.Lexical, sep)
	slices.Sort(parts)
	l.Lexical = strings.Join(parts, sep)
	return l
}

// approx reports for each column whether it is compared within the tolerance.
func (c comparer) approx() []bool {
	a := make([]bool, len(c.vars))
	for i, v := range c.vars {
		a[i] = slices.Contains(c.q.Approx, v)
	}
	return a
}

// ordered compares two sequences of solutions position by position.
func (c comparer) ordered(want, got []termRow) error {
	approx := c.approx()
	for i := range min(len(want), len(got)) {
		if !rowsEqual(want[i], got[i], approx) {
			return fmt.Errorf("solution %d differs (ordered comparison):\n  expected %s\n  got      %s",
				i+1, c.show(want[i]), c.show(got[i]))
		}
	}
	if len(want) != len(got) {
		return fmt.Errorf("expected %d solutions, got %d (the first %d agree, in order)", len(want), len(got), min(len(want), len(got)))
	}
	return nil
}

// within checks that every solution of got is one of all, as a multiset.
func (c comparer) within(all, got []termRow) error {
	count := map[string]int{}
	for _, r := range all {
		count[exactKey(r, nil)]++
	}
	for _, r := range got {
		k := exactKey(r, nil)
		if count[k] == 0 {
			return fmt.Errorf("the solution %s is not a solution of the query without its LIMIT/OFFSET (%d solutions)",
				c.show(r), len(all))
		}
		count[k]--
	}
	return nil
}

func (c comparer) show(r termRow) string {
	parts := make([]string, len(r))
	for i, t := range r {
		parts[i] = "?" + c.vars[i] + "=" + showTerm(t)
	}
	return strings.Join(parts, " ")
}

func showTerm(t rdf.Term) string {
	if t == nil {
		return "(unbound)"
	}
	return t.String()
}

// compareRows compares two multisets of rows; approx marks the columns compared
// within the tolerance (nil: none).
func compareRows(want, got []termRow, approx []bool, what string) error {
	if hasBlank(want) || hasBlank(got) {
		if len(want) != len(got) {
			return fmt.Errorf("expected %d %ss, got %d", len(want), what, len(got))
		}
		ok, err := matchBlank(want, got)
		if err != nil {
			return err
		}
		if !ok {
			return fmt.Errorf("no renaming of blank nodes makes the %ss the same:\n  expected %s\n  got      %s",
				what, showRows(want, 5), showRows(got, 5))
		}
		return nil
	}
	group := func(rows []termRow) map[string][]termRow {
		m := map[string][]termRow{}
		for _, r := range rows {
			k := exactKey(r, approx)
			m[k] = append(m[k], r)
		}
		return m
	}
	wg, gg := group(want), group(got)
	var missing, extra []termRow
	for k, ws := range wg {
		gs := gg[k]
		if approx != nil && len(ws) == len(gs) {
			if m, e := approxDiff(ws, gs, approx); len(m) > 0 {
				missing, extra = append(missing, m...), append(extra, e...)
			}
			continue
		}
		if len(ws) > len(gs) {
			missing = append(missing, ws[len(gs):]...)
		}
		if len(gs) > len(ws) {
			extra = append(extra, gs[len(ws):]...)
		}
	}
	for k, gs := range gg {
		if _, ok := wg[k]; !ok {
			extra = append(extra, gs...)
		}
	}
	if len(missing) == 0 && len(extra) == 0 {
		return nil
	}
	sortRows(missing)
	sortRows(extra)
	var b strings.Builder
	fmt.Fprintf(&b, "expected %d %ss, got %d", len(want), what, len(got))
	if len(missing) > 0 {
		fmt.Fprintf(&b, "\n  %d missing: %s", len(missing), showRows(missing, 5))
	}
	if len(extra) > 0 {
		fmt.Fprintf(&b, "\n  %d unexpected: %s", len(extra), showRows(extra, 5))
	}
	return fmt.Errorf("%s", b.String())
}

// approxDiff pairs rows that agree on every exact column, in the order of their
// approximate values, and returns the pairs that are not within the tolerance.
func approxDiff(want, got []termRow, approx []bool) (missing, extra []termRow) {
	byValue := func(rows []termRow) {
		slices.SortFunc(rows, func(a, b termRow) int {
			for i := range a {
				if approx[i] {
					if c := compareNumbers(a[i], b[i]); c != 0 {
						return c
					}
				}
			}
			return 0
		})
	}
	want, got = slices.Clone(want), slices.Clone(got)
	byValue(want)
	byValue(got)
	for i := range want {
		if !rowsEqual(want[i], got[i], approx) {
			missing, extra = append(missing, want[i]), append(extra, got[i])
		}
	}
	return missing, extra
}

func compareNumbers(a, b rdf.Term) int {
	x, okx := numberOf(a)
	y, oky := numberOf(b)
	switch {
	case !okx || !oky:
		return strings.Compare(showTerm(a), showTerm(b))
	case x < y:
		return -1
	case x > y:
		return 1
	}
	return 0
}

func rowsEqual(a, b termRow, approx []bool) bool {
	for i := range a {
		if approx != nil && approx[i] {
			if !approxEqual(a[i], b[i]) {
				return false
			}
			continue
		}
		if termKey(a[i]) != termKey(b[i]) {
			return false
		}
	}
	return true
}

// approxEqual compares two numeric literals of one datatype within the tolerance.
func approxEqual(a, b rdf.Term) bool {
	if a == nil || b == nil {
		return a == nil && b == nil
	}
	la, oka := a.(rdf.Literal)
	lb, okb := b.(rdf.Literal)
	if !oka || !okb || la.Datatype != lb.Datatype {
		return termKey(a) == termKey(b)
	}
	x, okx := numberOf(a)
	y, oky := numberOf(b)
	if !okx || !oky {
		return termKey(a) == termKey(b)
	}
	return math.Abs(x-y) <= tolerance*math.Max(1, math.Max(math.Abs(x), math.Abs(y)))
}

func numberOf(t rdf.Term) (float64, bool) {
	l, ok := t.(rdf.Literal)
	if !ok || !isNumeric(l.Datatype) {
		return 0, false
	}
	f, err := strconv.ParseFloat(strings.TrimSpace(l.Lexical), 64)
	return f, err == nil
}

// exactKey is the key of a row for grouping; approximate columns contribute only
// their datatype.
func exactKey(r termRow, approx []bool) string {
	var b strings.Builder
	for i, t := range r {
		if i > 0 {
			b.WriteByte(' ')
		}
		if approx != nil && approx[i] {
			if l, ok := t.(rdf.Literal); ok {
				b.WriteString("~^^" + string(l.Datatype))
				continue
			}
		}
		b.WriteString(termKey(t))
	}
	return b.String()
}

// integerTypes are xsd:integer and the datatypes derived from it (XML Schema 1.1
// Part 2 §3.4).
var integerTypes = map[rdf.IRI]bool{}

func init() {
	for _, n := range []string{"integer", "nonPositiveInteger", "negativeInteger", "long", "int", "short", "byte",
		"nonNegativeInteger", "unsignedLong", "unsignedInt", "unsignedShort", "unsignedByte", "positiveInteger"} {
		integerTypes[rdf.IRI(rdf.XSDNS+n)] = true
	}
}

func isNumeric(dt rdf.IRI) bool {
	return integerTypes[dt] || dt == rdf.XSDDecimal || dt == rdf.XSDDouble || dt == rdf.XSDFloat
}

// termKey is a string that two terms share exactly when they are equal by the
// rules above (blank nodes by label).
func termKey(t rdf.Term) string {
	switch x := t.(type) {
	case nil:
		return "-"
	case rdf.IRI:
		return x.String()
	case rdf.BlankNode:
		return x.String()
	case rdf.Literal:
		if x.Lang != "" {
			return rdf.NewLangString(x.Lexical, strings.ToLower(x.Lang)).String()
		}
		if v, ok := valueForm(x); ok {
			return "value(" + v + ")^^" + string(x.Datatype)
		}
		return x.String()
	}
	return t.String()
}

// valueForm is one text for all the lexical forms of a numeric or boolean value.
func valueForm(l rdf.Literal) (string, bool) {
	s := strings.TrimSpace(l.Lexical)
	switch {
	case integerTypes[l.Datatype], l.Datatype == rdf.XSDDecimal:
		r, ok := new(big.Rat).SetString(s)
		if !ok || strings.ContainsAny(s, "eE/") {
			return "", false
		}
		return r.RatString(), true
	case l.Datatype == rdf.XSDDouble, l.Datatype == rdf.XSDFloat:
		f, err := strconv.ParseFloat(s, 64)
		if err != nil {
			return "", false
		}
		if l.Datatype == rdf.XSDFloat {
			f = float64(float32(f))
		}
		return strconv.FormatFloat(f, 'g', -1, 64), true
	case l.Datatype == rdf.XSDBoolean:
		switch s {
		case "true", "1":
			return "true", true
		case "false", "0":
			return "false", true
		}
	}
	return "", false
}

func sortRows(rows []termRow) {
	slices.SortFunc(rows, func(a, b termRow) int { return strings.Compare(exactKey(a, nil), exactKey(b, nil)) })
}

func showRows(rows []termRow, n int) string {
	var parts []string
	for i, r := range rows {
		if i == n {
			parts = append(parts, fmt.Sprintf("… and %d more", len(rows)-n))
			break
		}
		terms := make([]string, len(r))
		for j, t := range r {
			terms[j] = showTerm(t)
		}
		parts = append(parts, "["+strings.Join(terms, " ")+"]")
	}
	return strings.Join(parts, "\n    ")
}

func hasBlank(rows []termRow) bool {
	for _, r := range rows {
		for _, t := range r {
			if _, ok := t.(rdf.BlankNode); ok {
				return true
			}
		}
	}
	return false
}

// matchSteps bounds the search for a blank node renaming.
const matchSteps = 1_000_000

// matchBlank looks for a one-to-one renaming of blank nodes that makes the
// multiset got equal to want: rows are paired by their shape with blank nodes
// left out, then the search tries the pairings, backtracking.
func matchBlank(want, got []termRow) (bool, error) {
	shape := func(r termRow) string {
		parts := make([]string, len(r))
		for i, t := range r {
			if _, ok := t.(rdf.BlankNode); ok {
				parts[i] = "_"
			} else {
				parts[i] = termKey(t)
			}
		}
		return strings.Join(parts, " ")
	}
	candidates := map[string][]int{}
	for j, r := range got {
		candidates[shape(r)] = append(candidates[shape(r)], j)
	}
	order := make([]int, len(want))
	for i := range order {
		order[i] = i
	}
	// The rows with the fewest candidates first: they fix the renaming soonest.
	slices.SortFunc(order, func(a, b int) int {
		return len(candidates[shape(want[a])]) - len(candidates[shape(want[b])])
	})
	m := &blankMatch{want: want, got: got, shape: shape, candidates: candidates,
		fwd: map[rdf.BlankNode]rdf.BlankNode{}, back: map[rdf.BlankNode]rdf.BlankNode{}, used: make([]bool, len(got))}
	ok := m.search(order)
	if m.steps > matchSteps {
		return false, fmt.Errorf("gave up looking for a blank node renaming after %d steps", matchSteps)
	}
	return ok, nil
}

type blankMatch struct {
	want, got  []termRow
	shape      func(termRow) string
	candidates map[string][]int
	fwd, back  map[rdf.BlankNode]rdf.BlankNode
	used       []bool
	steps      int
}

func (m *blankMatch) search(order []int) bool {
	if len(order) == 0 {
		return true
	}
	if m.steps++; m.steps > matchSteps {
		return false
	}
	w := m.want[order[0]]
	for _, j := range m.candidates[m.shape(w)] {
		if m.used[j] {
			continue
		}
		added, ok := m.bind(w, m.got[j])
		if ok {
			m.used[j] = true
			if m.search(order[1:]) {
				return true
			}
			m.used[j] = false
		}
		for _, b := range added {
			delete(m.back, m.fwd[b])
			delete(m.fwd, b)
		}
	}
	return false
}

// bind extends the renaming so that w's blank nodes become g's, reporting the
// blank nodes it added and whether that is consistent.
func (m *blankMatch) bind(w, g termRow) ([]rdf.BlankNode, bool) {
	var added []rdf.BlankNode
	for i, t := range w {
		bw, ok := t.(rdf.BlankNode)
		if !ok {
			continue
		}
		bg := g[i].(rdf.BlankNode) // same shape: a blank node here too
		if to, seen := m.fwd[bw]; seen {
			if to != bg {
				return added, false
			}
			continue
		}
		if _, taken := m.back[bg]; taken {
			return added, false
		}
		m.fwd[bw], m.back[bg] = bg, bw
		added = append(added, bw)
	}
	return added, true
}
