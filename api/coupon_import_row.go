package api

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"sync"

	"github.com/google/uuid"

	"etchlog/db"
	"etchlog/predict"
)

var (
	couponDataType  = reflect.TypeOf(db.CouponData{})
	sectionDataType = reflect.TypeOf(db.MeasurementData{})
)

// importColumn is one column of an import file's header.
type importColumn struct {
	name    string // as the header writes it
	stored  string // the field it fills, in its stored spelling
	section bool   // a section's column, else the coupon's
	number  bool   // the field holds a number
}

// importColumns is an import file's header, read once.
type importColumns struct {
	cols     []importColumn
	mark     int               // index of coupon_mark, -1 when absent
	spelling map[string]string // stored field → the header's spelling of it
	fast     [2]*fastReader    // the direct reading of the coupon's and the section's columns
}

// newImportColumns reads the header: every column must name a field of a
// coupon or of a section (coupon_id aside: the import links each section to
// its row's coupon), in any registered spelling, once. A faulty header is
// the request's shape (400), naming each column.
func newImportColumns(header []string) (*importColumns, error) {
	coupon, section := fieldsByName(couponDataType), fieldsByName(sectionDataType)
	im := &importColumns{mark: -1, spelling: map[string]string{}}
	var v issues
	seen := map[string]bool{}
	for j, name := range header {
		stored := name
		if q, ok := predict.LookupQuantity(name); ok {
			stored = q.Name
		}
		col := importColumn{name: name, stored: stored}
		f, inCoupon := coupon[stored]
		if !inCoupon && stored != "coupon_id" { // each section belongs to its row's coupon
			f, col.section = section[stored]
		}
		switch {
		case strings.TrimSpace(name) == "":
			v.missing(fmt.Sprintf("column %d", j+1), "has no name: every column needs a header")
			continue
		case !inCoupon && !col.section:
			v.missing(printable(name), "unknown column; columns are the fields of a coupon and of a section (see POST /v1/coupons/import)")
			continue
		case seen[name]:
			v.missing(name, "is given more than once; give each column once")
			continue
		}
		seen[name] = true
		_, col.number = number(reflect.New(f.typ).Elem())
		if f.typ.Kind() == reflect.Pointer {
			_, col.number = number(reflect.New(f.typ.Elem()).Elem())
		}
		if name == "coupon_mark" {
			im.mark = j
		}
		if _, taken := im.spelling[stored]; !taken || name == stored {
			im.spelling[stored] = name
		}
		im.cols = append(im.cols, col)
	}
	if im.mark < 0 && len(v.list) == 0 {
		v.missing("coupon_mark", "is a required column: rows are matched to coupons by their mark")
	}
	im.fast = [2]*fastReader{newFastReader(im, couponDataType, false), newFastReader(im, sectionDataType, true)}
	return im, v.err()
}

// markOf is a row's coupon mark, empty when the row is too short to hold
// one.
func (im *importColumns) markOf(cells []string) string {
	if im.mark < len(cells) {
		return cells[im.mark]
	}
	return ""
}

// namedField is a struct field found by its JSON name: its type and index.
type namedField struct {
	jsonField
	index int
}

// fieldsOf keeps fieldsByName's answer per type (a read-only map).
var fieldsOf sync.Map // reflect.Type → map[string]namedField

// fieldsByName maps the JSON names of t's own fields (a flat struct: a
// coupon's or a section's data) to them.
func fieldsByName(t reflect.Type) map[string]namedField {
	if v, ok := fieldsOf.Load(t); ok {
		return v.(map[string]namedField)
	}
	m := map[string]namedField{}
	for i := range t.NumField() {
		f := t.Field(i)
		if name, _, _ := strings.Cut(f.Tag.Get("json"), ","); name != "" && name != "-" && !f.Anonymous {
			m[name] = namedField{jsonField{name, f.Type}, i}
		}
	}
	fieldsOf.Store(t, m)
	return m
}

// index is the header position of a column, named as the file or as
// stored; a field with no column sorts last.
func (im *importColumns) index(name string) int {
	name = im.column(name)
	for j, c := range im.cols {
		if c.name == name {
			return j
		}
	}
	return len(im.cols)
}

// column names a stored field as the file spells it.
func (im *importColumns) column(stored string) string {
	if name, ok := im.spelling[stored]; ok {
		return name
	}
	return stored
}

// importBatch gathers an import file's rows into coupons and names every
// fault found reading them.
type importBatch struct {
	s       *Server
	cols    *importColumns
	coupons []db.ImportCoupon
	faults  []db.RowIssue
	mark    string   // the current coupon's mark
	first   []string // the current coupon's first row
	unread  bool     // that first row had the wrong number of cells
}

// fault records a fault of row, in the file's spelling of the column.
func (b *importBatch) fault(row int, column, reason string) {
	b.faults = append(b.faults, db.RowIssue{Row: row, Column: column, Reason: reason})
}

