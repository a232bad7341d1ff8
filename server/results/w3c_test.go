package results

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"io/fs"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"veneer/catalog/rdf"
	"veneer/conformance/w3cdir"
)

// writeTable writes a table of solutions with sw, failing the test on error.
func writeTable(t *testing.T, sw SelectWriter, tab table) {
	t.Helper()
	if err := sw.Begin(tab.vars); err != nil {
		t.Fatal(err)
	}
	for _, row := range tab.rows {
		if err := sw.Row(row); err != nil {
			t.Fatal(err)
		}
	}
	if err := sw.End(); err != nil {
		t.Fatal(err)
	}
}

// TestW3CJSONRes checks NewJSON and WriteBoolean against the W3C SPARQL 1.1
// suite, folder json-res (tests jsonres01 to jsonres04, found through its
// manifest): the expected .srj document is read into solutions, written
// again, and both documents must be the same JSON value (member order aside).
func TestW3CJSONRes(t *testing.T) {
	dir := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "sparql", "sparql11", "json-res")
	ran := 0
	for _, e := range readManifest(t, dir) {
		if !strings.HasSuffix(e.result, ".srj") {
			continue
		}
		ran++
		t.Run(e.id, func(t *testing.T) {
			want, err := os.ReadFile(e.result)
			if err != nil {
				t.Fatal(err)
			}
			tab, err := readSRJ(want)
			if err != nil {
				t.Fatalf("json-res %s: reading %s: %v", e.id, e.result, err)
			}
			var got bytes.Buffer
			if tab.boolean != nil {
				if err := WriteBoolean(JSON, &got, *tab.boolean); err != nil {
					t.Fatal(err)
				}
			} else {
				writeTable(t, NewJSON(&got), tab)
			}
			var wantV, gotV any
			if err := json.Unmarshal(want, &wantV); err != nil {
				t.Fatal(err)
			}
			if err := json.Unmarshal(got.Bytes(), &gotV); err != nil {
				t.Fatalf("json-res %s: output is not JSON: %v\n%s", e.id, err, got.Bytes())
			}
			if !reflect.DeepEqual(wantV, gotV) {
				t.Errorf("json-res %s: output differs from %s\ngot:\n%s", e.id, filepath.Base(e.result), got.Bytes())
			}
		})
	}
	if ran == 0 {
		t.Fatal("json-res manifest lists no .srj results")
	}
}

// TestW3CCSVTSVRes checks NewCSV and NewTSV against the W3C SPARQL 1.1 suite,
// folder csv-tsv-res (csv01–csv03, tsv01–tsv03, found through its manifest).
// The folder has no .srx or .srj files, so the solutions are read from the
// test's .tsv file, the one format of the two that keeps every term whole.
//
//   - tsvNN: the output must be the expected text exactly (the query orders
//     the rows, so their order is fixed).
//   - csvNN: compared field by field, because the suite's .csv files end their
//     lines in LF where the CSV format requires CRLF (which is checked on the
//     output separately), blank node labels only have to correspond one to one
//     (csv01 writes _:a for the node tsv01 writes _:b0), and the xsd:double of
//     csv03 is written 1.0E6 in csvtsv03.csv but 1.0e6 in csvtsv03.tsv (data2.ttl
//     has "1.0E6"), so doubles compare by value.
func TestW3CCSVTSVRes(t *testing.T) {
	dir := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "sparql", "sparql11", "csv-tsv-res")
	ran := 0
	for _, e := range readManifest(t, dir) {
		ext := filepath.Ext(e.result)
		if ext != ".csv" && ext != ".tsv" {
			continue
		}
		ran++
		t.Run(e.id, func(t *testing.T) {
			want, err := os.ReadFile(e.result)
			if err != nil {
				t.Fatal(err)
			}
			source := strings.TrimSuffix(e.result, ext) + ".tsv"
			src, err := os.ReadFile(source)
			if err != nil {
				t.Fatal(err)
			}
			tab, err := readTSV(src)
			if err != nil {
				t.Fatalf("%s: reading %s: %v", e.id, source, err)
			}
			var got bytes.Buffer
			if ext == ".tsv" {
				writeTable(t, NewTSV(&got), tab)
				if got.String() != string(want) {
					t.Errorf("%s: output differs from %s\ngot:\n%s\nwant:\n%s", e.id, filepath.Base(e.result), got.Bytes(), want)
				}
				return
			}
			writeTable(t, NewCSV(&got), tab)
			// SPARQL 1.1 CSV and TSV Formats, CSV section, and RFC 4180 §2 rule 1: lines end in CRLF.
			if n, crlf := strings.Count(got.String(), "\n"), strings.Count(got.String(), "\r\n"); n != crlf || n != len(tab.rows)+1 {
				t.Errorf("%s: %d line feeds, %d CRLFs, want %d CRLF-ended lines", e.id, n, crlf, len(tab.rows)+1)
			}
			gotRecs, err := csv.NewReader(&got).ReadAll()
			if err != nil {
				t.Fatalf("%s: output is not CSV: %v", e.id, err)
			}
			wantRecs, err := csv.NewReader(bytes.NewReader(want)).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			if len(gotRecs) != len(wantRecs) || strings.Join(gotRecs[0], ",") != strings.Join(wantRecs[0], ",") {
				t.Fatalf("%s: got %d records with header %v, want %d with %v", e.id, len(gotRecs), gotRecs[0], len(wantRecs), wantRecs[0])
			}
			labels := map[string]string{}
			for i := 1; i < len(wantRecs); i++ {
				for j, w := range wantRecs[i] {
					g := gotRecs[i][j]
					term := tab.rows[i-1][j]
					ok := g == w
					switch term := term.(type) {
					case rdf.BlankNode:
						if prev, seen := labels[g]; seen {
							ok = prev == w
						} else {
							labels[g], ok = w, strings.HasPrefix(w, "_:")
						}
					case rdf.Literal:
						if term.Datatype == rdf.XSDDouble {
							gf, err1 := strconv.ParseFloat(g, 64)
							wf, err2 := strconv.ParseFloat(w, 64)
							ok = err1 == nil && err2 == nil && gf == wf
						}
					}
					if !ok {
						t.Errorf("%s: record %d field %d is %q, want %q", e.id, i+1, j+1, g, w)
					}
				}
			}
		})
	}
	if ran == 0 {
		t.Fatal("csv-tsv-res manifest lists no .csv or .tsv results")
	}
}

