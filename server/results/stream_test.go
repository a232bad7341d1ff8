package results

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"strings"
	"testing"

	"veneer/catalog/rdf"
)

// recorder is an io.Writer with an http.Flusher-like Flush that records
// what arrives: the size of each Write and how much had arrived at each Flush.
type recorder struct {
	bytes.Buffer
	writes  []int
	flushes []int
}

func (r *recorder) Write(p []byte) (int, error) {
	r.writes = append(r.writes, len(p))
	return r.Buffer.Write(p)
}

func (r *recorder) Flush() { r.flushes = append(r.flushes, r.Len()) }

// maintenance is a row of the wind-farm demo scenario: a work order with its
// turbine, a note, a cost and an unbound technician.
func maintenance(i int) []rdf.Term {
	return []rdf.Term{
		rdf.IRI(fmt.Sprintf("%sworkorder/%d", wind, i)),
		rdf.IRI(wind + "turbine/T-07"),
		rdf.NewLangString("pitch bearing \"noise\", replaced", "en"),
		rdf.NewTyped("1250.50", rdf.XSDDecimal),
		nil,
		rdf.BlankNode("insp3"),
	}
}

var maintenanceVars = []string{"order", "turbine", "note", "cost", "technician", "inspection"}

var selectFormats = []struct {
	name string
	new  func(io.Writer) SelectWriter
}{
	{"JSON", NewJSON}, {"XML", NewXML}, {"CSV", NewCSV}, {"TSV", NewTSV},
}

// TestStreaming checks that a large answer reaches the io.Writer while it is
// being written, not at End, as the package documentation promises: the head
// is sent and flushed by Begin, then at least every 32 KiB (every Write is at
// most that and one row) and every 512 rows, so End has little left to send.
func TestStreaming(t *testing.T) {
	const rows = 100_000
	for _, f := range selectFormats {
		var rec recorder
		sw := f.new(&rec)
		if err := sw.Begin(maintenanceVars); err != nil {
			t.Fatal(err)
		}
		if rec.Len() == 0 || len(rec.flushes) != 1 {
			t.Errorf("%s: after Begin %d bytes arrived and %d flushes, want the head, flushed", f.name, rec.Len(), len(rec.flushes))
		}
		maxRow := 0
		for i := range rows {
			before := rec.Len()
			if err := sw.Row(maintenance(i)); err != nil {
				t.Fatal(err)
			}
			maxRow = max(maxRow, rec.Len()-before)
		}
		beforeEnd := rec.Len()
		if err := sw.End(); err != nil {
			t.Fatal(err)
		}
		total := rec.Len()
		if held := total - beforeEnd; held > 32<<10+1024 {
			t.Errorf("%s: %d of %d bytes held back until End", f.name, held, total)
		}
		for i, n := range rec.writes {
			if n > 32<<10+1024 {
				t.Errorf("%s: write %d has %d bytes, more than the flush threshold and a row", f.name, i, n)
				break
			}
		}
		if min := rows / 512; len(rec.flushes) < min {
			t.Errorf("%s: %d flushes for %d rows, want at least %d", f.name, len(rec.flushes), rows, min)
		}
		if last := rec.flushes[len(rec.flushes)-1]; last != total {
			t.Errorf("%s: last flush at %d bytes of %d", f.name, last, total)
		}
	}
}

// TestSlowStream checks that short rows, which take long to fill 32 KiB when
// the database is slow, are still flushed every 512 rows.
func TestSlowStream(t *testing.T) {
	for _, f := range selectFormats {
		var rec recorder
		sw := f.new(&rec)
		if err := sw.Begin([]string{"n"}); err != nil {
			t.Fatal(err)
		}
		for range 2 * 512 {
			if err := sw.Row([]rdf.Term{nil}); err != nil {
				t.Fatal(err)
			}
		}
		flushes, sent := len(rec.flushes), rec.Len()
		if err := sw.End(); err != nil {
			t.Fatal(err)
		}
		if tail := rec.Len() - sent; flushes != 3 || tail > 64 {
			t.Errorf("%s: after Begin and 1024 short rows, %d flushes and %d bytes left for End; want 3 flushes and only the tail left", f.name, flushes, tail)
		}
	}
}

