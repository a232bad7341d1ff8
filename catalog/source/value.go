package source

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
	"time"
)

// fromText converts the text form of a value into the Go type that k names.
// The text forms are those the databases print: PostgreSQL's ISO styles,
// MySQL's text protocol, and what SQLite applications commonly store.
func fromText(k TypeKind, s string) (any, error) {
	switch k {
	case TypeInteger:
		return strconv.ParseInt(s, 10, 64)
	case TypeDecimal:
		if !isDecimal(s) {
			return nil, fmt.Errorf("%q is not a decimal number", s)
		}
		return s, nil
	case TypeFloat, TypeReal:
		return strconv.ParseFloat(s, 64)
	case TypeBoolean:
		return strconv.ParseBool(s)
	case TypeBinary:
		return []byte(s), nil
	case TypeDate:
		if isZeroDate(s) {
			return nil, nil
		}
		t, err := time.Parse(time.DateOnly, s[:min(len(s), len(time.DateOnly))])
		if err != nil {
			return nil, fmt.Errorf("%q is not a date", s)
		}
		return t, nil
	case TypeTime:
		if !isTimeOfDay(s) {
			return nil, fmt.Errorf("%q is not a time of day", s)
		}
		return s, nil
	case TypeTimestamp, TypeTimestampTZ:
		if isZeroDate(s) {
			return nil, nil
		}
		t, err := parseTimestamp(s)
		if err != nil {
			return nil, err
		}
		if k == TypeTimestamp {
			t = t.UTC()
		}
		return t, nil
	}
	return s, nil
}

// isZeroDate reports MySQL's "zero" date, which it lets NOT NULL columns hold
// in place of a missing value, and which matches IS NULL in such columns
// (MySQL reference manual, "Comparison Functions and Operators", IS NULL;
// from memory); it is read as NULL.
func isZeroDate(s string) bool { return strings.HasPrefix(s, "0000-00-00") }

// isDecimal reports whether s is an xsd:decimal numeral (XSD 1.1 Part 2
// §3.3.3, from memory): an optional sign, then digits with an optional fraction, or a
// fraction alone.
func isDecimal[T ~string | ~[]byte](s T) bool {
	if len(s) > 0 && (s[0] == '+' || s[0] == '-') {
		s = s[1:]
	}
	digits, point := 0, false
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case '0' <= c && c <= '9':
			digits++
		case c == '.' && !point:
			point = true
		default:
			return false
		}
	}
	return digits > 0
}

func allDigits(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return true
}

// isTimeOfDay reports whether s has the form HH:MM:SS[.fraction] with hours
// 00 to 23 and minutes and seconds 00 to 59, or is 24:00:00, which PostgreSQL
// allows and XSD 1.0 reads as the end of the day (XSD 1.0 Part 2 §3.2.8, from
// memory).
func isTimeOfDay(s string) bool {
	if s == "24:00:00" {
		return true
	}
	hms, frac, hasFrac := strings.Cut(s, ".")
	if len(hms) != 8 || hms[2] != ':' || hms[5] != ':' || (hasFrac && (frac == "" || !allDigits(frac))) {
		return false
	}
	h, m, sec := hms[0:2], hms[3:5], hms[6:8]
	return allDigits(h+m+sec) && h <= "23" && m <= "59" && sec <= "59"
}