// TestW3CResultCorpus writes every expected result of the W3C SPARQL 1.0 and
// 1.1 suites that is in the XML format (the .srx files) in all four formats
// and reads each output back: XML and JSON must give the same solutions
// exactly, TSV the same up to blank node names, and CSV the fields the CSV
// section of SPARQL 1.1 Query Results CSV and TSV Formats derives from the
// terms. ASK results go through WriteBoolean, which must refuse CSV and TSV.
func TestW3CResultCorpus(t *testing.T) {
	root := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "sparql")
	var files []string
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() && strings.HasSuffix(path, ".srx") {
			files = append(files, path)
		}
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(files) == 0 {
		t.Fatal("no .srx files under " + root)
	}
	var tables, booleans, rows int
	for _, path := range files {
		name, _ := filepath.Rel(root, path)
		src, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		want, err := readSRX(src)
		if err != nil {
			t.Errorf("%s: reading the expected result: %v", name, err)
			continue
		}
		if want.boolean != nil {
			booleans++
			checkBooleanFormats(t, name, *want.boolean)
			continue
		}
		tables++
		rows += len(want.rows)
		checkAllFormats(t, name, want)
	}
	t.Logf("%d .srx files: %d solution tables (%d rows), %d booleans", len(files), tables, rows, booleans)
}

// checkAllFormats writes want in every SELECT format and reads it back.
func checkAllFormats(t *testing.T, name string, want table) {
	t.Helper()
	for _, c := range []struct {
		f       Format
		read    func([]byte) (table, error)
		relabel bool
	}{
		{XML, readSRX, false},
		{JSON, readSRJ, false},
		{TSV, readTSV, true},
	} {
		var out bytes.Buffer
		sw, err := NewSelectWriter(c.f, &out)
		if err != nil {
			t.Fatal(err)
		}
		if err := writeAll(sw, want); err != nil {
			t.Errorf("%s: writing %s: %v", name, c.f.Name(), err)
			continue
		}
		got, err := c.read(out.Bytes())
		if err != nil {
			t.Errorf("%s: reading the %s output back: %v\n%s", name, c.f.Name(), err, out.Bytes())
			continue
		}
		if d := diffTables(want, got, c.relabel); d != "" {
			t.Errorf("%s: %s round trip: %s", name, c.f.Name(), d)
		}
	}
	var out bytes.Buffer
	if err := writeAll(NewCSV(&out), want); err != nil {
		t.Errorf("%s: writing csv: %v", name, err)
		return
	}
	if len(want.vars) == 0 {
		// No fields: every line is empty, which CSV readers skip.
		if want := strings.Repeat("\r\n", len(want.rows)+1); out.String() != want {
			t.Errorf("%s: csv without variables is %q, want %q", name, out.String(), want)
		}
		return
	}
	recs, err := csv.NewReader(&out).ReadAll()
	if err != nil {
		t.Errorf("%s: reading the csv output back: %v", name, err)
		return
	}
	if len(recs) != len(want.rows)+1 || strings.Join(recs[0], ",") != strings.Join(want.vars, ",") {
		t.Errorf("%s: csv has %d records, want %d with header %v", name, len(recs), len(want.rows)+1, want.vars)
		return
	}
	for i, row := range want.rows {
		for j, term := range row {
			if got, field := recs[i+1][j], csvField(term); got != field {
				t.Errorf("%s: csv record %d field %d is %q, want %q", name, i+2, j+1, got, field)
			}
		}
	}
}

// csvField is the CSV field for a term (CSV and TSV Formats, CSV section).
func csvField(term rdf.Term) string {
	switch term := term.(type) {
	case rdf.IRI:
		return string(term)
	case rdf.BlankNode:
		return "_:" + string(term)
	case rdf.Literal:
		return term.Lexical
	}
	return ""
}

