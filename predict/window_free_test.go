package predict_test

import (
	"errors"
	"math"
	"slices"
	"testing"

	"etchlog/predict"
	"pgregory.net/rapid"
)

// TestWindowFreeFitWithPublishedExponentsIsK checks that a free fit with the
// published Jackson exponents, P = K·I^(4/3)·S^(−1/3)·V^(−2/3) (Jackson power
// law, from memory), and c₀ = ln K gives the window of the K target.
func TestWindowFreeFitWithPublishedExponentsIsK(t *testing.T) {
	withK := demoWindow()
	km, err := withK.Penetration.K.Metric()
	if err != nil {
		t.Fatal(err)
	}
	withFit := demoWindow()
	fit := freeFit(math.Log(km.Value), 4.0/3, -1.0/3, -2.0/3)
	// K is left in place: the fit must take precedence over it.
	withFit.Penetration.Fit = &fit
	want, errK := predict.ParameterWindow(withK)
	got, errF := predict.ParameterWindow(withFit)
	if errK != nil || errF != nil {
		t.Fatalf("ParameterWindow: K %v, fit %v", errK, errF)
	}
	if len(got.Cells) != len(want.Cells) || got.Feasible != want.Feasible || !want.Feasible {
		t.Fatalf("fit window: %d cells, feasible %v; want %d, %v (feasible)", len(got.Cells), got.Feasible, len(want.Cells), want.Feasible)
	}
	for n, c := range got.Cells {
		w := want.Cells[n]
		if c.CurrentA.LoLimit != w.CurrentA.LoLimit || c.CurrentA.HiLimit != w.CurrentA.HiLimit {
			t.Errorf("cell %d limits = %s, %s; want %s, %s", n, c.CurrentA.LoLimit, c.CurrentA.HiLimit, w.CurrentA.LoLimit, w.CurrentA.HiLimit)
		}
		checkRel(t, "cell current min", c.CurrentA.Lo, w.CurrentA.Lo, 1e-12)
		checkRel(t, "cell current max", c.CurrentA.Hi, w.CurrentA.Hi, 1e-12)
	}
	g, w := got.Nominal, want.Nominal
	checkRel(t, "nominal current", g.CurrentA, w.CurrentA, 1e-12)
	checkRel(t, "nominal penetration", g.PenetrationMM, w.PenetrationMM, 1e-12)
	checkAbs(t, "nominal margin", g.Margin, w.Margin, 1e-12)
	if !slices.Equal(g.Closest, w.Closest) {
		t.Errorf("nominal closest = %v, want %v", g.Closest, w.Closest)
	}
}

// TestWindowFreeBoundReproducesTarget checks, over drawn fits and welds,
// that the penetration bound of every cell gives the minimum penetration
// back through the fit's median (Predict): a lower current bound when the
// current exponent is positive, an upper one when it is negative.
func TestWindowFreeBoundReproducesTarget(t *testing.T) {
	rapid.Check(t, func(t *rapid.T) {
		f := drawFreeFit(t)
		if rapid.Bool().Draw(t, "negativeCurrentExponent") {
			f.Coef[1] = -f.Coef[1]
		}
		i, s, v, _ := drawWeld(t)
		at, err := f.Predict(i, v, s, 0.95)
		if err != nil {
			t.Fatal(err)
		}
		minMM := at.MedianMM * rapid.Float64Range(0.5, 2).Draw(t, "targetRatio")
		in := predict.WindowInput{
			CurrentA: predict.Range{Min: 1e-3, Max: 1e6}, VoltageV: predict.Range{Min: 0.9 * v, Max: 1.1 * v},
			TravelSpeedMMPerS: predict.Range{Min: 0.8 * s, Max: 1.25 * s}, VoltageSteps: 3, TravelSpeedSteps: 3,
			Penetration: &predict.PenetrationTarget{MinMM: minMM, Fit: &f},
		}
		w, err := predict.ParameterWindow(in)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range w.Cells {
			end, lim := c.CurrentA.Lo, c.CurrentA.LoLimit
			if f.Coef[1] < 0 {
				end, lim = c.CurrentA.Hi, c.CurrentA.HiLimit
			}
			if lim != predict.LimitPenetrationMin {
				t.Fatalf("cell %+v: penetration bound not at the expected end (exponent %v)", c, f.Coef[1])
			}
			p, err := f.Predict(end, c.VoltageV, c.TravelSpeedMMPerS, 0.95)
			if err != nil {
				t.Fatal(err)
			}
			checkRel(t, "median penetration at the cell's penetration bound", p.MedianMM, minMM, 1e-9)
		}
		if w.Feasible && w.Nominal.PenetrationMM < minMM*(1-1e-12) {
			t.Errorf("nominal penetration %v mm < minimum %v mm", w.Nominal.PenetrationMM, minMM)
		}
	})
}

// TestWindowFreeFitRefused checks the fits a window cannot use.
func TestWindowFreeFitRefused(t *testing.T) {
	fixed := freeFit(-3.5, 4.0/3, -1.0/3, -2.0/3)
	fixed.Model = predict.ModelJacksonFixed
	for _, tc := range []struct {
		name  string
		fit   predict.PenetrationFit
		input bool // an *InputError, else ErrInvalidFit
	}{
		{"CurrentExponentZero", freeFit(-3.5, 1e-9, -0.3, -0.6), true},
		{"FixedModel", fixed, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			in := demoWindow()
			in.Penetration.Fit = &tc.fit
			_, err := predict.ParameterWindow(in)
			var ie *predict.InputError
			if tc.input && !errors.As(err, &ie) || !tc.input && !errors.Is(err, predict.ErrInvalidFit) {
				t.Errorf("ParameterWindow with %s fit: err = %v, want input error %v", tc.name, err, tc.input)
			}
		})
	}
}
