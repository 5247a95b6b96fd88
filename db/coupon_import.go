package db

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"reflect"
	"slices"
	"strconv"
	"strings"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"

	"etchlog/predict"
)

// An import brings in a shop's existing coupons with their sections, many
// at a time. Every coupon it writes is a record like one created through
// the API: revision 1, its mark claimed, a pending log leaf per coupon and
// per section, its flags. The checks and writes are set-based (one query
// per kind of fact, COPY for the rows), and one call is one transaction. A
// coupon is written whole or not at all: a coupon with any refused value is
// left out, with every refused value reported. A coupon whose mark is
// already stored is not written again: with the same values it counts as
// unchanged, with other values each difference is reported.

// ImportCoupon is one coupon of an import: the file row it starts on, what
// was welded and its sections. Refused marks a coupon the caller already
// found faults in (a value it could not read): the store still names its
// unknown links and repeated section labels, never writes it, and counts it
// refused.
type ImportCoupon struct {
	Row      int
	Data     CouponData
	Sections []ImportSection
	Refused  bool
}

// ImportSection is one section row of an imported coupon; Data.CouponID is
// set by the store.
type ImportSection struct {
	Row  int
	Data MeasurementData
}

// RowIssue is one refused value of an import: the file row (the header is
// row 1), the column as a stored field name and the reason in words.
type RowIssue struct {
	Row    int    `json:"row"`
	Column string `json:"column"`
	Reason string `json:"reason"`
}

// ImportResult says what an import wrote, or on a dry run would write.
type ImportResult struct {
	Created   int        // coupons written (or to be written)
	Sections  int        // their sections
	Unchanged int        // coupons already stored with the same values and sections
	Refused   int        // coupons left out, each with at least one issue
	Issues    []RowIssue // by row
}

// plannedCoupon is a coupon the import will write, with its record ids.
type plannedCoupon struct {
	in       *ImportCoupon
	id       uuid.UUID
	sections []uuid.UUID // in id order, which is file order
}

// importPlan is the outcome of checking an import against the records.
type importPlan struct {
	site    string
	result  ImportResult
	create  []plannedCoupon
	procs   map[uuid.UUID]Procedure
	records map[uuid.UUID]QualificationRecord
	refused []bool
}

// ImportCoupons checks coupons against the site's records and, when commit
// is set, writes those that pass in one transaction; without commit it
// writes nothing and reports what a commit would do.
func (s *Store) ImportCoupons(ctx context.Context, a Actor, cs []ImportCoupon, commit bool) (ImportResult, error) {
	return s.ImportCouponsAhead(ctx, a, keysOf(cs), func() []ImportCoupon { return cs }, commit)
}

// ImportCouponsAhead is ImportCoupons for a caller still reading the
// coupons: the records keys names are read (and on a commit, their
// procedures' flag locks taken) while it reads them, and coupons, called
// once, waits for them. keys must name every mark, procedure and
// qualification record the coupons give (naming more is allowed).
func (s *Store) ImportCouponsAhead(ctx context.Context, a Actor, keys ImportKeys, coupons func() []ImportCoupon, commit bool) (ImportResult, error) {
	if !commit {
		p, err := planImport(ctx, s.pool, a.Site, keys, coupons)
		if err != nil {
			return ImportResult{}, fmt.Errorf("db: import coupons (dry run): %w", err)
		}
		return p.result, nil
	}
	var res ImportResult
	var plan *importPlan
	err := s.tx(ctx, func(tx pgx.Tx) error {
		// Flags are judged under the procedures' current ranges: hold their
		// shared flag locks before reading anything. Every statement of the
		// write is planned for its own arguments.
		queued := firstError(queueExec(ctx, tx, `SET LOCAL plan_cache_mode = force_custom_plan`),
			queueLockProcedures(ctx, tx, a.Site, keys.Procedures, false))
		if queued != nil {
			return queued
		}
		j := newImportJudgement(a.Site, keys.Procedures)
		p, err := planImport(ctx, tx, a.Site, keys, coupons, j.reads())
		if err != nil {
			return err
		}
		res, plan = p.result, p
		return s.writeImport(ctx, tx, a, p, j)
	})
	if errors.Is(err, errMarkTaken) {
		err = s.takenMark(ctx, a.Site, plan)
	}
	if err != nil {
		return ImportResult{}, fmt.Errorf("db: import coupons: %w", err)
	}
	return res, nil
}

