package db

import (
	"context"
	"fmt"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
)

// The coupons list pages in log order through coupon_list (migration
// 000014): one row per logged coupon with its latest logged revision, that
// revision's log index and the columns the list filters on, each filter
// with an index (site, <column>, leaf_index). The sequencer rewrites a
// coupon's row in the transaction that gives the coupon's leaf (or a leaf of
// one of its sections) its index, so the table always agrees with the log a
// reader sees, and a client following the cursor sees every coupon revision
// exactly once, as with the other record lists.

// listedLeaves collects, while the sequencer integrates a batch, the records
// whose coupon_list rows the batch changes: coupons, and the coupons of
// sections (their verdict).
type listedLeaves struct {
	coupons, sections [][16]byte // ids as pgx encodes them without their text
}

func (l *listedLeaves) add(kind string, id [16]byte) {
	switch kind {
	case coupons.entity:
		l.coupons = append(l.coupons, id)
	case measurements.entity:
		l.sections = append(l.sections, id)
	}
}

// queue adds to the sequencer's batch of writes the rewrite of the
// coupon_list rows of the batch's coupons and of the coupons its sections
// belong (or belonged, before a correction) to, from coupon_list_derived;
// out is the batch's leaves. A batch that rewrites no listed coupon
// (leafRows.rewrites: first revisions of coupons alone) has no row to
// remove, so it only inserts; were a row there, the insert would fail on
// the table's key and the pass with it.
func (l *listedLeaves) queue(b *pgx.Batch, site string, out *leafRows) {
	if len(l.coupons) == 0 && len(l.sections) == 0 {
		return
	}
	if out.rewrites(couponKinds) {
		queueKeyDelete(b, couponListDelete, site, l.coupons, l.sections)
	}
	b.Queue(couponListRefresh, site, l.coupons, l.sections)
}

// listedCoupons are the coupons $2 and those sections $3 name in any
// revision, at site $1, each once, as an array. A section is found by its
// key, one seek per id (measurements has no other index that leads with the
// site).
const listedCoupons = `WITH ids AS (SELECT array_agg(DISTINCT id) AS ids FROM (SELECT unnest($2::uuid[]) AS id
		UNION ALL SELECT m.coupon_id FROM unnest($3::uuid[]) s(id)
			CROSS JOIN LATERAL (SELECT coupon_id FROM measurements WHERE site = $1 AND id = s.id OFFSET 0) m) c) `

// couponListDelete removes their coupon_list rows: each row found by its
// key, one seek per id, then deleted by its address. With the ids as a
// condition on the table, statistics taken while the site was small (as
// during an import) had the planner scan every row of the site and filter.
// The addresses are the site's rows, found in this statement's snapshot
// (the sequencer alone writes the table), so no condition on the site sits
// beside them (keyDeleteOf).
var couponListDelete = listedCoupons + keyDeleteOf("coupon_list", "(SELECT ids FROM ids)::uuid[]")

// couponListRefresh writes their coupon_list rows from coupon_list_derived,
// each coupon read from the view by its key, one seek per id, as the
// sections' list is (the condition reaches inside the view's latest-leaf
// lookup). With the ids as an array condition on the view, statistics
// taken while the site was small (a site filling up, as in the create
// benchmark) had the planner read every coupon of the site through
// another index and filter: 8.5 ms a pass for 68 coupons at 4,000.
var couponListRefresh = listedCoupons + `INSERT INTO coupon_list (` + couponListColumns + `) SELECT d.* FROM unnest((SELECT ids FROM ids)::uuid[]) u(id)
	CROSS JOIN LATERAL (SELECT ` + couponListColumns + ` FROM coupon_list_derived WHERE site = $1 AND id = u.id OFFSET 0) d`

// couponListColumns are coupon_list's columns, named (a column the table or
// the view lacks fails every list and every sequencer pass).
var couponListColumns = coupons.columns() + ", leaf_index, welded_month, verdict"

// verdicts are the values of coupon_list.verdict, the acceptance of a
// coupon's current logged sections: none, measured with none rejected, at
// least one rejected.
var verdicts = []string{"", "accept", "reject"}

