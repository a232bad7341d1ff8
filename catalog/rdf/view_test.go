package rdf

import "testing"

func TestViews(t *testing.T) {
	// Every kind of term survives the trip through a view, and the views
	// made over one buffer stay valid while it grows.
	terms := []Term{
		IRI("https://data.veneer.example/windfarm/turbine/T-07"),
		BlankNode("b12"),
		NewString("yaw drive"),
		NewLangString("Getriebe", "de"),
		NewTyped("3.6E0", XSDDouble),
		nil,
	}
	views := make([]View, len(terms))
	AppendViews(views, make([]byte, 0, 4), terms)
	for i, want := range terms {
		got := views[i].Term()
		if (got == nil) != (want == nil) || got != nil && !SameTerm(got, want) {
			t.Errorf("term %d: %v through a view, want %v", i, got, want)
		}
	}
	if (View{}).Term() != nil {
		t.Error("the zero View is a term")
	}
}
