package r2rml

import (
	"reflect"
	"strings"
	"testing"

	"veneer/catalog"
)

func TestParseTemplate(t *testing.T) {
	text := func(s string) catalog.TemplatePart { return catalog.TemplatePart{Text: s} }
	col := func(s string) catalog.TemplatePart { return catalog.TemplatePart{Column: s} }
	// Templates and escapes per R2RML §7.4 (string templates); the first is the
	// spec's own example, the rest exercise the escape rules.
	tests := []struct {
		in   string
		want []catalog.TemplatePart
	}{
		{"http://data.example.com/employee/{EMPNO}", []catalog.TemplatePart{text("http://data.example.com/employee/"), col("EMPNO")}},
		{`http://ex/{"Site Code"}/{turbine_id}`, []catalog.TemplatePart{text("http://ex/"), col(`"Site Code"`), text("/"), col("turbine_id")}},
		{`{a}{b}`, []catalog.TemplatePart{col("a"), col("b")}},
		{`\{literal\} \\ {x}`, []catalog.TemplatePart{text(`{literal} \ `), col("x")}},
		{`{"we\{ird\}"}`, []catalog.TemplatePart{col(`"we{ird}"`)}},
		{`no columns`, []catalog.TemplatePart{text("no columns")}},
		{``, nil},
	}
	for _, tt := range tests {
		got, err := ParseTemplate(tt.in)
		if err != nil {
			t.Errorf("%q: %v", tt.in, err)
			continue
		}
		if !reflect.DeepEqual(got.Parts, tt.want) {
			t.Errorf("%q: got %+v, want %+v", tt.in, got.Parts, tt.want)
		}
	}
}

func TestParseTemplateErrors(t *testing.T) {
	// Malformed templates per R2RML §7.4: braces that do not enclose a column
	// name must be escaped, and so must backslashes. The messages are our own.
	tests := []struct{ in, msg string }{
		{"http://ex/{id", "character 11: '{' is never closed"},
		{"http://ex/id}", "character 13: '}' without a matching '{'"},
		{"http://ex/{a{b}}", "character 13: '{' inside the column reference opened at character 11"},
		{"http://ex/{}", "character 11: empty column reference {}"},
		{`http://ex/\n{id}`, "character 11: a backslash must be followed by"},
		{`http://ex/{id}\`, "character 15: a backslash must be followed by"},
	}
	for _, tt := range tests {
		_, err := ParseTemplate(tt.in)
		if err == nil || !strings.Contains(err.Error(), tt.msg) {
			t.Errorf("%q: got %v, want an error containing %q", tt.in, err, tt.msg)
		}
	}
}

func TestLanguageTag(t *testing.T) {
	// Tags from RFC 5646 §2.1 and its Appendix A examples (from memory), and the
	// invalid "english"/"spanish" of W3C R2RML test R2RMLTC0015b.
	valid := []string{"en", "de-CH", "pt-BR", "zh-Hant-TW", "sr-Latn-RS", "es-419", "sl-rozaj-biske",
		"de-CH-1901", "en-US-u-islamcal", "x-whatever", "en-x-private", "i-klingon", "zh-yue-HK", "EN-gb"}
	invalid := []string{"english", "spanish", "e", "en-", "-en", "en--us", "en_US", "x", "abcd", "de-419-", ""}
	for _, s := range valid {
		if !languageTag.MatchString(s) {
			t.Errorf("%q: want valid", s)
		}
	}
	for _, s := range invalid {
		if languageTag.MatchString(s) {
			t.Errorf("%q: want invalid", s)
		}
	}
}
