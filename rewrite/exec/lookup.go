package exec

import (
	"bytes"
	"slices"
	"strings"

	"veneer/catalog/rdf"
)

// A federation engine's sub-query joins a VALUES block with one pattern:
// the planner sends the block's IRIs to SQL as an IN list and joins the
// block's rows with the scan's in-process. valuesLookup does that join for
// a Cursor that streams the scan as views (see directScan), so that the
// rows go from the database to the result writer without a term being made:
// the block's rows are views made once, and each scan row finds its partners
// by the key of the variables both sides bind.
type valuesLookup struct {
	r      *run
	shared []int        // the slots both the scan and the block bind
	slots  []int        // the block's slots, in the order of its rows
	rows   [][]rdf.View // the block's rows as views, by its slots
	// index holds, for a block of more than lookupScan rows, the rows of
	// each key over the shared slots; a smaller block is compared row by
	// row.
	index map[string][]int
	key   []byte
	scan  []rdf.View // the current scan row, by slot
	match []int      // the block rows still to pair with scan
	found []int      // match's memory
}

// lookupScan is the most rows of a block that a scan row is compared with
// one by one; larger blocks get a hash index.
const lookupScan = 32

// newValuesLookup returns the lookup for a join of a scan with the block of
// v, over the shared slots; nil when some row of the block leaves a shared
// slot unbound (UNDEF), which the general join handles. width is the
// layout's.
func newValuesLookup(r *run, v *valuesIter, shared []int, width int) *valuesLookup {
	cols := make([]int, len(shared)) // by shared slot, the block's column
	for i, s := range shared {
		cols[i] = slices.Index(v.slots, s)
	}
	size := 0
	for _, row := range v.rows {
		for _, c := range cols {
			if c < 0 || row[c] == nil {
				return nil
			}
		}
		for _, t := range row {
			size += termSize(t)
		}
	}
	lk := &valuesLookup{r: r, shared: shared, slots: v.slots, scan: make([]rdf.View, width),
		rows: make([][]rdf.View, len(v.rows))}
	buf := make([]byte, 0, size) // the views' text, never grown: views stay valid
	all := make([]rdf.View, len(v.rows)*len(v.slots))
	for i, row := range v.rows {
		views := all[i*len(v.slots) : (i+1)*len(v.slots) : (i+1)*len(v.slots)]
		for c, t := range row {
			views[c], buf = rdf.AppendView(buf, t)
		}
		lk.rows[i] = views
	}
	if len(v.rows) > lookupScan {
		lk.index = make(map[string][]int, len(v.rows))
		for i, views := range lk.rows {
			lk.key = lk.key[:0]
			for _, c := range cols {
				lk.key = appendViewKey(lk.key, views[c])
			}
			lk.index[string(lk.key)] = append(lk.index[string(lk.key)], i)
		}
	}
	r.residual += int64(len(lk.rows)) // the join reads each row of its right side
	return lk
}

// termSize is the length of t's text: what AppendView appends.
func termSize(t rdf.Term) int {
	switch t := t.(type) {
	case rdf.IRI:
		return len(t)
	case rdf.BlankNode:
		return len(t)
	case rdf.Literal:
		return len(t.Lexical)
	}
	return 0
}

// next reads the next joined solution into dst, by slot, reading scan rows
// as needed with their text appended to buf; it returns false at the end.
func (lk *valuesLookup) next(scan *scanIter, dst []rdf.View, buf []byte) (bool, []byte, error) {
	if len(lk.rows) == 0 {
		return false, buf, nil // nothing to join with: the scan never runs
	}
	for len(lk.match) == 0 {
		clear(lk.scan)
		ok, grown, err := scan.nextViews(lk.scan, buf[:0])
		if !ok || err != nil {
			return false, grown, err
		}
		buf = grown
		lk.r.residual++ // the join probes with each solution of its left side
		lk.match = lk.partners()
	}
	row := lk.rows[lk.match[0]]
	lk.match = lk.match[1:]
	copy(dst, lk.scan)
	for c, s := range lk.slots {
		dst[s] = row[c]
	}
	return true, buf, nil
}

// partners lists the block rows compatible with the current scan row (SPARQL
// 1.1 Query §18.5, compatible mappings): those of its key in the index of a
// large block, or else every row that agrees on the slots the scan binds.
func (lk *valuesLookup) partners() []int {
	if lk.index == nil {
		return lk.agreeing()
	}
	lk.key = lk.key[:0]
	for _, s := range lk.shared {
		if lk.scan[s].Kind == 0 {
			return lk.agreeing()
		}
		lk.key = appendViewKey(lk.key, lk.scan[s])
	}
	return lk.index[string(lk.key)]
}

func (lk *valuesLookup) agreeing() []int {
	out := lk.found[:0]
	for i, row := range lk.rows {
		ok := true
		for c, s := range lk.slots {
			if v := lk.scan[s]; v.Kind != 0 && !sameView(v, row[c]) {
				ok = false
				break
			}
		}
		if ok {
			out = append(out, i)
		}
	}
	lk.found = out
	return out
}

// sameView reports whether a and b are the same RDF term, as their keys
// (appendViewKey) compare them.
func sameView(a, b rdf.View) bool {
	return a.Kind == b.Kind && bytes.Equal(a.Text, b.Text) && a.Datatype == b.Datatype && strings.EqualFold(a.Lang, b.Lang)
}
