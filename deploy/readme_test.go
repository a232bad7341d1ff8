package deploy

import (
	"os"
	"slices"
	"strings"
	"testing"
)

const readmeFile = "../README.md"

// operatingSection returns the README's "Operating veneer" section.
func operatingSection(t *testing.T) string {
	t.Helper()
	data, err := os.ReadFile(readmeFile)
	if err != nil {
		t.Fatal(err)
	}
	_, section, ok := strings.Cut(string(data), "\n## Operating veneer\n")
	if !ok {
		t.Fatalf("%s has no section \"## Operating veneer\"", readmeFile)
	}
	if next := strings.Index(section, "\n## "); next >= 0 {
		section = section[:next]
	}
	return section
}

// tableRows returns the cells of the rows of the Markdown table whose header
// row starts with the given first cell, code spans unwrapped.
func tableRows(section, firstHeader string) [][]string {
	var rows [][]string
	in := false
	for _, line := range strings.Split(section, "\n") {
		line = strings.TrimSpace(line)
		if !strings.HasPrefix(line, "|") {
			in = false
			continue
		}
		cells := strings.Split(strings.Trim(line, "|"), "|")
		for i := range cells {
			cells[i] = strings.Trim(strings.TrimSpace(cells[i]), "`")
		}
		switch {
		case cells[0] == firstHeader:
			in = true
		case in && strings.HasPrefix(cells[0], "---"):
		case in:
			rows = append(rows, cells)
		}
	}
	return rows
}

// TestReadmeMetrics checks the README's metrics table against the contract,
// row for row: name, type and labels.
func TestReadmeMetrics(t *testing.T) {
	rows := tableRows(operatingSection(t), "metric")
	seen := map[string]bool{}
	for _, r := range rows {
		if len(r) != 4 {
			t.Errorf("metrics table row %q: want 4 cells", r)
			continue
		}
		seen[r[0]] = true
		m, ok := MetricByName(r[0])
		if !ok {
			t.Errorf("the README lists %s, which deploy/contract.go does not", r[0])
			continue
		}
		if r[1] != string(m.Type) {
			t.Errorf("the README calls %s a %s; it is a %s", m.Name, r[1], m.Type)
		}
		var labels []string
		for _, l := range strings.Split(r[2], ",") {
			if l = strings.TrimSpace(l); l != "" {
				labels = append(labels, l)
			}
		}
		if !slices.Equal(labels, m.Labels) {
			t.Errorf("the README gives %s the labels %v; they are %v", m.Name, labels, m.Labels)
		}
	}
	for _, m := range Metrics {
		if !seen[m.Name] {
			t.Errorf("the README's metrics table does not list %s", m.Name)
		}
	}
}

// TestReadmeAlerts checks that the README's alert table lists exactly the
// alerts of the rule file.
func TestReadmeAlerts(t *testing.T) {
	var listed []string
	for _, r := range tableRows(operatingSection(t), "alert") {
		listed = append(listed, r[0])
	}
	var alerts []string
	for _, g := range readRules(t).Groups {
		for _, r := range g.Rules {
			if r.Alert != "" {
				alerts = append(alerts, r.Alert)
			}
		}
	}
	slices.Sort(listed)
	slices.Sort(alerts)
	if !slices.Equal(listed, alerts) {
		t.Errorf("the README lists the alerts %v; %s has %v", listed, rulesFile, alerts)
	}
}
