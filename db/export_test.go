package db

import (
	"context"
	"encoding/json"
	"fmt"
	"reflect"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"

	"etchlog/db/logfmt"
)

// OpenTraced is Open with tr watching every statement of the service pool,
// for tests that examine what a method sends (the list plans test).
func OpenTraced(ctx context.Context, url string, tr pgx.QueryTracer) (*Store, error) {
	s, err := Open(ctx, url, 0)
	if err != nil {
		return nil, err
	}
	cfg := s.pool.Config()
	cfg.ConnConfig.Tracer = tr
	p, err := pgxpool.NewWithConfig(ctx, cfg)
	if err != nil {
		s.Close()
		return nil, err
	}
	s.pool.Close()
	s.pool = p
	return s, nil
}

// CouponListRefresh is the statement the sequencer rewrites coupon_list
// rows with, for the plan test.
var CouponListRefresh = couponListRefresh

// SectionListRefresh is the statement the sequencer rewrites section_list
// rows with, for the plan test.
var SectionListRefresh = sectionListRefresh

// SectionListDelete is the statement that removes the section_list rows the
// sequencer then writes again, for the plan test.
var SectionListDelete = sectionListDelete

// QualificationListRefresh is the statement the sequencer rewrites
// qualification_list rows with, for the plan test.
var QualificationListRefresh = qualificationList.refresh

// ProcedureListRefresh is the statement the sequencer rewrites
// procedure_list rows with, for the plan test.
var ProcedureListRefresh = procedureList.refresh

// RecordJSONBothWays reads the coupons of a site (up to the first the
// driver cannot scan) and returns each row's
// record as the export's record encoder writes it (nil where it declines
// the row) and as encoding/json writes the scanned Coupon.
func RecordJSONBothWays(ctx context.Context, s *Store, site string) (fast, slow [][]byte, err error) {
	rows, err := s.pool.Query(ctx, "SELECT "+coupons.columns()+" FROM coupons WHERE site = $1 ORDER BY coupon_mark COLLATE \"C\"", site)
	if err != nil {
		return nil, nil, err
	}
	defer rows.Close()
	scan, err := structScanner[Coupon](rows.FieldDescriptions())
	if err != nil {
		return nil, nil, err
	}
	enc := newRecordEncoder(reflect.TypeFor[Coupon](), rows.FieldDescriptions())
	if enc == nil {
		return nil, nil, fmt.Errorf("no record encoder for Coupon")
	}
	for rows.Next() {
		b, ok := enc.append(nil, rows.RawValues())
		if !ok {
			b = nil
		}
		fast = append(fast, b)
		var c Coupon
		if err := scan(rows, &c); err != nil { // the driver ends the result here
			return fast, append(slow, []byte(err.Error())), nil
		}
		j, err := json.Marshal(c)
		if err != nil {
			j = []byte(err.Error())
		}
		slow = append(slow, j)
	}
	return fast, slow, rows.Err()
}

// AppendJSONFloat is the export's float64 writer, for its test.
var AppendJSONFloat = logfmt.AppendJSONFloat

// CouponListDelete is the statement that removes the coupon_list rows the
// sequencer then writes again, for the plan test.
var CouponListDelete = couponListDelete

// QueueProductionPending is the production list's write step, for the
// benchmark that measures it alone (on a plain transaction it runs at once).
func QueueProductionPending(ctx context.Context, tx pgx.Tx, entry uuid.UUID, recs []ProductionRecord) error {
	return queueProductionPending(ctx, tx, entry, recs)
}

// UserByTokenSQL and UserCheckSQL are the token lookups: a request's, and a
// write's check of the user it was let in as.
var (
	UserByTokenSQL = userByTokenSQL
	UserCheckSQL   = userCheckSQL
)

// RecordCouponsSQL and ProcedureCouponsSQL read the coupons a corrected
// qualification record or procedure judges again.
var (
	RecordCouponsSQL    = recordCouponsSQL
	ProcedureCouponsSQL = procedureCouponsSQL
)

// StoredMarksSQL is an import's read of the marks current records hold.
const StoredMarksSQL = storedMarksSQL

// ScanByName makes the lists scan their rows by name (on) or by position,
// for TestCollectTailMatchesByName.
func ScanByName(on bool) { scanByName.Store(on) }

// PositionRows is how many rows the lists have scanned by position.
func PositionRows() int64 { return positionRows.Load() }

// PageWaits is how many list pages of s waited for the sequencer.
func (s *Store) PageWaits() int64 { return s.pageWaits.Load() }
