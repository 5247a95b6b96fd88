package api

import (
	"runtime"
	"sync"

	"github.com/google/uuid"

	"etchlog/db"
)

// csvRow is one data row of an import file as CSV read it: its file row,
// its cells, or why it is not CSV.
type csvRow struct {
	row   int
	cells []string
	err   error
}

// keys gathers what the rows name before they are read: every row's mark
// (as add takes it) and every record id a procedure_id or
// qualification_record_id cell gives (as both readings parse it), so they
// name at least what the coupons read from the rows will.
func (im *importColumns) keys(recs []csvRow) db.ImportKeys {
	var k db.ImportKeys
	links := []struct {
		col  int
		ids  *[]uuid.UUID
		seen map[uuid.UUID]bool
	}{{im.index("procedure_id"), &k.Procedures, map[uuid.UUID]bool{}},
		{im.index("qualification_record_id"), &k.Records, map[uuid.UUID]bool{}}}
	marks := map[string]bool{}
	for _, r := range recs {
		mark := im.markOf(r.cells)
		if !marks[mark] {
			marks[mark] = true
			k.Marks = append(k.Marks, mark)
		}
		for _, l := range links {
			if l.col >= len(r.cells) { // no such column, or a short row
				continue
			}
			if id, err := uuid.Parse(r.cells[l.col]); err == nil && !l.seen[id] {
				l.seen[id] = true
				*l.ids = append(*l.ids, id)
			}
		}
	}
	return k
}

// readRows reads the rows into coupons (importBatch.add, CSV faults named
// in place) and returns the batch. With more than one CPU the rows are read
// in two halves at once, cut where a coupon starts: add starts a coupon
// there whichever half reads the row, so the coupons and the faults are
// those of one reading, in order.
func (s *Server) readRows(im *importColumns, recs []csvRow) *importBatch {
	m := im.couponStart(recs, len(recs)/2)
	if runtime.GOMAXPROCS(0) < 2 || m <= 0 {
		return s.readSome(im, recs)
	}
	var second *importBatch
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		second = s.readSome(im, recs[m:])
	}()
	b := s.readSome(im, recs[:m])
	wg.Wait()
	return b.then(second)
}

// readSome reads rows, in order, into a batch of their own.
func (s *Server) readSome(im *importColumns, rows []csvRow) *importBatch {
	b := &importBatch{s: s, cols: im}
	for _, r := range rows {
		if r.err != nil {
			b.fault(r.row, "", "is not CSV: "+csvReason(r.err))
			continue
		}
		b.add(r.row, r.cells)
	}
	return b
}

// then appends the coupons and faults of next, the batch of the rows after
// b's.
func (b *importBatch) then(next *importBatch) *importBatch {
	b.coupons = append(b.coupons, next.coupons...)
	b.faults = append(b.faults, next.faults...)
	return b
}

// couponStart is the first row from i on at which add starts a new coupon
// after the rows before it (its mark is empty or differs from the mark of
// the last CSV row before it; rows that are not CSV are skipped), or -1.
func (im *importColumns) couponStart(recs []csvRow, i int) int {
	prev, seen := "", false
	for k := i - 1; k >= 0 && !seen; k-- {
		if recs[k].err == nil {
			prev, seen = im.markOf(recs[k].cells), true
		}
	}
	if !seen {
		return -1
	}
	for ; i < len(recs); i++ {
		if recs[i].err != nil {
			continue
		}
		if m := im.markOf(recs[i].cells); m == "" || m != prev {
			return i
		}
	}
	return -1
}