// planImport checks every coupon: marks repeated in the file, marks already
// stored (unchanged or different), repeated section labels, sections deeper
// than the coupon is thick, and links to procedures and qualification
// records. Its reads leave together (readTogether), with the caller's
// reads more, before the coupons are asked for: the stored marks, the
// procedures and the qualification records keys names; then, when marks
// are stored, those coupons and their sections.
func planImport(ctx context.Context, q querier, site string, keys ImportKeys, coupons func() []ImportCoupon, more ...[]planRead) (*importPlan, error) {
	p := &importPlan{site: site, procs: map[uuid.UUID]Procedure{}, records: map[uuid.UUID]QualificationRecord{}}
	holders := map[string]uuid.UUID{}
	reads := append([][]planRead{p.markRead(keys.Marks, holders),
		latestRead(procedures, site, keys.Procedures, p.procs), latestRead(qualificationRecords, site, keys.Records, p.records)},
		more...)
	if err := readTogether(ctx, q, reads...); err != nil {
		return nil, err
	}
	cs := coupons()
	if err := keys.cover(cs); err != nil {
		return nil, err
	}
	p.refused = make([]bool, len(cs))
	first := make(map[string]int, len(cs))
	for i, c := range cs {
		if c.Refused {
			p.refused[i] = true
		}
		if j, dup := first[c.Data.CouponMark]; dup {
			p.refuse(i, c.Row, "coupon_mark", fmt.Sprintf("%q is already the mark of the coupon that starts on row %d; the rows of one coupon follow one another",
				c.Data.CouponMark, cs[j].Row))
			continue
		}
		first[c.Data.CouponMark] = i
	}
	held, err := p.storedMarks(ctx, q, cs, holders)
	if err != nil {
		return nil, err
	}
	// A repeated mark is refused as such; a stored one was compared. The
	// others are new coupons: every rule applies and every fault is named.
	for i, r := range p.refused {
		held[i] = held[i] || r && !cs[i].Refused
	}
	for i := range cs {
		if !held[i] {
			p.checkSections(i, &cs[i], !cs[i].Refused)
		}
	}
	p.checkLinks(cs, held)
	for i := range cs {
		if p.refused[i] || held[i] {
			continue
		}
		pc := plannedCoupon{in: &cs[i]}
		if pc.id, err = uuid.NewV7(); err != nil {
			return nil, err
		}
		for range cs[i].Sections {
			id, err := uuid.NewV7()
			if err != nil {
				return nil, err
			}
			pc.sections = append(pc.sections, id)
		}
		p.create = append(p.create, pc)
		p.result.Created++
		p.result.Sections += len(cs[i].Sections)
	}
	for _, r := range p.refused {
		if r {
			p.result.Refused++
		}
	}
	slices.SortStableFunc(p.result.Issues, func(a, b RowIssue) int { return cmp.Compare(a.Row, b.Row) })
	return p, nil
}

// refuse records an issue of coupon i.
func (p *importPlan) refuse(i, row int, column, reason string) {
	p.refused[i] = true
	p.result.Issues = append(p.result.Issues, RowIssue{Row: row, Column: column, Reason: reason})
}

// refuseErr records a FieldError (or another error's text) of coupon i.
func (p *importPlan) refuseErr(i, row int, column string, err error) {
	if fe, ok := err.(*FieldError); ok {
		p.refuse(i, row, fe.Field, fe.Reason)
		return
	}
	p.refuse(i, row, column, err.Error())
}

// checkSections refuses a section label given twice for one coupon (the
// rule the database keeps among current sections, case and surrounding
// space ignored) and, when depth is set (the thickness was read), a section
// deeper than the coupon is thick.
func (p *importPlan) checkSections(i int, c *ImportCoupon, depth bool) {
	labels := make(map[string]ImportSection, len(c.Sections))
	for _, s := range c.Sections {
		key := strings.ToLower(strings.TrimSpace(s.Data.Section))
		if before, dup := labels[key]; dup {
			p.refuse(i, s.Row, "section", fmt.Sprintf("%q repeats section %q of row %d (labels are compared without case and surrounding space); give each section of coupon %s once",
				s.Data.Section, before.Data.Section, before.Row, c.Data.CouponMark))
			continue
		}
		labels[key] = s
		if err := s.Data.fitsCoupon(c.Data); depth && err != nil {
			p.refuseErr(i, s.Row, "penetration_mm", err)
		}
	}
}