// listCoupons returns one page of current coupons matching cf in log order
// after the cursor. An equality filter (procedure, qualification record,
// welder, mark), or none, pages through its index in log order. A
// welding-day range without one would walk the whole log when the range
// lies late in it (welding days grow with the log); instead each day of a
// range of up to maxDayWalk days, or of the partial months at the ends of a
// longer one, and each whole month between (and each verdict), is walked
// in log order on its own, up to a page each, and the heads are merged: at
// most (days + months × verdicts) × limit index entries, none outside the
// range, whatever the page depth.
func (s *Store) listCoupons(ctx context.Context, site string, cf CouponFilter, cursor string, limit int) (Page[Coupon], error) {
	if limit <= 0 || limit > MaxPageSize {
		limit = MaxPageSize
	}
	from, err := logCursor(coupons.name, cursor)
	if err != nil {
		return Page[Coupon]{}, fmt.Errorf("db: list coupon: %w", err)
	}
	sql, args, err := couponListQuery(site, cf, from, limit)
	if err != nil {
		return Page[Coupon]{}, err
	}
	// Rows are scanned by position into listedCoupon.targets: the statement
	// selects coupons.columns() (Meta's columns, then CouponData's, each in
	// field order, read from the structs' tags) and then listedCoupon's
	// own, in its field order. TestCouponListScansByPosition compares the
	// statement's column names with those fields and the targets with
	// them. Matching each row's columns by name, and finding each field by
	// reflection, cost half the page's scan. Each row is decoded from its
	// raw values where scanRaw takes them all, else scanned by pgx.
	var page []listedCoupon
	err = s.readPageWith(ctx, site, couponKinds, limit, sql, args, func(rows pgx.Rows) (int, error) {
		defer rows.Close()
		page = make([]listedCoupon, 0, limit)
		var c listedCoupon
		targets := c.targets()
		fds := rows.FieldDescriptions()
		for rows.Next() {
			if !scanRaw(fds, rows.RawValues(), targets) {
				if err := rows.Scan(targets...); err != nil {
					return 0, err
				}
			}
			page = append(page, c)
			c = listedCoupon{} // the targets still point into c
		}
		return len(page), rows.Err()
	}, walksDays(cf))
	if err != nil {
		return Page[Coupon]{}, fmt.Errorf("db: list coupon: %w", mapError(err))
	}
	items := make([]Coupon, len(page))
	last := int64(-1)
	for i, c := range page {
		items[i] = c.Coupon
		items[i].inherit(couponDefaults{Process: c.Process, WireDiameterMM: c.WireDiameterMM, ShieldingGas: c.ShieldingGas, Polarity: c.Polarity})
		last = c.LeafIndex
	}
	return Page[Coupon]{Items: items, Next: nextLogCursor(coupons.name, from, last, len(items))}, nil
}

