// Package gen generates the demo scenario's maintenance database at a scale factor
// and loads it into SQLite, PostgreSQL or MariaDB/MySQL for the benchmark.
//
// Scale factor 1 is about 10 000 work orders; every table grows in proportion (30
// sites, 600 turbines, 200 technicians, 750 parts, 7 500 inspections and about
// 15 000 part usages per unit), so that a query about one site, turbine or
// technician reads about as many rows at every scale while a query over a whole
// table reads more. The rows are skewed the way maintenance records are: a few
// unreliable turbines collect many work orders, some technicians do much of the
// work, consumables are used far more often than major components.
//
// The tables and their columns are those of the demo (package demo's schema.sql
// and mapping.ttl). Every value comes from fixed-seed PCG streams and integer
// arithmetic, so a scale factor gives the same rows on every machine. Rows are
// produced as a stream, table by table; only the small tables (sites, turbines,
// technicians, parts) are held in memory.
package gen

import (
	"fmt"
	"iter"
	"math"
	"math/rand/v2"
	"time"
)

// MaxScale bounds the scale factor: beyond it the identifiers would outgrow
// the widths schema.sql gives their columns.
const MaxScale = 1000

// seed is the fixed seed of the benchmark data; each table draws from its own
// PCG stream (seed, stream number), so changing one table's generator leaves
// the others' rows as they were.
const seed = 0x7665_6e65_6572_4253

// The PCG stream of each generated table.
const (
	streamSite uint64 = iota + 1
	streamTurbine
	streamTechnician
	streamPart
	streamWorkOrder
	streamInspection
	streamPartUsage
)

// The period the data cover; nothing is opened, closed or inspected on or after
// dataEnd, the day the records were taken.
var (
	dataStart = date(2021, 1, 4)
	dataEnd   = date(2025, 6, 30)
)

func date(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

func newRand(stream uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, stream)) }

// Sizes are the row counts of the generated tables at one scale factor; the
// number of part usages follows from the work orders.
type Sizes struct {
	Sites, Turbines, Technicians, Parts, WorkOrders, Inspections int
}

// Per unit of scale.
const (
	sitesPerSF       = 30
	turbinesPerSF    = 600
	techniciansPerSF = 200
	partKindsPerSF   = 150 // each kind comes in len(variants) parts
	workOrdersPerSF  = 10_000
	inspectionsPerSF = 7_500
)

// SizesAt returns the table sizes at scale factor sf. Every table keeps at least
// the rows the others' foreign keys and the generator need.
func SizesAt(sf float64) Sizes {
	at := func(per float64, least int) int { return max(least, int(math.Round(per*sf))) }
	s := Sizes{
		Sites:       at(sitesPerSF, 1),
		Technicians: at(techniciansPerSF, 4),
		Parts:       at(partKindsPerSF, 2) * len(variants),
		WorkOrders:  at(workOrdersPerSF, 1),
		Inspections: at(inspectionsPerSF, 1),
	}
	s.Turbines = at(turbinesPerSF, s.Sites)
	return s
}

// CheckScale reports whether sf is a scale factor the generator accepts.
func CheckScale(sf float64) error {
	if !(sf > 0 && sf <= MaxScale) {
		return fmt.Errorf("scale factor %v out of range: want 0 < SF ≤ %d", sf, MaxScale)
	}
	return nil
}

// Kind is the kind of value a column holds: it says which Go value the generator
// produces and how a loader binds it.
type Kind int

// The column kinds, with the generator's Go type.
const (
	Integer   Kind = iota + 1 // int64
	Text                      // string
	Decimal                   // Dec
	Double                    // float64
	Boolean                   // bool
	Date                      // time.Time, UTC midnight
	Timestamp                 // time.Time, UTC, to the minute
	Binary                    // []byte
)

// Dec is an exact decimal: Units·10^-Scale.
type Dec struct {
	Units int64
	Scale int
}

// String writes the decimal with exactly Scale fraction digits.
func (d Dec) String() string {
	sign, u := "", d.Units
	if u < 0 {
		sign, u = "-", -u
	}
	digits := fmt.Sprintf("%0*d", d.Scale+1, u)
	if d.Scale == 0 {
		return sign + digits
	}
	cut := len(digits) - d.Scale
	return sign + digits[:cut] + "." + digits[cut:]
}

