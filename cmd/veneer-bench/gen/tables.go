package gen

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"time"
)

// ---- sites ----

var siteColumns = []Column{
	{"site_id", Integer}, {"code", Text}, {"name", Text}, {"country", Text},
	{"region", Text}, {"commissioned_on", Date}, {"latitude", Decimal},
	{"longitude", Decimal}, {"offshore", Boolean},
}

// regions are where the operator's farms stand; the places are real, the farms
// invented. Each farm is named after its area and numbered.
var regions = []struct {
	prefix, area, country, region string
	latitude, longitude           int64 // micro-degrees
	offshore                      bool
	models                        []int // indexes into models
}{
	{"RKF", "Ringkøbing Fjord", "DK", "Midtjylland", 56_012_340, 8_245_610, false, []int{0, 1}},
	{"OPL", "Côte d'Opale", "FR", "Hauts-de-France", 50_876_500, 1_432_100, true, []int{3}},
	{"ASN", "Åsen Ridge", "SE", "Jämtland", 63_201_200, 14_123_400, false, []int{1, 2}},
	{"SDV", "Sierra del Viento", "ES", "Aragón", 41_654_300, -1_012_300, false, []int{0}},
	{"KLM", "Kinloch Moor", "GB", "Highland", 57_543_200, -4_765_400, false, []int{1}},
	{"DSS", "Dithmarschen Süd", "DE", "Schleswig-Holstein", 54_032_100, 8_901_200, false, []int{1, 2}},
	{"HKZ", "Hollandse Kust", "NL", "Noord-Holland", 52_600_100, 4_300_200, true, []int{3}},
	{"VDC", "Serra de Arga", "PT", "Viana do Castelo", 41_800_500, -8_700_400, false, []int{0, 1}},
	{"PMR", "Słupsk Coast", "PL", "Pomorskie", 54_500_300, 17_000_600, false, []int{2}},
	{"UTS", "Utsira Nord", "NO", "Rogaland", 59_300_200, 4_800_900, true, []int{3}},
	{"KRY", "Sliabh Luachra", "IE", "Kerry", 52_150_700, -9_300_100, false, []int{1}},
	{"DAU", "Monti Dauni", "IT", "Puglia", 41_300_800, 15_200_300, false, []int{0, 2}},
}

type site struct {
	id                  int64
	code, name          string
	country, region     string
	commissioned        time.Time
	latitude, longitude int64 // micro-degrees
	offshore            bool
	models              []int
}

func makeSites(n int) []site {
	r := newRand(streamSite)
	sites := make([]site, n)
	for i := range sites {
		g := regions[i%len(regions)]
		number := i/len(regions) + 1
		s := site{
			id:           int64(i + 1),
			code:         fmt.Sprintf("%s%04d", g.prefix, number),
			name:         fmt.Sprintf("%s %d", g.area, number),
			country:      g.country,
			region:       g.region,
			commissioned: date(2005, 1, 1).AddDate(0, 0, r.IntN(15*365)),
			latitude:     g.latitude + r.Int64N(400_000) - 200_000,
			longitude:    g.longitude + r.Int64N(400_000) - 200_000,
			offshore:     g.offshore,
			models:       g.models,
		}
		// Some farms were registered before regions were recorded.
		if r.IntN(100) < 5 {
			s.region = ""
		}
		sites[i] = s
	}
	return sites
}

func (s site) row() []any {
	return []any{s.id, s.code, s.name, s.country, nullable(s.region, s.region != ""), s.commissioned,
		Dec{s.latitude, 6}, Dec{s.longitude, 6}, s.offshore}
}

// ---- turbines ----

var turbineColumns = []Column{
	{"turbine_id", Integer}, {"serial", Text}, {"site_id", Integer}, {"model", Text},
	{"rated_power_kw", Integer}, {"hub_height_m", Decimal}, {"commissioned_on", Date},
	{"status", Text}, {"firmware_digest", Binary},
}

var models = []struct {
	name, serialCode string
	powerKW          int64
	hubHeights       []int64 // decimetres
}{
	{"WF-2300/93", "WF23", 2300, []int64{800, 945}},
	{"WF-3600/120", "WF36", 3600, []int64{1050, 1195}},
	{"WF-4200/136", "WF42", 4200, []int64{1120, 1285, 1405}},
	{"WF-8000/164", "WF80", 8000, []int64{1090}},
}