// couponListQuery is the statement of one coupons page (and its
// arguments): the rows of listedCoupon, in its field order.
func couponListQuery(site string, cf CouponFilter, from int64, limit int) (string, []any, error) {
	f := newFilter()
	f.args[0], f.args[1] = site, from
	if !cf.IncludeVoided {
		f.add("NOT k.voided")
	}
	for _, e := range []struct {
		col string
		val any
		set bool
	}{
		{"procedure_id", cf.ProcedureID, cf.ProcedureID != nil},
		{"qualification_record_id", cf.QualificationRecordID, cf.QualificationRecordID != nil},
		{"welder_id", cf.WelderID, cf.WelderID != ""},
		{"coupon_mark", cf.CouponMark, cf.CouponMark != ""},
	} {
		if e.set {
			f.add("k."+e.col+" = ?", e.val)
		}
	}
	if cf.WeldedFrom != nil {
		f.add("k.welded_on >= ?", *cf.WeldedFrom)
	}
	if cf.WeldedTo != nil {
		f.add("k.welded_on < ?", *cf.WeldedTo)
	}
	accepted := verdicts
	switch cf.Acceptance {
	case "accept", "reject":
		accepted = []string{cf.Acceptance}
	case "":
	default:
		return "", nil, &FieldError{Field: "acceptance", Reason: "want accept or reject"}
	}
	byDays := walksDays(cf)
	if !byDays && cf.Acceptance != "" {
		f.add("k.verdict = ?", cf.Acceptance)
	}
	// The page size is written into the statement, not bound: a prepared
	// statement's generic plan (which PostgreSQL switches to after five
	// executions) then knows a page is small, and does not trade the
	// walk for a hash join over every coupon of the site.
	lim := strconv.Itoa(limit)
	var keys string
	if byDays {
		// Each day of the range's partial months (all of it when it spans
		// at most maxDayWalk days) through coupon_list_day, and each whole
		// month between (and each verdict) through coupon_list_month, each
		// walked in log order for a page, the heads merged. Both indexes
		// carry the void mark, the verdict and the id; the page's rows are
		// read by key.
		w := splitDays(cf.WeldedFrom, cf.WeldedTo)
		base := slices.Clone(f.conds)
		arg := func(v any) string {
			f.args = append(f.args, v)
			return "$" + strconv.Itoa(len(f.args))
		}
		dayConds := base
		if cf.Acceptance != "" {
			dayConds = append(slices.Clone(base), "k.verdict = "+arg(cf.Acceptance))
		}
		walks := []string{`SELECT b.id, b.leaf_index
				FROM (SELECT day FROM generate_series(` + arg(w.head[0]) + `::date, ` + arg(w.head[1]) + `::date, interval '1 day') day
					UNION ALL SELECT day FROM generate_series(` + arg(w.tail[0]) + `::date, ` + arg(w.tail[1]) + `::date, interval '1 day') day) d
				CROSS JOIN LATERAL (SELECT k.id, k.leaf_index FROM coupon_list k
					WHERE k.site = $1 AND k.welded_on = d.day::date AND k.leaf_index >= $2 AND ` + strings.Join(dayConds, " AND ") + `
					ORDER BY k.leaf_index LIMIT ` + lim + `) b`}
		if w.months {
			walks = append(walks, `SELECT b.id, b.leaf_index
				FROM (SELECT min(welded_month) AS lo, max(welded_month) AS hi FROM coupon_list WHERE site = $1) span
				CROSS JOIN generate_series(greatest(span.lo, `+arg(w.monthFrom)+`::date), least(span.hi, `+arg(w.monthTo)+
				`::date), interval '1 month') m(month)
				CROSS JOIN unnest(`+arg(accepted)+`::text[]) a(verdict)
				CROSS JOIN LATERAL (SELECT k.id, k.leaf_index FROM coupon_list k
					WHERE k.site = $1 AND k.welded_month = m.month::date AND k.verdict = a.verdict AND k.leaf_index >= $2 AND `+
				strings.Join(base, " AND ")+`
					ORDER BY k.leaf_index LIMIT `+lim+`) b`)
		}
		keys = `SELECT ` + prefixed("c.", couponListColumns) + `
			FROM (` + strings.Join(walks, "\n\t\t\tUNION ALL ") + `
				ORDER BY leaf_index LIMIT ` + lim + `) b
			` + rowByID("coupon_list", couponListColumns, "c", "b")
	} else {
		keys = keyWalk("coupon_list", prefixed("k.", couponListColumns), f.conds, pageLimit(limit))
	}
	// One statement reads the page, from coupon_list alone, with what each
	// coupon inherits from its procedure (latest revision), else its
	// qualification record.
	sql := `SELECT ` + prefixed("k.", coupons.columns()) + `, k.leaf_index,
			coalesce(p.process, r.process, '') AS inherited_process,
			coalesce(p.wire_diameter_mm, r.wire_diameter_mm) AS inherited_wire_diameter_mm,
			coalesce(p.shielding_gas, r.shielding_gas, '') AS inherited_shielding_gas,
			coalesce(p.polarity, r.polarity) AS inherited_polarity
		FROM (` + keys + `) k
		LEFT JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas, polarity FROM procedures
			WHERE site = $1 AND id = k.procedure_id ORDER BY revision DESC LIMIT 1) p ON true
		LEFT JOIN LATERAL (SELECT process, wire_diameter_mm, shielding_gas, polarity FROM qualification_records
			WHERE site = $1 AND id = k.qualification_record_id ORDER BY revision DESC LIMIT 1) r ON true
		ORDER BY k.leaf_index`
	return sql, f.args, nil
}

// listedCoupon is one row of a coupons page: the coupon as stored, its log
// index and what it would inherit.
type listedCoupon struct {
	Coupon
	LeafIndex      int64    `db:"leaf_index"`
	Process        string   `db:"inherited_process"`
	WireDiameterMM *float64 `db:"inherited_wire_diameter_mm"`
	ShieldingGas   string   `db:"inherited_shielding_gas"`
	Polarity       *string  `db:"inherited_polarity"`
}

