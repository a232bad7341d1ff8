package results

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"encoding/xml"
	"strings"
	"testing"

	"veneer/catalog/rdf"
)

const wind = "http://example.org/wind/"

// rowText writes vars and one row with newWriter and returns the row's text:
// the output without the head (written by Begin) and the tail (by End).
func rowText(t *testing.T, newWriter func(*bytes.Buffer) SelectWriter, vars []string, sol []rdf.Term) (string, error) {
	t.Helper()
	var buf bytes.Buffer
	sw := newWriter(&buf)
	if err := sw.Begin(vars); err != nil {
		t.Fatal(err)
	}
	head := buf.Len()
	if err := sw.Row(sol); err != nil {
		return "", err
	}
	if err := sw.End(); err != nil {
		t.Fatal(err)
	}
	empty := emptyDocument(t, newWriter, vars)
	return strings.TrimSuffix(buf.String()[head:], empty[head:]), nil
}

// emptyDocument is the document of vars with no rows.
func emptyDocument(t *testing.T, newWriter func(*bytes.Buffer) SelectWriter, vars []string) string {
	t.Helper()
	var buf bytes.Buffer
	sw := newWriter(&buf)
	if err := sw.Begin(vars); err != nil {
		t.Fatal(err)
	}
	if err := sw.End(); err != nil {
		t.Fatal(err)
	}
	return buf.String()
}

func jsonW(b *bytes.Buffer) SelectWriter { return NewJSON(b) }
func xmlW(b *bytes.Buffer) SelectWriter  { return NewXML(b) }
func csvW(b *bytes.Buffer) SelectWriter  { return NewCSV(b) }
func tsvW(b *bytes.Buffer) SelectWriter  { return NewTSV(b) }

// TestJSONTerms checks the encoding of each kind of term against SPARQL 1.1
// Query Results JSON Format §3.2.2 (from memory of the Recommendation): "uri",
// "literal" with "xml:lang" or "datatype", no "datatype" for a simple literal
// (xsd:string), "bnode"; an unbound variable has no member (§3.2.1).
func TestJSONTerms(t *testing.T) {
	for _, c := range []struct {
		term rdf.Term
		want string
	}{
		{rdf.IRI(wind + "turbine/T-07"), `{"type":"uri","value":"http://example.org/wind/turbine/T-07"}`},
		{rdf.NewString("gearbox"), `{"type":"literal","value":"gearbox"}`},
		{rdf.NewTyped("gearbox", rdf.XSDString), `{"type":"literal","value":"gearbox"}`},
		{rdf.NewLangString("éolienne", "fr"), `{"type":"literal","value":"éolienne","xml:lang":"fr"}`},
		{rdf.NewTyped("2.5", rdf.XSDDecimal), `{"type":"literal","value":"2.5","datatype":"http://www.w3.org/2001/XMLSchema#decimal"}`},
		{rdf.BlankNode("wo12"), `{"type":"bnode","value":"wo12"}`},
	} {
		got, err := rowText(t, jsonW, []string{"x", "unbound"}, []rdf.Term{c.term, nil})
		if err != nil {
			t.Fatal(err)
		}
		if want := "\n{\"x\":" + c.want + "}"; got != want {
			t.Errorf("%v: got %s, want %s", c.term, got, want)
		}
	}
}

