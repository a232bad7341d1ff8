package exec

import (
	"math/big"
	"strconv"
	"strings"
	"time"

	"veneer/catalog/rdf"
)

// temporal is a parsed xsd:dateTime, xsd:date or xsd:time. The fields are as
// the lexical form gives them (HOURS and MINUTES return them unnormalised,
// §17.4.5.5); the zone is kept as written for TZ.
type temporal struct {
	year                 int
	month, day           int
	hour, minute, second int
	frac                 string // fractional-second digits, without the point
	hasZone              bool
	zoneMinutes          int
	zone                 string // "Z", "+05:00", ... or "" when there is none
}

// parseTemporal reads a literal of one of the three date-time types; false for
// other datatypes and invalid lexical forms.
func parseTemporal(l rdf.Literal) (temporal, bool) {
	s := l.Lexical // no white space, as numberOf says
	var t temporal
	var ok bool
	switch l.Datatype {
	case rdf.XSDDateTime:
		date, clock, found := strings.Cut(s, "T")
		if !found {
			return t, false
		}
		var rest string
		if rest, ok = t.parseDate(date, false); !ok || rest != "" {
			return t, false
		}
		if rest, ok = t.parseClock(clock); !ok {
			return t, false
		}
		ok = t.parseZone(rest)
	case rdf.XSDDate:
		var rest string
		if rest, ok = t.parseDate(s, true); ok {
			ok = t.parseZone(rest)
		}
	case rdf.XSDTime:
		t.year, t.month, t.day = 1972, 12, 31 // XML Schema's reference date for times
		var rest string
		if rest, ok = t.parseClock(s); ok {
			ok = t.parseZone(rest)
		}
	}
	return t, ok
}

// parseDate reads -?YYYY-MM-DD; with zoned it returns what follows the day (a
// zone), else it requires the input to end there.
func (t *temporal) parseDate(s string, zoned bool) (string, bool) {
	neg := strings.HasPrefix(s, "-")
	if neg {
		s = s[1:]
	}
	i := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
	}
	if i < 4 || i > 4 && s[0] == '0' || len(s) < i+6 || s[i] != '-' || s[i+3] != '-' {
		return "", false
	}
	y, err := strconv.Atoi(s[:i])
	if err != nil || y == 0 {
		return "", false
	}
	if neg {
		y = -y
	}
	m, ok1 := twoDigits(s[i+1 : i+3])
	d, ok2 := twoDigits(s[i+4 : i+6])
	if !ok1 || !ok2 || m < 1 || m > 12 || d < 1 || d > daysIn(y, m) {
		return "", false
	}
	t.year, t.month, t.day = y, m, d
	rest := s[i+6:]
	if !zoned && rest != "" {
		return "", false
	}
	return rest, true
}

// parseClock reads hh:mm:ss(.s+)? and returns what follows (a zone).
func (t *temporal) parseClock(s string) (string, bool) {
	if len(s) < 8 || s[2] != ':' || s[5] != ':' {
		return "", false
	}
	h, ok1 := twoDigits(s[0:2])
	m, ok2 := twoDigits(s[3:5])
	sec, ok3 := twoDigits(s[6:8])
	if !ok1 || !ok2 || !ok3 || m > 59 || sec > 59 || h > 24 {
		return "", false
	}
	rest := s[8:]
	if strings.HasPrefix(rest, ".") {
		j := 1
		for j < len(rest) && rest[j] >= '0' && rest[j] <= '9' {
			j++
		}
		if j == 1 {
			return "", false
		}
		t.frac = rest[1:j]
		rest = rest[j:]
	}
	if h == 24 && (m != 0 || sec != 0 || strings.Trim(t.frac, "0") != "") {
		return "", false
	}
	t.hour, t.minute, t.second = h, m, sec
	return rest, true
}

// parseZone reads the optional zone: Z or ±hh:mm with |offset| <= 14:00.
func (t *temporal) parseZone(s string) bool {
	switch {
	case s == "":
		return true
	case s == "Z":
		t.hasZone, t.zone = true, s
		return true
	case len(s) == 6 && (s[0] == '+' || s[0] == '-') && s[3] == ':':
		h, ok1 := twoDigits(s[1:3])
		m, ok2 := twoDigits(s[4:6])
		if !ok1 || !ok2 || m > 59 || h*60+m > 14*60 {
			return false
		}
		t.zoneMinutes = h*60 + m
		if s[0] == '-' {
			t.zoneMinutes = -t.zoneMinutes
		}
		t.hasZone, t.zone = true, s
		return true
	}
	return false
}

func twoDigits(s string) (int, bool) {
	if len(s) != 2 || !allDigits(s) {
		return 0, false
	}
	return int(s[0]-'0')*10 + int(s[1]-'0'), true
}

