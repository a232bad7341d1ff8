package results

import (
	"io"
	"testing"

	"veneer/catalog/rdf"
)

// benchmarkSelect writes b.N rows of the maintenance scenario and reports
// rows per second and bytes per row.
func benchmarkSelect(b *testing.B, newWriter func(io.Writer) SelectWriter) {
	sol := maintenance(42)
	var count countingWriter
	sw := newWriter(&count)
	if err := sw.Begin(maintenanceVars); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		if err := sw.Row(sol); err != nil {
			b.Fatal(err)
		}
	}
	if err := sw.End(); err != nil {
		b.Fatal(err)
	}
	b.StopTimer()
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "rows/s")
	b.ReportMetric(float64(count)/float64(b.N), "bytes/row")
}

// countingWriter counts the bytes written to it.
type countingWriter int64

func (c *countingWriter) Write(p []byte) (int, error) {
	*c += countingWriter(len(p))
	return len(p), nil
}

func BenchmarkJSON(b *testing.B) { benchmarkSelect(b, NewJSON) }
func BenchmarkXML(b *testing.B)  { benchmarkSelect(b, NewXML) }
func BenchmarkCSV(b *testing.B)  { benchmarkSelect(b, NewCSV) }
func BenchmarkTSV(b *testing.B)  { benchmarkSelect(b, NewTSV) }

// BenchmarkGraph writes b.N triples in each graph format and reports triples per second.
func BenchmarkGraph(b *testing.B) {
	tr := rdf.Triple{S: rdf.IRI(wind + "turbine/T-07"), P: rdf.IRI(wind + "note"), O: rdf.NewLangString("yaw drive", "en")}
	for _, g := range graphFormats {
		b.Run(g.name, func(b *testing.B) {
			gw := g.new(io.Discard)
			if err := gw.Begin(); err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			b.ResetTimer()
			for range b.N {
				if err := gw.Triple(tr); err != nil {
					b.Fatal(err)
				}
			}
			if err := gw.End(); err != nil {
				b.Fatal(err)
			}
			b.StopTimer()
			b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "triples/s")
		})
	}
}
