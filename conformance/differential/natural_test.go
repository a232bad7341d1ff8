package differential

import (
	"math"
	"testing"
	"time"
)

func TestIRISafe(t *testing.T) {
	cases := []struct{ in, want string }{
		// The examples of R2RML §7.3 (from memory of the specification's table).
		{"42", "42"},
		{"Hello World!", "Hello%20World%21"},
		{"2011-08-23T22:17:00Z", "2011-08-23T22%3A17%3A00Z"},
		{"~A_17.1-2", "~A_17.1-2"},
		{"葉篤正", "葉篤正"},
		// Reserved characters and non-ASCII outside ucschar (RFC 3987 §2.2).
		{"GNB-2352/C3", "GNB-2352%2FC3"},
		{"a#b?c", "a%23b%3Fc"},
		{"x\u0085y", "x%C2%85y"}, // U+0085 is below ucschar's first range
		{"Søren", "Søren"},
		{"", ""},
	}
	for _, c := range cases {
		if got := IRISafe(c.in); got != c.want {
			t.Errorf("IRISafe(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}

func TestFamilyOf(t *testing.T) {
	cases := []struct {
		name string
		want family
	}{
		// Type names as the three drivers report them (observed; common practice).
		{"INTEGER", famInteger}, {"INT4", famInteger}, {"SMALLINT", famInteger}, {"UNSIGNED INT", famInteger},
		{"DECIMAL(9,6)", famDecimal}, {"NUMERIC", famDecimal},
		{"DOUBLE PRECISION", famDouble}, {"FLOAT8", famDouble}, {"DOUBLE", famDouble},
		{"BOOLEAN", famBoolean}, {"BOOL", famBoolean}, {"bit", famBoolean},
		{"BLOB", famBinary}, {"BYTEA", famBinary}, {"VARBINARY", famBinary},
		{"DATE", famDate}, {"TIMESTAMP", famTimestamp}, {"DATETIME", famTimestamp},
		{"VARCHAR(100)", famString}, {"BPCHAR", famString}, {"TEXT", famString},
		{"", famUnknown},
	}
	for _, c := range cases {
		if got := familyOf(c.name); got != c.want {
			t.Errorf("familyOf(%q) = %d, want %d", c.name, got, c.want)
		}
	}
	if n := charLength("CHAR(15)"); n != 15 {
		t.Errorf("charLength(CHAR(15)) = %d, want 15", n)
	}
	if n := charLength("VARCHAR(15)"); n != 0 {
		t.Errorf("charLength(VARCHAR(15)) = %d, want 0", n)
	}
}

func TestLexical(t *testing.T) {
	day := time.Date(2021, 1, 5, 13, 5, 0, 0, time.UTC)
	cases := []struct {
		v    any
		f    family
		want string
	}{
		// Canonical forms of XML Schema 1.1 Part 2: decimal §3.3.3.2, double
		// §3.3.5.2, boolean §3.3.2.2, date §3.3.9.2, dateTime §3.3.7.2,
		// hexBinary §3.3.15.2; integer as the canonical decimal of an integer.
		{int64(3600), famInteger, "3600"},
		{[]byte("-0042"), famInteger, "-42"},
		{"56.012340", famDecimal, "56.01234"},
		{"80.0", famDecimal, "80"},
		{int64(80), famDecimal, "80"},
		{119.5, famDecimal, "119.5"},
		{"-0.0", famDecimal, "0"},
		{"+3.14", famDecimal, "3.14"},
		{1.98, famDouble, "1.98E0"},
		{30.0, famDouble, "3.0E1"}, // also the W3C R2RML tests' expected form
		{0.0, famDouble, "0.0E0"},
		{0.00001, famDouble, "1.0E-5"},
		{math.Inf(-1), famDouble, "-INF"},
		{"8.025e1", famDouble, "8.025E1"},
		{int64(1), famBoolean, "true"},
		{[]byte("0"), famBoolean, "false"},
		{true, famBoolean, "true"},
		{[]byte{0x48, 0x4c, 0x11}, famBinary, "484C11"},
		{day, famDate, "2021-01-05"},
		{[]byte("2012-09-14"), famDate, "2012-09-14"},
		{day, famTimestamp, "2021-01-05T13:05:00"},
		{[]byte("2021-01-05 13:05:00"), famTimestamp, "2021-01-05T13:05:00"},
		{day.Add(1500 * time.Millisecond), famTimestamp, "2021-01-05T13:05:01.5"},
		{"Ringkøbing Fjord", famString, "Ringkøbing Fjord"},
		{int64(7), famUnknown, "7"},
	}
	for _, c := range cases {
		got, err := lexical(c.v, c.f)
		if err != nil || got != c.want {
			t.Errorf("lexical(%#v, %d) = %q, %v; want %q", c.v, c.f, got, err, c.want)
		}
	}
	for _, bad := range []struct {
		v any
		f family
	}{{"12x", famInteger}, {"1.2.3", famDecimal}, {"yes", famBoolean}, {"2021-13-01", famDate}, {int64(3), famBinary}} {
		if got, err := lexical(bad.v, bad.f); err == nil {
			t.Errorf("lexical(%#v, %d) = %q, want an error", bad.v, bad.f, got)
		}
	}
}