// checkLinks refuses a coupon naming a procedure or qualification record
// that is not at the site (the plan read those named, p.procs and
// p.records) or is voided, in the words of a single coupon's write.
func (p *importPlan) checkLinks(cs []ImportCoupon, held []bool) {
	for i, c := range cs {
		if held[i] {
			continue
		}
		if c.Data.ProcedureID == nil && c.Data.QualificationRecordID == nil && !c.Refused {
			p.refuse(i, c.Row, "procedure_id", noLinkReason)
		}
		if id := c.Data.ProcedureID; id != nil {
			pr, ok := p.procs[*id]
			if err := procedures.linkRefused("procedure_id", *id, ok, pr.Voided); err != nil {
				p.refuseErr(i, c.Row, "procedure_id", err)
			}
		}
		if id := c.Data.QualificationRecordID; id != nil {
			r, ok := p.records[*id]
			if err := qualificationRecords.linkRefused("qualification_record_id", *id, ok, r.Voided); err != nil {
				p.refuseErr(i, c.Row, "qualification_record_id", err)
			}
		}
	}
}

// linkIDs lists the distinct ids that field of the coupons names.
func linkIDs(cs []ImportCoupon, field func(CouponData) *uuid.UUID) []uuid.UUID {
	seen := map[uuid.UUID]bool{}
	var ids []uuid.UUID
	for _, c := range cs {
		if id := field(c.Data); id != nil && !seen[*id] {
			seen[*id] = true
			ids = append(ids, *id)
		}
	}
	return ids
}

// storedMarksSQL reads which of the marks $3 of kind $2 current records at
// site $1 hold: one descent of current_marks' key per mark, whatever the
// statistics (TestMarkLookupsReadByKey). Each mark is looked up on its own
// (LATERAL … LIMIT 1, which the planner keeps as a lookup): as one condition
// mark = ANY($3), a plan made under statistics younger than the site's marks
// scanned the site's (site, kind) prefix and filtered every mark.
const storedMarksSQL = `SELECT m.mark, c.record_id FROM unnest($3::text[]) m(mark)
	CROSS JOIN LATERAL (SELECT record_id FROM current_marks
		WHERE site = $1 AND kind = $2 AND mark = m.mark LIMIT 1) c`

// markRead reads which of the file's marks current records already hold
// into holders (mark → record id), each mark by key (storedMarksSQL).
func (p *importPlan) markRead(marks []string, holders map[string]uuid.UUID) []planRead {
	if len(marks) == 0 {
		return nil
	}
	return []planRead{{storedMarksSQL,
		[]any{p.site, couponMark.kind, marks}, func(rows pgx.Rows) error {
			var mark string
			var id uuid.UUID
			_, err := pgx.ForEachRow(rows, []any{&mark, &id}, func() error {
				holders[mark] = id
				return nil
			})
			if err != nil {
				return fmt.Errorf("stored marks: %w", err)
			}
			return nil
		}, true}}
}

// storedMarks compares each coupon whose mark a current record holds
// (holders, read by markRead) with the stored one: the same values and
// sections count as unchanged, any difference is refused, named. held[i]
// reports that coupon i's mark is taken (or repeats an earlier one).
func (p *importPlan) storedMarks(ctx context.Context, q querier, cs []ImportCoupon, holders map[string]uuid.UUID) ([]bool, error) {
	held := make([]bool, len(cs))
	if len(holders) == 0 {
		return held, nil
	}
	ids := make([]uuid.UUID, 0, len(holders))
	for _, id := range holders {
		ids = append(ids, id)
	}
	slices.SortFunc(ids, func(a, b uuid.UUID) int { return slices.Compare(a[:], b[:]) })
	stored := make(map[uuid.UUID]Coupon, len(ids))
	sections := map[uuid.UUID][]Measurement{}
	if err := readTogether(ctx, q, latestRead(coupons, p.site, ids, stored), sectionsRead(p.site, ids, sections)); err != nil {
		return nil, err
	}
	for i := range cs {
		c := &cs[i]
		holder, ok := holders[c.Data.CouponMark]
		if !ok || p.refused[i] {
			continue
		}
		held[i] = true
		st, ok := stored[holder]
		if !ok { // a qualification record's number is another kind of mark: not reached
			p.refuse(i, c.Row, "coupon_mark", fmt.Sprintf("the mark %q is held by record %s", c.Data.CouponMark, holder))
			continue
		}
		if st.Voided {
			p.refuse(i, c.Row, "coupon_mark", fmt.Sprintf("coupon %s already has the mark %q and is voided (a void keeps its mark); choose another mark",
				holder, c.Data.CouponMark))
			continue
		}
		before := len(p.result.Issues)
		p.compareStored(i, c, st, sections[holder])
		if len(p.result.Issues) == before {
			p.result.Unchanged++
		}
	}
	return held, nil
}

// noLinkReason is why a coupon naming neither a procedure nor a
// qualification record is refused.
const noLinkReason = "a coupon belongs to a procedure or a qualification record; give at least one"

