package db

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"hash"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// InlineSampleLimit is the most samples a calibration's answer lists: up to
// it, reading a calibration gives its samples, coupon ids and per-coupon
// diagnostics; above it, their count, digest and check only, so that the
// answer for a group of a million coupons stays small.
const InlineSampleLimit = 5000

// SelectionQueryVersion numbers the selection query (siteCoupons) and the
// sample rules (penetrationSampleOf, meltingSampleOf) a calibration was
// fitted with. A change that could select or shape samples differently
// must take the next number and keep the old one readable.
const SelectionQueryVersion = 1

// CalibrationSelection is what a calibration fitted, stored instead of the
// samples: the coupons of Group (canonical) welded within [WeldedFrom,
// WeldedTo) on ProcedureID, as they stood at AsOf (the calibration's
// creation time), shaped into samples of Model (Lesnewich with
// ArcLengthMM), in coupon id order.
type CalibrationSelection struct {
	Query       int              `json:"query"`
	Model       CalibrationModel `json:"model"`
	Group       CalibrationGroup `json:"group"`
	WeldedFrom  *Date            `json:"welded_from,omitempty"`
	WeldedTo    *Date            `json:"welded_to,omitempty"`
	ProcedureID *uuid.UUID       `json:"procedure_id,omitempty"`
	ArcLengthMM *float64         `json:"arc_length_mm,omitempty"`
	AsOf        time.Time        `json:"as_of"`
	Order       string           `json:"order"`
}

// selectionOf is the selection c's spec makes at c's creation time.
func selectionOf(c Calibration) CalibrationSelection {
	return CalibrationSelection{Query: SelectionQueryVersion, Model: c.Model, Group: c.Group().canonical(),
		WeldedFrom: c.WeldedFrom, WeldedTo: c.WeldedTo, ProcedureID: c.ProcedureID, ArcLengthMM: c.ArcLengthMM,
		AsOf: c.CreatedAt, Order: "coupon_id"}
}

// filter is the sample filter of the selection, as of its time.
func (sel CalibrationSelection) filter() SampleFilter {
	at := sel.AsOf
	return SampleFilter{Group: sel.Group, WeldedFrom: sel.WeldedFrom, WeldedTo: sel.WeldedTo, ProcedureID: sel.ProcedureID, AsOf: &at}
}

// SampleCheck says how a calibration's samples were obtained and whether
// they are the ones fitted. Finding is "inline" (stored with the
// calibration, before selections were stored), "fitted" (the answer to the
// fit itself), "matches" (re-derived from the selection: count and digest
// equal the stored ones) or "differs" (they do not; Note says how).
type SampleCheck struct {
	Finding string `json:"finding"`
	Note    string `json:"note"`
}

// sampleDigest is the SHA-256 of the fitted samples' coupons and the
// revisions read for them, in selection order (README, "Sample digest"):
// per coupon its id (16 bytes), then as unsigned 32-bit big-endian integers
// its revision, its procedure's revision and its qualification record's (0
// for none), its number of current sections, then per section in id order
// its id (16 bytes) and revision (32 bits).
type sampleDigest struct {
	h   hash.Hash
	buf []byte
}

func newSampleDigest() *sampleDigest { return &sampleDigest{h: sha256.New()} }

// add hashes one fitted coupon.
func (d *sampleDigest) add(c *groupCoupon) {
	b := append(d.buf[:0], c.ID[:]...)
	for _, v := range []int32{c.Revision, c.ProcedureRevision, c.RecordRevision, int32(len(c.SectionIDs))} {
		b = binary.BigEndian.AppendUint32(b, uint32(v))
	}
	for i, id := range c.SectionIDs {
		b = append(b, id[:]...)
		b = binary.BigEndian.AppendUint32(b, uint32(c.SectionRevisions[i]))
	}
	d.h.Write(b)
	d.buf = b
}

// selectionRun is one pass over a selection: the fit (when asked for), the
// number of samples, their digest and, up to keep, the samples and ids.
type selectionRun struct {
	Fit     CalibrationFit
	Count   int
	Digest  []byte
	Samples *CalibrationSamples // nil when there were more than keep
	IDs     []uuid.UUID         // nil when there were more than keep
}

// runSelection streams the coupons filter f selects at site from q, shapes
// each into a sample of model (arcLengthMM for Lesnewich), hashes it and,
// with fit, adds it to predict's streaming fit. Memory holds at most keep
// samples, whatever the group's size. With a sink (q must then be a
// transaction) every sample's coupon is also written to calibration_fitted,
// a batch at a time.
func runSelection(ctx context.Context, q querier, site string, f SampleFilter, model CalibrationModel, arcLengthMM float64, keep int, fit bool, sink *fittedSink) (selectionRun, error) {
	run := selectionRun{Samples: &CalibrationSamples{}, IDs: []uuid.UUID{}}
	dg := newSampleDigest()
	ps, ms := predict.NewPenetrationStream(), predict.NewMeltingStream()
	kept := func(c *groupCoupon) bool {
		run.Count++
		dg.add(c)
		if sink != nil {
			sink.add(c.ID)
		}
		if run.Count > keep {
			run.Samples, run.IDs = nil, nil
			return false
		}
		run.IDs = append(run.IDs, c.ID)
		return true
	}
	each := func(c *groupCoupon) error {
		if model == CalibrationLesnewich {
			smp, ok, err := meltingSampleOf(c, arcLengthMM)
			if !ok || err != nil {
				return err
			}
			if kept(c) {
				run.Samples.Melting = append(run.Samples.Melting, smp)
			}
			if fit {
				return ms.Add(smp)
			}
			return nil
		}
		smp, ok := penetrationSampleOf(c)
		if !ok {
			return nil
		}
		if kept(c) {
			run.Samples.Penetration = append(run.Samples.Penetration, smp)
		}
		if fit {
			return ps.Add(smp)
		}
		return nil
	}
	var err error
	if sink != nil {
		tx, ok := q.(pgx.Tx)
		if !ok {
			return run, errors.New("selection: the fitted coupons are written in a transaction")
		}
		err = forGroupCouponsBatched(ctx, tx, site, f, each, func() error { return sink.flush(ctx, tx) })
	} else {
		err = forGroupCoupons(ctx, q, site, f, each)
	}
	if err == nil && fit {
		if model == CalibrationLesnewich {
			var m predict.MeltingFit
			m, err = ms.Fit()
			run.Fit.Melting = &m
		} else {
			var p predict.PenetrationFit
			p, err = ps.Fit(predict.ModelKind(model))
			run.Fit.Penetration = &p
		}
	}
	var ie *predict.InputError
	if errors.As(err, &ie) { // a stored coupon outside what the model takes: say which
		err = &FieldError{Field: "coupons", Reason: "a selected coupon cannot be fitted: " + err.Error()}
	}
	run.Digest = dg.h.Sum(nil)
	return run, err
}

