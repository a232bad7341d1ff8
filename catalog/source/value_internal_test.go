package source

import (
	"strconv"
	"strings"
	"testing"
	"time"
)

// TestPlainTimestamp checks the direct reading of zone-less timestamps
// against the standard library's parser of the same layout, on valid text,
// text past a month's end or a day's, and text of other shapes.
func TestPlainTimestamp(t *testing.T) {
	for _, s := range []string{
		"2024-02-29 23:59:59", "2023-01-02 03:04:05.5", "2023-01-02 03:04:05.123456",
		"2023-01-02 03:04:05.123456789", "0001-01-01 00:00:00", "9999-12-31 23:59:59.999999",
		"2023-02-29 10:00:00", "2023-04-31 10:00:00", "2023-13-01 10:00:00", "2023-00-10 10:00:00",
		"2023-01-01 24:00:00", "2023-01-01 10:60:00", "2023-01-01 10:00:60", "2023-01-01 10:00:00.",
		"2023-01-01 10:00:0x", "2023/01/01 10:00:00", "2023-01-01T10:00:00", "2023-01-01 10:00",
	} {
		want, werr := time.ParseInLocation("2006-01-02 15:04:05.999999999", s, time.UTC)
		got, ok := plainTimestamp(s)
		if ok != (werr == nil) && !(werr == nil && strings.Contains(s, "T")) {
			t.Errorf("%q: read %v, the standard parser says %v", s, ok, werr)
			continue
		}
		if ok && !got.Equal(want) {
			t.Errorf("%q: %v, want %v", s, got, want)
		}
		if full, err := parseTimestamp(s); werr == nil && (err != nil || !full.Equal(want)) {
			t.Errorf("parseTimestamp(%q) = %v, %v; want %v", s, full, err, want)
		}
	}
}

// TestPlainInteger checks the direct reading of integers against
// strconv.ParseInt on the forms databases print and on ones it must leave to
// the general parser.
func TestPlainInteger(t *testing.T) {
	for _, s := range []string{"0", "7", "-7", "123456789012345678", "-123456789012345678",
		"1234567890123456789", "", "-", "+1", "1e3", "12a", " 1"} {
		want, werr := strconv.ParseInt(s, 10, 64)
		got, ok := plainInteger([]byte(s))
		if ok && (werr != nil || got != want) {
			t.Errorf("%q: read %d, strconv says %d, %v", s, got, want, werr)
		}
		if !ok && werr == nil && len(strings.TrimPrefix(s, "-")) <= 18 && !strings.HasPrefix(s, "+") {
			t.Errorf("%q: not read, strconv reads %d", s, want)
		}
	}
}