// parseTimestamp reads "YYYY-MM-DD[( |T)HH:MM[:SS[.fraction]]][zone]", where the
// zone is Z or an offset ±HH, ±HHMM, ±HH:MM or ±HH:MM:SS. Without a zone the
// time is read as UTC.
func parseTimestamp(s string) (time.Time, error) {
	if t, ok := plainTimestamp(s); ok {
		return t, nil
	}
	bad := fmt.Errorf("%q is not a timestamp", s)
	if len(s) < len(time.DateOnly) {
		return time.Time{}, bad
	}
	date, clock := s[:len(time.DateOnly)], s[len(time.DateOnly):]
	if clock != "" {
		if clock[0] != ' ' && clock[0] != 'T' {
			return time.Time{}, bad
		}
		clock = clock[1:]
	}
	loc := time.UTC
	if c, ok := strings.CutSuffix(clock, "Z"); ok {
		clock = c
	} else if i := strings.LastIndexAny(clock, "+-"); i >= 0 {
		off, err := parseOffset(clock[i:])
		if err != nil {
			return time.Time{}, bad
		}
		clock, loc = clock[:i], time.FixedZone("", off)
	}
	layout := time.DateOnly
	switch {
	case clock == "":
	case len(clock) == len("15:04"):
		layout += " 15:04"
	default:
		layout += " 15:04:05.999999999"
	}
	t, err := time.ParseInLocation(layout, strings.TrimSpace(date+" "+clock), loc)
	if err != nil {
		return time.Time{}, bad
	}
	return t, nil
}

// plainInteger reads an integer of at most 18 digits, as databases print
// them, without the general parser; other text is not for it (ok false).
func plainInteger(b []byte) (n int64, ok bool) {
	digits := b
	if len(digits) > 0 && digits[0] == '-' {
		digits = digits[1:]
	}
	if len(digits) == 0 || len(digits) > 18 {
		return 0, false
	}
	for _, c := range digits {
		if c < '0' || c > '9' {
			return 0, false
		}
		n = n*10 + int64(c-'0')
	}
	if len(digits) < len(b) {
		n = -n
	}
	return n, true
}

// plainTimestamp reads the form databases print timestamps without a zone in,
// "YYYY-MM-DD HH:MM:SS" with up to nine digits of fraction, directly: a large
// answer holds many of them. Other text is not for it (ok false).
func plainTimestamp[T ~string | ~[]byte](s T) (t time.Time, ok bool) {
	if len(s) < len("2006-01-02 15:04:05") || len(s) > len("2006-01-02 15:04:05.999999999") ||
		s[4] != '-' || s[7] != '-' || s[10] != ' ' || s[13] != ':' || s[16] != ':' {
		return time.Time{}, false
	}
	num := func(from, to int) (int, bool) {
		n := 0
		for i := from; i < to; i++ {
			c := s[i]
			if c < '0' || c > '9' {
				return 0, false
			}
			n = n*10 + int(c-'0')
		}
		return n, true
	}
	year, ok1 := num(0, 4)
	month, ok2 := num(5, 7)
	day, ok3 := num(8, 10)
	hour, ok4 := num(11, 13)
	minute, ok5 := num(14, 16)
	sec, ok6 := num(17, 19)
	nsec := 0
	if len(s) > 19 {
		if s[19] != '.' || len(s) == 20 {
			return time.Time{}, false
		}
		frac, ok := num(20, len(s))
		if !ok {
			return time.Time{}, false
		}
		for range 9 - (len(s) - 20) {
			frac *= 10
		}
		nsec = frac
	}
	if !ok1 || !ok2 || !ok3 || !ok4 || !ok5 || !ok6 || month < 1 || month > 12 || day < 1 || hour > 23 || minute > 59 || sec > 59 {
		return time.Time{}, false
	}
	t = time.Date(year, time.Month(month), day, hour, minute, sec, nsec, time.UTC)
	if t.Day() != day {
		return time.Time{}, false // past the month's end: the general parser says why
	}
	return t, true
}

// parseOffset reads a zone offset ±HH, ±HHMM, ±HH:MM or ±HH:MM:SS into seconds.
func parseOffset(s string) (int, error) {
	sign := 1
	if s[0] == '-' {
		sign = -1
	}
	digits := strings.ReplaceAll(s[1:], ":", "")
	if (len(digits) != 2 && len(digits) != 4 && len(digits) != 6) || !allDigits(digits) {
		return 0, errors.New("bad offset")
	}
	secs := 0
	for i, unit := range []int{3600, 60, 1} {
		if 2*i < len(digits) {
			n, _ := strconv.Atoi(digits[2*i : 2*i+2])
			secs += n * unit
		}
	}
	return sign * secs, nil
}