// rederive fills c's samples from its stored selection, when they are not
// stored inline, and checks them against the stored count and digest: the
// samples and ids only up to InlineSampleLimit. Above that limit it does
// nothing unless verify (SampleCheck "not_checked"): the pass reads the
// whole selection, so a plain read of a big calibration would cost a scan
// of its group. With verify the check runs whatever the size (one pass over
// the group, in memory that does not grow with it).
func (s *Store) rederive(ctx context.Context, c *Calibration, verify bool) error {
	if c.Selection == nil {
		if c.Samples != nil {
			c.SampleCheck = &SampleCheck{Finding: "inline", Note: "the samples were stored with the calibration"}
		}
		return nil
	}
	if !verify && c.SampleCount > InlineSampleLimit {
		c.SampleCheck = &SampleCheck{Finding: "not_checked", Note: fmt.Sprintf(
			"%d samples, more than %d: the selection was not re-derived for this read (their ids, values and per-coupon "+
				"diagnostics are not listed); read with check=samples to re-derive it and compare its count and digest with the stored ones",
			c.SampleCount, InlineSampleLimit)}
		return nil
	}
	sel := *c.Selection
	arc := 0.0
	if sel.ArcLengthMM != nil {
		arc = *sel.ArcLengthMM
	}
	run, err := runSelection(ctx, s.long, c.Site, sel.filter(), sel.Model, arc, InlineSampleLimit, false, nil)
	var fe *FieldError
	if errors.As(err, &fe) { // a stored coupon the rules now refuse: the re-derivation differs
		c.SampleCheck = &SampleCheck{Finding: "differs", Note: "the selection could not be re-derived: " + fe.Reason}
		return nil
	}
	if err != nil {
		return fmt.Errorf("db: calibration %s samples: %w", c.ID, err)
	}
	c.Samples, c.CouponIDs = run.Samples, run.IDs
	got := hex.EncodeToString(run.Digest)
	switch {
	case run.Count == c.SampleCount && got == c.SampleDigest:
		c.SampleCheck = &SampleCheck{Finding: "matches", Note: fmt.Sprintf(
			"the %d samples re-derived from the selection as of %s have the stored count and digest",
			run.Count, sel.AsOf.UTC().Format(time.RFC3339Nano))}
	default:
		c.SampleCheck = &SampleCheck{Finding: "differs", Note: fmt.Sprintf(
			"the selection as of %s now gives %d samples with digest %s, but %d samples with digest %s were fitted: "+
				"a revision was committed after the fit with a creation time at or before it, or the stored rows changed; "+
				"the samples and diagnostics shown are the re-derived ones, not the fitted ones",
			sel.AsOf.UTC().Format(time.RFC3339Nano), run.Count, got, c.SampleCount, c.SampleDigest)}
	}
	if c.Samples == nil {
		c.SampleCheck.Note += fmt.Sprintf("; more than %d samples: their ids, values and per-coupon diagnostics are not listed", InlineSampleLimit)
	}
	return nil
}

// listSampleIDs gives c's fit the sample ids it no longer stores: the
// coupon ids listed (none in lists and above InlineSampleLimit). A fit
// stored with its ids keeps them.
func (c *Calibration) listSampleIDs() {
	if c.CouponIDs == nil {
		c.CouponIDs = []uuid.UUID{}
	}
	ids := make([]string, len(c.CouponIDs))
	for i, id := range c.CouponIDs {
		ids[i] = id.String()
	}
	if p := c.Fit.Penetration; p != nil && p.SampleIDs == nil {
		p.SampleIDs = ids
	}
	if m := c.Fit.Melting; m != nil && m.SampleIDs == nil {
		m.SampleIDs = ids
	}
}

// selectedIDs are the coupons selection sel gives samples of at site, in
// selection order: the coupons a calibration stored by its selection was
// fitted to, unless its check says it differs.
func selectedIDs(ctx context.Context, q querier, site string, sel CalibrationSelection) ([]uuid.UUID, error) {
	arc := 0.0
	if sel.ArcLengthMM != nil {
		arc = *sel.ArcLengthMM
	}
	var ids []uuid.UUID
	err := forGroupCoupons(ctx, q, site, sel.filter(), func(c *groupCoupon) error {
		ok := false
		if sel.Model == CalibrationLesnewich {
			_, ok, _ = meltingSampleOf(c, arc)
		} else {
			_, ok = penetrationSampleOf(c)
		}
		if ok {
			ids = append(ids, c.ID)
		}
		return nil
	})
	return ids, err
}
