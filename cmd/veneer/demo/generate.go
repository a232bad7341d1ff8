package demo

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"time"
)

// seed is the fixed seed of the demo data. Each table draws from its own PCG stream
// (seed, stream number), so a change to one table's generator leaves the rows of the
// others as they were.
const seed = 0x5645_4e45_4552_3031

// The PCG stream of each generated table.
const (
	streamTurbine uint64 = iota + 1
	streamTechnician
	streamPart
	streamWorkOrder
	streamInspection
	streamPartUsage
)

// The sizes of the generated tables; sites and turbines follow from siteSpecs, part
// usage from the work orders.
const (
	numTechnicians = 40
	numWorkOrders  = 2000
	numInspections = 1500
)

// The period the data cover. dataEnd is the day the records were taken: nothing is
// opened, closed or inspected after it, and work still open on it has no closed time.
var (
	dataStart = date(2021, 1, 4)
	dataEnd   = date(2025, 6, 30)
)

func date(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

func newRand(stream uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, stream)) }

// generate makes every row of the demo database, table by table in creation order.
func generate() []tableData {
	sites := makeSites()
	turbines := makeTurbines(sites)
	technicians := makeTechnicians()
	parts := makeParts()
	orders := makeWorkOrders(sites, turbines, technicians)
	return []tableData{
		{&siteTable, rowsOf(sites, site.row)},
		{&turbineTable, rowsOf(turbines, turbine.row)},
		{&technicianTable, rowsOf(technicians, technician.row)},
		{&partTable, rowsOf(parts, part.row)},
		{&workOrderTable, rowsOf(orders, workOrder.row)},
		{&inspectionTable, rowsOf(makeInspections(turbines, technicians), inspection.row)},
		{&partUsageTable, rowsOf(makePartUsage(orders, turbines, parts), partUsage.row)},
	}
}

func rowsOf[T any](xs []T, row func(T) []any) [][]any {
	rows := make([][]any, len(xs))
	for i, x := range xs {
		rows[i] = row(x)
	}
	return rows
}

// pick returns a uniformly chosen element of xs.
func pick[T any](r *rand.Rand, xs []T) T { return xs[r.IntN(len(xs))] }

// weighted returns index i with probability weights[i] / sum(weights).
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

// between returns a time in [from, to), to the minute.
func between(r *rand.Rand, from, to time.Time) time.Time {
	return from.Add(time.Duration(r.Int64N(int64(to.Sub(from)/time.Minute))) * time.Minute)
}

// betweenDays returns a day in [from, to).
func betweenDays(r *rand.Rand, from, to time.Time) time.Time {
	return from.AddDate(0, 0, r.IntN(int(to.Sub(from).Hours()/24)))
}

// nullable turns an absent value into SQL NULL.
func nullable[T any](v T, ok bool) any {
	if !ok {
		return nil
	}
	return v
}

// ---- sites ----

type site struct {
	id                  int64
	code, name          string
	country, region     string
	commissioned        time.Time
	latitude, longitude int64 // micro-degrees
	offshore            bool
	turbines            int
	models              []int // indexes into turbineModels
}

// siteSpecs are the operator's six wind farms. The places are real regions; the farms
// and their figures are invented.
var siteSpecs = []site{
	{code: "RKF", name: "Ringkøbing Fjord", country: "DK", region: "Midtjylland", commissioned: date(2012, 9, 14),
		latitude: 56_012_340, longitude: 8_245_610, turbines: 22, models: []int{0, 1}},
	{code: "OPL", name: "Côte d'Opale Offshore", country: "FR", region: "Hauts-de-France", commissioned: date(2019, 5, 2),
		latitude: 50_876_500, longitude: 1_432_100, offshore: true, turbines: 18, models: []int{3}},
	{code: "ASN", name: "Åsen Ridge", country: "SE", region: "Jämtland", commissioned: date(2016, 11, 21),
		latitude: 63_201_200, longitude: 14_123_400, turbines: 24, models: []int{1, 2}},
	{code: "SDV", name: "Sierra del Viento", country: "ES", region: "Aragón", commissioned: date(2010, 3, 8),
		latitude: 41_654_300, longitude: -1_012_300, turbines: 20, models: []int{0}},
	{code: "KLM", name: "Kinloch Moor", country: "GB", region: "Highland", commissioned: date(2014, 7, 30),
		latitude: 57_543_200, longitude: -4_765_400, turbines: 16, models: []int{1}},
	{code: "DSS", name: "Dithmarschen Süd", country: "DE", region: "Schleswig-Holstein", commissioned: date(2017, 4, 12),
		latitude: 54_032_100, longitude: 8_901_200, turbines: 20, models: []int{1, 2}},
}