// Column is one column of a generated table, in schema.sql's order.
type Column struct {
	Name string
	Kind Kind
}

// Table is one generated table: its columns and a stream of its rows, one value
// per column, nil for NULL. A row slice is fresh for each row.
type Table struct {
	Name    string
	Columns []Column
	Rows    iter.Seq[[]any]
}

// Data generates the tables at one scale factor.
type Data struct {
	SF    float64
	Sizes Sizes

	sites       []site
	turbines    []turbine
	technicians []technician
	parts       []part

	// The skewed choices: which turbine a work order or inspection is for,
	// which technician does the work, which kinds of part it uses.
	orderTurbines      picker
	inspectionTurbines picker
	anyTechnician      picker
	seniorTechnician   picker
	partKinds          picker
}

// New prepares the data at scale factor sf: it generates the small tables now and
// the large ones as they are read.
func New(sf float64) (*Data, error) {
	if err := CheckScale(sf); err != nil {
		return nil, err
	}
	d := &Data{SF: sf, Sizes: SizesAt(sf)}
	d.sites = makeSites(d.Sizes.Sites)
	d.turbines = makeTurbines(d.sites, d.Sizes.Turbines)
	d.technicians = makeTechnicians(d.Sizes.Technicians)
	d.parts = makeParts(d.Sizes.Parts / len(variants))
	d.pickers()
	return d, nil
}

// Tables returns the tables in creation order (parents before children), the
// order of demo.Tables.
func (d *Data) Tables() []Table {
	return []Table{
		{"site", siteColumns, rowsOf(d.sites, site.row)},
		{"turbine", turbineColumns, rowsOf(d.turbines, turbine.row)},
		{"technician", technicianColumns, rowsOf(d.technicians, technician.row)},
		{"part", partColumns, rowsOf(d.parts, part.row)},
		{"work_order", workOrderColumns, func(yield func([]any) bool) {
			for w := range d.workOrders {
				if !yield(w.row()) {
					return
				}
			}
		}},
		{"inspection", inspectionColumns, d.inspections},
		{"part_usage", partUsageColumns, d.partUsage},
	}
}

func rowsOf[T any](xs []T, row func(T) []any) iter.Seq[[]any] {
	return func(yield func([]any) bool) {
		for _, x := range xs {
			if !yield(row(x)) {
				return
			}
		}
	}
}

// picker draws indexes with fixed integer weights, by binary search over the
// running totals: the same draws on every processor.
type picker struct {
	cum []int64
}

func newPicker(weights []int64) picker {
	cum := make([]int64, len(weights))
	var total int64
	for i, w := range weights {
		total += w
		cum[i] = total
	}
	return picker{cum}
}

// pick returns index i with probability weights[i] / sum(weights).
func (p picker) pick(r *rand.Rand) int {
	n := r.Int64N(p.cum[len(p.cum)-1])
	lo, hi := 0, len(p.cum)-1
	for lo < hi {
		mid := (lo + hi) / 2
		if p.cum[mid] > n {
			hi = mid
		} else {
			lo = mid + 1
		}
	}
	return lo
}

// weighted returns index i with probability weights[i] / sum(weights), for the
// short, fixed distributions of categories, statuses and the like.
func weighted(r *rand.Rand, weights []int) int {
	total := 0
	for _, w := range weights {
		total += w
	}
	n, i := r.IntN(total), 0
	for n >= weights[i] {
		n -= weights[i]
		i++
	}
	return i
}

func pick[T any](r *rand.Rand, xs []T) T { return xs[r.IntN(len(xs))] }

// spread returns the i-th of n instants spread evenly over [from, to) with a
// random offset inside its own slot, to the minute: increasing with i, so that
// identifiers follow time as they do in a real register.
func spread(r *rand.Rand, i, n int, from, to time.Time) time.Time {
	minutes := int64(to.Sub(from) / time.Minute)
	slot := minutes * int64(i) / int64(n)
	next := minutes * int64(i+1) / int64(n)
	off := int64(0)
	if next > slot {
		off = r.Int64N(next - slot)
	}
	return from.Add(time.Duration(slot+off) * time.Minute)
}

func nullable[T any](v T, ok bool) any {
	if !ok {
		return nil
	}
	return v
}
