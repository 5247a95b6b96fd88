package db_test

import (
	"context"
	"math"
	"testing"
	"time"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/predict"
)

// TestCalibrationSamples checks which coupons a fit sees: current revisions,
// not voided, of the group only, with the mean of the current sections.
func TestCalibrationSamples(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	cs := storeFitCoupons(t, s, site, p.ID, 6)

	// Coupon 1: a corrected current is what the fit sees.
	fixed := cs[1].data
	fixed.CurrentA = 172
	if _, err := s.CorrectCoupon(ctx, actor(site), cs[1].id, db.Change{BaseRevision: 1, Reason: "meter re-read"}, fixed); err != nil {
		t.Fatal(err)
	}
	cs[1].data = fixed
	// Coupon 2: voided, so left out.
	if _, err := s.VoidCoupon(ctx, actor(site), cs[2].id, db.Change{BaseRevision: 1, Reason: "wrong plate"}); err != nil {
		t.Fatal(err)
	}
	// Coupon 3: section B voided, so its penetration is section A alone.
	ms, err := s.Measurements(ctx, site, db.MeasurementFilter{CouponID: &cs[3].id}, "", 0)
	if err != nil || len(ms.Items) != 2 {
		t.Fatalf("Measurements(coupon 3) = %d (err %v), want 2", len(ms.Items), err)
	}
	if _, err := s.VoidMeasurement(ctx, actor(site), ms.Items[1].ID, db.Change{BaseRevision: 1, Reason: "section cut off-centre"}); err != nil {
		t.Fatal(err)
	}
	// Other groups: another gas and another joint type.
	other := fitCoupon(p.ID, 40)
	other.ShieldingGas = "Ar-10CO2"
	otherJoint := fitCoupon(p.ID, 41)
	otherJoint.JointType = "butt"
	for _, d := range []db.CouponData{other, otherJoint} {
		c, err := s.CreateCoupon(ctx, actor(site), d)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := s.CreateMeasurement(ctx, actor(site), measurementData(c.ID, "A", "accept")); err != nil {
			t.Fatal(err)
		}
	}
	// Coupon without sections: no penetration sample, but a melting sample.
	bare := fitCoupon(p.ID, 42)
	bc, err := s.CreateCoupon(ctx, actor(site), bare)
	if err != nil {
		t.Fatal(err)
	}

	want := func(idx ...int) []predict.PenetrationSample {
		var out []predict.PenetrationSample
		for _, i := range idx {
			smp := cs[i].penetrationSample()
			if i == 3 {
				smp.PenetrationMM = cs[3].sections[0]
			}
			out = append(out, smp)
		}
		return out
	}
	otherProc := mustProcedure(t, s, site).ID
	day := func(d int) *db.Date { v := db.DateOf(time.Date(2026, 11, d, 0, 0, 0, 0, time.UTC)); return &v }
	for _, tc := range []struct {
		name string
		f    db.SampleFilter
		want []predict.PenetrationSample
	}{
		{"Group", db.SampleFilter{Group: fitGroup}, want(0, 1, 3, 4, 5)},
		{"WireDiameterInInches", db.SampleFilter{Group: db.CalibrationGroup{Process: "GMAW", WireDiameterMM: 0.9 + 4e-4, ShieldingGas: "Ar-25CO2", JointType: "fillet"}}, want(0, 1, 3, 4, 5)},
		{"DateRange", db.SampleFilter{Group: fitGroup, WeldedFrom: day(2), WeldedTo: day(5)}, want(1, 3)}, // half-open: days 2, 3 and 4
		{"OtherProcedure", db.SampleFilter{Group: fitGroup, ProcedureID: &otherProc}, nil},
		{"OtherProcess", db.SampleFilter{Group: db.CalibrationGroup{Process: "FCAW", WireDiameterMM: 0.9, ShieldingGas: "Ar-25CO2", JointType: "fillet"}}, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := s.PenetrationSamples(ctx, site, tc.f)
			if err != nil {
				t.Fatalf("PenetrationSamples: %v", err)
			}
			if d := cmp.Diff(tc.want, got, cmpopts.EquateEmpty()); d != "" {
				t.Errorf("PenetrationSamples(%s) (-want +got):\n%s", tc.name, d)
			}
		})
	}
	t.Run("Melting", func(t *testing.T) {
		got, err := s.MeltingSamples(ctx, site, db.SampleFilter{Group: fitGroup}, 4)
		if err != nil {
			t.Fatalf("MeltingSamples: %v", err)
		}
		var want []predict.MeltingSample
		for _, i := range []int{0, 1, 3, 4, 5} {
			want = append(want, cs[i].meltingSample(t, 4))
		}
		want = append(want, storedCoupon{id: bc.ID, data: bare}.meltingSample(t, 4))
		if d := cmp.Diff(want, got); d != "" {
			t.Errorf("MeltingSamples (-want +got):\n%s", d)
		}
	})
}