func makeSites() []site {
	sites := slices.Clone(siteSpecs)
	for i := range sites {
		sites[i].id = int64(i + 1)
	}
	return sites
}

func (s site) row() []any {
	return []any{s.id, s.code, s.name, s.country, s.region, s.commissioned,
		s.latitude, s.longitude, s.offshore}
}

// ---- turbines ----

type turbineModel struct {
	name       string
	serialCode string
	powerKW    int64
	hubHeights []int64 // decimetres
}

var turbineModels = []turbineModel{
	{"WF-2300/93", "WF23", 2300, []int64{800, 945}},
	{"WF-3600/120", "WF36", 3600, []int64{1050, 1195}},
	{"WF-4200/136", "WF42", 4200, []int64{1120, 1285, 1405}},
	{"WF-8000/164", "WF80", 8000, []int64{1090}},
}

var (
	turbineStatuses      = []string{"operating", "maintenance", "stopped", "decommissioned"}
	turbineStatusWeights = []int{84, 7, 6, 3}
)

// decommissioned is the index of "decommissioned" in turbineStatuses.
const decommissioned = 3

type turbine struct {
	id, siteID   int64
	serial       string
	model        int
	hubHeight    int64 // decimetres
	commissioned time.Time
	status       string
	digest       []byte
}

func makeTurbines(sites []site) []turbine {
	r := newRand(streamTurbine)
	serials := r.Perm(9000)
	var turbines []turbine
	for _, s := range sites {
		for range s.turbines {
			m := pick(r, s.models)
			t := turbine{
				id:           int64(len(turbines) + 1),
				siteID:       s.id,
				model:        m,
				hubHeight:    pick(r, turbineModels[m].hubHeights),
				commissioned: s.commissioned.AddDate(0, 0, r.IntN(400)),
			}
			t.serial = fmt.Sprintf("%s-%d-%04d", turbineModels[m].serialCode, t.commissioned.Year(),
				1000+serials[len(turbines)])
			status := weighted(r, turbineStatusWeights)
			t.status = turbineStatuses[status]
			// A decommissioned turbine's controller is gone, and now and then a
			// digest was never read out.
			if status != decommissioned && r.IntN(100) >= 3 {
				t.digest = make([]byte, 16)
				for i := range t.digest {
					t.digest[i] = byte(r.UintN(256))
				}
			}
			turbines = append(turbines, t)
		}
	}
	return turbines
}

func (t turbine) row() []any {
	m := turbineModels[t.model]
	return []any{t.id, t.serial, t.siteID, m.name, m.powerKW, t.hubHeight, t.commissioned,
		t.status, nullable(t.digest, t.digest != nil)}
}

// ---- technicians ----

var (
	firstNames = []string{"Anders", "Mette", "Søren", "Camille", "Théo", "Åsa", "Björn", "Lucía",
		"Iñigo", "Siobhán", "Callum", "Jürgen", "Frauke", "Łukasz", "Zoë", "Rhiannon", "Pádraig",
		"Nuria", "Mikkel", "Élodie"}
	lastNames = []string{"Nørgaard", "Lefèvre", "Lindqvist", "Fernández", "O'Connor", "MacLeod",
		"Weiß", "Hansen", "Dubois", "Jensen", "Ó Briain", "Kowalczyk", "García", "Sjöberg",
		"D'Amico", "Petersen"}
	employers = []string{"Operator maintenance team", "Nordvind Service A/S",
		"Atlantic Rope & Blade Ltd", "Técnicas Eólicas del Ebro S.L.", `"Hochwind" Montage GmbH`}
	employerWeights = []int{40, 25, 15, 12, 8}
)

type technician struct {
	id       int64
	name     string
	employer string
	level    int64
	hired    time.Time
}

