package predict_test

import (
	"strings"
	"testing"

	"etchlog/predict"
)

// TestCheckRequirements: a section below the procedure's required minimum
// penetration is a requirement flag in plain words; sections at or above it
// are not. The wording is the one an inspector writes on a macro report.
func TestCheckRequirements(t *testing.T) {
	wps := predict.Requirement{MinPenetrationMM: 1.0, Source: "WPS-TR-101 rev 3", Verb: "requires"}
	pqr := predict.Requirement{MinPenetrationMM: 0.8, Source: "PQR-7 rev 1", Verb: "states"}
	secs := []predict.Section{{"A", 1.2}, {"B", 0.6}, {"C", 1.0}}
	got := predict.CheckRequirements(secs, []predict.Requirement{wps, pqr}, nil)
	if len(got) != 1 {
		t.Fatalf("flags = %+v, want one", got)
	}
	f := got[0]
	if f.Kind != predict.FlagRequirement || *f.Value != 0.6 || *f.Min != 1.0 || f.Direction != predict.Below {
		t.Errorf("flag = %+v, want requirement, value 0.6, min 1.0, below", f)
	}
	for _, want := range []string{"section B penetration 0.6 mm is below the 1 mm that WPS-TR-101 rev 3 requires",
		"section B penetration 0.6 mm is below the 0.8 mm that PQR-7 rev 1 states"} {
		if !strings.Contains(f.Detail, want) {
			t.Errorf("detail %q lacks %q", f.Detail, want)
		}
	}
	if strings.Contains(f.Detail, "section C") || strings.Contains(f.Detail, "section A") {
		t.Errorf("detail %q names a section that meets the requirement", f.Detail)
	}
	if got := predict.CheckRequirements(secs[:1], []predict.Requirement{wps}, nil); len(got) != 0 {
		t.Errorf("a section above the minimum flagged: %+v", got)
	}
}

// TestSuspectUnits: 0.075 typed into penetration_mm where the model predicts
// about 2 mm reads as 0.075 in = 1.905 mm (1 in = 25.4 mm, NIST SP 811), so
// it is flagged with that conversion; 1.8 mm is not; 0.3 mm without a model
// is not (plausible on sheet), 0.075 mm without one is.
func TestSuspectUnits(t *testing.T) {
	two := 2.0
	got := predict.SuspectUnits([]predict.Section{{"A", 1.8}, {"B", 0.075}}, &two, nil)
	if len(got) != 1 || got[0].Kind != predict.FlagSuspectUnits || *got[0].Value != 0.075 {
		t.Fatalf("flags = %+v, want one suspect_units on 0.075", got)
	}
	if want := "0.075 in = 1.905 mm"; !strings.Contains(got[0].Detail, want) || !strings.Contains(got[0].Detail, "section B") {
		t.Errorf("detail %q lacks %q and section B", got[0].Detail, want)
	}
	if got := predict.SuspectUnits([]predict.Section{{"A", 0.3}}, nil, nil); len(got) != 0 {
		t.Errorf("0.3 mm without a model flagged: %+v", got)
	}
	if got := predict.SuspectUnits([]predict.Section{{"A", 0.075}}, nil, nil); len(got) != 1 {
		t.Errorf("0.075 mm without a model not flagged")
	}
	tenth := 0.1 // a model predicting 0.1 mm makes 0.075 mm the nearer reading
	if got := predict.SuspectUnits([]predict.Section{{"A", 0.075}}, &tenth, nil); len(got) != 0 {
		t.Errorf("0.075 mm flagged though the model predicts 0.1 mm: %+v", got)
	}
}