// TestJSONEscaping checks that every string survives encoding/json: RFC 8259
// §7 requires U+0000–U+001F, '"' and '\' to be escaped, and Go's decoder
// refuses a raw control character in a string, so decoding proves it.
func TestJSONEscaping(t *testing.T) {
	var all strings.Builder
	for r := rune(0); r < 0x20; r++ {
		all.WriteRune(r)
	}
	for _, s := range []string{
		all.String(), `"quoted"`, `back\slash`, "\u007f\u0080\u2028\u2029", "\U0001F32C wind", "</script>",
	} {
		for _, term := range []rdf.Term{rdf.NewString(s), rdf.IRI(s), rdf.BlankNode(s), rdf.NewTyped("x", rdf.IRI(s))} {
			var buf bytes.Buffer
			writeTable(t, NewJSON(&buf), table{vars: []string{"v"}, rows: [][]rdf.Term{{term}}})
			got, err := readSRJ(buf.Bytes())
			if err != nil {
				t.Fatalf("%q: %v\n%s", s, err, buf.Bytes())
			}
			if !rdf.SameTerm(got.rows[0][0], term) {
				t.Errorf("%q came back as %v", s, got.rows[0][0])
			}
			if strings.ContainsAny(buf.String(), "\u2028\u2029") {
				t.Errorf("%q: U+2028 or U+2029 left raw", s)
			}
		}
	}
}

// TestXMLEscaping checks that text XML 1.0 can carry comes back the same
// through encoding/xml, including CR (a raw one would be read as LF, XML 1.0
// §2.11) and tab/LF in attribute values (raw ones would be read as spaces,
// XML 1.0 §3.3.3).
func TestXMLEscaping(t *testing.T) {
	for _, s := range []string{
		"a & b < c > d", `"double" 'single'`, "]]>", "tab\there", "line\nfeed", "carriage\rreturn\r\n",
		"\u0085\u00a0\ud7ff\ue000\ufffd", "\U00010000\U0010FFFF",
	} {
		for _, term := range []rdf.Term{
			rdf.NewString(s), rdf.IRI(s), rdf.BlankNode(s),
			rdf.NewTyped("x", rdf.IRI(s)), rdf.NewLangString("x", s),
		} {
			var buf bytes.Buffer
			writeTable(t, NewXML(&buf), table{vars: []string{"v"}, rows: [][]rdf.Term{{term}}})
			got, err := readSRX(buf.Bytes())
			if err != nil {
				t.Fatalf("%q: %v\n%s", s, err, buf.Bytes())
			}
			if !rdf.SameTerm(got.rows[0][0], term) {
				t.Errorf("%#v came back as %#v", term, got.rows[0][0])
			}
		}
	}
}

// TestXMLRefuses checks that characters outside Char of XML 1.0 §2.2
// (#x9 | #xA | #xD | [#x20-#xD7FF] | [#xE000-#xFFFD] | [#x10000-#x10FFFF])
// and text that is not UTF-8 make Row fail, with no byte of the row sent,
// and leave the writer spent.
func TestXMLRefuses(t *testing.T) {
	for _, s := range []string{"\x00", "bell\x07", "\x0b", "\x0c", "\x1f", "\ufffe", "\uffff", "bad \xff byte", "\xed\xa0\x80"} {
		for _, term := range []rdf.Term{rdf.NewString(s), rdf.IRI(s), rdf.BlankNode(s), rdf.NewLangString("x", s)} {
			var buf bytes.Buffer
			sw := NewXML(&buf)
			if err := sw.Begin([]string{"v"}); err != nil {
				t.Fatal(err)
			}
			head := buf.String()
			err := sw.Row([]rdf.Term{term})
			if err == nil || !strings.Contains(err.Error(), "?v") {
				t.Errorf("%#v: Row = %v, want an error naming ?v", term, err)
			}
			if end := sw.End(); end != err {
				t.Errorf("%#v: End after the error = %v, want the same error", term, end)
			}
			if buf.String() != head {
				t.Errorf("%#v: bytes after the head were written: %q", term, buf.String()[len(head):])
			}
		}
	}
}

