package bench

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// Summary is the run's last line: `bench DB sf=N: median ratio R, worst ratio
// W, translation median T us`, n/a where no query gave a ratio.
func (r *Report) Summary() string {
	return fmt.Sprintf("bench %s sf=%s: median ratio %s, worst ratio %s, translation median %.0f us",
		r.DB, strconv.FormatFloat(r.SF, 'f', -1, 64), ratio(r.MedianRatio), ratio(r.WorstRatio), us(r.TranslationMedian))
}

func ratio(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "n/a"
	}
	return strconv.FormatFloat(x, 'f', 2, 64)
}

// Failed lists the queries without a ratio.
func (r *Report) Failed() []string {
	var names []string
	for _, q := range r.Queries {
		if !q.Equal || q.Error != "" {
			names = append(names, q.Name)
		}
	}
	return names
}

// WriteMarkdown writes the report's tables.
func (r *Report) WriteMarkdown(w io.Writer) error {
	var b strings.Builder
	fmt.Fprintf(&b, "### %s, SF %s\n\n", r.DB, strconv.FormatFloat(r.SF, 'f', -1, 64))
	if r.Load != "" {
		fmt.Fprintf(&b, "%s\n\n", r.Load)
	}
	b.WriteString("| query | kind | rows | veneer ms | SQL ms | ratio | translate µs | runs | answers |\n")
	b.WriteString("| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | --- |\n")
	for _, q := range r.Queries {
		check, rat := "equal", ratio(q.Ratio)
		if q.Error != "" {
			check, rat = strings.ReplaceAll(truncate(q.Error, 160), "|", `\|`), "—"
		}
		fmt.Fprintf(&b, "| %s | %s | %d | %s | %s | %s | %.1f | %d | %s |\n",
			q.Name, q.Kind, q.Rows, msCell(q.Veneer), msCell(q.SQL), rat, us(q.Translate), q.Runs, check)
	}
	fmt.Fprintf(&b, "\nmedian ratio %s, worst ratio %s (%s), translation median %.0f µs; %d of %d queries with equal answers\n",
		ratio(r.MedianRatio), ratio(r.WorstRatio), r.WorstQuery, us(r.TranslationMedian),
		len(r.Queries)-len(r.Failed()), len(r.Queries))
	if len(r.Throughput) > 0 {
		t0 := r.Throughput[0]
		fmt.Fprintf(&b, "\nThroughput, %d clients, %.0f s per side:\n\n", t0.Clients, t0.Seconds)
		b.WriteString("| query | veneer q/s | SQL q/s | ratio | veneer p50 / p99 ms | SQL p50 / p99 ms | errors (veneer / SQL) | CPU µs per answer, veneer (process / rest) | CPU µs per answer, SQL (process / rest) |\n")
		b.WriteString("| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |\n")
		for _, t := range r.Throughput {
			fmt.Fprintf(&b, "| %s | %.0f | %.0f | %s | %.2f / %.2f | %.2f / %.2f | %d / %d | %s | %s |\n",
				t.Query, t.VeneerQPS, t.SQLQPS, ratio(t.Ratio), ms(t.VeneerP50), ms(t.VeneerP99),
				ms(t.SQLP50), ms(t.SQLP99), t.VeneerErrors, t.SQLErrors,
				cpuCell(t.VeneerCPU, t.VeneerRestCPU), cpuCell(t.SQLCPU, t.SQLRestCPU))
		}
		b.WriteString("\nThe process is the load generator with both servers; the rest is the database server and whatever else the machine runs.\n")
		for _, t := range r.Throughput {
			for _, e := range []struct{ side, err string }{{"veneer", t.VeneerError}, {"SQL", t.SQLError}} {
				if e.err != "" {
					fmt.Fprintf(&b, "\n%s, %s, first failure: %s\n", t.Query, e.side, e.err)
				}
			}
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// cpuCell shows CPU times per answer in microseconds, or a dash where they
// could not be read.
func cpuCell(process, rest Micros) string {
	if process == 0 {
		return "—"
	}
	return fmt.Sprintf("%.0f / %.0f", us(process), us(rest))
}

func msCell(d Micros) string {
	if d == 0 {
		return "—"
	}
	return strconv.FormatFloat(ms(d), 'f', 2, 64)
}

// WriteJSON writes the report as one JSON document; ratios without a value are
// null.
func (r *Report) WriteJSON(w io.Writer) error {
	type alias Report
	out := struct {
		*alias
		MedianRatio *float64 `json:"median_ratio"`
		WorstRatio  *float64 `json:"worst_ratio"`
		Summary     string   `json:"summary"`
	}{alias: (*alias)(r), MedianRatio: finite(r.MedianRatio), WorstRatio: finite(r.WorstRatio), Summary: r.Summary()}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}

func finite(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return &x
}
