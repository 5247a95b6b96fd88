package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/predict"
)

// The demo shop is invented: Tamsin Row Steelworks, a small structural
// fabricator qualifying two GMAW procedures on carbon steel. Every name,
// value and measurement below is made up for demonstration only.

const demoSite = "demo"

// Demo tokens are fixed so the README's example requests work as printed.
// They exist only in the demo site; never use them on a real installation.
var demoUsers = []struct{ name, role, token string }{
	{"ines.technician", db.RoleTechnician, "demo-technician-token"},
	{"oskar.engineer", db.RoleEngineer, "demo-engineer-token-0"},
	{"ruth.auditor", db.RoleAuditor, "demo-auditor-token-00"},
}

// cmdDemo loads the demo shop (once) into the local default database and serves it.
func cmdDemo(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	c, err := parseServer("demo", "Loads the invented demo shop (once) into the database and serves it, printing\n"+
		"the demo tokens and example requests.", args, getenv, stdout, stderr)
	if err != nil {
		return err
	}
	log := c.logger(stderr)
	skey, err := c.logKey()
	if errors.Is(err, errNoLogKey) { // the demo makes (once) and keeps its own key
		skey, err = demoLogKey()
	}
	if err != nil {
		return err
	}
	store, err := openStore(ctx, c, log)
	if err != nil {
		return err
	}
	defer store.Close()
	if err := startLog(ctx, store, skey, log); err != nil {
		return err
	}
	owner, err := openOwner(ctx, c, log)
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	if err := owner.SetLogKey(skey); err != nil {
		owner.Close()
		return err
	}
	loaded, err := loadDemo(ctx, owner, store)
	owner.Close() // the server runs with the service's login only
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	return serve(ctx, c, store, log, func(base string) {
		if loaded {
			fmt.Fprintln(stdout, "demo: loaded the invented shop \"Tamsin Row Steelworks\" into site", demoSite)
		} else {
			fmt.Fprintln(stdout, "demo: the demo shop was already loaded; reusing it")
		}
		fmt.Fprintf(stdout, `etchlog demo listening on %[1]s  (Ctrl-C stops it)

Open %[1]s/lab/ in a browser and sign in with one of the tokens (each role sees its own pages).
Tokens (demo only): technician %[2]s, engineer %[3]s, auditor %[4]s

Try:
  curl -s %[1]s/healthz
  curl -s -H 'Authorization: Bearer %[4]s' '%[1]s/v1/coupons?limit=5'
  curl -s -H 'Authorization: Bearer %[4]s' '%[1]s/v1/coupons?acceptance=reject'
  curl -s -H 'Authorization: Bearer %[4]s' %[1]s/v1/audit/verify
  curl -s -H 'Authorization: Bearer %[4]s' '%[1]s/v1/flags?limit=5'
  curl -s -H 'Authorization: Bearer %[4]s' '%[1]s/v1/production-records?flagged=true'
  curl -s -H 'Authorization: Bearer %[4]s' '%[1]s/v1/flags?kind=drift'
  curl -s -H 'Authorization: Bearer %[4]s' '%[1]s/v1/flags?kind=drift'

CAUTION: predictions are estimates for planning and never replace qualification testing;
qualification follows the governing code. Defer to local codes, the code of record and
licensed or certified practice.
`, base, demoUsers[0].token, demoUsers[1].token, demoUsers[2].token)
	})
}

func ptr[T any](v T) *T { return &v }