func makeTechnicians() []technician {
	r := newRand(streamTechnician)
	names := r.Perm(len(firstNames) * len(lastNames))
	technicians := make([]technician, numTechnicians)
	for i := range technicians {
		n := names[i]
		hired := betweenDays(r, date(2008, 1, 1), date(2025, 1, 1))
		// Certification levels run from 1 (trainee) to 4 (lead) and come with years
		// of service: a level about every five years, a year or two early for some.
		years := dataEnd.Year() - hired.Year()
		technicians[i] = technician{
			id:       int64(i + 1),
			name:     firstNames[n/len(lastNames)] + " " + lastNames[n%len(lastNames)],
			employer: employers[weighted(r, employerWeights)],
			level:    int64(1 + min(3, (years+r.IntN(3))/5)),
			hired:    hired,
		}
	}
	return technicians
}

func (t technician) row() []any {
	return []any{t.id, t.name, t.employer, t.level, t.hired}
}

// ---- parts ----

// partKind is one kind of spare part; the catalogue holds it in one variant per
// turbine model and one for retrofits.
type partKind struct {
	prefix   string
	name     string
	supplier int // index into suppliers
	cents    int64
	maxQty   int
	bearing  bool // a bearing's part number ends in its clearance class, "/C3"
}

var suppliers = []string{"Brattvik Komponenter AS", "Fournitures Éoliennes SARL",
	"Huber & Söhne GmbH", "Kinloch Engineering Ltd", "Talleres Ebro S.A.", "O'Rourke Hydraulics"}

var partKinds = []partKind{
	{"PBS", "Pitch bearing seal kit", 0, 48_000, 3, false},
	{"YBP", "Yaw brake pad", 2, 21_500, 8, false},
	{"GOF", "Gearbox oil filter", 2, 9_800, 2, false},
	{"MBG", "Main bearing grease cartridge", 1, 6_450, 6, false},
	{"SRB", "Slip ring brush set", 3, 31_200, 2, false},
	{"IGB", "Converter IGBT module", 2, 265_000, 2, false},
	{"ANM", "Ultrasonic anemometer", 3, 182_000, 1, false},
	{"WVN", "Wind vane", 3, 54_000, 1, false},
	{"LET", "Leading-edge protection tape, 10 m", 1, 38_900, 4, false},
	{"LRC", "Lightning receptor", 0, 12_300, 3, false},
	{"HAC", "Hydraulic accumulator", 5, 143_000, 1, false},
	{"GCB", "Generator carbon brush", 2, 2_850, 12, false},
	{"GNB", "Generator bearing", 2, 96_000, 2, true},
	{"TBS", `Tower bolt set M36 "HV"`, 2, 98_000, 4, false},
	{"NDG", "Nacelle door gasket", 4, 8_700, 1, false},
	{"AWL", "Aviation warning light", 1, 124_000, 1, false},
	{"CFT", "Converter cabinet filter mat", 4, 1_990, 6, false},
	{"PME", "Pitch motor encoder", 0, 67_400, 1, false},
	{"YDP", "Yaw drive pinion", 0, 412_000, 1, false},
	{"BRC", "Rotor brake caliper", 2, 233_000, 1, false},
	{"HOP", "Gearbox oil pump", 4, 189_500, 1, false},
	{"TPT", "PT100 temperature sensor, −40…+150 °C", 3, 4_300, 4, false},
	{"VBS", "Vibration sensor (accelerometer)", 3, 52_000, 2, false},
	{"FOC", "Fibre-optic patch cable", 1, 3_100, 4, false},
	{"HHS", "Hydraulic hose Ø12 mm", 5, 6_900, 3, false},
	{"RSK", "Technician's rescue kit", 4, 88_000, 1, false},
	{"ICS", "Ice detection sensor", 1, 98_500, 2, false},
	{"VGX", "Vortex generator strip", 0, 2_400, 24, false},
	{"UPS", "Controller UPS battery", 4, 27_600, 2, false},
	{"PTB", "Pitch bearing", 0, 1_850_000, 1, true},
}

// partVariants are the variants of every part kind: one per turbine model (same order
// as turbineModels) and the retrofit kit.
var partVariants = []struct {
	label, number string
	percent       int64 // price relative to the kind's base price
}{
	{"WF-2300", "23", 100},
	{"WF-3600", "36", 115},
	{"WF-4200", "42", 130},
	{"WF-8000", "80", 180},
	{"retrofit kit", "RK", 145},
}

// retrofitVariant is the index of the retrofit kit in partVariants.
const retrofitVariant = 4

