package db_test

import (
	"context"
	"errors"
	"strings"
	"testing"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/db/dbtest"
	"etchlog/predict"
)

// TestCalibrationActivation checks that the latest activation of a group and
// model is the active calibration, and that each activation is audited.
func TestCalibrationActivation(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	storeFitCoupons(t, s, site, p.ID, 6)
	if _, err := s.ActiveCalibration(ctx, site, fitGroup, db.CalibrationJacksonFixed); !errors.Is(err, db.ErrNotFound) {
		t.Fatalf("ActiveCalibration before any activation: err = %v, want ErrNotFound", err)
	}
	a, err := s.CreateCalibration(ctx, actor(site), spec(db.CalibrationJacksonFixed))
	if err != nil {
		t.Fatal(err)
	}
	b, err := s.CreateCalibration(ctx, actor(site), spec(db.CalibrationJacksonFixed))
	if err != nil {
		t.Fatal(err)
	}
	for _, step := range []struct {
		id     uuid.UUID
		reason string
	}{{a.ID, "first shop fit"}, {b.ID, "refit"}, {a.ID, "back to the first fit"}} {
		if _, err := s.ActivateCalibration(ctx, actor(site), step.id, step.reason); err != nil {
			t.Fatalf("ActivateCalibration(%s): %v", step.reason, err)
		}
		got, err := s.ActiveCalibration(ctx, site, fitGroup, db.CalibrationJacksonFixed)
		if err != nil || got.ID != step.id || !got.Active {
			t.Errorf("after %q: active = %s (active %v, err %v), want %s", step.reason, got.ID, got.Active, err, step.id)
		}
	}
	// A wire diameter typed in inches that rounds to the same micrometre is the same group.
	inch := fitGroup
	inch.WireDiameterMM = predict.InchToMM(0.9 / 25.4)
	if got, err := s.ActiveCalibration(ctx, site, inch, db.CalibrationJacksonFixed); err != nil || got.ID != a.ID {
		t.Errorf("ActiveCalibration(%.17g mm) = %s (err %v), want %s", inch.WireDiameterMM, got.ID, err, a.ID)
	}
	if _, err := s.ActiveCalibration(ctx, site, fitGroup, db.CalibrationJacksonFree); !errors.Is(err, db.ErrNotFound) {
		t.Errorf("ActiveCalibration(jackson_free) err = %v, want ErrNotFound (models are activated separately)", err)
	}
	list, err := s.Calibrations(ctx, site, db.CalibrationFilter{ActiveOnly: true}, "", 0)
	if err != nil || len(list.Items) != 1 || list.Items[0].ID != a.ID {
		t.Errorf("Calibrations(active only) = %d items (err %v), want only %s", len(list.Items), err, a.ID)
	}
	acts, err := s.CalibrationActivations(ctx, site, a.ID)
	if err != nil || len(acts) != 2 || acts[1].Reason != "back to the first fit" {
		t.Errorf("CalibrationActivations(a) = %+v (err %v), want 2, the last with its reason", acts, err)
	}
	ev := auditEvents(t, s, site, db.AuditFilter{Entity: "calibration_activation"})
	if len(ev) != 3 || ev[0].Action != "activate" || ev[0].Reason != "first shop fit" {
		t.Errorf("activation audit events = %d (first %+v), want 3 with action activate and the reason", len(ev), ev)
	}
	if v, err := s.VerifyLog(ctx, site, nil); err != nil || !v.OK {
		t.Errorf("VerifyLog = %+v (err %v), want ok", v, err)
	}

	t.Run("ErrNoReason", func(t *testing.T) {
		_, err := s.ActivateCalibration(ctx, actor(site), a.ID, "  ")
		var fe *db.FieldError
		if !errors.As(err, &fe) || fe.Field != "reason" {
			t.Errorf("activation without reason: err = %v, want FieldError on reason", err)
		}
	})
	t.Run("ErrNotFound", func(t *testing.T) {
		if _, err := s.ActivateCalibration(ctx, actor(site+"-other"), a.ID, "other site"); !errors.Is(err, db.ErrNotFound) {
			t.Errorf("activating another site's calibration: err = %v, want ErrNotFound", err)
		}
	})
	t.Run("AppendOnly", func(t *testing.T) {
		for _, q := range []string{
			"UPDATE calibrations SET note = 'x' WHERE id = $1",
			"DELETE FROM calibrations WHERE id = $1",
			"UPDATE calibration_activations SET reason = 'x' WHERE calibration_id = $1",
			"DELETE FROM calibration_activations WHERE calibration_id = $1",
		} {
			_, err := superuser(t).Exec(ctx, q, a.ID) // the service could not even try: it has no UPDATE or DELETE
			if err == nil || !strings.Contains(err.Error(), "append-only") {
				t.Errorf("%s: err = %v, want the append-only refusal", q, err)
			}
		}
	})
}

// TestCalibrationRefused checks that fits the coupons cannot support are
// refused with predict's reason and leave nothing stored.
func TestCalibrationRefused(t *testing.T) {
	t.Parallel()
	s, site, ctx := dbtest.Store(t), dbtest.Site(t), context.Background()
	p := mustProcedure(t, s, site)
	one := storeFitCoupons(t, s, site, p.ID, 1)
	for _, tc := range []struct {
		name  string
		model db.CalibrationModel
		want  error
	}{
		{"ErrTooFewSamples", db.CalibrationJacksonFixed, predict.ErrTooFewSamples},
		{"ErrTooFewSamplesFree", db.CalibrationJacksonFree, predict.ErrTooFewSamples},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := s.CreateCalibration(ctx, actor(site), spec(tc.model)); !errors.Is(err, tc.want) {
				t.Errorf("CreateCalibration(%s) over %d coupon: err = %v, want %v", tc.model, len(one), err, tc.want)
			}
		})
	}
	t.Run("ErrDegenerate", func(t *testing.T) {
		// Five more coupons all at the first one's current: the free fit cannot separate I.
		for i := 1; i <= 5; i++ {
			d := fitCoupon(p.ID, 10+i)
			d.CurrentA = one[0].data.CurrentA
			c, err := s.CreateCoupon(ctx, actor(site), d)
			if err != nil {
				t.Fatal(err)
			}
			if _, err := s.CreateMeasurement(ctx, actor(site), measurementData(c.ID, "A", "accept")); err != nil {
				t.Fatal(err)
			}
		}
		_, err := s.CreateCalibration(ctx, actor(site), spec(db.CalibrationJacksonFree))
		if !errors.Is(err, predict.ErrDegenerate) || !strings.Contains(err.Error(), "current") {
			t.Errorf("free fit at one current: err = %v, want ErrDegenerate naming the current", err)
		}
	})
	t.Run("ErrArcLength", func(t *testing.T) {
		sp := spec(db.CalibrationLesnewich)
		sp.ArcLengthMM = ptr(30.0) // longer than every fixture CTWD
		_, err := s.CreateCalibration(ctx, actor(site), sp)
		var fe *db.FieldError
		if !errors.As(err, &fe) || fe.Field != "arc_length_mm" {
			t.Errorf("arc length above CTWD: err = %v, want FieldError on arc_length_mm", err)
		}
	})
	list, err := s.Calibrations(ctx, site, db.CalibrationFilter{}, "", 0)
	if err != nil || len(list.Items) != 0 {
		t.Errorf("after refused fits: %d calibrations (err %v), want 0", len(list.Items), err)
	}
	if ev := auditEvents(t, s, site, db.AuditFilter{Entity: "calibration"}); len(ev) != 0 {
		t.Errorf("after refused fits: %d calibration audit events, want 0", len(ev))
	}
}