// add reads one data row: a new mark starts a coupon, the same mark as the
// row before adds to it (its coupon columns repeated unchanged).
func (b *importBatch) add(row int, rec []string) {
	cols := b.cols.cols
	mark := b.cols.markOf(rec)
	cur := len(b.coupons) - 1
	if cur < 0 || mark == "" || mark != b.mark || b.first == nil {
		b.coupons = append(b.coupons, db.ImportCoupon{Row: row, Data: db.CouponData{CouponMark: mark}})
		cur++
		b.mark, b.first = mark, nil
	}
	c := &b.coupons[cur]
	if len(rec) != len(cols) {
		b.fault(row, "", fmt.Sprintf("has %d cells; the header has %d", len(rec), len(cols)))
		c.Refused = true
		if b.first == nil { // its coupon columns cannot be read: the coupon's next rows are not compared
			b.first, b.unread = []string{}, true
		}
		return
	}
	if b.first == nil {
		b.unread = false
		b.first = slices.Clone(rec)
		d, ok := b.coupon(row, rec)
		c.Data, c.Refused = d, !ok
	} else if !b.unread {
		for j, col := range cols {
			if !col.section && rec[j] != b.first[j] {
				b.fault(row, col.name, fmt.Sprintf("%q differs from %q on row %d, where coupon %s starts; the rows of a coupon repeat its columns",
					rec[j], b.first[j], c.Row, mark))
				c.Refused = true
			}
		}
	}
	if d, given, ok := b.section(row, rec); given && ok {
		c.Sections = append(c.Sections, db.ImportSection{Row: row, Data: d})
	} else if given {
		c.Refused = true
	}
}

// coupon reads the coupon columns of a row; ok is false when any is refused.
func (b *importBatch) coupon(row int, rec []string) (db.CouponData, bool) {
	var d db.CouponData
	if b.cols.fast[0].read(b.s, rec, &d) {
		return d, true
	}
	d = db.CouponData{}
	return d, b.read(row, rec, false, &d)
}

// section reads the section columns of a row: given is false when they are
// all empty (a coupon without sections), ok false when any is refused.
func (b *importBatch) section(row int, rec []string) (d db.MeasurementData, given, ok bool) {
	for j, col := range b.cols.cols {
		if col.section && rec[j] != "" {
			given = true
			break
		}
	}
	if !given {
		return d, false, true
	}
	if b.cols.fast[1].read(b.s, rec, &d) {
		return d, true, true
	}
	d = db.MeasurementData{}
	return d, true, b.read(row, rec, true, &d)
}

// read fills v (a *db.CouponData or *db.MeasurementData) from the row's
// coupon or section columns as a JSON body's fields would be: each cell a
// JSON value, every spelling rewritten into its stored one, each field
// decoded, then the validator's rules, worded in the spelling the file
// used. Every fault is recorded; ok reports none.
func (b *importBatch) read(row int, rec []string, section bool, v any) bool {
	t := reflect.TypeOf(v).Elem()
	obj := map[string]json.RawMessage{}
	var found []FieldIssue
	for j, col := range b.cols.cols {
		cell := rec[j]
		if col.section != section || cell == "" {
			continue
		}
		if why := textRefusal(col.stored, cell); why != "" {
			found = append(found, FieldIssue{col.name, why})
			continue
		}
		raw, err := json.Marshal(cell)
		if col.number {
			f, perr := strconv.ParseFloat(strings.TrimSpace(cell), 64)
			if perr != nil || math.IsInf(f, 0) || math.IsNaN(f) {
				found = append(found, FieldIssue{col.name, fmt.Sprintf("wrong type: want a number (got %q)", cell)})
				continue
			}
			raw, err = json.Marshal(f)
		}
		if err == nil {
			obj[col.name] = raw
		}
	}
	rw := spellingRewriter{sent: sentAs{}}
	rw.object(obj, t, "")
	found = append(found, rw.issues...)
	fields := fieldsByName(t)
	rv := reflect.ValueOf(v).Elem()
	for name, raw := range obj {
		f, ok := fields[name]
		if !ok {
			continue // a spelling given twice: named above
		}
		if err := json.Unmarshal(raw, rv.Field(f.index).Addr().Interface()); err != nil {
			found = append(found, FieldIssue{name, decodeReason(f.typ, err)})
		}
	}
	var inv *invalidError
	if err := b.s.check(rv.Interface()); errors.As(err, &inv) {
		for _, is := range inv.issues {
			if !slices.ContainsFunc(found, func(f FieldIssue) bool { return f.Field == is.Field }) {
				found = append(found, is)
			}
		}
	}
	rw.sent.reword(found)
	cols := b.cols
	slices.SortStableFunc(found, func(x, y FieldIssue) int { return cols.index(x.Field) - cols.index(y.Field) })
	for _, is := range found {
		b.fault(row, b.cols.column(is.Field), is.Reason)
	}
	return len(found) == 0
}

// decodeReason words a cell that does not decode into its field's type.
func decodeReason(t reflect.Type, err error) string {
	var ute *json.UnmarshalTypeError
	switch {
	case errors.As(err, &ute):
		return "wrong type: want " + ute.Type.String()
	case t == reflect.TypeOf(&uuid.UUID{}) || t == reflect.TypeOf(uuid.UUID{}):
		return "not a record id (UUID)"
	}
	return err.Error()
}

// merge adds the store's issues, whose columns are stored field names, to
// the faults found reading the rows, in the file's spelling, by row.
func (b *importBatch) merge(found []db.RowIssue) []db.RowIssue {
	out := slices.Clone(b.faults)
	for _, is := range found {
		is.Column = b.cols.column(is.Column)
		out = append(out, is)
	}
	slices.SortStableFunc(out, func(a, b db.RowIssue) int { return a.Row - b.Row })
	if out == nil {
		out = []db.RowIssue{}
	}
	return out
}
