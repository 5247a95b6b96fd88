package api

import (
	"bytes"
	"fmt"
	"math"
	"net/http"
	"strconv"
	"sync"
	"time"
	"unicode/utf8"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/db/logfmt"
)

// A list page of a row type with an item writer is written straight into
// one buffer, member by member, instead of through encoding/json and the
// answer's rewriting (jsonAnswer): the same bytes, numbers rounded and,
// with units=inch-pound, quantities renamed and converted as the rewriting
// does. TestListAnswerMatchesEncodingJSON compares the two over many rows.
// Building the values' JSON by reflection and rewriting it cost a coupons
// page more than reading it from the database.

// itemWriter appends one item of a page.
type itemWriter[T any] func(w *answerWriter, item *T)

// itemWriterOf is the item writer of T, or nil when T has none.
func itemWriterOf[T any]() itemWriter[T] {
	var w any
	switch any((*T)(nil)).(type) {
	case *db.Coupon:
		w = itemWriter[db.Coupon](appendCoupon)
	}
	f, _ := w.(itemWriter[T])
	return f
}

// writePage answers one JSON page through the item writer of T and reports
// true, or reports false when T has none or the answer is asked indented or
// verbatim (those take jsonAnswer).
func writePage[T any](c echo.Context, p db.Page[T]) (bool, error) {
	item, inch := directWriter[T](c)
	if item == nil {
		return false, nil
	}
	b, err := appendPage(make([]byte, 0, 1024*(len(p.Items)+1)), p, item, inch)
	if err != nil {
		return true, err
	}
	return true, c.JSONBlob(http.StatusOK, b)
}

// writeOne answers one record with status through the item writer of T, as
// writePage answers a page, and reports true; false as writePage's.
func writeOne[T any](c echo.Context, status int, v *T) (bool, error) {
	item, inch := directWriter[T](c)
	if item == nil {
		return false, nil
	}
	bp := answerBuffers.Get().(*[]byte)
	b, err := appendOne((*bp)[:0], v, item, inch)
	if err == nil {
		err = c.JSONBlob(status, b) // written out: the buffer is free again
	}
	if cap(b) <= maxKeptAnswer {
		*bp = b[:0]
		answerBuffers.Put(bp)
	}
	return true, err
}

// answerBuffers keep the buffers of one-record answers between requests,
// so that each answer does not allocate (and the collector sweep) its own;
// a buffer grown past maxKeptAnswer is left to the collector.
var answerBuffers = sync.Pool{New: func() any { b := make([]byte, 0, 2048); return &b }}

const maxKeptAnswer = 64 << 10

// directWriter is the item writer of T for this answer and whether it is
// inch-pound, or nil when T has none or the answer is asked indented or
// verbatim (those take jsonAnswer).
func directWriter[T any](c echo.Context) (itemWriter[T], bool) {
	item := itemWriterOf[T]()
	if item == nil {
		return nil, false
	}
	if _, pretty := c.QueryParams()["pretty"]; pretty || c.Echo().Debug {
		return nil, false
	}
	if verbatim, _ := c.Get(ctxVerbatim).(bool); verbatim {
		return nil, false
	}
	units, _ := c.Get(ctxUnits).(string)
	return item, units == unitsInchPound
}

// appendOne appends v as jsonAnswer writes it, the trailing newline included.
func appendOne[T any](b []byte, v *T, item itemWriter[T], inch bool) ([]byte, error) {
	w := &answerWriter{b: append(b, '{'), inch: inch}
	item(w, v)
	return append(w.b, '}', '\n'), w.err
}

// appendPage appends the page {items, next_cursor} as jsonAnswer writes
// pageOf(p), the trailing newline included.
func appendPage[T any](b []byte, p db.Page[T], item itemWriter[T], inch bool) ([]byte, error) {
	w := &answerWriter{b: append(b, `{"items":[`...), inch: inch}
	for i := range p.Items {
		if i > 0 {
			w.b = append(w.b, ',')
		}
		w.b = append(w.b, '{')
		w.more = false
		item(w, &p.Items[i])
		w.b = append(w.b, '}')
	}
	w.b = append(w.b, ']')
	if p.Next != "" {
		w.b = append(w.b, `,"next_cursor":`...)
		w.text(p.Next)
	}
	return append(w.b, '}', '\n'), w.err
}

