package deploy

import (
	"bytes"
	"encoding/json"
	"os"
	"strings"
	"testing"
)

const dashboardFile = "dashboard/veneer.json"

// dashboard is the dashboard definition: a grid of panels, 24 columns wide,
// each with PromQL queries against a data source chosen through the
// "datasource" variable and filtered by the "job" variable. Decoding is
// strict, so a field the definition does not use is an error.
type dashboard struct {
	Title         string   `json:"title"`
	UID           string   `json:"uid"`
	Description   string   `json:"description"`
	Tags          []string `json:"tags"`
	SchemaVersion int      `json:"schemaVersion"`
	Version       int      `json:"version"`
	Editable      bool     `json:"editable"`
	GraphTooltip  int      `json:"graphTooltip"`
	Refresh       string   `json:"refresh"`
	Time          struct {
		From string `json:"from"`
		To   string `json:"to"`
	} `json:"time"`
	Templating struct {
		List []struct {
			Name       string      `json:"name"`
			Label      string      `json:"label"`
			Type       string      `json:"type"`
			Query      string      `json:"query"`
			Datasource *datasource `json:"datasource,omitempty"`
			Refresh    int         `json:"refresh,omitempty"`
			IncludeAll bool        `json:"includeAll,omitempty"`
			Multi      bool        `json:"multi,omitempty"`
		} `json:"list"`
	} `json:"templating"`
	Panels []panel `json:"panels"`
}

type datasource struct {
	Type string `json:"type"`
	UID  string `json:"uid"`
}

type panel struct {
	ID          int         `json:"id"`
	Type        string      `json:"type"`
	Title       string      `json:"title"`
	Description string      `json:"description,omitempty"`
	Collapsed   bool        `json:"collapsed,omitempty"`
	Panels      []panel     `json:"panels,omitempty"`
	Datasource  *datasource `json:"datasource,omitempty"`
	GridPos     struct {
		H int `json:"h"`
		W int `json:"w"`
		X int `json:"x"`
		Y int `json:"y"`
	} `json:"gridPos"`
	FieldConfig *struct {
		Defaults struct {
			Unit string `json:"unit"`
		} `json:"defaults"`
		Overrides []any `json:"overrides"`
	} `json:"fieldConfig,omitempty"`
	Targets []struct {
		RefID        string      `json:"refId"`
		Datasource   *datasource `json:"datasource"`
		Expr         string      `json:"expr"`
		LegendFormat string      `json:"legendFormat"`
	} `json:"targets,omitempty"`
}

// TestDashboard decodes the dashboard strictly and checks its layout and
// queries: unique panel ids, panels inside the 24-column grid and not
// overlapping, every query on the chosen data source and job, and only
// contract metrics and recording rules in the queries.
func TestDashboard(t *testing.T) {
	data, err := os.ReadFile(dashboardFile)
	if err != nil {
		t.Fatal(err)
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var d dashboard
	if err := dec.Decode(&d); err != nil {
		t.Fatalf("%s: %v", dashboardFile, err)
	}
	vars := map[string]bool{}
	for _, v := range d.Templating.List {
		vars[v.Name] = true
	}
	if !vars["datasource"] || !vars["job"] {
		t.Errorf("variables %v, want datasource and job", vars)
	}
	rf := readRules(t)
	records := map[string]bool{}
	for _, g := range rf.Groups {
		for _, r := range g.Rules {
			if r.Record != "" {
				records[r.Record] = true
			}
		}
	}
	ids := map[int]bool{}
	type cell struct{ x, y int }
	taken := map[cell]int{}
	queries := 0
	for _, p := range d.Panels {
		if ids[p.ID] {
			t.Errorf("panel id %d is used twice", p.ID)
		}
		ids[p.ID] = true
		g := p.GridPos
		if g.W < 1 || g.H < 1 || g.X < 0 || g.Y < 0 || g.X+g.W > 24 {
			t.Errorf("panel %d %q: grid position %+v is outside the 24-column grid", p.ID, p.Title, g)
		}
		for x := g.X; x < g.X+g.W; x++ {
			for y := g.Y; y < g.Y+g.H; y++ {
				if other, ok := taken[cell{x, y}]; ok {
					t.Errorf("panel %d %q overlaps panel %d at column %d row %d", p.ID, p.Title, other, x, y)
				}
				taken[cell{x, y}] = p.ID
			}
		}
		if p.Type == "row" {
			continue
		}
		if len(p.Targets) == 0 || p.Datasource == nil || p.Datasource.UID != "${datasource}" {
			t.Errorf("panel %d %q: want queries on the ${datasource} variable", p.ID, p.Title)
		}
		for _, q := range p.Targets {
			queries++
			where := dashboardFile + ": panel " + p.Title
			if !strings.Contains(q.Expr, `job="$job"`) {
				t.Errorf("%s: query %s does not select job=\"$job\"", where, q.Expr)
			}
			checkExpr(t, where, q.Expr, records)
		}
	}
	if queries == 0 {
		t.Fatalf("%s has no queries", dashboardFile)
	}
}