// normalize converts a value that database/sql scanned into an *any from a
// MySQL or SQLite driver into the Go type that k names. The drivers hand out
// int64, uint64, float32, float64, bool, []byte, string, time.Time or nil,
// depending on the protocol and, for SQLite, on what the row stores; a []byte
// is already a copy that database/sql made for the scan.
func normalize(k TypeKind, v any) (any, error) {
	// The values that stay as they are go back in the interface they came
	// in, which spares a large answer an allocation per value.
	switch v.(type) {
	case string:
		if k == TypeString || k == TypeOther {
			return v, nil
		}
	case int64:
		if k == TypeInteger {
			return v, nil
		}
	case float64:
		if k == TypeFloat || k == TypeReal {
			return v, nil
		}
	case time.Time:
		if k == TypeTimestampTZ {
			return v, nil
		}
	}
	switch v := v.(type) {
	case nil:
		return nil, nil
	case []byte:
		switch {
		case k == TypeBinary:
			return v, nil
		case k == TypeBoolean && len(v) == 1 && v[0] <= 1:
			return v[0] == 1, nil // MySQL BIT(1)
		}
		return fromText(k, string(v))
	case string:
		return fromText(k, v)
	case int64:
		return fromInt(k, v)
	case uint64:
		if v <= 1<<63-1 {
			return fromInt(k, int64(v))
		}
		if k == TypeDecimal || k == TypeString || k == TypeOther {
			return strconv.FormatUint(v, 10), nil
		}
	case float32:
		// The shortest decimal that reads back as the float32, read as a
		// float64: 1.65 rather than 1.6499999761581421.
		f, _ := strconv.ParseFloat(strconv.FormatFloat(float64(v), 'g', -1, 32), 64)
		return fromFloat(k, f)
	case float64:
		return fromFloat(k, v)
	case bool:
		switch k {
		case TypeBoolean:
			return v, nil
		case TypeInteger:
			if v {
				return int64(1), nil
			}
			return int64(0), nil
		}
	case time.Time:
		switch k {
		case TypeDate:
			return time.Date(v.Year(), v.Month(), v.Day(), 0, 0, 0, 0, time.UTC), nil
		case TypeTimestamp:
			return v.UTC(), nil
		case TypeTimestampTZ:
			return v, nil
		case TypeTime:
			return v.Format("15:04:05.999999999"), nil
		case TypeString, TypeOther:
			return v.Format(time.RFC3339Nano), nil
		}
	}
	return nil, fmt.Errorf("cannot read a %T value as %s", v, k)
}

func fromInt(k TypeKind, v int64) (any, error) {
	switch k {
	case TypeInteger:
		return v, nil
	case TypeBoolean:
		return v != 0, nil
	case TypeFloat, TypeReal:
		return float64(v), nil
	case TypeDecimal, TypeString, TypeOther:
		return strconv.FormatInt(v, 10), nil
	case TypeTimestamp, TypeTimestampTZ:
		// SQLite's date and time functions read an integer as Unix time.
		return time.Unix(v, 0).UTC(), nil
	}
	return nil, fmt.Errorf("cannot read an integer as %s", k)
}

func fromFloat(k TypeKind, v float64) (any, error) {
	switch k {
	case TypeFloat, TypeReal:
		return v, nil
	case TypeDecimal:
		s := strconv.FormatFloat(v, 'f', -1, 64)
		if !isDecimal(s) {
			return nil, fmt.Errorf("%v is not a decimal number", v)
		}
		return s, nil
	case TypeInteger:
		if v == float64(int64(v)) {
			return int64(v), nil
		}
	case TypeString, TypeOther:
		return strconv.FormatFloat(v, 'g', -1, 64), nil
	}
	return nil, fmt.Errorf("cannot read the number %v as %s", v, k)
}
