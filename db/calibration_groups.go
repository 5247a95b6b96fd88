package db

import (
	"context"
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// GroupCount is one calibration group that has current coupons, how many,
// and how many of them have a measured section.
type GroupCount struct {
	CalibrationGroup
	Coupons  int `json:"coupons"`
	Measured int `json:"measured"`
}

// NoGroupError is a fit refused for too few coupons, with the groups that
// do have coupons, closest to the requested one first, so the caller can
// see whether a spelling, a size or a joint type kept them apart.
type NoGroupError struct {
	Err    error
	Groups []GroupCount
}

// Error lists the closest groups after the refusal.
func (e *NoGroupError) Error() string {
	if len(e.Groups) == 0 {
		return e.Err.Error() + "; no coupons in any group yet"
	}
	names := make([]string, 0, 3)
	for i, g := range e.Groups {
		if i == 3 {
			break
		}
		names = append(names, fmt.Sprintf("%s %g mm %q %s (%d coupons, %d measured)", g.Process, g.WireDiameterMM, g.ShieldingGas, g.JointType, g.Coupons, g.Measured))
	}
	return e.Err.Error() + "; groups with coupons, closest first: " + strings.Join(names, "; ")
}

// Unwrap gives the fit's refusal (predict.ErrTooFewSamples).
func (e *NoGroupError) Unwrap() error { return e.Err }

// groupDistance orders groups by how far they are from g: another process
// counts most, then another joint type, then the wire size (per mm) and the
// gas composition (per percentage point, or fully when either is unreadable).
func groupDistance(g, h CalibrationGroup) float64 {
	d := 0.0
	if g.Process != h.Process {
		d += 1000
	}
	if g.JointType != h.JointType {
		d += 100
	}
	d += 10 * math.Abs(g.WireDiameterMM-h.WireDiameterMM)
	a, errA := predict.ParseGas(g.ShieldingGas)
	b, errB := predict.ParseGas(h.ShieldingGas)
	switch {
	case errA == nil && errB == nil:
		d += (math.Abs(a.Ar-b.Ar) + math.Abs(a.CO2-b.CO2) + math.Abs(a.O2-b.O2) + math.Abs(a.He-b.He) +
			math.Abs(a.H2-b.H2) + math.Abs(a.N2-b.N2)) / 10
	case g.ShieldingGas != h.ShieldingGas:
		d += 20
	}
	return d
}

// existingGroups lists the site's groups with current coupons, closest to g first.
func existingGroups(ctx context.Context, q querier, site string, g CalibrationGroup) ([]GroupCount, error) {
	rows, _ := q.Query(ctx, siteCoupons, site, nil, nil, nil, nil)
	cs, err := pgx.CollectRows(rows, pgx.RowToStructByName[groupCoupon])
	if err != nil {
		return nil, fmt.Errorf("groups: %w", err)
	}
	byKey := map[CalibrationGroup]*GroupCount{}
	var out []GroupCount
	for _, c := range cs {
		k := CalibrationGroup{Process: c.Process, WireDiameterMM: c.WireDiameterMM, ShieldingGas: c.ShieldingGas, JointType: c.JointType}.canonical()
		gc, ok := byKey[k]
		if !ok {
			out = append(out, GroupCount{CalibrationGroup: k})
			gc = &out[len(out)-1]
			byKey = map[CalibrationGroup]*GroupCount{} // out may have moved: rebuild the index
			for i := range out {
				byKey[out[i].CalibrationGroup] = &out[i]
			}
		}
		gc.Coupons++
		if len(c.PenetrationsMM) > 0 {
			gc.Measured++
		}
	}
	g = g.canonical()
	sort.SliceStable(out, func(i, j int) bool {
		return groupDistance(g, out[i].CalibrationGroup) < groupDistance(g, out[j].CalibrationGroup)
	})
	return out, nil
}
