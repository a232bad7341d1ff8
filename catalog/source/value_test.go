package source

import (
	"fmt"
	"math"
	"testing"
	"time"
)

func TestFromText(t *testing.T) {
	plus2 := time.FixedZone("", 2*3600)
	minus0530 := time.FixedZone("", -(5*3600 + 30*60))
	tests := []struct {
		kind TypeKind
		in   string
		want any // nil means SQL NULL; an error value means any error
	}{
		{TypeInteger, "-42", int64(-42)},
		{TypeInteger, "9223372036854775807", int64(9223372036854775807)},
		{TypeInteger, "9223372036854775808", errAny},
		{TypeInteger, "4.0", errAny},
		{TypeDecimal, "-12.50", "-12.50"},
		{TypeDecimal, ".5", ".5"},
		{TypeDecimal, "12.", "12."},
		{TypeDecimal, "+7", "+7"},
		{TypeDecimal, "NaN", errAny},
		{TypeDecimal, "1e5", errAny},
		{TypeDecimal, "-", errAny},
		{TypeDecimal, ".", errAny},
		{TypeDecimal, "--1", errAny},
		{TypeFloat, "1.65", 1.65},
		{TypeFloat, "-Infinity", negInf},
		{TypeBoolean, "t", true},
		{TypeBoolean, "0", false},
		{TypeBoolean, "yes", errAny},
		{TypeDate, "2024-03-01", time.Date(2024, 3, 1, 0, 0, 0, 0, time.UTC)},
		{TypeDate, "0000-00-00", nil}, // MySQL's zero date
		{TypeDate, "2024-13-01", errAny},
		{TypeTime, "13:45:30", "13:45:30"},
		{TypeTime, "13:45:30.250000", "13:45:30.250000"},
		{TypeTime, "24:00:00", "24:00:00"},
		{TypeTime, "24:00:01", errAny},
		{TypeTime, "838:59:59", errAny}, // a MySQL duration, not a time of day
		{TypeTime, "13:45", errAny},
		{TypeTime, "13:45:30.", errAny},
		{TypeTimestamp, "2024-03-01 13:45:30", time.Date(2024, 3, 1, 13, 45, 30, 0, time.UTC)},
		{TypeTimestamp, "2024-03-01T13:45:30.5", time.Date(2024, 3, 1, 13, 45, 30, 5e8, time.UTC)},
		{TypeTimestamp, "2024-03-01 13:45", time.Date(2024, 3, 1, 13, 45, 0, 0, time.UTC)},
		{TypeTimestamp, "2024-03-01", time.Date(2024, 3, 1, 0, 0, 0, 0, time.UTC)},
		{TypeTimestamp, "2024-03-01T13:45:30+02:00", time.Date(2024, 3, 1, 11, 45, 30, 0, time.UTC)},
		{TypeTimestamp, "0000-00-00 00:00:00", nil},
		{TypeTimestamp, "2024-03-01X13:45:30", errAny},
		{TypeTimestampTZ, "2024-03-01 13:45:30+02", time.Date(2024, 3, 1, 13, 45, 30, 0, plus2)},
		{TypeTimestampTZ, "2024-03-01 13:45:30.123-05:30", time.Date(2024, 3, 1, 13, 45, 30, 123e6, minus0530)},
		{TypeTimestampTZ, "2024-03-01T13:45:30Z", time.Date(2024, 3, 1, 13, 45, 30, 0, time.UTC)},
		{TypeTimestampTZ, "2024-03-01 13:45:30+0200", time.Date(2024, 3, 1, 13, 45, 30, 0, plus2)},
		{TypeTimestampTZ, "2024-03-01 13:45:30+2", errAny},
		{TypeTimestampTZ, "infinity", errAny},
		{TypeString, "Nordsee Ost", "Nordsee Ost"},
		{TypeOther, `{"a": 1}`, `{"a": 1}`},
	}
	for _, tt := range tests {
		got, err := fromText(tt.kind, tt.in)
		checkValue(t, fmt.Sprintf("fromText(%s, %q)", tt.kind, tt.in), got, err, tt.want)
	}
}

func TestNormalize(t *testing.T) {
	tests := []struct {
		kind TypeKind
		in   any
		want any
	}{
		{TypeInteger, int64(7), int64(7)},
		{TypeInteger, uint64(1 << 63), errAny},
		{TypeDecimal, uint64(1 << 63), "9223372036854775808"},
		{TypeInteger, []byte("12"), int64(12)},
		{TypeInteger, 3.0, int64(3)},
		{TypeInteger, 3.5, errAny},
		{TypeFloat, float32(1.65), 1.65},
		{TypeFloat, int64(2), 2.0},
		{TypeDecimal, -12.5, "-12.5"},
		{TypeDecimal, int64(12), "12"},
		{TypeDecimal, []byte("-12.50"), "-12.50"},
		{TypeBoolean, int64(0), false},
		{TypeBoolean, []byte{1}, true}, // MySQL BIT(1)
		{TypeBoolean, []byte("1"), true},
		{TypeBoolean, "false", false},
		{TypeBinary, []byte{0, 0xff}, []byte{0, 0xff}},
		{TypeBinary, "ab", []byte("ab")},
		{TypeDate, time.Date(2024, 3, 1, 23, 0, 0, 0, time.FixedZone("", -3600)), time.Date(2024, 3, 1, 0, 0, 0, 0, time.UTC)},
		{TypeTimestamp, time.Date(2024, 3, 1, 13, 0, 0, 0, time.FixedZone("", 3600)), time.Date(2024, 3, 1, 12, 0, 0, 0, time.UTC)},
		{TypeTimestamp, int64(0), time.Unix(0, 0).UTC()},
		{TypeTime, time.Date(0, 1, 1, 13, 45, 30, 0, time.UTC), "13:45:30"},
		{TypeString, int64(5), "5"},
		{TypeString, 0.5, "0.5"},
		{TypeDate, true, errAny},
		{TypeInteger, nil, nil},
	}
	for _, tt := range tests {
		got, err := normalize(tt.kind, tt.in)
		checkValue(t, fmt.Sprintf("normalize(%s, %#v)", tt.kind, tt.in), got, err, tt.want)
	}
}