// answerWriter appends the members of one JSON object of an answer.
type answerWriter struct {
	b    []byte
	inch bool  // quantities in their inch-pound spellings
	more bool  // a member precedes in the object
	err  error // the first value encoding/json would refuse
}

// key appends a member's name, in its inch-pound spelling when the answer
// is inch-pound and the name has one (whatever the value, as toInchPound
// renames), and returns the conversion of its numbers (nil: none).
func (w *answerWriter) key(k string) func(float64) float64 {
	if w.more {
		w.b = append(w.b, ',')
	}
	w.more = true
	w.b = append(w.b, '"')
	var conv func(float64) float64
	if s, ok := w.spelling(k); ok {
		w.b = append(append(w.b, k[:len(k)-len(s.metric)]...), s.inch...)
		conv = s.conv
	} else {
		w.b = append(w.b, k...)
	}
	w.b = append(w.b, '"', ':')
	return conv
}

// spelling is the inch-pound spelling of a member's name in an inch-pound answer.
func (w *answerWriter) spelling(k string) (outSpelling, bool) {
	if !w.inch {
		return outSpelling{}, false
	}
	return spellingOf(k)
}

// str appends a string member.
func (w *answerWriter) str(k, v string) {
	w.key(k)
	w.text(v)
}

// text appends a string value. An inch-pound answer is written again from
// the decoded document (rewriteTree), so each byte of invalid UTF-8, which
// encoding/json wrote as the escape \ufffd, comes out as U+FFFD itself.
func (w *answerWriter) text(v string) {
	if w.inch && !utf8.ValidString(v) {
		v = string([]rune(v)) // each invalid byte one U+FFFD, as encoding/json reads them
	}
	w.b = logfmt.AppendJSONString(w.b, v)
}

// optStr appends a string member that omitempty leaves out when nil.
func (w *answerWriter) optStr(k string, v *string) {
	if v != nil {
		w.str(k, *v)
	}
}

// strs appends a list of strings (nil: null).
func (w *answerWriter) strs(k string, v []string) {
	w.key(k)
	if v == nil {
		w.b = append(w.b, "null"...)
		return
	}
	w.b = append(w.b, '[')
	for i, s := range v {
		if i > 0 {
			w.b = append(w.b, ',')
		}
		w.text(s)
	}
	w.b = append(w.b, ']')
}

// boolean appends a true or false member.
func (w *answerWriter) boolean(k string, v bool) {
	w.key(k)
	w.b = strconv.AppendBool(w.b, v)
}

// integer appends an integer member (converted, as a number, when its
// name is a quantity's in an inch-pound answer).
func (w *answerWriter) integer(k string, v int64) {
	if conv := w.key(k); conv != nil {
		if f := conv(float64(v)); w.finite(f) {
			w.b = logfmt.AppendJSONFloat(w.b, roundAnswer(f))
		}
		return
	}
	w.b = strconv.AppendInt(w.b, v, 10)
}

// num appends a number member: encoding/json's literal rounded as
// roundNumbers rounds it, or in an inch-pound answer its converted value
// rounded as rewriteTree writes it.
func (w *answerWriter) num(k string, v float64) {
	conv := w.key(k)
	if !w.finite(v) {
		return
	}
	if conv != nil {
		// A conversion past the largest double (only from values far
		// outside every quantity's bounds) is refused; rewriteTree would
		// write no digits at all there.
		if v = conv(v); w.finite(v) {
			w.b = logfmt.AppendJSONFloat(w.b, roundAnswer(v))
		}
		return
	}
	w.b = appendAnswerFloat(w.b, v)
}

// finite reports whether v can be written, else keeps encoding/json's
// refusal of it as the answer's error.
func (w *answerWriter) finite(v float64) bool {
	if !math.IsNaN(v) && !math.IsInf(v, 0) {
		return true
	}
	if w.err == nil {
		w.err = fmt.Errorf("json: unsupported value: %s", strconv.FormatFloat(v, 'g', -1, 64))
	}
	return false
}