// TestInvalidUTF8 checks that every writer refuses text that is not UTF-8
// rather than writing a replacement character.
func TestInvalidUTF8(t *testing.T) {
	bad := "turbine \xc3"
	for _, nw := range []func(*bytes.Buffer) SelectWriter{jsonW, xmlW, csvW, tsvW} {
		for _, term := range []rdf.Term{rdf.NewString(bad), rdf.IRI(bad), rdf.BlankNode(bad), rdf.NewTyped("x", rdf.IRI(bad))} {
			var buf bytes.Buffer
			sw := nw(&buf)
			if l, ok := term.(rdf.Literal); ok && l.Datatype != rdf.XSDString && sw.(*selectWriter).enc == (csvEncoder{}) {
				continue // CSV does not write datatypes
			}
			if err := sw.Begin([]string{"v"}); err != nil {
				t.Fatal(err)
			}
			if err := sw.Row([]rdf.Term{term}); err == nil || !strings.Contains(err.Error(), "UTF-8") {
				t.Errorf("%T %#v: Row = %v, want a UTF-8 error", sw.(*selectWriter).enc, term, err)
			}
		}
	}
}

// TestCSVFields checks the CSV fields against SPARQL 1.1 Query Results CSV and
// TSV Formats, CSV section (from memory: IRIs bare, literals as their lexical
// form, blank nodes as _:label, unbound as an empty field) and RFC 4180 §2
// (rules 6 and 7: fields with '"', ',', CR or LF are quoted, inner quotes doubled).
func TestCSVFields(t *testing.T) {
	for _, c := range []struct {
		term rdf.Term
		want string
	}{
		{rdf.IRI(wind + "site/North%20Ridge"), "http://example.org/wind/site/North%20Ridge"},
		{rdf.NewLangString("Nordkamm", "de"), "Nordkamm"},
		{rdf.NewTyped("1.0E6", rdf.XSDDouble), "1.0E6"},
		{rdf.BlankNode("b0"), "_:b0"},
		{rdf.NewString("blade, pitch"), `"blade, pitch"`},
		{rdf.NewString(`the "big" one`), `"the ""big"" one"`},
		{rdf.NewString("two\nlines"), "\"two\nlines\""},
		{rdf.NewString("cr\rhere"), "\"cr\rhere\""},
		{rdf.NewString(" padded "), " padded "},
		{rdf.BlankNode("a,b"), `"_:a,b"`},
		{nil, ""},
	} {
		got, err := rowText(t, csvW, []string{"x", "y"}, []rdf.Term{c.term, rdf.NewString("z")})
		if err != nil {
			t.Fatal(err)
		}
		if want := c.want + ",z\r\n"; got != want {
			t.Errorf("%v: got %q, want %q", c.term, got, want)
		}
		rec, err := csv.NewReader(strings.NewReader(got)).Read()
		if err != nil || rec[0] != csvField(c.term) {
			t.Errorf("%v: encoding/csv reads %q (%v), want %q", c.term, rec, err, csvField(c.term))
		}
	}
	// One column, unbound: `""`, not an empty line that readers skip.
	got, err := rowText(t, csvW, []string{"x"}, []rdf.Term{nil})
	if err != nil || got != "\"\"\r\n" {
		t.Errorf("single unbound field: got %q (%v), want %q", got, err, "\"\"\r\n")
	}
}