func TestPGValue(t *testing.T) {
	tests := []struct {
		kind TypeKind
		in   []byte
		want any
	}{
		{TypeBinary, []byte(`\x0102ff`), []byte{1, 2, 0xff}},
		{TypeBinary, []byte(`\001`), errAny}, // escape format: bytea_output is set to hex
		{TypeBoolean, []byte("t"), true},
		{TypeBoolean, []byte("f"), false},
		{TypeString, []byte{}, ""},
		{TypeString, nil, nil},
	}
	for _, tt := range tests {
		got, err := pgValue(tt.kind, tt.in)
		checkValue(t, fmt.Sprintf("pgValue(%s, %q)", tt.kind, tt.in), got, err, tt.want)
	}
}

// errAny, as a wanted value, means that any error will do.
var errAny = fmt.Errorf("any error")

var negInf = math.Inf(-1)

func checkValue(t *testing.T, call string, got any, err error, want any) {
	t.Helper()
	if want == errAny {
		if err == nil {
			t.Errorf("%s = %#v, want an error", call, got)
		}
		return
	}
	if err != nil {
		t.Errorf("%s: %v", call, err)
		return
	}
	switch w := want.(type) {
	case time.Time:
		g, ok := got.(time.Time)
		_, goff := g.Zone()
		_, woff := w.Zone()
		if !ok || !g.Equal(w) || goff != woff {
			t.Errorf("%s = %v, want %v", call, got, w)
		}
	default:
		if fmt.Sprintf("%T %v", got, got) != fmt.Sprintf("%T %v", want, want) {
			t.Errorf("%s = %#v, want %#v", call, got, want)
		}
	}
}

func TestKinds(t *testing.T) {
	tests := []struct {
		d    Dialect
		typ  string
		want TypeKind
	}{
		// MySQL: result type names from the driver, and COLUMN_TYPE spellings.
		{MySQL, "UNSIGNED BIGINT", TypeInteger},
		{MySQL, "DECIMAL", TypeDecimal},
		{MySQL, "tinyint(1)", TypeBoolean},
		{MySQL, "tinyint(1) unsigned", TypeBoolean},
		{MySQL, "tinyint(4)", TypeInteger},
		{MySQL, "bit(1)", TypeBoolean},
		{MySQL, "bit(8)", TypeBinary},
		{MySQL, "VARBINARY", TypeBinary},
		{MySQL, "LONGTEXT", TypeString},
		{MySQL, "decimal(10,2) unsigned", TypeDecimal},
		{MySQL, "datetime(6)", TypeTimestamp},
		{MySQL, "JSON", TypeOther},
		// SQLite: declared types, by name first, then by affinity (SQLite,
		// "Datatypes In SQLite" §3.1, whose examples these are; from memory).
		{SQLite, "BOOLEAN", TypeBoolean},
		{SQLite, "NUMERIC(10,2)", TypeDecimal},
		{SQLite, "UNSIGNED BIG INT", TypeInteger},
		{SQLite, "NATIVE CHARACTER(70)", TypeString},
		{SQLite, "CLOB", TypeString},
		{SQLite, "BLOB", TypeBinary},
		{SQLite, "DOUBLE PRECISION", TypeFloat},
		{SQLite, "FLOATING POINT", TypeInteger}, // "INT" comes first: §3.1's own example
		{SQLite, "VARBINARY(200)", TypeBinary},
		{SQLite, "datetime", TypeTimestamp},
	}
	for _, tt := range tests {
		var got TypeKind
		switch tt.d {
		case MySQL:
			got = mysqlKind(tt.typ)
		case SQLite:
			got, _ = sqliteKind(tt.typ)
		}
		if got != tt.want {
			t.Errorf("%s kind of %q = %s, want %s", tt.d, tt.typ, got, tt.want)
		}
	}
	for _, decl := range []string{"", "MONEY"} {
		if _, ok := sqliteKind(decl); ok {
			t.Errorf("sqliteKind(%q) claims a kind; the values must decide", decl)
		}
	}
	if pgKind("timetz") != TypeOther || pgKind("int8") != TypeInteger || pgKind("bpchar") != TypeString {
		t.Error("pgKind misclassifies timetz, int8 or bpchar")
	}
}
