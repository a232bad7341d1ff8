package server

import (
	"math/rand/v2"
	"net/url"
	"reflect"
	"strings"
	"testing"
)

func TestParseForm(t *testing.T) {
	// The reference is Go's own net/url.ParseQuery: the same pairs for text
	// it reads, an error for text it refuses.
	cases := []string{
		"",
		"query=SELECT+*+WHERE+%7B+%3Fs+%3Fp+%3Fo+%7D",
		"query=ASK%7B%7D&default-graph-uri=http%3A%2F%2Fwind.example%2Fg&default-graph-uri=x",
		"a&b=&=c&&d=1=2",
		"q=%e2%82%ac+%E2%82%AC",
		"q=%",
		"q=%4",
		"q=%zz",
		"q=1;r=2",
		"%41%42=%43",
	}
	letters := "ab=&%+;4Fz~ "
	rnd := rand.New(rand.NewPCG(7, 11))
	for range 5000 {
		var b strings.Builder
		for range rnd.IntN(24) {
			b.WriteByte(letters[rnd.IntN(len(letters))])
		}
		cases = append(cases, b.String())
	}
	for _, c := range cases {
		want, werr := url.ParseQuery(c)
		got, err := parseForm(c)
		if (err != nil) != (werr != nil) {
			t.Errorf("%q: error %v, net/url's %v", c, err, werr)
			continue
		}
		if err == nil && !reflect.DeepEqual(got, want) {
			t.Errorf("%q: %v, net/url reads %v", c, got, want)
		}
	}
	if _, err := parseForm("query=ASK%7B%7&x=1"); err == nil || !strings.Contains(err.Error(), "byte 13") {
		t.Errorf("bad escape: %v, want its place, byte 13", err)
	}
}
