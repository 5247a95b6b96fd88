package db

import (
	"context"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// CalibrationModel names the model form a calibration fits.
type CalibrationModel string

// Calibration models, as stored and sent at the API boundary.
const (
	// CalibrationJacksonFixed fits K of the Jackson law with the published exponents.
	CalibrationJacksonFixed CalibrationModel = "jackson_fixed"
	// CalibrationJacksonFree fits ln P = c₀ + a·ln I + b·ln S + c·ln V.
	CalibrationJacksonFree CalibrationModel = "jackson_free"
	// CalibrationLesnewich fits the Lesnewich melting-rate coefficients α and β.
	CalibrationLesnewich CalibrationModel = "lesnewich"
)

// CalibrationGroup is the key under which coupons are pooled for a fit and a
// calibration is activated: process (the coupon's procedure's, else its
// qualification record's), wire diameter by nominal size, shielding gas by
// composition, and joint type. Groups are compared in canonical form.
type CalibrationGroup struct {
	Process        string  `db:"process" json:"process"`
	WireDiameterMM float64 `db:"wire_diameter_mm" json:"wire_diameter_mm"`
	ShieldingGas   string  `db:"shielding_gas" json:"shielding_gas"`
	JointType      string  `db:"joint_type" json:"joint_type"`
}

// canonical returns g as the trade matches it: the wire diameter as its
// metric nominal size (0.035 in = 0.889 mm is the 0.9 mm wire; off the
// table, rounded to 0.001 mm) and the gas in its canonical spelling
// (Ar-25CO2, 75Ar/25CO2 and ar-25co2 are one gas).
func (g CalibrationGroup) canonical() CalibrationGroup {
	g.WireDiameterMM, _ = predict.NominalWireMM(g.WireDiameterMM)
	g.ShieldingGas = predict.CanonicalGas(g.ShieldingGas)
	return g
}

// has reports whether a coupon's process, wire, gas and joint type
// fall in canonical group g.
func (g CalibrationGroup) has(process string, wireMM float64, gas, joint string) bool {
	return g == CalibrationGroup{Process: process, WireDiameterMM: wireMM, ShieldingGas: gas, JointType: joint}.canonical()
}

// groupMatch answers has for one canonical group over many coupons,
// keeping the canonical form of the first gasCacheLen gas texts it meets:
// a group's coupons name few gases, and parsing every coupon's gas again
// cost a fit over 1,000,000 coupons about 2 s of CPU.
type groupMatch struct {
	g   CalibrationGroup
	gas map[string]string
}

// gasCacheLen bounds the gas texts a groupMatch keeps.
const gasCacheLen = 64

func newGroupMatch(g CalibrationGroup) *groupMatch {
	return &groupMatch{g: g.canonical(), gas: map[string]string{}}
}

// has is CalibrationGroup.has of the group.
func (m *groupMatch) has(process string, wireMM float64, gas, joint string) bool {
	if process != m.g.Process || joint != m.g.JointType {
		return false
	}
	if w, _ := predict.NominalWireMM(wireMM); w != m.g.WireDiameterMM {
		return false
	}
	cg, ok := m.gas[gas]
	if !ok {
		cg = predict.CanonicalGas(gas)
		if len(m.gas) < gasCacheLen {
			m.gas[gas] = cg
		}
	}
	return cg == m.g.ShieldingGas
}

// CalibrationSpec says what to fit: the model, the group, which of its coupons
// (welded date range and procedure, both optional), the confidence level for
// diagnostics and, for Lesnewich, the arc length in mm subtracted from each
// coupon's CTWD to give its electrode extension.
type CalibrationSpec struct {
	Model          CalibrationModel `db:"model" json:"model" validate:"required,enum"`
	Process        string           `db:"process" json:"process" validate:"required,enum"`
	WireDiameterMM float64          `db:"wire_diameter_mm" json:"wire_diameter_mm" validate:"required,quantity"`
	ShieldingGas   string           `db:"shielding_gas" json:"shielding_gas" validate:"max=64"`
	JointType      string           `db:"joint_type" json:"joint_type" validate:"required,enum"`
	// WeldedFrom and WeldedTo select the coupons by welding day, half-open
	// like every time filter: WeldedFrom included, WeldedTo not. The table
	// keeps its column's first meaning, the last day included: insertCalibration
	// writes the day before WeldedTo and calibrationColumns reads it back + 1.
	WeldedFrom  *Date      `db:"welded_from" json:"welded_from,omitempty"`
	WeldedTo    *Date      `db:"welded_to" json:"welded_to,omitempty"`
	ProcedureID *uuid.UUID `db:"procedure_id" json:"procedure_id,omitempty"`
	Level       float64    `db:"level" json:"level" validate:"quantity"`
	ArcLengthMM *float64   `db:"arc_length_mm" json:"arc_length_mm,omitempty" validate:"omitempty,quantity"`
	Note        string     `db:"note" json:"note" validate:"max=2000"`
}

// Group returns the spec's group key.
func (c CalibrationSpec) Group() CalibrationGroup {
	return CalibrationGroup{Process: c.Process, WireDiameterMM: c.WireDiameterMM, ShieldingGas: c.ShieldingGas, JointType: c.JointType}
}

// Filter returns the coupon selection of the spec.
func (c CalibrationSpec) Filter() SampleFilter {
	return SampleFilter{Group: c.Group(), WeldedFrom: c.WeldedFrom, WeldedTo: c.WeldedTo, ProcedureID: c.ProcedureID}
}

// CalibrationFit is a stored fit result: Penetration for the Jackson models,
// Melting for Lesnewich. The values are predict's, unchanged.
type CalibrationFit struct {
	Penetration *predict.PenetrationFit `json:"penetration,omitempty"`
	Melting     *predict.MeltingFit     `json:"melting,omitempty"`
}

// CalibrationSamples are the numbers a fit was computed from, in coupon id
// (creation) order; one sample per coupon.
type CalibrationSamples struct {
	Penetration []predict.PenetrationSample `json:"penetration,omitempty"`
	Melting     []predict.MeltingSample     `json:"melting,omitempty"`
}

// Calibration is a stored fit over a group's coupons. Calibrations are never
// corrected: a new fit is a new calibration. Calibrations stored before
// selections were kept have their samples and coupon ids inline; newer ones
// store their Selection, SampleCount and SampleDigest, and a calibration
// read alone re-derives its samples from them (up to InlineSampleLimit) and
// says in SampleCheck whether they are the ones fitted. Samples is nil in
// lists, and CouponIDs empty there for calibrations stored by selection.
type Calibration struct {
	Site      string    `db:"site" json:"site"`
	ID        uuid.UUID `db:"id" json:"id"`
	CreatedAt time.Time `db:"created_at" json:"created_at"`
	CreatedBy string    `db:"created_by" json:"created_by"`
	CalibrationSpec
	Fit       CalibrationFit      `db:"fit" json:"fit"`
	Samples   *CalibrationSamples `db:"samples" json:"samples,omitempty"`
	CouponIDs []uuid.UUID         `db:"coupon_ids" json:"coupon_ids"`
	// Selection is the stored selection (null for calibrations with inline samples).
	Selection *CalibrationSelection `db:"selection" json:"selection,omitempty"`
	// SampleCount is how many coupons were fitted.
	SampleCount int `db:"sample_count" json:"sample_count"`
	// SampleDigest is the hex SHA-256 of the fitted coupons and revisions ("" for inline samples).
	SampleDigest string `db:"sample_digest" json:"sample_digest,omitempty"`
	// SampleCheck says where the samples come from and whether they are the fitted ones.
	SampleCheck *SampleCheck `db:"-" json:"sample_check,omitempty"`
	// Active is true when this calibration is its group's latest activation for its model.
	Active bool `db:"active" json:"active"`
	// SignOff is the calibration's sign-off by an engineer; null until signed.
	SignOff *SignOff `db:"-" json:"sign_off"`
}

// validate checks what the database's rules would refuse, naming the field.
func (c CalibrationSpec) validate() error {
	switch c.Model {
	case CalibrationJacksonFixed, CalibrationJacksonFree:
		if c.ArcLengthMM != nil {
			return &FieldError{Field: "arc_length_mm", Reason: "belongs to a lesnewich calibration only"}
		}
	case CalibrationLesnewich:
		if c.ArcLengthMM == nil {
			return &FieldError{Field: "arc_length_mm", Reason: "is required for lesnewich: extension = CTWD − arc length"}
		}
	default:
		return &FieldError{Field: "model", Reason: fmt.Sprintf("unknown model %q", c.Model)}
	}
	if !(c.Level > 0 && c.Level < 1) {
		return &FieldError{Field: "level", Reason: "must be between 0 and 1 (e.g. 0.95)"}
	}
	if c.WeldedFrom != nil && c.WeldedTo != nil && !c.WeldedTo.After(c.WeldedFrom.Time) {
		return &FieldError{Field: "welded_to", Reason: fmt.Sprintf("%s selects no day: it must come after welded_from %s (welded_to itself is not included)", c.WeldedTo, c.WeldedFrom)}
	}
	return nil
}

// CreateCalibration selects the group's coupons, fits the model to them as
// they stream out of the database (memory does not grow with the group) and
// stores the result with the selection, the number of coupons fitted and
// their digest, all in one transaction. The answer lists the samples and
// coupon ids when there are at most InlineSampleLimit. A fit refused by
// predict returns its error (predict.ErrTooFewSamples,
// predict.ErrDegenerate); a coupon the model cannot take is a FieldError.
func (s *Store) CreateCalibration(ctx context.Context, a Actor, spec CalibrationSpec) (Calibration, error) {
	if err := spec.validate(); err != nil {
		return Calibration{}, fmt.Errorf("db: create calibration: %w", err)
	}
	cg := spec.Group().canonical()
	spec.WireDiameterMM, spec.ShieldingGas = cg.WireDiameterMM, cg.ShieldingGas
	id, err := uuid.NewV7()
	if err != nil {
		return Calibration{}, err
	}
	c := Calibration{Site: a.Site, ID: id, CreatedAt: s.now(), CreatedBy: a.Name, CalibrationSpec: spec}
	sel := selectionOf(c)
	c.Selection = &sel
	err = s.tx(ctx, func(tx pgx.Tx) error {
		if spec.ProcedureID != nil {
			if err := exists(ctx, tx, procedures, a.Site, *spec.ProcedureID, "procedure_id"); err != nil {
				return err
			}
		}
		arc := 0.0
		if spec.ArcLengthMM != nil {
			arc = *spec.ArcLengthMM
		}
		// The coupons fitted are kept too (calibration_fitted), so that the
		// group's drift chart leaves them out without deriving them again.
		sink := &fittedSink{site: a.Site, calID: c.ID}
		run, err := runSelection(ctx, tx, a.Site, sel.filter(), spec.Model, arc, InlineSampleLimit, true, sink)
		if errors.Is(err, predict.ErrTooFewSamples) { // say which groups do have coupons
			groups, gerr := existingGroups(ctx, tx, a.Site, spec.Group())
			if gerr != nil {
				return gerr
			}
			return &NoGroupError{Err: err, Groups: groups}
		}
		if err != nil {
			return err
		}
		c.Fit, c.SampleCount, c.SampleDigest = run.Fit, run.Count, hex.EncodeToString(run.Digest)
		if err := s.insertCalibration(ctx, tx, c, run.Digest); err != nil {
			return err
		}
		if err := sink.done(ctx, tx); err != nil {
			return err
		}
		c.Samples, c.CouponIDs = run.Samples, run.IDs
		c.listSampleIDs()
		c.SampleCheck = &SampleCheck{Finding: "fitted", Note: fmt.Sprintf("the %d samples just fitted", run.Count)}
		if c.Samples == nil {
			c.SampleCheck.Note += fmt.Sprintf("; more than %d samples: their ids, values and per-coupon diagnostics are not listed", InlineSampleLimit)
		}
		return nil
	})
	if err != nil {
		return Calibration{}, fmt.Errorf("db: create calibration: %w", err)
	}
	return c, nil
}

// insertCalibration writes the calibration row, by its selection, and its leaf.
func (s *Store) insertCalibration(ctx context.Context, tx pgx.Tx, c Calibration, digest []byte) error {
	fit, err := json.Marshal(c.Fit)
	if err != nil {
		return fmt.Errorf("encode fit: %w", err)
	}
	sel, err := json.Marshal(c.Selection)
	if err != nil {
		return fmt.Errorf("encode selection: %w", err)
	}
	_, err = tx.Exec(ctx, `
		INSERT INTO calibrations (site, id, created_at, created_by, model, process, wire_diameter_mm,
			shielding_gas, joint_type, welded_from, welded_to, procedure_id, level, arc_length_mm,
			fit, selection, sample_count, sample_digest, note)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19)`,
		c.Site, c.ID, c.CreatedAt, c.CreatedBy, c.Model, c.Process, c.WireDiameterMM,
		c.ShieldingGas, c.JointType, c.WeldedFrom, lastDayBefore(c.WeldedTo), c.ProcedureID, c.Level, c.ArcLengthMM,
		string(fit), string(sel), c.SampleCount, digest, c.Note)
	if err != nil {
		return mapError(err)
	}
	return s.AppendLeaf(ctx, tx, LeafEntry{Kind: "calibration", Site: c.Site, ID: c.ID, Revision: 1, Actor: c.CreatedBy, Action: "create", At: c.CreatedAt})
}

// lastDayBefore is the last day a half-open bound [.., to) includes, as the
// calibrations table stores it.
func lastDayBefore(to *Date) *Date {
	if to == nil {
		return nil
	}
	d := Date{to.AddDate(0, 0, -1)}
	return &d
}