// TestTSVTerms checks TSV cells against SPARQL 1.1 Query Results CSV and TSV
// Formats, TSV section (from memory: terms in Turtle syntax, unbound as an
// empty cell, tab/LF/CR in strings escaped) and the Turtle grammar of RDF 1.1
// Turtle §6.5 for the short forms (INTEGER, DECIMAL, DOUBLE, BooleanLiteral),
// which are used only when the lexical form is exactly such a token.
func TestTSVTerms(t *testing.T) {
	const xsd = rdf.XSDNS
	for _, c := range []struct {
		term rdf.Term
		want string
	}{
		{rdf.IRI(wind + "T-07"), "<http://example.org/wind/T-07>"},
		{rdf.NewString("tab\there\nand\r"), `"tab\there\nand\r"`},
		{rdf.NewString(`say "hi"`), `"say \"hi\""`},
		{rdf.NewLangString("éolienne", "fr-CA"), `"éolienne"@fr-CA`},
		{rdf.NewTyped("4", rdf.XSDInteger), "4"},
		{rdf.NewTyped("-04", rdf.XSDInteger), "-04"},
		{rdf.NewTyped("4.0", rdf.XSDInteger), `"4.0"^^<` + xsd + `integer>`},
		{rdf.NewTyped("5.5", rdf.XSDDecimal), "5.5"},
		{rdf.NewTyped("+.5", rdf.XSDDecimal), "+.5"},
		{rdf.NewTyped("5.", rdf.XSDDecimal), `"5."^^<` + xsd + `decimal>`},
		{rdf.NewTyped("5", rdf.XSDDecimal), `"5"^^<` + xsd + `decimal>`},
		{rdf.NewTyped("1.0E6", rdf.XSDDouble), "1.0E6"},
		{rdf.NewTyped("1.e-3", rdf.XSDDouble), "1.e-3"},
		{rdf.NewTyped(".5e1", rdf.XSDDouble), ".5e1"},
		{rdf.NewTyped("2e+10", rdf.XSDDouble), "2e+10"},
		{rdf.NewTyped("INF", rdf.XSDDouble), `"INF"^^<` + xsd + `double>`},
		{rdf.NewTyped("1.5", rdf.XSDDouble), `"1.5"^^<` + xsd + `double>`},
		{rdf.NewTyped("e5", rdf.XSDDouble), `"e5"^^<` + xsd + `double>`},
		{rdf.NewTyped("true", rdf.XSDBoolean), "true"},
		{rdf.NewTyped("1", rdf.XSDBoolean), `"1"^^<` + xsd + `boolean>`},
		{rdf.NewTyped("1", rdf.XSDString), `"1"`},
		{rdf.NewTyped("-3", xsd+"negativeInteger"), `"-3"^^<` + xsd + `negativeInteger>`},
		{rdf.BlankNode("b0"), "_:b0"},
		{nil, ""},
	} {
		got, err := rowText(t, tsvW, []string{"x", "y"}, []rdf.Term{c.term, rdf.IRI(wind)})
		if err != nil {
			t.Fatal(err)
		}
		if want := c.want + "\t<" + wind + ">\n"; got != want {
			t.Errorf("%#v: got %q, want %q", c.term, got, want)
		}
		if c.term == nil {
			continue
		}
		// The cell must read back as the same term (catalog/rdf's Turtle reader).
		back, err := readTurtleTerm(c.want)
		if err != nil || !rdf.SameTerm(back, c.term) {
			t.Errorf("%#v: cell %s reads back as %#v (%v)", c.term, c.want, back, err)
		}
	}
	// Terms the Turtle syntax cannot write must be refused, not written unreadable.
	for _, term := range []rdf.Term{
		rdf.NewLangString("x", "en US"),              // LANGTAG (RDF 1.1 Turtle [144s]) has no space
		rdf.NewLangString("x", "1en"),                // nor a leading digit
		rdf.IRI("http://example.org/a b"),            // IRIREF (RDF 1.1 Turtle [18]) has no space
		rdf.NewTyped("x", "http://example.org/{dt}"), // nor braces
		rdf.IRI("http://example.org/\u0000"),         // nor control characters
	} {
		if got, err := rowText(t, tsvW, []string{"x"}, []rdf.Term{term}); err == nil {
			t.Errorf("%#v accepted as %q", term, got)
		}
	}
}