func daysIn(year, month int) int {
	return time.Date(year, time.Month(month)+1, 0, 0, 0, 0, 0, time.UTC).Day()
}

// instant is the moment the value stands for; a value without a zone is taken
// in UTC, the implicit zone veneer uses (XPath lets the implementation choose).
func (t temporal) instant() time.Time {
	nanos := 0
	if t.frac != "" {
		digits := (t.frac + "000000000")[:9]
		nanos, _ = strconv.Atoi(digits)
	}
	loc := time.UTC
	if t.zoneMinutes != 0 {
		loc = time.FixedZone(t.zone, t.zoneMinutes*60)
	}
	return time.Date(t.year, time.Month(t.month), t.day, t.hour, t.minute, t.second, nanos, loc)
}

// compareTemporal is the order of XML Schema 1.0 Part 2 §3.2.7.4: values
// with zones, or both without, compare as instants; a value without a zone
// stands for every moment its clock time takes from zone +14:00 to -14:00, so
// against one with a zone it is smaller or greater only when all those
// moments are, and otherwise the two are incomparable (an error, as the DAWG
// open-world date-1 to date-3 tests expect for "2006-08-23Z" = "2006-08-23").
func compareTemporal(a, b temporal) (int, bool) {
	if a.hasZone == b.hasZone {
		return a.instant().Compare(b.instant()), true
	}
	if !a.hasZone {
		c, ok := compareTemporal(b, a)
		return -c, ok
	}
	const span = 14 * time.Hour
	p, q := a.instant(), b.instant()
	switch {
	case p.Before(q.Add(-span)):
		return -1, true
	case p.After(q.Add(span)):
		return 1, true
	}
	return 0, false
}

// seconds is the seconds field with its fraction, as SECONDS returns it.
func (t temporal) seconds() number {
	r, _ := new(big.Rat).SetString(strconv.Itoa(t.second) + "." + t.frac + "0")
	return number{kind: kindDecimal, exact: r}
}

// timezoneDuration is the zone as an xsd:dayTimeDuration (TIMEZONE, §17.4.5.8):
// "PT0S", "-PT5H", "PT5H30M".
func (t temporal) timezoneDuration() string {
	m := t.zoneMinutes
	if m == 0 {
		return "PT0S"
	}
	var b strings.Builder
	if m < 0 {
		b.WriteByte('-')
		m = -m
	}
	b.WriteString("PT")
	if m/60 > 0 {
		b.WriteString(strconv.Itoa(m / 60))
		b.WriteByte('H')
	}
	if m%60 > 0 {
		b.WriteString(strconv.Itoa(m % 60))
		b.WriteByte('M')
	}
	return b.String()
}

// nowLiteral is the xsd:dateTime NOW() returns for a run that starts at t.
func nowLiteral(t time.Time) rdf.Literal {
	return rdf.NewTyped(t.Format("2006-01-02T15:04:05.999999999Z07:00"), rdf.XSDDateTime)
}

// dateTimeField compiles YEAR, MONTH, DAY, HOURS, MINUTES, SECONDS, TIMEZONE
// and TZ (§17.4.5). Their argument is an xsd:dateTime; YEAR, MONTH, DAY,
// TIMEZONE and TZ also take an xsd:date, as the XPath functions of the same
// meaning do.
func dateTimeField(field string) func(*run, []rdf.Term) (rdf.Term, error) {
	return func(_ *run, args []rdf.Term) (rdf.Term, error) {
		lit, ok := args[0].(rdf.Literal)
		if !ok {
			return nil, errExpr
		}
		dateOK := field == "YEAR" || field == "MONTH" || field == "DAY" || field == "TIMEZONE" || field == "TZ"
		if lit.Datatype != rdf.XSDDateTime && !(dateOK && lit.Datatype == rdf.XSDDate) {
			return nil, errExpr
		}
		t, ok := parseTemporal(lit)
		if !ok {
			return nil, errExpr
		}
		integer := func(i int) rdf.Term { return number{kind: kindInteger, small: int64(i)}.literal() }
		switch field {
		case "YEAR":
			return integer(t.year), nil
		case "MONTH":
			return integer(t.month), nil
		case "DAY":
			return integer(t.day), nil
		case "HOURS":
			return integer(t.hour), nil
		case "MINUTES":
			return integer(t.minute), nil
		case "SECONDS":
			return t.seconds().literal(), nil
		case "TIMEZONE":
			if !t.hasZone {
				return nil, errExpr
			}
			return rdf.NewTyped(t.timezoneDuration(), rdf.XSDNS+"dayTimeDuration"), nil
		}
		return rdf.NewString(t.zone), nil
	}
}