// compareStored refuses each value of coupon c that differs from the stored
// coupon st with sections secs: an import never writes over a record.
func (p *importPlan) compareStored(i int, c *ImportCoupon, st Coupon, secs []Measurement) {
	fix := fmt.Sprintf("an import writes nothing over a stored coupon: correct it with a reason (PUT /v1/coupons/%s)", st.ID)
	for _, col := range differingColumns(c.Data, st.CouponData, "") {
		p.refuse(i, c.Row, col.name, fmt.Sprintf("coupon %s is stored (id %s) with %s %s; this row has %s; %s",
			c.Data.CouponMark, st.ID, col.name, col.stored, col.file, fix))
	}
	byLabel := make(map[string]Measurement, len(secs))
	for _, m := range secs {
		byLabel[strings.ToLower(strings.TrimSpace(m.Section))] = m
	}
	inFile := map[string]bool{}
	for _, s := range c.Sections {
		key := strings.ToLower(strings.TrimSpace(s.Data.Section))
		inFile[key] = true
		m, ok := byLabel[key]
		if !ok {
			p.refuse(i, s.Row, "section", fmt.Sprintf("coupon %s is stored (id %s) without a section %s; add it with POST /v1/coupons/%s/measurements",
				c.Data.CouponMark, st.ID, s.Data.Section, st.ID))
			continue
		}
		d := s.Data
		d.CouponID = m.CouponID
		for _, col := range differingColumns(d, m.MeasurementData, "coupon_id") {
			p.refuse(i, s.Row, col.name, fmt.Sprintf("section %s of coupon %s is stored (id %s) with %s %s; this row has %s; correct it with a reason (PUT /v1/measurements/%s)",
				m.Section, c.Data.CouponMark, m.ID, col.name, col.stored, col.file, m.ID))
		}
	}
	for _, m := range secs {
		if !inFile[strings.ToLower(strings.TrimSpace(m.Section))] {
			p.refuse(i, c.Row, "section", fmt.Sprintf("coupon %s is stored (id %s) with a section %s that the file leaves out; %s",
				c.Data.CouponMark, st.ID, m.Section, fix))
		}
	}
}

// sectionsRead reads the current, non-voided sections of the coupons into
// out, keyed by coupon id, in creation order.
func sectionsRead(site string, couponIDs []uuid.UUID, out map[uuid.UUID][]Measurement) []planRead {
	return []planRead{{`SELECT ` + measurements.columns() + ` FROM (
			SELECT DISTINCT ON (id) ` + measurements.columns() + ` FROM measurements
			WHERE site = $1 AND coupon_id = ANY($2) ORDER BY id, revision DESC) cur
		WHERE NOT voided ORDER BY id`, []any{site, couponIDs}, func(rows pgx.Rows) error {
		ms, err := pgx.CollectRows(rows, pgx.RowToStructByName[Measurement])
		if err != nil {
			return fmt.Errorf("stored sections: %w", err)
		}
		for _, m := range ms {
			out[m.CouponID] = append(out[m.CouponID], m)
		}
		return nil
	}, false}}
}

// columnDiff is one column whose file value differs from the stored one,
// both in words.
type columnDiff struct{ name, stored, file string }

// differingColumns compares two records' data column by column (recordColumns
// order), skipping the column skip; numbers are compared exactly, as stored.
func differingColumns(file, stored any, skip string) []columnDiff {
	var out []columnDiff
	fv, sv := recordValues(file), recordValues(stored)
	for k, col := range recordColumns(file) {
		if col == skip {
			continue
		}
		a, b := plainValue(fv[k]), plainValue(sv[k])
		if a == b {
			continue
		}
		out = append(out, columnDiff{col, valueWords(col, b), valueWords(col, a)})
	}
	return out
}

// plainValue turns a column value into a comparable one: a pointer into its
// target (nil: none), a day into its text.
func plainValue(v any) any {
	rv := reflect.ValueOf(v)
	if rv.Kind() == reflect.Pointer {
		if rv.IsNil() {
			return nil
		}
		v = rv.Elem().Interface()
	}
	if d, ok := v.(Date); ok {
		return d.String()
	}
	return v
}

// valueWords writes a column value for a reason: a quantity with its stored
// unit, text quoted, an absent value as "none".
func valueWords(col string, v any) string {
	switch x := v.(type) {
	case nil:
		return "none"
	case string:
		return strconv.Quote(x)
	case float64:
		s := strconv.FormatFloat(x, 'g', -1, 64)
		if q, ok := predict.LookupQuantity(col); ok && q.Unit() != "" {
			s += " " + q.Unit()
		}
		return s
	}
	return fmt.Sprint(v)
}