func writeAll(sw SelectWriter, tab table) error {
	if err := sw.Begin(tab.vars); err != nil {
		return err
	}
	for _, row := range tab.rows {
		if err := sw.Row(row); err != nil {
			return err
		}
	}
	return sw.End()
}

// checkBooleanFormats writes an ASK answer in every format.
func checkBooleanFormats(t *testing.T, name string, v bool) {
	t.Helper()
	for f, read := range map[Format]func([]byte) (table, error){JSON: readSRJ, XML: readSRX} {
		var out bytes.Buffer
		if err := WriteBoolean(f, &out, v); err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		got, err := read(out.Bytes())
		if err != nil || got.boolean == nil || *got.boolean != v || len(got.vars) != 0 {
			t.Errorf("%s: %s boolean read back as %v (%v), want %v\n%s", name, f.Name(), fmtBool(got.boolean), err, v, out.Bytes())
		}
	}
	for _, f := range []Format{CSV, TSV} {
		var out bytes.Buffer
		if err := WriteBoolean(f, &out, v); err == nil || out.Len() != 0 {
			t.Errorf("%s: WriteBoolean(%s) = %v after %d bytes, want an error and nothing written", name, f.Name(), err, out.Len())
		}
	}
}

// TestW3CGraphCorpus writes the graphs of the W3C RDF 1.1 suites with every
// graph writer and reads them back: the expected .nt files of the Turtle
// evaluation tests (rdf-turtle, rdft:TestTurtleEval) and the inputs of the
// N-Triples positive syntax tests (rdf-n-triples,
// rdft:TestNTriplesPositiveSyntax), both found through their manifests.
// N-Triples and Turtle output are read back with catalog/rdf's readers,
// JSON-LD with readJSONLD; the triples must come back in order, with blank
// nodes corresponding one to one.
func TestW3CGraphCorpus(t *testing.T) {
	suites := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "rdf", "rdf11")
	const rdft = "http://www.w3.org/ns/rdftest#"
	var files []string
	for _, e := range readManifest(t, filepath.Join(suites, "rdf-turtle")) {
		if e.typ == rdft+"TestTurtleEval" && strings.HasSuffix(e.result, ".nt") && !contains(files, e.result) {
			files = append(files, e.result)
		}
	}
	for _, e := range readManifest(t, filepath.Join(suites, "rdf-n-triples")) {
		if e.typ == rdft+"TestNTriplesPositiveSyntax" {
			files = append(files, e.action)
		}
	}
	if len(files) == 0 {
		t.Fatal("the manifests list no N-Triples files")
	}
	prefixes := []rdf.Prefix{
		{Name: "", IRI: "http://a.example/"},
		{Name: "tt", IRI: "http://www.w3.org/2013/TurtleTests/"},
		{Name: "ex", IRI: "http://example/"},
		{Name: "xsd", IRI: rdf.XSDNS},
	}
	triples := 0
	for _, path := range files {
		name := filepath.Base(filepath.Dir(path)) + "/" + filepath.Base(path)
		src, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		doc, err := rdf.ParseNTriples(path, src)
		if err != nil {
			t.Errorf("%s: reading the suite's file: %v", name, err)
			continue
		}
		want := doc.Triples()
		triples += len(want)
		for _, c := range []struct {
			f    Format
			read func([]byte) ([]rdf.Triple, error)
		}{
			{NTriples, func(b []byte) ([]rdf.Triple, error) {
				d, err := rdf.ParseNTriples("output", b)
				if err != nil {
					return nil, err
				}
				return d.Triples(), nil
			}},
			{Turtle, func(b []byte) ([]rdf.Triple, error) {
				d, err := rdf.ParseTurtle("output", b, "")
				if err != nil {
					return nil, err
				}
				return d.Triples(), nil
			}},
			{JSONLD, readJSONLD},
		} {
			var out bytes.Buffer
			gw, err := NewGraphWriter(c.f, &out, prefixes)
			if err != nil {
				t.Fatal(err)
			}
			if err := writeTriples(gw, want); err != nil {
				t.Errorf("%s: writing %s: %v", name, c.f.Name(), err)
				continue
			}
			got, err := c.read(out.Bytes())
			if err != nil {
				t.Errorf("%s: reading the %s output back: %v\n%s", name, c.f.Name(), err, out.Bytes())
				continue
			}
			if d := diffTriples(want, got); d != "" {
				t.Errorf("%s: %s round trip: %s\n%s", name, c.f.Name(), d, out.Bytes())
			}
		}
	}
	t.Logf("%d N-Triples files, %d triples", len(files), triples)
}

func writeTriples(gw GraphWriter, ts []rdf.Triple) error {
	if err := gw.Begin(); err != nil {
		return err
	}
	for _, tr := range ts {
		if err := gw.Triple(tr); err != nil {
			return err
		}
	}
	return gw.End()
}

func contains(list []string, s string) bool { return indexOf(list, s) >= 0 }