// optNum appends a number member that omitempty leaves out when nil.
func (w *answerWriter) optNum(k string, v *float64) {
	if v != nil {
		w.num(k, *v)
	}
}

// id appends a UUID member.
func (w *answerWriter) id(k string, v uuid.UUID) {
	w.key(k)
	w.b = append(logfmt.AppendUUID(append(w.b, '"'), v[:]), '"')
}

// optID appends a UUID member that omitempty leaves out when nil.
func (w *answerWriter) optID(k string, v *uuid.UUID) {
	if v != nil {
		w.id(k, *v)
	}
}

// instant appends a time as time.Time's MarshalJSON writes it (RFC 3339
// with the nanoseconds it has); a time it refuses is the answer's error.
func (w *answerWriter) instant(k string, v time.Time) {
	w.key(k)
	if _, off := v.Zone(); v.Year() < 0 || v.Year() > 9999 || off <= -24*3600 || off >= 24*3600 {
		j, err := v.MarshalJSON()
		if err != nil && w.err == nil {
			w.err = err
		}
		w.b = append(w.b, j...)
		return
	}
	w.b = append(v.AppendFormat(append(w.b, '"'), time.RFC3339Nano), '"')
}

// day appends a calendar day as db.Date's MarshalJSON writes it (its
// digits and hyphens need no escaping).
func (w *answerWriter) day(k string, v db.Date) {
	w.key(k)
	w.b = append(v.AppendFormat(append(w.b, '"'), time.DateOnly), '"')
}

// appendAnswerFloat appends f as encoding/json writes it and roundNumbers
// then rewrites it: an integer literal unchanged, any other to
// answerDigits significant digits when it has more.
func appendAnswerFloat(b []byte, f float64) []byte {
	if i := int64(f); float64(i) == f && i > -1<<53 && i < 1<<53 && (i != 0 || !math.Signbit(f)) {
		return strconv.AppendInt(b, i, 10) // an exact integer: the same digits, found without a shortest-form search
	}
	start := len(b)
	b = logfmt.AppendJSONFloat(b, f)
	if lit := b[start:]; !bytes.ContainsAny(lit, ".eE") || significantDigits(lit) <= answerDigits {
		return b
	}
	return logfmt.AppendJSONFloat(b[:start], roundAnswer(f))
}

// appendCoupon writes a coupon's members in db.Coupon's field order, as
// encoding/json writes them.
func appendCoupon(w *answerWriter, c *db.Coupon) {
	m, d := &c.Meta, &c.CouponData
	w.str("site", m.Site)
	w.id("id", m.ID)
	w.integer("revision", int64(m.Revision))
	w.instant("created_at", m.CreatedAt)
	w.str("created_by", m.CreatedBy)
	w.str("reason", m.Reason)
	w.boolean("voided", m.Voided)
	w.optID("procedure_id", d.ProcedureID)
	w.optID("qualification_record_id", d.QualificationRecordID)
	w.str("coupon_mark", d.CouponMark)
	w.str("welder_id", d.WelderID)
	w.str("power_source_id", d.PowerSourceID)
	w.str("filler_lot", d.FillerLot)
	w.day("welded_on", d.WeldedOn)
	w.str("joint_type", d.JointType)
	w.num("thickness_mm", d.ThicknessMM)
	w.integer("pass_number", int64(d.PassNumber))
	w.num("current_a", d.CurrentA)
	w.num("voltage_v", d.VoltageV)
	w.num("travel_speed_mm_s", d.TravelSpeedMMPerS)
	w.optNum("wire_feed_speed_m_min", d.WireFeedSpeedMPerMin)
	w.optNum("ctwd_mm", d.CTWDMM)
	w.optNum("wire_diameter_mm", d.WireDiameterMM)
	w.str("shielding_gas", d.ShieldingGas)
	w.optStr("polarity", d.Polarity)
	w.str("position", d.Position)
	w.optNum("preheat_c", d.PreheatC)
	w.optNum("interpass_c", d.InterpassC)
	w.str("process", c.Process)
	w.strs("inherited", c.Inherited)
}
