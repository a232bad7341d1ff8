package demo

import (
	"fmt"
	"strings"
	"time"
)

// kind is the kind of value a column holds. It says which Go value the generator
// produces for the column and which value bind turns that into for the database.
type kind int

// The column kinds. Each comment gives the generator's Go type, then the bound one.
const (
	kindInteger   kind = iota + 1 // int64, bound as is
	kindText                      // string, bound as is
	kindDecimal                   // int64 count of 10^-scale units, bound as a string such as "1250.00"
	kindDouble                    // float64, bound as is
	kindBoolean                   // bool, bound as is
	kindDate                      // time.Time in UTC, bound as "2006-01-02"
	kindTimestamp                 // time.Time in UTC, bound as "2006-01-02 15:04:05"
	kindBinary                    // []byte, bound as is
)

// Dates and timestamps travel as text in ISO 8601 form, which all three databases
// read into their date and time types, without any time zone to shift them.
const (
	dateLayout      = "2006-01-02"
	timestampLayout = "2006-01-02 15:04:05"
)

// column is one column of a demo table, as schema.sql declares it.
type column struct {
	name string
	kind kind
	// scale is the number of fraction digits of a kindDecimal column.
	scale int
}

// table is one demo table: its name and columns in schema.sql's order.
type table struct {
	name    string
	columns []column
}

// tableData is a table with its generated rows; each row has one value per column,
// nil for NULL.
type tableData struct {
	table *table
	rows  [][]any
}

var (
	siteTable = table{"site", []column{
		{name: "site_id", kind: kindInteger},
		{name: "code", kind: kindText},
		{name: "name", kind: kindText},
		{name: "country", kind: kindText},
		{name: "region", kind: kindText},
		{name: "commissioned_on", kind: kindDate},
		{name: "latitude", kind: kindDecimal, scale: 6},
		{name: "longitude", kind: kindDecimal, scale: 6},
		{name: "offshore", kind: kindBoolean},
	}}
	turbineTable = table{"turbine", []column{
		{name: "turbine_id", kind: kindInteger},
		{name: "serial", kind: kindText},
		{name: "site_id", kind: kindInteger},
		{name: "model", kind: kindText},
		{name: "rated_power_kw", kind: kindInteger},
		{name: "hub_height_m", kind: kindDecimal, scale: 1},
		{name: "commissioned_on", kind: kindDate},
		{name: "status", kind: kindText},
		{name: "firmware_digest", kind: kindBinary},
	}}
	technicianTable = table{"technician", []column{
		{name: "technician_id", kind: kindInteger},
		{name: "full_name", kind: kindText},
		{name: "employer", kind: kindText},
		{name: "certification_level", kind: kindInteger},
		{name: "hired_on", kind: kindDate},
	}}
	partTable = table{"part", []column{
		{name: "part_id", kind: kindInteger},
		{name: "part_number", kind: kindText},
		{name: "name", kind: kindText},
		{name: "supplier", kind: kindText},
		{name: "unit_cost", kind: kindDecimal, scale: 2},
	}}
	workOrderTable = table{"work_order", []column{
		{name: "work_order_id", kind: kindInteger},
		{name: "order_number", kind: kindText},
		{name: "turbine_id", kind: kindInteger},
		{name: "technician_id", kind: kindInteger},
		{name: "opened_at", kind: kindTimestamp},
		{name: "closed_at", kind: kindTimestamp},
		{name: "priority", kind: kindText},
		{name: "status", kind: kindText},
		{name: "category", kind: kindText},
		{name: "description", kind: kindText},
	}}
	inspectionTable = table{"inspection", []column{
		{name: "inspection_id", kind: kindInteger},
		{name: "turbine_id", kind: kindInteger},
		{name: "technician_id", kind: kindInteger},
		{name: "inspected_on", kind: kindDate},
		{name: "blade_condition", kind: kindInteger},
		{name: "vibration_mm_s", kind: kindDouble},
		{name: "passed", kind: kindBoolean},
		{name: "notes", kind: kindText},
	}}
	partUsageTable = table{"part_usage", []column{
		{name: "work_order_id", kind: kindInteger},
		{name: "part_id", kind: kindInteger},
		{name: "quantity", kind: kindInteger},
	}}
)

// tables lists the demo tables in creation order, parents before children.
var tables = []*table{
	&siteTable, &turbineTable, &technicianTable, &partTable,
	&workOrderTable, &inspectionTable, &partUsageTable,
}

// bind turns a generated value into the value passed to the database for column c.
// NULL (nil) stays nil.
func bind(c column, v any) any {
	switch x := v.(type) {
	case time.Time:
		if c.kind == kindDate {
			return x.Format(dateLayout)
		}
		return x.Format(timestampLayout)
	case int64:
		if c.kind == kindDecimal {
			return formatDecimal(x, c.scale)
		}
	}
	return v
}

// formatDecimal writes units·10^-scale with exactly scale fraction digits.
func formatDecimal(units int64, scale int) string {
	sign := ""
	if units < 0 {
		sign, units = "-", -units
	}
	digits := fmt.Sprintf("%0*d", scale+1, units)
	if scale == 0 {
		return sign + digits
	}
	cut := len(digits) - scale
	return sign + digits[:cut] + "." + digits[cut:]
}

// columnList is the parenthesised column list of an INSERT into t.
func (t *table) columnList() string {
	names := make([]string, len(t.columns))
	for i, c := range t.columns {
		names[i] = c.name
	}
	return "(" + strings.Join(names, ", ") + ")"
}