type part struct {
	id       int64
	number   string
	name     string
	supplier string
	cents    int64
}

func makeParts() []part {
	r := newRand(streamPart)
	var parts []part
	for _, pk := range partKinds {
		for v, pv := range partVariants {
			// Prices are worked out in integers: the same on every processor.
			p := part{
				id:       int64(len(parts) + 1),
				number:   fmt.Sprintf("%s-%s%02d", pk.prefix, pv.number, 10+r.IntN(90)),
				name:     pk.name + " (" + pv.label + ")",
				supplier: suppliers[pk.supplier],
				cents:    pk.cents * pv.percent * (900 + r.Int64N(201)) / 100_000,
			}
			if pk.bearing {
				p.number += "/C3"
			}
			// Retrofit kits come from whichever supplier won the tender.
			if v == retrofitVariant {
				p.supplier = pick(r, suppliers)
			}
			parts = append(parts, p)
		}
	}
	return parts
}

func (p part) row() []any {
	return []any{p.id, p.number, p.name, p.supplier, p.cents}
}

// ---- work orders ----

var (
	categories      = []string{"corrective", "preventive", "inspection_followup", "retrofit", "safety"}
	categoryWeights = []int{45, 30, 15, 6, 4}
	priorities      = []string{"low", "medium", "high", "critical"}
	// priorityWeights are the weights of priorities, per category.
	priorityWeights = [][]int{
		corrective:         {10, 40, 35, 15},
		preventive:         {50, 45, 5, 0},
		inspectionFollowup: {20, 50, 25, 5},
		retrofit:           {60, 40, 0, 0},
		safety:             {0, 20, 50, 30},
	}
	// repairHours bounds how long work of each priority takes, from opening to closing.
	repairHours = [][2]int{{48, 1440}, {24, 720}, {6, 240}, {2, 72}}
)

// Indexes into categories, for the tables that differ by category.
const (
	corrective = iota
	preventive
	inspectionFollowup
	retrofit
	safety
)

// High and critical work (priority index high and above) goes to technicians
// certified to seniorLevel or above, and so do inspections.
const (
	high        = 2
	seniorLevel = 2
)

type workOrder struct {
	id           int64
	number       string
	turbineID    int64
	technicianID int64 // 0: unassigned
	opened       time.Time
	closed       time.Time // zero: still open
	priority     int
	status       string
	category     int
	description  string
}

func makeWorkOrders(sites []site, turbines []turbine, technicians []technician) []workOrder {
	r := newRand(streamWorkOrder)
	seniors := seniorTechnicians(technicians)
	opened := make([]time.Time, numWorkOrders)
	for i := range opened {
		opened[i] = between(r, dataStart, dataEnd)
	}
	slices.SortFunc(opened, time.Time.Compare)
	orders := make([]workOrder, numWorkOrders)
	for i := range orders {
		t := pick(r, turbines)
		w := workOrder{
			id:        int64(i + 1),
			turbineID: t.id,
			opened:    opened[i],
			category:  weighted(r, categoryWeights),
		}
		w.number = fmt.Sprintf("WO-%d-%05d", w.opened.Year(), w.id)
		w.priority = weighted(r, priorityWeights[w.category])
		w.status = orderStatus(r, dataEnd.Sub(w.opened))
		switch w.status {
		case "closed":
			h := repairHours[w.priority]
			w.closed = w.opened.Add(time.Duration(h[0]*60+r.IntN((h[1]-h[0])*60)) * time.Minute)
		case "cancelled":
			w.closed = w.opened.Add(time.Duration(60+r.IntN(14*24*60)) * time.Minute)
		}
		// Work that would end after the records were taken is still in hand.
		if !w.closed.IsZero() && !w.closed.Before(dataEnd) {
			w.status, w.closed = "in_progress", time.Time{}
		}
		if assigned(r, w.status) {
			if w.priority >= high {
				w.technicianID = pick(r, seniors).id
			} else {
				w.technicianID = pick(r, technicians).id
			}
		}
		w.description = describe(r, w.category, sites[t.siteID-1], turbineModels[t.model])
		orders[i] = w
	}
	return orders
}