// TestAbandon checks that a document only End completes stays incomplete
// when the caller stops: what was sent is a prefix of the complete document
// and does not read as a complete JSON or XML document.
func TestAbandon(t *testing.T) {
	const rows = 5_000 // enough for several sends
	for _, f := range selectFormats {
		var cut, whole bytes.Buffer
		for _, buf := range []*bytes.Buffer{&cut, &whole} {
			sw := f.new(buf)
			if err := sw.Begin(maintenanceVars); err != nil {
				t.Fatal(err)
			}
			for i := range rows {
				if err := sw.Row(maintenance(i)); err != nil {
					t.Fatal(err)
				}
			}
			if buf == &whole {
				if err := sw.End(); err != nil {
					t.Fatal(err)
				}
			}
		}
		if cut.Len() == 0 || cut.Len() >= whole.Len() || !bytes.HasPrefix(whole.Bytes(), cut.Bytes()) {
			t.Errorf("%s: abandoned output (%d bytes) is not a proper prefix of the complete one (%d)", f.name, cut.Len(), whole.Len())
		}
		switch f.name {
		case "JSON":
			if json.Valid(cut.Bytes()) || !json.Valid(whole.Bytes()) {
				t.Errorf("JSON: abandoned valid=%v, complete valid=%v", json.Valid(cut.Bytes()), json.Valid(whole.Bytes()))
			}
		case "XML":
			var doc srxDoc
			if err := xml.Unmarshal(cut.Bytes(), &doc); err == nil {
				t.Error("XML: the abandoned document reads as complete")
			}
			if err := xml.Unmarshal(whole.Bytes(), &doc); err != nil {
				t.Errorf("XML: the complete document does not read: %v", err)
			}
		}
	}
}

// TestMisuse checks the order Begin, Row..., End, and that an error spends
// the writer.
func TestMisuse(t *testing.T) {
	sw := NewJSON(io.Discard)
	if err := sw.Row(nil); err == nil || !strings.Contains(err.Error(), "before Begin") {
		t.Errorf("Row before Begin = %v", err)
	}
	if err := sw.End(); err == nil || !strings.Contains(err.Error(), "before Begin") {
		t.Errorf("End before Begin = %v", err)
	}
	if err := sw.Begin([]string{"a"}); err != nil {
		t.Fatal(err)
	}
	if err := sw.Begin([]string{"a"}); err == nil {
		t.Error("Begin twice accepted")
	}
	if err := sw.End(); err != nil {
		t.Fatal(err)
	}
	if err := sw.Row([]rdf.Term{nil}); err == nil || !strings.Contains(err.Error(), "after End") {
		t.Errorf("Row after End = %v", err)
	}
	if err := sw.End(); err == nil {
		t.Error("End twice accepted")
	}

	sw = NewCSV(io.Discard)
	if err := sw.Begin([]string{"a", "b"}); err != nil {
		t.Fatal(err)
	}
	err := sw.Row([]rdf.Term{nil})
	if err == nil || !strings.Contains(err.Error(), "1 terms for 2 variables") {
		t.Errorf("short row = %v", err)
	}
	if again := sw.Row([]rdf.Term{nil, nil}); again != err {
		t.Errorf("Row after an error = %v, want the same error", again)
	}
	if again := sw.End(); again != err {
		t.Errorf("End after an error = %v, want the same error", again)
	}
}

// failing is an io.Writer whose Write or Flush fails.
type failing struct {
	writeErr, flushErr error
}

var errGone = errors.New("client went away")

func (f failing) Write(p []byte) (int, error) {
	if f.writeErr != nil {
		return 0, f.writeErr
	}
	return len(p), nil
}

func (f failing) Flush() error { return f.flushErr }