var (
	turbineStatuses      = []string{"operating", "maintenance", "stopped", "decommissioned"}
	turbineStatusWeights = []int{84, 7, 6, 3}
)

const decommissioned = 3

type turbine struct {
	id, siteID   int64
	serial       string
	model        int
	hubHeight    int64
	commissioned time.Time
	status       int
	digest       []byte
	// lemon marks the unreliable few that collect many work orders.
	lemon bool
}

// makeTurbines spreads n turbines over the sites, unevenly: farm sizes differ
// by a factor of about five.
func makeTurbines(sites []site, n int) []turbine {
	r := newRand(streamTurbine)
	sizes := make([]int64, len(sites))
	for i := range sizes {
		sizes[i] = 2 + r.Int64N(9)
	}
	counts := apportion(n, sizes)
	turbines := make([]turbine, 0, n)
	for si, s := range sites {
		for range counts[si] {
			m := pick(r, s.models)
			t := turbine{
				id:           int64(len(turbines) + 1),
				siteID:       s.id,
				model:        m,
				hubHeight:    pick(r, models[m].hubHeights),
				commissioned: s.commissioned.AddDate(0, 0, r.IntN(400)),
				status:       weighted(r, turbineStatusWeights),
				lemon:        r.IntN(100) < 4,
			}
			t.serial = fmt.Sprintf("%s-%d-%06d", models[m].serialCode, t.commissioned.Year(), t.id)
			if t.status != decommissioned && r.IntN(100) >= 3 {
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

// apportion divides n among len(weights) shares in proportion to the weights,
// each share at least 1 (n ≥ len(weights)), by largest remainder.
func apportion(n int, weights []int64) []int {
	counts := make([]int, len(weights))
	rest := n - len(weights)
	var total int64
	for _, w := range weights {
		total += w
	}
	type rem struct {
		i int
		r int64
	}
	rems := make([]rem, len(weights))
	given := 0
	for i, w := range weights {
		q := int64(rest) * w
		counts[i] = 1 + int(q/total)
		given += int(q / total)
		rems[i] = rem{i, q % total}
	}
	slices.SortStableFunc(rems, func(a, b rem) int { return int(b.r - a.r) })
	for k := 0; given < rest; k++ {
		counts[rems[k].i]++
		given++
	}
	return counts
}

func (t turbine) row() []any {
	m := models[t.model]
	return []any{t.id, t.serial, t.siteID, m.name, m.powerKW, Dec{t.hubHeight, 1}, t.commissioned,
		turbineStatuses[t.status], nullable(t.digest, t.digest != nil)}
}

// ---- technicians ----

var technicianColumns = []Column{
	{"technician_id", Integer}, {"full_name", Text}, {"employer", Text},
	{"certification_level", Integer}, {"hired_on", Date},
}

var (
	firstNames = []string{"Anders", "Mette", "Søren", "Camille", "Théo", "Åsa", "Björn", "Lucía",
		"Iñigo", "Siobhán", "Callum", "Jürgen", "Frauke", "Łukasz", "Zoë", "Rhiannon", "Pádraig",
		"Nuria", "Mikkel", "Élodie", "Ingrid", "Tomasz", "Aoife", "Henrik"}
	lastNames = []string{"Nørgaard", "Lefèvre", "Lindqvist", "Fernández", "O'Connor", "MacLeod",
		"Weiß", "Hansen", "Dubois", "Jensen", "Ó Briain", "Kowalczyk", "García", "Sjöberg",
		"D'Amico", "Petersen", "Van Dijk", "Haugen", "Costa", "Rossi"}
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
	// load is the technician's share of the work, relative to the others'.
	load int64
}

// seniorLevel is the certification level high-priority work and inspections need.
const seniorLevel = 2

func makeTechnicians(n int) []technician {
	r := newRand(streamTechnician)
	technicians := make([]technician, n)
	for i := range technicians {
		hired := date(2006, 1, 1).AddDate(0, 0, r.IntN(19*365))
		years := dataEnd.Year() - hired.Year()
		t := technician{
			id:       int64(i + 1),
			name:     pick(r, firstNames) + " " + pick(r, lastNames),
			employer: employers[weighted(r, employerWeights)],
			level:    int64(1 + min(3, (years+r.IntN(3))/5)),
			hired:    hired,
			load:     1 + r.Int64N(6),
		}
		// The few everybody calls: a tenth of the staff carries several shares.
		if r.IntN(10) == 0 {
			t.load *= 5
		}
		technicians[i] = t
	}
	// Make sure there is someone to send to high-priority work.
	if !slices.ContainsFunc(technicians, func(t technician) bool { return t.level >= seniorLevel }) {
		technicians[0].level = seniorLevel
	}
	return technicians
}

func (t technician) row() []any { return []any{t.id, t.name, t.employer, t.level, t.hired} }

// ---- parts ----

var partColumns = []Column{
	{"part_id", Integer}, {"part_number", Text}, {"name", Text}, {"supplier", Text}, {"unit_cost", Decimal},
}

var suppliers = []string{"Brattvik Komponenter AS", "Fournitures Éoliennes SARL",
	"Huber & Söhne GmbH", "Kinloch Engineering Ltd", "Talleres Ebro S.A.", "O'Rourke Hydraulics"}

// baseKinds are the kinds of spare part; larger catalogues hold further product
// lines of each ("mk 2", "mk 3", …). pop is how often work uses the kind.
var baseKinds = []struct {
	prefix, name string
	supplier     int
	cents        int64
	maxQty       int
	pop          int64
	bearing      bool // a bearing's part number ends in its clearance class "/C3"
}{
	{"PBS", "Pitch bearing seal kit", 0, 48_000, 3, 20, false},
	{"YBP", "Yaw brake pad", 2, 21_500, 8, 60, false},
	{"GOF", "Gearbox oil filter", 2, 9_800, 2, 120, false},
	{"MBG", "Main bearing grease cartridge", 1, 6_450, 6, 150, false},
	{"SRB", "Slip ring brush set", 3, 31_200, 2, 50, false},
	{"IGB", "Converter IGBT module", 2, 265_000, 2, 8, false},
	{"ANM", "Ultrasonic anemometer", 3, 182_000, 1, 10, false},
	{"WVN", "Wind vane", 3, 54_000, 1, 12, false},
	{"LET", "Leading-edge protection tape, 10 m", 1, 38_900, 4, 40, false},
	{"LRC", "Lightning receptor", 0, 12_300, 3, 25, false},
	{"HAC", "Hydraulic accumulator", 5, 143_000, 1, 9, false},
	{"GCB", "Generator carbon brush", 2, 2_850, 12, 110, false},
	{"GNB", "Generator bearing", 2, 96_000, 2, 6, true},
	{"TBS", `Tower bolt set M36 "HV"`, 2, 98_000, 4, 15, false},
	{"NDG", "Nacelle door gasket", 4, 8_700, 1, 18, false},
	{"AWL", "Aviation warning light", 1, 124_000, 1, 11, false},
	{"CFT", "Converter cabinet filter mat", 4, 1_990, 6, 90, false},
	{"PME", "Pitch motor encoder", 0, 67_400, 1, 14, false},
	{"YDP", "Yaw drive pinion", 0, 412_000, 1, 3, false},
	{"BRC", "Rotor brake caliper", 2, 233_000, 1, 4, false},
	{"HOP", "Gearbox oil pump", 4, 189_500, 1, 5, false},
	{"TPT", "PT100 temperature sensor, −40…+150 °C", 3, 4_300, 4, 45, false},
	{"VBS", "Vibration sensor (accelerometer)", 3, 52_000, 2, 22, false},
	{"FOC", "Fibre-optic patch cable", 1, 3_100, 4, 30, false},
	{"HHS", "Hydraulic hose Ø12 mm", 5, 6_900, 3, 35, false},
	{"RSK", "Technician's rescue kit", 4, 88_000, 1, 7, false},
	{"ICS", "Ice detection sensor", 1, 98_500, 2, 9, false},
	{"VGX", "Vortex generator strip", 0, 2_400, 24, 16, false},
	{"UPS", "Controller UPS battery", 4, 27_600, 2, 26, false},
	{"PTB", "Pitch bearing", 0, 1_850_000, 1, 2, true},
}

// variants are the variants of every part kind: one per turbine model (models'
// order) and the retrofit kit.
var variants = []struct {
	label, number string
	percent       int64
}{
	{"WF-2300", "23", 100},
	{"WF-3600", "36", 115},
	{"WF-4200", "42", 130},
	{"WF-8000", "80", 180},
	{"retrofit kit", "RK", 145},
}

const retrofitVariant = 4

type part struct {
	id       int64
	number   string
	name     string
	supplier string
	cents    int64
}

func makeParts(kinds int) []part {
	r := newRand(streamPart)
	parts := make([]part, 0, kinds*len(variants))
	for k := range kinds {
		bk := baseKinds[k%len(baseKinds)]
		name := bk.name
		if line := k / len(baseKinds); line > 0 {
			name += " mk " + strconv.Itoa(line+1)
		}
		for v, pv := range variants {
			p := part{
				id:       int64(len(parts) + 1),
				number:   fmt.Sprintf("%s-%s-%05d", bk.prefix, pv.number, k+1),
				name:     name + " (" + pv.label + ")",
				supplier: suppliers[bk.supplier],
				cents:    bk.cents * pv.percent * (900 + r.Int64N(201)) / 100_000,
			}
			if bk.bearing {
				p.number += "/C3"
			}
			if v == retrofitVariant {
				p.supplier = pick(r, suppliers)
			}
			parts = append(parts, p)
		}
	}
	return parts
}

func (p part) row() []any { return []any{p.id, p.number, p.name, p.supplier, Dec{p.cents, 2}} }

// ---- the skewed choices ----

func (d *Data) pickers() {
	orders := make([]int64, len(d.turbines))
	inspections := make([]int64, len(d.turbines))
	for i, t := range d.turbines {
		// Older turbines need more work, lemons much more, and a
		// decommissioned one little.
		w := int64(5 + dataEnd.Year() - t.commissioned.Year())
		if t.lemon {
			w *= 6
		}
		if t.status == decommissioned {
			w = 1
		}
		orders[i] = w
		inspections[i] = 4
		if t.lemon {
			inspections[i] = 7
		}
	}
	d.orderTurbines = newPicker(orders)
	d.inspectionTurbines = newPicker(inspections)
	all := make([]int64, len(d.technicians))
	senior := make([]int64, len(d.technicians))
	for i, t := range d.technicians {
		all[i] = t.load
		if t.level >= seniorLevel {
			senior[i] = t.load
		}
	}
	d.anyTechnician = newPicker(all)
	d.seniorTechnician = newPicker(senior)
	kinds := make([]int64, len(d.parts)/len(variants))
	for k := range kinds {
		// Later product lines of a kind are used less.
		kinds[k] = max(1, baseKinds[k%len(baseKinds)].pop*4/int64(4+k/len(baseKinds)))
	}
	d.partKinds = newPicker(kinds)
}

// ---- work orders ----

var workOrderColumns = []Column{
	{"work_order_id", Integer}, {"order_number", Text}, {"turbine_id", Integer},
	{"technician_id", Integer}, {"opened_at", Timestamp}, {"closed_at", Timestamp},
	{"priority", Text}, {"status", Text}, {"category", Text}, {"description", Text},
}

var (
	categories      = []string{"corrective", "preventive", "inspection_followup", "retrofit", "safety"}
	categoryWeights = []int{45, 30, 15, 6, 4}
	priorities      = []string{"low", "medium", "high", "critical"}
	priorityWeights = [][]int{
		corrective:         {10, 40, 35, 15},
		preventive:         {50, 45, 5, 0},
		inspectionFollowup: {20, 50, 25, 5},
		retrofit:           {60, 40, 0, 0},
		safety:             {0, 20, 50, 30},
	}
	repairHours = [][2]int{{48, 1440}, {24, 720}, {6, 240}, {2, 72}}
)

const (
	corrective = iota
	preventive
	inspectionFollowup
	retrofit
	safety
)

// high is the index of "high" in priorities: from it on, work needs a senior.
const high = 2

type workOrder struct {
	id           int64
	number       string
	turbine      int // index into Data.turbines
	technicianID int64
	opened       time.Time
	closed       time.Time
	priority     int
	status       string
	category     int
	description  string
}

// workOrders yields the work orders in id order. Part usage reads them again:
// the stream is deterministic, so both see the same orders.
func (d *Data) workOrders(yield func(workOrder) bool) {
	r := newRand(streamWorkOrder)
	n := d.Sizes.WorkOrders
	for i := range n {
		ti := d.orderTurbines.pick(r)
		t := d.turbines[ti]
		w := workOrder{
			id:       int64(i + 1),
			turbine:  ti,
			opened:   spread(r, i, n, dataStart, dataEnd),
			category: weighted(r, categoryWeights),
		}
		w.number = fmt.Sprintf("WO-%d-%07d", w.opened.Year(), w.id)
		w.priority = weighted(r, priorityWeights[w.category])
		w.status = orderStatus(r, dataEnd.Sub(w.opened))
		switch w.status {
		case "closed":
			h := repairHours[w.priority]
			w.closed = w.opened.Add(time.Duration(h[0]*60+r.IntN((h[1]-h[0])*60)) * time.Minute)
		case "cancelled":
			w.closed = w.opened.Add(time.Duration(60+r.IntN(14*24*60)) * time.Minute)
		}
		if !w.closed.IsZero() && !w.closed.Before(dataEnd) {
			w.status, w.closed = "in_progress", time.Time{}
		}
		if assigned(r, w.status) {
			if w.priority >= high {
				w.technicianID = d.technicians[d.seniorTechnician.pick(r)].id
			} else {
				w.technicianID = d.technicians[d.anyTechnician.pick(r)].id
			}
		}
		w.description = describe(r, w.category, d.sites[t.siteID-1].name, models[t.model].name)
		if !yield(w) {
			return
		}
	}
}

// orderStatus draws the status of work opened age before dataEnd: recent work is
// often still open, old work almost always done.
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

func assigned(r *rand.Rand, status string) bool {
	switch status {
	case "open":
		return r.IntN(100) < 45
	case "cancelled":
		return r.IntN(100) < 50
	}
	return true
}

var (
	components = []string{"pitch bearing", "yaw drive", "main bearing", "gearbox", "generator",
		"converter", "slip ring", "hydraulic unit", "anemometer", "cooling system", "rotor brake",
		"pitch motor", "lightning receptor"}
	symptoms = []string{"abnormal noise", "oil leak", "high temperature alarm", "vibration alarm",
		"no response to remote reset", "grinding at low wind speed", "intermittent communication loss"}
	blades       = []string{"A", "B", "C"}
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
		},
		inspectionFollowup: {
			"Follow-up to inspection: leading-edge erosion on blade {blade}",
			"Inspection flagged {symptom} on {component}; verify with CMS data",
			"Blade {blade}: lightning receptor missing after storm at {site}",
		},
		retrofit: {
			"Install controller firmware 4.{number} on {model}",
			"Fit vortex generators on blade {blade} (aero upgrade)",
		},
		safety: {
			"Replace fall-arrest rail section in tower",
			"Aviation warning light failure at {site} — notify the authority",
			"Technician's lift stopped between platforms; inspect {component} cabling",
		},
	}
)

func describe(r *rand.Rand, category int, siteName, model string) string {
	text := strings.NewReplacer(
		"{component}", pick(r, components),
		"{symptom}", pick(r, symptoms),
		"{number}", strconv.Itoa(40+r.IntN(60)),
		"{blade}", pick(r, blades),
		"{site}", siteName,
		"{model}", model,
	).Replace(pick(r, descriptions[category]))
	if text != "" && 'a' <= text[0] && text[0] <= 'z' {
		text = string(text[0]-'a'+'A') + text[1:]
	}
	return text
}

func (w workOrder) row() []any {
	return []any{w.id, w.number, int64(w.turbine + 1), nullable(w.technicianID, w.technicianID != 0),
		w.opened, nullable(w.closed, !w.closed.IsZero()), priorities[w.priority], w.status,
		categories[w.category], w.description}
}

// ---- inspections ----

var inspectionColumns = []Column{
	{"inspection_id", Integer}, {"turbine_id", Integer}, {"technician_id", Integer},
	{"inspected_on", Date}, {"blade_condition", Integer}, {"vibration_mm_s", Double},
	{"passed", Boolean}, {"notes", Text},
}

const passVibration = 4.5

var (
	bladeWeights = []int{2, 6, 27, 43, 22}
	failNotes    = []string{
		"Leading-edge erosion on blade {blade} beyond repair limit",
		"Blade {blade}: lightning receptor missing",
		"Crack indication near root of blade {blade}; drone images attached",
	}
	passNotes = []string{
		"Minor erosion on blade {blade}, monitor",
		"Tower flange bolts re-torqued; checklist complete (blade {blade} photographed)",
		"Ice on blades; blade {blade} inspected from the ground only",
		"Blade {blade}: lightning receptor checked, resistance within limits",
	}
)

func (d *Data) inspections(yield func([]any) bool) {
	r := newRand(streamInspection)
	n := d.Sizes.Inspections
	days := int(dataEnd.Sub(dataStart).Hours() / 24)
	for i := range n {
		on := dataStart.AddDate(0, 0, days*i/n+r.IntN(max(1, days*(i+1)/n-days*i/n)))
		t := d.turbines[d.inspectionTurbines.pick(r)]
		tech := d.technicians[d.seniorTechnician.pick(r)]
		blade := int64(weighted(r, bladeWeights) + 1)
		vibration := vibration(r)
		passed := blade >= 3 && vibration < passVibration
		var notes string
		switch {
		case vibration >= passVibration:
			notes = "Vibration of " + strconv.FormatFloat(vibration, 'f', 2, 64) +
				" mm/s at 1P — refer to the CMS team"
		case !passed:
			notes = strings.ReplaceAll(pick(r, failNotes), "{blade}", pick(r, blades))
		case r.IntN(100) < 35:
			notes = strings.ReplaceAll(pick(r, passNotes), "{blade}", pick(r, blades))
		}
		row := []any{int64(i + 1), t.id, tech.id, on, blade, vibration, passed, nullable(notes, notes != "")}
		if !yield(row) {
			return
		}
	}
}

// vibration draws a reading in mm/s to 0.01 mm/s, as a count of hundredths so
// that the float is the same on every processor: mostly 1–3 mm/s, with a tail.
func vibration(r *rand.Rand) float64 {
	hundredths := 60 + r.IntN(160) + r.IntN(160)
	if r.IntN(100) < 8 {
		hundredths += r.IntN(450)
	}
	return float64(hundredths) / 100
}

// ---- part usage ----

var partUsageColumns = []Column{{"work_order_id", Integer}, {"part_id", Integer}, {"quantity", Integer}}

var partCountWeights = [][]int{
	corrective:         {10, 35, 35, 20},
	preventive:         {0, 40, 40, 20},
	inspectionFollowup: {30, 50, 20},
	retrofit:           {0, 0, 40, 40, 20},
	safety:             {40, 60},
}

// partUsage yields the parts used by work in hand or done, in key order: parts of
// the turbine's model, or retrofit kits for retrofits, of distinct kinds drawn by
// popularity.
func (d *Data) partUsage(yield func([]any) bool) {
	r := newRand(streamPartUsage)
	kinds := make([]int, 0, 8)
	for w := range d.workOrders {
		if w.status != "closed" && w.status != "in_progress" {
			continue
		}
		variant := d.turbines[w.turbine].model
		if w.category == retrofit {
			variant = retrofitVariant
		}
		n := min(weighted(r, partCountWeights[w.category]), d.Sizes.Parts/len(variants))
		kinds = kinds[:0]
		for len(kinds) < n {
			if k := d.partKinds.pick(r); !slices.Contains(kinds, k) {
				kinds = append(kinds, k)
			}
		}
		slices.Sort(kinds)
		for _, k := range kinds {
			p := d.parts[k*len(variants)+variant]
			qty := int64(1 + r.IntN(baseKinds[k%len(baseKinds)].maxQty))
			if !yield([]any{w.id, p.id, qty}) {
				return
			}
		}
	}
}