// relClose reports whether two float slices agree to rel relative.
func relClose(a, b []float64, rel float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > rel*math.Abs(b[i]) {
			return false
		}
	}
	return true
}

// fitIDs are the sample ids of predict's whole-group fit.
func fitIDs(f db.CalibrationFit) []string {
	if f.Penetration != nil {
		return f.Penetration.SampleIDs
	}
	return f.Melting.SampleIDs
}

// TestCreateCalibrationStoresPredictFit checks the plumbing: the stored fit
// equals predict's fit of the same samples bit for bit, before and after the
// jsonb round trip. (The regression itself is checked against gonum and NIST
// StRD in package predict.)
func TestCreateCalibrationStoresPredictFit(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	cs := storeFitCoupons(t, s, site, p.ID, 8)
	var pen []predict.PenetrationSample
	var mel []predict.MeltingSample
	for _, c := range cs {
		pen = append(pen, c.penetrationSample())
		mel = append(mel, c.meltingSample(t, 3.5))
	}
	fixed, err := predict.FitPenetrationFixed(pen)
	if err != nil {
		t.Fatal(err)
	}
	free, err := predict.FitPenetrationFree(pen)
	if err != nil {
		t.Fatal(err)
	}
	melt, err := predict.FitMeltingRate(mel)
	if err != nil {
		t.Fatal(err)
	}
	arc := 3.5
	for _, tc := range []struct {
		model db.CalibrationModel
		arc   *float64
		want  db.CalibrationFit
	}{
		{db.CalibrationJacksonFixed, nil, db.CalibrationFit{Penetration: &fixed}},
		{db.CalibrationJacksonFree, nil, db.CalibrationFit{Penetration: &free}},
		{db.CalibrationLesnewich, &arc, db.CalibrationFit{Melting: &melt}},
	} {
		t.Run(string(tc.model), func(t *testing.T) {
			sp := spec(tc.model)
			sp.ArcLengthMM = tc.arc
			c, err := s.CreateCalibration(ctx, actor(site), sp)
			if err != nil {
				t.Fatalf("CreateCalibration: %v", err)
			}
			read, err := s.Calibration(ctx, site, c.ID)
			if err != nil {
				t.Fatalf("Calibration: %v", err)
			}
			// The calibration is fitted by the one-pass streaming QR
			// (predict's PenetrationStream, MeltingStream), predict's
			// whole-group fit by a QR of the whole design matrix: the same
			// least squares by another order of rotations, so they agree to
			// rounding (about 1e-15 relative here), not bit for bit. 1e-12
			// relative is far below the 12 significant digits answered; the
			// factor correlations of the identifiability check (|r| ≤ 1, a
			// small r comes from cancellation in the centred scatter) are held
			// to 1e-12 absolute (seen: 1e-13). The
			// fit no longer stores its sample ids: the calibration's coupon
			// ids, re-derived from its selection, stand in for them.
			approx := []cmp.Option{cmpopts.EquateApprox(1e-12, 0), cmpopts.IgnoreFields(predict.PenetrationFit{}, "Identifiability")}
			for name, got := range map[string]db.CalibrationFit{"created": c.Fit, "read back": read.Fit} {
				if d := cmp.Diff(tc.want, got, approx...); d != "" {
					t.Errorf("%s fit (-predict +stored):\n%s", name, d)
				}
				if got.Penetration != nil {
					if d := cmp.Diff(tc.want.Penetration.Identifiability, got.Penetration.Identifiability, cmpopts.EquateApprox(1e-12, 1e-12)); d != "" {
						t.Errorf("%s identifiability (-predict +stored):\n%s", name, d)
					}
				}
				if got.Penetration != nil && !relClose(got.Penetration.Coef, tc.want.Penetration.Coef, 1e-12) {
					t.Errorf("%s coefficients %v, want %v to 1e-12 relative", name, got.Penetration.Coef, tc.want.Penetration.Coef)
				}
			}
			wantIDs := fitIDs(tc.want)
			for name, got := range map[string]db.Calibration{"created": c, "read back": read} {
				if len(got.CouponIDs) != len(wantIDs) || got.Samples == nil || got.SampleCount != len(cs) || len(got.SampleDigest) != 64 {
					t.Fatalf("%s: coupon ids %v, samples %v, count %d, digest %q; want the %d coupons", name, got.CouponIDs, got.Samples, got.SampleCount, got.SampleDigest, len(cs))
				}
				for i, id := range got.CouponIDs {
					if id.String() != wantIDs[i] {
						t.Errorf("%s coupon %d = %s, want predict's sample %s", name, i, id, wantIDs[i])
					}
				}
			}
			if read.SampleCheck == nil || read.SampleCheck.Finding != "matches" || read.SampleDigest != c.SampleDigest {
				t.Errorf("read back check %+v, digest %s; want matches %s", read.SampleCheck, read.SampleDigest, c.SampleDigest)
			}
		})
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Errorf("VerifyLog = %+v (err %v), want ok", v, err)
	}
}