// orderStatus draws the status of a work order opened age before dataEnd: recent work
// is often still open, old work almost always done.
func orderStatus(r *rand.Rand, age time.Duration) string {
	statuses := []string{"open", "in_progress", "closed", "cancelled"}
	switch days := age.Hours() / 24; {
	case days < 45:
		return statuses[weighted(r, []int{40, 30, 30, 0})]
	case days < 120:
		return statuses[weighted(r, []int{8, 7, 80, 5})]
	default:
		return statuses[weighted(r, []int{1, 0, 94, 5})]
	}
}

// assigned says whether a work order in a status has a technician: work in hand always
// has one; open and cancelled work often has none.
func assigned(r *rand.Rand, status string) bool {
	switch status {
	case "open":
		return r.IntN(100) < 45
	case "cancelled":
		return r.IntN(100) < 50
	}
	return true
}

// seniorTechnicians returns the technicians certified to seniorLevel or above.
func seniorTechnicians(technicians []technician) []technician {
	return slices.DeleteFunc(slices.Clone(technicians), func(t technician) bool { return t.level < seniorLevel })
}

var (
	components = []string{"pitch bearing", "yaw drive", "main bearing", "gearbox", "generator",
		"converter", "slip ring", "hydraulic unit", "anemometer", "cooling system", "rotor brake",
		"pitch motor"}
	symptoms = []string{"abnormal noise", "oil leak", "high temperature alarm", "vibration alarm",
		"no response to remote reset", "grinding at low wind speed", "intermittent communication loss"}
	blades = []string{"A", "B", "C"}
	// descriptions are the description patterns of each category. Slots in braces
	// take a component, a symptom, a number, a blade letter, the site name and the
	// turbine model.
	descriptions = [][]string{
		corrective: {
			"{component}: {symptom} reported by remote monitoring",
			"Replace {component} seal after {symptom}",
			"Operator's note: {component} tripped twice overnight (fault code {number})",
			`{component} "squeal" heard at cut-in speed`,
			"Gearbox oil temperature reached {number} °C — check {component}",
			"{symptom} on {component}; crane booking needed at {site}",
		},
		preventive: {
			"Annual service of {model}: filters, grease, torque check",
			"Six-month service incl. {component} inspection",
			"Re-torque tower flange bolts ({number} bolts checked)",
			"Grease {component} and replace brushes",
		},
		inspectionFollowup: {
			"Follow-up to inspection: leading-edge erosion on blade {blade}",
			`Blade "{blade}" crack indication near root — rope access needed`,
			"Inspection flagged {symptom} on {component}; verify with CMS data",
			"Lightning receptor on blade {blade} missing after storm at {site}",
		},
		retrofit: {
			"Install controller firmware 4.{number} on {model}",
			"Retrofit ice detection sensors on all blades",
			"Fit vortex generators on blade {blade} (aero upgrade)",
		},
		safety: {
			"Replace fall-arrest rail section in tower",
			"Aviation warning light failure at {site} — notify the authority",
			"Fire extinguisher in nacelle past its service date",
			"Technician's lift stopped between platforms; inspect {component} cabling",
		},
	}
)

func describe(r *rand.Rand, category int, s site, m turbineModel) string {
	pattern := pick(r, descriptions[category])
	text := strings.NewReplacer(
		"{component}", pick(r, components),
		"{symptom}", pick(r, symptoms),
		"{number}", strconv.Itoa(40+r.IntN(60)),
		"{blade}", pick(r, blades),
		"{site}", s.name,
		"{model}", m.name,
	).Replace(pattern)
	return upperFirst(text)
}

// upperFirst capitalises an ASCII first letter, as a sentence in a log would have it.
func upperFirst(s string) string {
	if s != "" && 'a' <= s[0] && s[0] <= 'z' {
		return string(s[0]-'a'+'A') + s[1:]
	}
	return s
}

func (w workOrder) row() []any {
	return []any{w.id, w.number, w.turbineID, nullable(w.technicianID, w.technicianID != 0),
		w.opened, nullable(w.closed, !w.closed.IsZero()), priorities[w.priority], w.status,
		categories[w.category], w.description}
}

// ---- inspections ----

// passVibration is the vibration, in mm/s, at or above which an inspection fails
// whatever the blades look like.
const passVibration = 4.5

