package db

import (
	"context"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// importJudgement is what an import part's new coupons are judged by: each
// named procedure's latest ranges (with what made them stale) and whether
// a calibration was ever chosen at the site, read with the plan in one
// round trip under the procedures' shared flag locks; then, only when one
// was chosen, the penetration check of each group the coupons fall in.
// When none was, no group has a check and no drift chart holds a coupon.
type importJudgement struct {
	site   string
	procs  []uuid.UUID
	ranges []*ProcedureRanges // per procs[i]; nil: no ranges yet
	chosen bool
	checks map[importCheckKey]*predict.PenetrationCheck
	// groups keeps each coupon group's canonical form: a part's coupons
	// fall in few groups, and the gas's canonical spelling is parsed anew
	// each time (a third of the flags' CPU time in a profile).
	groups map[CalibrationGroup]CalibrationGroup
}

// importCheckKey names a penetration check: the coupon's group and its
// procedure (whose minimum penetration the check carries).
type importCheckKey struct {
	group CalibrationGroup
	proc  uuid.UUID
}

func newImportJudgement(site string, procs []uuid.UUID) *importJudgement {
	return &importJudgement{site: site, procs: procs, ranges: make([]*ProcedureRanges, len(procs)),
		checks: map[importCheckKey]*predict.PenetrationCheck{}, groups: map[CalibrationGroup]CalibrationGroup{}}
}

// reads are the judgement's reads that leave with the plan's.
func (j *importJudgement) reads() []planRead {
	reads := make([]planRead, 0, len(j.procs)+1)
	for i, id := range j.procs {
		reads = append(reads, planRead{sql: rangesWithStaleSQL("$2"), args: []any{j.site, id}, read: readRangesWithStale(&j.ranges[i])})
	}
	return append(reads, planRead{sql: `SELECT EXISTS (SELECT 1 FROM calibration_activations WHERE site = $1)`, args: []any{j.site},
		read: func(rows pgx.Rows) error {
			_, err := pgx.ForEachRow(rows, []any{&j.chosen}, func() error { return nil })
			return err
		}})
}

// subject is coupon pc as a new coupon's write judges it, with the key of
// its group's check.
func (j *importJudgement) subject(p *importPlan, pc plannedCoupon, now time.Time) (Coupon, importCheckKey) {
	proc := p.procs[*pc.in.Data.ProcedureID]
	c := Coupon{Meta: Meta{Site: p.site, ID: pc.id, Revision: 1, CreatedAt: now}, CouponData: pc.in.Data}
	c.inherit(procedureDefaults(proc))
	g := couponGroup(c)
	canon, ok := j.groups[g]
	if !ok {
		canon = g.canonical()
		j.groups[g] = canon
	}
	return c, importCheckKey{canon, proc.ID}
}

// readChecks reads the penetration check of every group the plan's new
// coupons fall in, once per group and procedure, when a calibration was
// ever chosen at the site.
func (j *importJudgement) readChecks(ctx context.Context, tx pgx.Tx, p *importPlan, now time.Time) error {
	if !j.chosen {
		return nil
	}
	for _, pc := range p.create {
		if pc.in.Data.ProcedureID == nil { // a coupon of a qualification record alone answers to no ranges
			continue
		}
		_, key := j.subject(p, pc, now)
		if _, ok := j.checks[key]; ok {
			continue
		}
		check, err := penetrationCheck(ctx, tx, p.site, key.group, p.procs[key.proc].MinPenetrationMM)
		if err != nil {
			return err
		}
		j.checks[key] = check
	}
	return nil
}

// evaluate judges every new coupon of a procedure against that
// procedure's latest ranges and its group's check, as a single coupon's
// write does (newCouponSubject, requirementsOf), and returns the writers
// holding the flags, one per procedure, in the order first met. It reads
// nothing: a writer may run it beside the rows' copy.
func (j *importJudgement) evaluate(p *importPlan, now time.Time) []*flagWriter {
	writers := map[uuid.UUID]*flagWriter{}
	var order []*flagWriter
	for _, pc := range p.create {
		if pc.in.Data.ProcedureID == nil {
			continue
		}
		c, key := j.subject(p, pc, now)
		w, ok := writers[key.proc]
		if !ok {
			pr := ProcedureRanges{Site: p.site, ProcedureID: key.proc} // no ranges yet: model flags only
			for i, id := range j.procs {
				if id == key.proc && j.ranges[i] != nil {
					pr = *j.ranges[i]
				}
			}
			w = newFlagWriter(p.site, now, pr)
			writers[key.proc] = w
			order = append(order, w)
		}
		var rec *QualificationRecord
		if id := pc.in.Data.QualificationRecordID; id != nil {
			r := p.records[*id]
			rec = &r
		}
		secs := make([]predict.Section, len(pc.in.Sections))
		for k, sec := range pc.in.Sections {
			secs[k] = predict.Section{Label: sec.Data.Section, PenetrationMM: sec.Data.PenetrationMM}
		}
		w.add(newCouponSubject(c, secs, requirementsOf(p.procs[key.proc], rec), j.checks[key]))
	}
	return order
}
