package predict

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// Siegmund's approximation for k = ½, h = 5 agrees with Montgomery's table
// (ARL₀ 465, ARL at 1σ 10.4; from memory) within 2 %: the constants the
// chart states are the chart's.
func TestCUSUMSiegmund(t *testing.T) {
	two := func(delta float64) float64 {
		return 1 / (1/SiegmundARL(delta, CUSUMK, CUSUMH) + 1/SiegmundARL(-delta, CUSUMK, CUSUMH))
	}
	for _, c := range []struct{ delta, want float64 }{{0, CUSUMARL0}, {1, CUSUMARL1}} {
		if got := two(c.delta); math.Abs(got-c.want) > 0.02*c.want {
			t.Errorf("Siegmund two-sided ARL at %gσ = %.1f, want %.1f within 2%%", c.delta, got, c.want)
		}
	}
}

// runLength is the index of the first signal on N(shift·[i ≥ at], 1)
// residuals, at most max.
func runLength(r *rand.Rand, shift float64, at, max int) int {
	up, lo := 0.0, 0.0
	for i := 0; i < max; i++ {
		z := r.NormFloat64()
		if i >= at {
			z += shift
		}
		up, lo = math.Max(0, z-CUSUMK+up), math.Max(0, -z-CUSUMK+lo)
		if up > CUSUMH || lo > CUSUMH {
			return i
		}
	}
	return max
}

// In control, the chart's false alarms come once per CUSUMARL0 coupons on
// average (Montgomery's 465, from memory): the mean run length of 1,500
// simulated charts lies within 4 standard errors of it (a run length is
// close to geometric, so its SD is about its mean). RunCUSUM is checked
// against the same loop on one long series.
func TestCUSUMInControlARL(t *testing.T) {
	const runs = 1500
	r := rand.New(rand.NewPCG(14, 1))
	sum := 0.0
	for i := 0; i < runs; i++ {
		sum += float64(runLength(r, 0, 0, 100000) + 1)
	}
	mean := sum / runs
	se := CUSUMARL0 / math.Sqrt(runs)
	if math.Abs(mean-CUSUMARL0) > 4*se {
		t.Errorf("in-control mean run length %.1f, want %.0f ± %.1f (4 SE)", mean, CUSUMARL0, 4*se)
	}
	t.Logf("in-control mean run length %.1f over %d charts (false-alarm rate %.5f per coupon, stated %.5f)", mean, runs, 1/mean, 1/CUSUMARL0)
	r1, r2 := rand.New(rand.NewPCG(3, 3)), rand.New(rand.NewPCG(3, 3))
	z := make([]float64, 3000)
	for i := range z {
		z[i] = r1.NormFloat64()
	}
	if got, want := RunCUSUM(z, CUSUMK, CUSUMH).First, runLength(r2, 0, 0, len(z)); got != want && !(got < 0 && want == len(z)) {
		t.Errorf("RunCUSUM first signal %d, loop %d", got, want)
	}
}

// A sustained 1σ shift from coupon 0 is detected after CUSUMARL1 (10.4,
// Montgomery, from memory) coupons on average over 2,000 seeds, within 4
// standard errors; introduced at coupon 60 of an in-control run, it is
// detected no later on average (the sums are often already above zero).
// The chart's estimates of when the shift began and by how much come out
// near the truth.
func TestCUSUMDetectsShift(t *testing.T) {
	const runs = 2000
	r := rand.New(rand.NewPCG(14, 2))
	var sum, sumSq float64
	for i := 0; i < runs; i++ {
		rl := float64(runLength(r, 1, 0, 1000) + 1)
		sum, sumSq = sum+rl, sumSq+rl*rl
	}
	mean := sum / runs
	se := math.Sqrt((sumSq/runs - mean*mean) / runs)
	if math.Abs(mean-CUSUMARL1) > 4*se {
		t.Errorf("run length after a 1σ shift %.2f, want %.1f ± %.2f (4 SE)", mean, CUSUMARL1, 4*se)
	}
	const tau = 60
	var delay, since, shift float64
	n := 0
	z := make([]float64, tau+200)
	for i := 0; i < runs; i++ {
		for j := range z {
			z[j] = r.NormFloat64()
			if j >= tau {
				z[j]++
			}
		}
		c := RunCUSUM(z[:tau+40], CUSUMK, CUSUMH)
		if c.First < tau || c.Current == nil { // a false alarm before the shift, or back in control: not a delay
			continue
		}
		n++
		delay += float64(c.First - tau + 1)
		since += float64(c.Current.Since - tau)
		shift += c.Current.ShiftSD
	}
	delay, since, shift = delay/float64(n), since/float64(n), shift/float64(n)
	if delay > CUSUMARL1+4*se {
		t.Errorf("mean delay after a 1σ shift at coupon %d: %.2f coupons, want at most %.1f", tau, delay, CUSUMARL1+4*se)
	}
	if math.Abs(since) > 3 || shift < 0.8 || shift > 1.5 {
		t.Errorf("estimates: shift began %.1f coupons from the truth, size %.2fσ; want within 3 coupons and 0.8–1.5σ", since, shift)
	}
	t.Logf("1σ shift: ARL from zero %.2f (SE %.2f); delay from coupon %d %.2f; since off by %.2f; shift estimate %.2fσ (%d runs)", mean, se, tau, delay, since, shift, n)
}

// A power source drifting alone is told apart from one that shares the
// group's drift.
func TestDriftAdvice(t *testing.T) {
	var obs []DriftObservation
	for i := 0; i < 60; i++ {
		for _, ps := range []string{"PS-1", "PS-2", "PS-3"} {
			res := 0.0
			if ps == "PS-3" && i >= 20 {
				res = 0.2 // 2σ at σ = 0.1
			}
			obs = append(obs, DriftObservation{ID: ps, Residual: res, SD: 0.1, PowerSource: ps, Welder: "W-" + ps})
		}
	}
	for _, s := range DriftCharts(obs) {
		out := s.Chart.Current != nil
		switch s.Field + ":" + s.Value {
		case "power_source_id:PS-3":
			if !out || s.Advice == "" || !strings.Contains(s.Advice, "check the machine's calibration") {
				t.Errorf("PS-3: signal %v, advice %q", out, s.Advice)
			}
		case "power_source_id:PS-1", "power_source_id:PS-2":
			if out {
				t.Errorf("%s signals without drift", s.Value)
			}
		case "welder_id:W-PS-3", "calibration_group:":
			// The welder of PS-3 (and the whole group) share its coupons: without them they are in control.
			if !out || s.ExplainedBy != "PS-3" {
				t.Errorf("%s: signal %v explained by %q; want explained by PS-3", s.Label(), out, s.ExplainedBy)
			}
		}
	}
}