// loadDemo writes the demo shop unless it is there already; it reports whether it wrote.
// Users are written by the administrator (owner), records by the service (s).
func loadDemo(ctx context.Context, owner, s *db.Store) (bool, error) {
	for _, u := range demoUsers {
		if err := owner.PutUser(ctx, db.User{Site: demoSite, Name: u.name, Role: u.role}, u.token); err != nil {
			return false, err
		}
	}
	existing, err := s.Procedures(ctx, demoSite, db.ProcedureFilter{IncludeVoided: true}, "", 1)
	if err != nil {
		return false, err
	}
	if len(existing.Items) > 0 {
		return false, nil
	}
	eng := db.Actor{Site: demoSite, Name: demoUsers[1].name, Role: db.RoleEngineer}
	tech := db.Actor{Site: demoSite, Name: demoUsers[0].name, Role: db.RoleTechnician}
	day := func(d int) db.Date { return db.DateOf(demoDay(d)) }

	pqrFillet, err := s.CreateQualificationRecord(ctx, eng, db.QualificationRecordData{
		RecordNumber: "PQR-TR-11", Process: "GMAW", WeldedOn: day(0), WelderID: "TR-W04",
		FillerClassification: "ER70S-6", WireDiameterMM: predict.InchToMM(0.035), ShieldingGas: "Ar-25CO2",
		Polarity: "DCEP", TransferMode: "short_circuit", Position: "2F", BaseMetalGroup: "carbon steel",
		ThicknessMM: 9.5, CurrentA: 175, VoltageV: 20.5, TravelSpeedMMPerS: predict.InPerMinToMMPerS(12),
		WireFeedSpeedMPerMin: ptr(predict.InPerMinToMPerMin(300)), CTWDMM: ptr(predict.InchToMM(0.5)),
		PreheatC: ptr(18.0), VisualResult: "pass", BendResult: "not_tested", TensileResult: "not_tested",
		MacroResult: "pass", Outcome: "pass", Remarks: "fillet break and macro; invented demo record",
	})
	if err != nil {
		return false, err
	}
	pqrGroove, err := s.CreateQualificationRecord(ctx, eng, db.QualificationRecordData{
		RecordNumber: "PQR-TR-21", Process: "GMAW", WeldedOn: day(3), WelderID: "TR-W09",
		FillerClassification: "ER70S-6", WireDiameterMM: predict.InchToMM(0.045), ShieldingGas: "Ar-10CO2",
		Polarity: "DCEP", TransferMode: "spray", Position: "1G", BaseMetalGroup: "carbon steel",
		ThicknessMM: 19, CurrentA: 285, VoltageV: 29, TravelSpeedMMPerS: predict.InPerMinToMMPerS(14),
		WireFeedSpeedMPerMin: ptr(predict.InPerMinToMPerMin(380)), CTWDMM: ptr(predict.InchToMM(0.75)),
		PreheatC: ptr(20.0), InterpassC: ptr(180.0), VisualResult: "pass", BendResult: "pass",
		TensileResult: "pass", MacroResult: "pass", TensileStrengthMPa: ptr(541.0), Outcome: "pass",
		Remarks: "invented demo record",
	})
	if err != nil {
		return false, err
	}
	fillet, err := s.CreateProcedure(ctx, eng, db.ProcedureData{
		Code: "WPS-TR-101", Title: "Fillet welds, carbon steel, 0.035 in wire, short circuit",
		Process: "GMAW", FillerClassification: "ER70S-6", WireDiameterMM: predict.InchToMM(0.035),
		ShieldingGas: "Ar-25CO2", Polarity: "DCEP", TransferMode: "short_circuit",
		Positions: []string{"1F", "2F", "3F"}, BaseMetalGroup: "carbon steel", ThicknessMinMM: 3,
		ThicknessMaxMM: 19, MinPenetrationMM: ptr(1.0), Status: "qualified",
		SupportingRecordIDs: []uuid.UUID{pqrFillet.ID},
	})
	if err != nil {
		return false, err
	}
	// The engineer has signed off the fillet PQR; the groove one waits for review.
	if _, err := s.SignOffRecord(ctx, eng, db.SignQualificationRecord, pqrFillet.ID, db.SignOffRequest{Revision: 1,
		Statement: "Fillet break and macro reviewed against the shop's code of record; accepted (invented demo sign-off)."}); err != nil {
		return false, err
	}
	groove, err := s.CreateProcedure(ctx, eng, db.ProcedureData{
		Code: "WPS-TR-204", Title: "Groove welds, carbon steel, 0.045 in wire, spray transfer",
		Process: "GMAW", FillerClassification: "ER70S-6", WireDiameterMM: predict.InchToMM(0.045),
		ShieldingGas: "Ar-10CO2", Polarity: "DCEP", TransferMode: "spray",
		Positions: []string{"1G", "1F", "2F"}, BaseMetalGroup: "carbon steel", ThicknessMinMM: 6,
		ThicknessMaxMM: 38, MinPenetrationMM: ptr(2.0), Status: "qualified",
		SupportingRecordIDs: []uuid.UUID{pqrGroove.ID},
	})
	if err != nil {
		return false, err
	}
	if _, err := s.CreateProcedure(ctx, eng, db.ProcedureData{
		Code: "WPS-TR-305", Title: "Vertical-up fillets, 0.045 in wire, pulsed spray (trial)",
		Process: "GMAW", FillerClassification: "ER70S-6", WireDiameterMM: predict.InchToMM(0.045),
		ShieldingGas: "Ar-10CO2", Polarity: "DCEP", TransferMode: "pulsed_spray",
		Positions: []string{"3F"}, BaseMetalGroup: "carbon steel", ThicknessMinMM: 6, ThicknessMaxMM: 25,
		Status: "draft",
	}); err != nil {
		return false, err
	}
	// Trial coupons around each procedure's nominal point. The "measured"
	// penetration is drawn around a power-law trend with scatter: invented.
	rng := rand.New(rand.NewPCG(2026, 11))
	type family struct {
		proc             db.Procedure
		pqr              uuid.UUID
		joint, position  string
		wireMM, k        float64
		current, voltage float64
		speedIPM, ctwdIn float64
		thickness        float64
	}
	fams := []family{
		{fillet, pqrFillet.ID, "fillet", "2F", predict.InchToMM(0.035), 0.0345, 175, 20.5, 12, 0.5, 9.5},
		{groove, pqrGroove.ID, "butt", "1G", predict.InchToMM(0.045), 0.0370, 285, 29, 14, 0.75, 19},
	}
	n := 0
	for fi, f := range fams {
		for i := 0; i < 18; i++ {
			cur := f.current * (0.85 + 0.3*rng.Float64())
			volt := f.voltage * (0.92 + 0.16*rng.Float64())
			speed := predict.InPerMinToMMPerS(f.speedIPM * (0.8 + 0.4*rng.Float64()))
			ctwd := predict.InchToMM(f.ctwdIn * (0.9 + 0.3*rng.Float64()))
			wfs := (cur / f.current) * map[int]float64{0: 7.6, 1: 9.65}[fi]
			c, err := s.CreateCoupon(ctx, tech, db.CouponData{
				ProcedureID: &f.proc.ID, QualificationRecordID: ptr(f.pqr),
				CouponMark: fmt.Sprintf("TR-%s-%02d", f.proc.Code[len(f.proc.Code)-3:], i+1),
				WelderID:   []string{"TR-W04", "TR-W09", "TR-W12"}[i%3], PowerSourceID: fmt.Sprintf("PS-%d", 1+i%2),
				FillerLot: fmt.Sprintf("H%05d", 41200+fi*7+i%4), WeldedOn: day(7 + n/3), JointType: f.joint,
				ThicknessMM: f.thickness, PassNumber: 1, CurrentA: round(cur, 0), VoltageV: round(volt, 1),
				TravelSpeedMMPerS: round(speed, 2), WireFeedSpeedMPerMin: ptr(round(wfs, 2)),
				CTWDMM: ptr(round(ctwd, 1)), WireDiameterMM: ptr(f.wireMM), ShieldingGas: f.proc.ShieldingGas,
				Polarity: ptr("DCEP"), Position: f.position, PreheatC: ptr(round(15+8*rng.Float64(), 0)),
			})
			if err != nil {
				return false, err
			}
			n++
			heat := math.Cbrt(math.Pow(c.CurrentA, 4) / (c.TravelSpeedMMPerS * c.VoltageV * c.VoltageV))
			for _, sec := range []string{"A", "B"} {
				pen := f.k * heat * math.Exp(0.08*rng.NormFloat64())
				if fi == 0 && i == 5 {
					pen *= 0.3 // a cold-lapped coupon: the model will not explain it
				}
				acc := "accept"
				if pen < *f.proc.MinPenetrationMM {
					acc = "reject"
				}
				if _, err := s.CreateMeasurement(ctx, tech, db.MeasurementData{
					CouponID: c.ID, Section: sec, PenetrationMM: round(pen, 2),
					BeadWidthMM: round(heat*0.09*(0.95+0.1*rng.Float64()), 1), ReinforcementMM: round(1+rng.Float64(), 1),
					Acceptance: acc, Inspector: "TR-QC2", Remark: map[bool]string{true: "lack of fusion at root", false: ""}[acc == "reject"],
				}); err != nil {
					return false, err
				}
			}
			if fi == 1 && i == 2 { // a transcription fix, to show a correction in the history
				fixed := c.CouponData
				fixed.VoltageV = round(c.VoltageV+0.5, 1)
				if _, err := s.CorrectCoupon(ctx, tech, c.ID, db.Change{BaseRevision: 1,
					Reason: "voltage re-read from the power source log"}, fixed); err != nil {
					return false, err
				}
			}
		}
	}
	if err := loadDemoRanges(ctx, s); err != nil {
		return false, err
	}
	// Calibrate the penetration model on each procedure's coupons and make it active,
	// so coupon model views and model flags have something to compare with.
	for _, f := range fams {
		cal, err := s.CreateCalibration(ctx, eng, db.CalibrationSpec{
			Model: "jackson_fixed", Process: "GMAW", WireDiameterMM: f.wireMM, ShieldingGas: f.proc.ShieldingGas,
			JointType: f.joint, ProcedureID: &f.proc.ID, Level: 0.95, Note: "demo: published exponents, shop K",
		})
		if err != nil {
			return false, err
		}
		if _, err := s.ActivateCalibration(ctx, eng, cal.ID, "demo: first calibration of this group"); err != nil {
			return false, err
		}
	}
	if err := loadDemoFollowUps(ctx, s, groove); err != nil {
		return false, err
	}
	return true, nil
}

// demoDay is the demo's day d, counted from 2026-09-01.
func demoDay(d int) time.Time { return time.Date(2026, 9, 1, 0, 0, 0, 0, time.UTC).AddDate(0, 0, d) }

func round(v float64, places int) float64 {
	p := math.Pow(10, float64(places))
	return math.Round(v*p) / p
}
