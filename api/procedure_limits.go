package api

import (
	"errors"
	"fmt"
	"math"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// procedureLimits are what a procedure says about a window or an inverse
// solve: its current qualified ranges of the electrical and motion
// variables, its required minimum penetration and its calibration group
// (process, wire, gas), each with the words naming where it came from.
type procedureLimits struct {
	proc    db.Procedure
	ranges  db.ProcedureRanges
	label   string                    // "WPS-TR-101 rev 3"
	rangeOf map[string]*predict.Range // by field: current_a, voltage_v, travel_speed_mm_s, wire_feed_speed_m_min
	from    string                    // where the ranges came from
	stale   string                    // why the ranges may no longer follow their evidence; "" if they do
}

// windowVariables are the ranged variables a window or inverse solve uses.
var windowVariables = []string{"current_a", "voltage_v", "travel_speed_mm_s", "wire_feed_speed_m_min"}

// procedureLimitsOf reads the procedure (not voided) and its latest ranges
// (which must exist). A range made of several bands (several PQRs) is taken
// as its envelope; an open side is closed at the quantity's plausible bound.
func (s *Server) procedureLimitsOf(c echo.Context, id uuid.UUID) (*procedureLimits, error) {
	ctx, site := c.Request().Context(), actorOf(c).Site
	p, err := s.store.Procedure(ctx, site, id, 0)
	if errors.Is(err, db.ErrNotFound) {
		return nil, unprocessable(FieldIssue{"procedure_id", fmt.Sprintf("no procedure %s at this site", id)})
	}
	if err != nil {
		return nil, err
	}
	if p.Voided {
		return nil, unprocessable(FieldIssue{"procedure_id", fmt.Sprintf("procedure %s is voided", p.Code)})
	}
	pr, err := s.store.ProcedureRanges(ctx, site, id, 0)
	if errors.Is(err, db.ErrNotFound) {
		return nil, unprocessable(FieldIssue{"procedure_id", fmt.Sprintf("procedure %s has no qualified ranges yet: derive them first (POST /v1/procedures/%s/ranges)", p.Code, id)})
	}
	if err != nil {
		return nil, err
	}
	l := &procedureLimits{proc: p, ranges: pr, label: fmt.Sprintf("%s rev %d", p.Code, p.Revision), rangeOf: map[string]*predict.Range{}}
	l.from = fmt.Sprintf("qualified ranges v%d of %s (rule set %s v%d)", pr.Version, l.label, pr.RuleSetID, pr.RuleSetVersion)
	if pr.DerivedFromOlderRevision {
		l.stale = fmt.Sprintf("the ranges were derived from revision %d of the procedure; it is now at revision %d", pr.ProcedureRevision, pr.CurrentProcedureRevision)
	}
	if pr.Stale != "" {
		l.stale = pr.Stale
	}
	for _, name := range windowVariables {
		vr, ok := pr.Ranges.Lookup(predict.Variable(name))
		if !ok || vr.Unavailable != "" || len(vr.Bands) == 0 {
			continue
		}
		q := predict.MustQuantity(name)
		r := predict.Range{Min: math.Inf(1), Max: math.Inf(-1)}
		for _, b := range vr.Bands {
			r.Min, r.Max = math.Min(r.Min, b.Min), math.Max(r.Max, b.Max)
		}
		r.Min, r.Max = math.Max(r.Min, q.Min), math.Min(r.Max, q.Max)
		l.rangeOf[name] = &r
	}
	return l, nil
}

// merge returns the range of field for a request: the procedure's, the
// request's, or both intersected (the narrower wins), and says where it came from.
func (l *procedureLimits) merge(field string, given *predict.Range) (*predict.Range, string) {
	pr := l.rangeOf[field]
	switch {
	case pr == nil && given == nil:
		return nil, ""
	case pr == nil:
		return given, "request (" + l.from + " has no range of " + field + ")"
	case given == nil:
		return pr, l.from
	}
	r := predict.Range{Min: math.Max(pr.Min, given.Min), Max: math.Min(pr.Max, given.Max)}
	return &r, "request within " + l.from
}

// minPenetration returns the minimum penetration for a request: the
// procedure's, the request's, or the stricter of both, and where it came from.
func (l *procedureLimits) minPenetration(given *float64) (*float64, string) {
	pm := l.proc.MinPenetrationMM
	switch {
	case pm == nil && given == nil:
		return nil, ""
	case pm == nil:
		return given, "request"
	case given == nil:
		return pm, l.label
	case *given >= *pm:
		return given, "request (stricter than the " + fmt.Sprintf("%g", *pm) + " mm of " + l.label + ")"
	}
	return pm, l.label + " (stricter than the request)"
}

// group fills the request's calibration group from the procedure: process,
// shielding gas and wire diameter where the request leaves them out. The
// procedure names no joint type, so the request's joint_type decides
// whether a group is looked up at all.
func (l *procedureLimits) group(g *groupFields, wireMM **float64, from map[string]string) {
	if g.JointType == nil {
		return
	}
	if g.Process == nil {
		g.Process, from["process"] = &l.proc.Process, l.label
	}
	if g.ShieldingGas == nil {
		g.ShieldingGas, from["shielding_gas"] = &l.proc.ShieldingGas, l.label
	}
	if *wireMM == nil {
		*wireMM, from["wire_diameter_mm"] = &l.proc.WireDiameterMM, l.label
	}
}

// inside says whether a setting lies inside the procedure's qualified
// ranges of current, voltage and travel speed (and wire feed speed when
// given), naming each value outside.
func (l *procedureLimits) inside(values map[string]float64) (bool, []string) {
	var outside []string
	for _, name := range windowVariables {
		v, ok := values[name]
		r := l.rangeOf[name]
		if !ok || r == nil {
			continue
		}
		if v < r.Min*(1-1e-9) || v > r.Max*(1+1e-9) {
			outside = append(outside, fmt.Sprintf("%s %.4g is outside %.4g–%.4g of %s", name, v, r.Min, r.Max, l.from))
		}
	}
	return len(outside) == 0, outside
}
