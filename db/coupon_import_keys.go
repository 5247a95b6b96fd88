package db

import (
	"fmt"
	"slices"

	"github.com/google/uuid"
)

// ImportKeys are what an import's rows name, gathered from its cells before
// the rows are read: every coupon mark, procedure id and qualification
// record id the file gives. The store reads the records they name while
// the caller reads the rows (ImportCouponsAhead).
type ImportKeys struct {
	Marks      []string
	Procedures []uuid.UUID
	Records    []uuid.UUID
}

// keysOf gathers the keys the coupons name, each once.
func keysOf(cs []ImportCoupon) ImportKeys {
	k := ImportKeys{Procedures: linkIDs(cs, func(d CouponData) *uuid.UUID { return d.ProcedureID }),
		Records: linkIDs(cs, func(d CouponData) *uuid.UUID { return d.QualificationRecordID })}
	seen := make(map[string]bool, len(cs))
	for _, c := range cs {
		if !seen[c.Data.CouponMark] {
			seen[c.Data.CouponMark] = true
			k.Marks = append(k.Marks, c.Data.CouponMark)
		}
	}
	return k
}

// cover reports an error when a coupon gives a mark, procedure or
// qualification record the keys leave out: its records would not have been
// read (nor the procedure's flag lock taken).
func (k ImportKeys) cover(cs []ImportCoupon) error {
	marks := make(map[string]bool, len(k.Marks))
	for _, m := range k.Marks {
		marks[m] = true
	}
	for _, c := range cs {
		d := c.Data
		switch {
		case !marks[d.CouponMark]:
			return fmt.Errorf("db: import: the keys leave out the mark %q of row %d", d.CouponMark, c.Row)
		case d.ProcedureID != nil && !slices.Contains(k.Procedures, *d.ProcedureID):
			return fmt.Errorf("db: import: the keys leave out procedure %s of row %d", d.ProcedureID, c.Row)
		case d.QualificationRecordID != nil && !slices.Contains(k.Records, *d.QualificationRecordID):
			return fmt.Errorf("db: import: the keys leave out qualification record %s of row %d", d.QualificationRecordID, c.Row)
		}
	}
	return nil
}