// targets are the addresses a row of the page is scanned into, one per
// column, in the statement's order (the fields' order, embedded structs
// flattened, fields tagged "-" left out).
func (c *listedCoupon) targets() []any {
	m, d := &c.Meta, &c.CouponData
	return []any{&m.Site, &m.ID, &m.Revision, &m.CreatedAt, &m.CreatedBy, &m.Reason, &m.Voided,
		&d.ProcedureID, &d.QualificationRecordID, &d.CouponMark, &d.WelderID, &d.PowerSourceID, &d.FillerLot,
		&d.WeldedOn, &d.JointType, &d.ThicknessMM, &d.PassNumber, &d.CurrentA, &d.VoltageV, &d.TravelSpeedMMPerS,
		&d.WireFeedSpeedMPerMin, &d.CTWDMM, &d.WireDiameterMM, &d.ShieldingGas, &d.Polarity, &d.Position,
		&d.PreheatC, &d.InterpassC,
		&c.LeafIndex, &c.Process, &c.WireDiameterMM, &c.ShieldingGas, &c.Polarity}
}

// couponKinds are the leaves the coupons list's rows are made from: a
// coupon's revisions, and its sections (its verdict).
var couponKinds = listKinds{coupons.entity, measurements.entity}

// walksDays reports a filter the coupons list answers by walking welding
// days and months (couponListQuery): a welding-day range with no equality
// filter.
func walksDays(cf CouponFilter) bool {
	equality := cf.ProcedureID != nil || cf.QualificationRecordID != nil || cf.WelderID != "" || cf.CouponMark != ""
	return !equality && (cf.WeldedFrom != nil || cf.WeldedTo != nil)
}

// maxDayWalk is the longest welding-day range (in days) the coupons list
// walks day by day; a longer one walks its whole months by month.
const maxDayWalk = 31

// dayWalk splits a day range for a list's walk by day and month: the days
// of the partial months at its ends (head and tail, inclusive; nil: none)
// and, when months is set, the whole months between (first days,
// inclusive; nil: unbounded on that side).
type dayWalk struct {
	head, tail         [2]*Date
	months             bool
	monthFrom, monthTo *Date
}

// splitDays splits the range [from, to) (nil: unbounded): all of it day by
// day when it spans at most maxDayWalk days, else its partial months day by
// day and its whole months month by month.
func splitDays(from, to *Date) dayWalk {
	var last *Date // the last day in the range
	if to != nil {
		l := DateOf(to.AddDate(0, 0, -1))
		last = &l
	}
	if from != nil && last != nil && !to.After(from.AddDate(0, 0, maxDayWalk)) {
		return dayWalk{head: [2]*Date{from, last}}
	}
	w := dayWalk{months: true}
	if from != nil {
		first := firstOfMonth(from, 0)
		if from.Day() == 1 {
			w.monthFrom = first
		} else {
			end := DateOf(first.AddDate(0, 1, -1))
			next := DateOf(first.AddDate(0, 1, 0))
			w.head, w.monthFrom = [2]*Date{from, &end}, &next
		}
	}
	if last != nil {
		first := firstOfMonth(last, 0)
		if last.AddDate(0, 0, 1).Day() == 1 { // the last day of its month
			w.monthTo = first
		} else {
			prev := DateOf(first.AddDate(0, -1, 0))
			w.tail, w.monthTo = [2]*Date{first, last}, &prev
		}
	}
	return w
}

// firstOfMonth is the first day of the month of d shifted by days (nil: no bound).
func firstOfMonth(d *Date, days int) *Date {
	if d == nil {
		return nil
	}
	t := d.AddDate(0, 0, days)
	return &Date{time.Date(t.Year(), t.Month(), 1, 0, 0, 0, 0, time.UTC)}
}

// RecheckCouponList compares the site's coupon_list with coupon_list_derived
// (the same rows computed from the coupons, their sections and the log) and
// returns each difference; none means the list key is derived exactly.
func (s *Store) RecheckCouponList(ctx context.Context, site string) ([]string, error) {
	return s.recheckDerived(ctx, site, "coupon_list", "coupon_list_derived", couponListColumns, "coupon")
}