// TestBlankLabels checks appendBlankLabel: each label becomes a
// BLANK_NODE_LABEL (RDF 1.1 Turtle [141s], read back by catalog/rdf's
// N-Triples reader) and different labels stay different.
func TestBlankLabels(t *testing.T) {
	labels := []string{"", "b0", "B0", "0", "-", "-x", "x-", "a_b", "a_5fb", "_", "_5f", "a.b", "a.", "é", "_c3_a9",
		"node 1", "node_1", "north:ridge", "x\u00b7y", "\U0001F32C"}
	seen := map[string]string{}
	var nt strings.Builder
	for _, l := range labels {
		got := string(appendBlankLabel(nil, l))
		if prev, dup := seen[got]; dup {
			t.Errorf("%q and %q both become %s", prev, l, got)
		}
		seen[got] = l
		nt.WriteString(got + " <" + wind + "p> \"" + rdf.EscapeString(l) + "\" .\n")
	}
	doc, err := rdf.ParseNTriples("labels", []byte(nt.String()))
	if err != nil {
		t.Fatalf("labels do not read as N-Triples: %v\n%s", err, nt.String())
	}
	if len(doc.Statements) != len(labels) {
		t.Errorf("%d statements read, want %d", len(doc.Statements), len(labels))
	}
	// The examples of the package documentation.
	for label, want := range map[string]string{"wo42": "_:wo42", "wo_1": "_:wo_5f1", "": "_:_"} {
		if got := string(appendBlankLabel(nil, label)); got != want {
			t.Errorf("label %q written %s, want %s", label, got, want)
		}
	}
}

// TestHeads checks the document heads: JSON Format §3.1 ("head" with "vars"),
// XML Format §2.2 (variable elements in order), CSV section (names without
// '?'), TSV section (names with '?'); all from memory of the Recommendations.
func TestHeads(t *testing.T) {
	vars := []string{"turbine", "site", "ŝtato"}
	var j, x bytes.Buffer
	writeTable(t, NewJSON(&j), table{vars: vars})
	var doc struct {
		Head struct {
			Vars []string `json:"vars"`
		} `json:"head"`
		Results struct {
			Bindings []any `json:"bindings"`
		} `json:"results"`
	}
	if err := json.Unmarshal(j.Bytes(), &doc); err != nil || strings.Join(doc.Head.Vars, " ") != "turbine site ŝtato" || doc.Results.Bindings == nil {
		t.Errorf("JSON head: %s (%v)", j.Bytes(), err)
	}
	writeTable(t, NewXML(&x), table{vars: vars})
	var sx srxDoc
	if err := xml.Unmarshal(x.Bytes(), &sx); err != nil || len(sx.Vars) != 3 || sx.Vars[2].Name != "ŝtato" || len(sx.Results) != 0 {
		t.Errorf("XML head: %s (%v)", x.Bytes(), err)
	}
	if got := emptyDocument(t, csvW, vars); got != "turbine,site,ŝtato\r\n" {
		t.Errorf("CSV head %q", got)
	}
	if got := emptyDocument(t, tsvW, vars); got != "?turbine\t?site\t?ŝtato\n" {
		t.Errorf("TSV head %q", got)
	}
}

// TestVarNames checks that Begin takes only distinct SPARQL VARNAMEs
// (SPARQL 1.1 Query §19.8 [166]).
func TestVarNames(t *testing.T) {
	for _, c := range []struct {
		vars []string
		ok   bool
	}{
		{[]string{"x", "_y", "0z", "é", "a\u00b7b", "a\u0301"}, true},
		{[]string{"x", "x"}, false},
		{[]string{""}, false},
		{[]string{"?x"}, false},
		{[]string{"a b"}, false},
		{[]string{"a,b"}, false},
		{[]string{"a\tb"}, false},
		{[]string{"\u00b7a"}, false},
		{[]string{"a\"b"}, false},
		{[]string{"a\xffb"}, false},
	} {
		for _, nw := range []func(*bytes.Buffer) SelectWriter{jsonW, xmlW, csvW, tsvW} {
			var buf bytes.Buffer
			err := nw(&buf).Begin(c.vars)
			if (err == nil) != c.ok {
				t.Errorf("Begin(%q) = %v, want ok=%v", c.vars, err, c.ok)
			}
			if err != nil && buf.Len() != 0 {
				t.Errorf("Begin(%q) failed but wrote %q", c.vars, buf.String())
			}
		}
	}
}
