package faults

import (
	"bytes"
	"encoding/csv"
	"encoding/xml"
	"errors"
	"io"
	"net/http"
	"net/url"
	"strings"
	"testing"
	"time"

	"veneer/conformance/differential"
)

// pairsQuery pairs every work order with every inspection: 2000 × 1500
// solutions, far more than a client reads before the test cuts the
// database's connection.
const pairsQuery = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
SELECT ?order ?number ?inspection WHERE {
  ?order wf:orderNumber ?number .
  ?inspection a <https://vocab.veneer.example/windfarm#Inspection> .
}`

// streamedBytes is how much of the answer the client reads before the
// database's side of the statement is killed: well past the rows the server
// holds back before it sends the status (server.holdRows, 512).
const streamedBytes = 256 << 10

// midStream kills veneer's sessions while a large answer streams, in each
// result format, and checks that the client sees the transfer fail and that
// what it got does not read as a complete document. It runs on a veneer
// process of its own with a long query timeout, so that only the kill can
// end the answer early.
func midStream(t *testing.T, _ *veneer, db database, _ int) {
	v := startVeneer(t, db.DSN(), "--query-timeout", "60s")
	warm(t, v)
	before := v.baseline()
	failures := v.metrics()["veneer_stream_failures_total"]
	// Each reader of the formats' own grammar; CSV and TSV have no trailer,
	// so for them the broken transfer is the only signal (SPARQL 1.1 Query
	// Results CSV and TSV Formats §2, §3).
	formats := []struct {
		accept string
		// complete reports whether body reads as a whole document.
		complete func(body []byte) error
	}{
		{"application/sparql-results+json", func(b []byte) error {
			if _, err := differential.ParseResultsJSON(b); err != nil {
				return err
			}
			_, err := bindings(b)
			return err
		}},
		// SPARQL Query Results XML Format §2: the document ends with
		// </results></sparql>.
		{"application/sparql-results+xml", func(b []byte) error {
			dec := xml.NewDecoder(bytes.NewReader(b))
			for {
				if _, err := dec.Token(); err != nil {
					if errors.Is(err, io.EOF) {
						return nil
					}
					return err
				}
			}
		}},
		{"text/csv", func(b []byte) error {
			_, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
			return err
		}},
		{"text/tab-separated-values", func(b []byte) error {
			r := csv.NewReader(bytes.NewReader(b))
			r.Comma, r.LazyQuotes, r.FieldsPerRecord = '\t', true, 3
			_, err := r.ReadAll()
			return err
		}},
	}
	for _, f := range formats {
		body, readErr, killed := streamAndKill(t, v, db, f.accept)
		t.Logf("%s: read %d bytes, killed %d sessions, then: %v", f.accept, len(body), killed, readErr)
		if readErr == nil {
			t.Errorf("%s: the body ended cleanly after the database failed; the client cannot tell it is cut short", f.accept)
		}
		docErr := f.complete(body)
		switch {
		case strings.Contains(f.accept, "json") || strings.Contains(f.accept, "xml"):
			if docErr == nil {
				t.Errorf("%s: %d bytes received parse as a complete document", f.accept, len(body))
			}
		default:
			t.Logf("%s: the rows received read %v (no trailer to miss)", f.accept, docErr)
		}
	}
	if got := v.metrics()["veneer_stream_failures_total"] - failures; got != float64(len(formats)) {
		t.Errorf("%v stream failures counted, want %d", got, len(formats))
	}
	// Each abort is logged with the database's failure, classified as the
	// database being unavailable (503), not as a fault of veneer's (500).
	aborts := 0
	for line := range strings.Lines(v.Logs()) {
		if strings.Contains(line, "the answer failed while streaming") {
			aborts++
			t.Logf("logged: %s", strings.TrimSpace(line))
			if !strings.Contains(line, `"status":503`) {
				t.Errorf("the abort is not classified as the database being unavailable: %s", line)
			}
		}
	}
	if aborts != len(formats) {
		t.Errorf("%d aborted answers in the log, want %d", aborts, len(formats))
	}
	if o := sortReplies(startLoadFor(v, 500*time.Millisecond), warm(t, v)); len(o.bad)+len(o.refused) > 0 {
		t.Errorf("after the kills: %d refusals, %d faults", len(o.refused), len(o.bad))
	}
	v.checkBaseline(t, before, maxConns)
	v.Stop()
}

// streamAndKill asks pairsQuery in the format accept, reads streamedBytes
// of the answer, kills veneer's sessions, and reads on to the end.
func streamAndKill(t *testing.T, v *veneer, db database, accept string) (body []byte, readErr error, killed int) {
	t.Helper()
	req, err := http.NewRequest("GET", v.URL+"?query="+url.QueryEscape(pairsQuery), nil)
	if err != nil {
		t.Fatal(err)
	}
	req.Header.Set("Accept", accept)
	client := &http.Client{Timeout: 90 * time.Second}
	resp, err := client.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	if resp.StatusCode != 200 {
		b, _ := io.ReadAll(resp.Body)
		t.Fatalf("%s: status %d: %.200s", accept, resp.StatusCode, b)
	}
	head := make([]byte, streamedBytes)
	if _, err := io.ReadFull(resp.Body, head); err != nil {
		t.Fatalf("%s: the answer ended before %d bytes: %v", accept, streamedBytes, err)
	}
	killed = db.KillVeneer()
	rest, readErr := io.ReadAll(resp.Body)
	return append(head, rest...), readErr, killed
}