var (
	// bladeWeights are the weights of blade condition scores 1 (poor) to 5 (as new).
	bladeWeights = []int{2, 6, 27, 43, 22}
	// failNotes are the notes of inspections failed for the blades' sake.
	failNotes = []string{
		"Leading-edge erosion on blade {blade} beyond repair limit",
		`Blade "{blade}" lightning receptor missing`,
		"Crack indication near root of blade {blade}; drone images attached",
	}
	passNotes = []string{
		"Minor erosion on blade {blade}, monitor",
		"Tower flange bolts re-torqued; technician's checklist complete (blade {blade} photographed)",
		"Ice on blades; blade {blade} inspected from the ground only",
		"Bird nest removed from nacelle; blade {blade} clean — à revoir au printemps",
	}
)

type inspection struct {
	id           int64
	turbineID    int64
	technicianID int64
	on           time.Time
	blade        int64
	vibration    float64
	passed       bool
	notes        string // empty: NULL
}

func makeInspections(turbines []turbine, technicians []technician) []inspection {
	r := newRand(streamInspection)
	seniors := seniorTechnicians(technicians)
	days := make([]time.Time, numInspections)
	for i := range days {
		days[i] = betweenDays(r, dataStart, dataEnd)
	}
	slices.SortFunc(days, time.Time.Compare)
	inspections := make([]inspection, numInspections)
	for i := range inspections {
		in := inspection{
			id:           int64(i + 1),
			turbineID:    pick(r, turbines).id,
			technicianID: pick(r, seniors).id,
			on:           days[i],
			blade:        int64(weighted(r, bladeWeights) + 1),
			vibration:    vibration(r),
		}
		in.passed = in.blade >= 3 && in.vibration < passVibration
		switch {
		case in.vibration >= passVibration:
			in.notes = "Vibration of " + strconv.FormatFloat(in.vibration, 'f', 2, 64) +
				" mm/s at 1P — refer to the CMS team"
		case !in.passed:
			in.notes = strings.ReplaceAll(pick(r, failNotes), "{blade}", pick(r, blades))
		case r.IntN(100) < 35:
			in.notes = strings.ReplaceAll(pick(r, passNotes), "{blade}", pick(r, blades))
		}
		inspections[i] = in
	}
	return inspections
}

// vibration draws a vibration reading in mm/s, to 0.01 mm/s: mostly 1–3 mm/s, with a
// tail of rough running. It is drawn as an integer count of hundredths, so the float
// is the same on every processor.
func vibration(r *rand.Rand) float64 {
	hundredths := 60 + r.IntN(160) + r.IntN(160)
	if r.IntN(100) < 8 {
		hundredths += r.IntN(450)
	}
	return float64(hundredths) / 100
}

func (in inspection) row() []any {
	return []any{in.id, in.turbineID, in.technicianID, in.on, in.blade, in.vibration, in.passed,
		nullable(in.notes, in.notes != "")}
}

// ---- part usage ----

// partCountWeights are the weights of using 0, 1, 2, … distinct parts, per category.
var partCountWeights = [][]int{
	corrective:         {10, 35, 35, 20},
	preventive:         {0, 40, 40, 20},
	inspectionFollowup: {30, 50, 20},
	retrofit:           {0, 0, 40, 40, 20},
	safety:             {40, 60},
}

type partUsage struct {
	workOrderID, partID int64
	quantity            int64
}

// makePartUsage draws the parts used by work in hand or done: parts of the turbine's
// model, or retrofit kits for retrofits. The rows come out in key order: by work
// order, then by part, since a kind's parts are numbered in kind order.
func makePartUsage(orders []workOrder, turbines []turbine, parts []part) []partUsage {
	r := newRand(streamPartUsage)
	var usage []partUsage
	for _, w := range orders {
		if w.status != "closed" && w.status != "in_progress" {
			continue
		}
		variant := turbines[w.turbineID-1].model
		if w.category == retrofit {
			variant = retrofitVariant
		}
		n := weighted(r, partCountWeights[w.category])
		kinds := r.Perm(len(partKinds))[:n]
		slices.Sort(kinds)
		for _, k := range kinds {
			p := parts[k*len(partVariants)+variant]
			usage = append(usage, partUsage{
				workOrderID: w.id,
				partID:      p.id,
				quantity:    int64(1 + r.IntN(partKinds[k].maxQty)),
			})
		}
	}
	return usage
}

func (u partUsage) row() []any { return []any{u.workOrderID, u.partID, u.quantity} }