// TestWriteErrors checks that a failing Write or Flush (of the Flush() error
// kind, like bufio.Writer's) comes back from the writer, wrapped, and spends it.
func TestWriteErrors(t *testing.T) {
	for _, w := range []failing{{writeErr: errGone}, {flushErr: errGone}} {
		sw := NewXML(w)
		err := sw.Begin([]string{"a"})
		if !errors.Is(err, errGone) {
			t.Errorf("%+v: Begin = %v, want %v", w, err, errGone)
		}
		if again := sw.Row([]rdf.Term{nil}); again != err {
			t.Errorf("%+v: Row after the error = %v", w, again)
		}
		if err := WriteBoolean(JSON, w, true); !errors.Is(err, errGone) {
			t.Errorf("%+v: WriteBoolean = %v", w, err)
		}
	}
	// A Write that fails mid-stream.
	gw := NewNTriples(&failAfter{n: 1})
	if err := gw.Begin(); err != nil {
		t.Fatal(err)
	}
	var err error
	for i := 0; i < 10*flushRows && err == nil; i++ {
		err = gw.Triple(rdf.Triple{S: rdf.IRI(wind + "s"), P: rdf.IRI(wind + "p"), O: rdf.NewString("o")})
	}
	if !errors.Is(err, errGone) {
		t.Errorf("Triple after the connection broke = %v", err)
	}
}

// failAfter is an io.Writer whose Writes fail after n of them.
type failAfter struct{ n int }

func (f *failAfter) Write(p []byte) (int, error) {
	if f.n == 0 {
		return 0, errGone
	}
	f.n--
	return len(p), nil
}

// TestAllocations checks that the memory a writer uses does not grow with
// the answer: the allocations per row of a 100,000-row answer are no more
// than those of a 1,000-row one (plus a rounding margin). The JSON, XML and
// CSV writers allocate nothing per row; the absolute bounds for the
// Turtle-syntax writers, whose IRIs and literals go through catalog/rdf's
// string escaping (TSV makes a term of each view for it), are what this
// implementation was measured to need with some room, not a figure from any
// source.
func TestAllocations(t *testing.T) {
	if testing.Short() {
		t.Skip("writes 100,000 rows per format")
	}
	perRow := func(newWriter func(io.Writer) SelectWriter, rows int) float64 {
		sol := maintenance(7)
		total := testing.AllocsPerRun(1, func() {
			sw := newWriter(io.Discard)
			if err := sw.Begin(maintenanceVars); err != nil {
				t.Fatal(err)
			}
			for range rows {
				if err := sw.Row(sol); err != nil {
					t.Fatal(err)
				}
			}
			if err := sw.End(); err != nil {
				t.Fatal(err)
			}
		})
		return total / float64(rows)
	}
	bound := map[string]float64{"JSON": 0.001, "XML": 0.001, "CSV": 0.001, "TSV": 12}
	for _, f := range selectFormats {
		small, large := perRow(f.new, 1_000), perRow(f.new, 100_000)
		if large > small+0.01 {
			t.Errorf("%s: %.4f allocations per row for 100,000 rows, %.4f for 1,000: memory grows with the answer", f.name, large, small)
		}
		if large > bound[f.name] {
			t.Errorf("%s: %.4f allocations per row, want at most %v", f.name, large, bound[f.name])
		}
	}
	for _, g := range graphFormats {
		tr := rdf.Triple{S: rdf.IRI(wind + "turbine/T-07"), P: rdf.IRI(wind + "note"), O: rdf.NewLangString("yaw drive", "en")}
		perTriple := func(n int) float64 {
			return testing.AllocsPerRun(1, func() {
				gw := g.new(io.Discard)
				if err := gw.Begin(); err != nil {
					t.Fatal(err)
				}
				for range n {
					if err := gw.Triple(tr); err != nil {
						t.Fatal(err)
					}
				}
				if err := gw.End(); err != nil {
					t.Fatal(err)
				}
			}) / float64(n)
		}
		small, large := perTriple(1_000), perTriple(100_000)
		if large > small+0.01 || large > 6 {
			t.Errorf("%s: %.4f allocations per triple for 100,000 triples, %.4f for 1,000, want no growth and at most 6", g.name, large, small)
		}
	}
}
