package api

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
	"time"

	"github.com/google/uuid"

	"etchlog/db"
)

// The reference for every check here is Go's encoding/json (the standard
// library's encoder, as jsonAnswer calls it) followed by rewriteAnswer:
// the item writers must write the same bytes.

// encodedPage is a page as jsonAnswer writes it.
func encodedPage[T any](p db.Page[T], inch bool) ([]byte, error) {
	b, err := json.Marshal(pageOf(p))
	if err != nil {
		return nil, err
	}
	if b, err = rewriteAnswer(b, inch); err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

// oddStrings hold what encoding/json escapes or replaces: quotes,
// backslashes, control characters, HTML's <, > and &, U+2028 and U+2029,
// invalid UTF-8, and text beyond ASCII.
var oddStrings = []string{"", "plain", `quote " and \ backslash`, "tab\tline\nfeed\rcr\b\f\x00\x1f\x7f",
	"<script>&amp;</script>", "line\u2028para\u2029end", "bad \xff\xfe utf8 \xc3", "Schweißnaht ø 1,2 mm — 溶接 🔥",
	"'apostrophe' =1+2", "\u00e9\u0301 combining", "\"\\/\u0000"}

// oddFloats are NaN-free floats of every form encoding/json writes: integers,
// negative zero, exponent forms at both ends, more digits than an answer
// keeps, subnormals.
var oddFloats = []float64{0, math.Copysign(0, -1), 1, -1, 9.524999999999999, 0.1 + 0.2, 1.0 / 3, 2.0 / 3 * 1e-7,
	1e-6, 9.99999e-7, 1e21, 1e20, 123456789012345.6, 25.4, 0.375 * 25.4, math.SmallestNonzeroFloat64,
	math.MaxFloat64, -math.MaxFloat64, 5e-324, 1.7976931348623157e308, 1e-300, 100, 1234.5, 0.000123456789012345}

func pick[T any](r *rand.Rand, xs []T) T { return xs[r.IntN(len(xs))] }

// randomFloat is one of oddFloats or a random value over many magnitudes.
func randomFloat(r *rand.Rand) float64 {
	if r.IntN(3) == 0 {
		return pick(r, oddFloats)
	}
	return (r.Float64() - 0.3) * math.Pow(10, float64(r.IntN(40)-20))
}

func randomOptFloat(r *rand.Rand) *float64 {
	if r.IntN(3) == 0 {
		return nil
	}
	f := randomFloat(r)
	return &f
}

func randomOptString(r *rand.Rand) *string {
	if r.IntN(3) == 0 {
		return nil
	}
	s := pick(r, oddStrings)
	return &s
}

func randomOptID(r *rand.Rand) *uuid.UUID {
	if r.IntN(2) == 0 {
		return nil
	}
	id := uuid.New()
	return &id
}

// zones are UTC, the local zone the driver reads times into, and fixed
// offsets with minutes and seconds.
var zones = []*time.Location{time.UTC, time.Local, time.FixedZone("", -(9*3600 + 30*60)),
	time.FixedZone("", 23*3600+59*60+59), time.FixedZone("", 5*3600+45*60)}

func randomTime(r *rand.Rand) time.Time {
	t := time.Unix(r.Int64N(253402300799+62135596800)-62135596800, int64(r.IntN(4))*int64(r.IntN(1e9)))
	return t.In(pick(r, zones))
}

func randomCoupon(r *rand.Rand) db.Coupon {
	c := db.Coupon{Meta: db.Meta{Site: pick(r, oddStrings), ID: uuid.New(), Revision: r.IntN(1 << 20),
		CreatedAt: randomTime(r), CreatedBy: pick(r, oddStrings), Reason: pick(r, oddStrings), Voided: r.IntN(2) == 0},
		CouponData: db.CouponData{ProcedureID: randomOptID(r), QualificationRecordID: randomOptID(r),
			CouponMark: pick(r, oddStrings), WelderID: pick(r, oddStrings), PowerSourceID: pick(r, oddStrings),
			FillerLot: pick(r, oddStrings), WeldedOn: db.DateOf(randomTime(r)), JointType: pick(r, oddStrings),
			ThicknessMM: randomFloat(r), PassNumber: r.IntN(200) - 50, CurrentA: randomFloat(r), VoltageV: randomFloat(r),
			TravelSpeedMMPerS: randomFloat(r), WireFeedSpeedMPerMin: randomOptFloat(r), CTWDMM: randomOptFloat(r),
			WireDiameterMM: randomOptFloat(r), ShieldingGas: pick(r, oddStrings), Polarity: randomOptString(r),
			Position: pick(r, oddStrings), PreheatC: randomOptFloat(r), InterpassC: randomOptFloat(r)},
		Process: pick(r, oddStrings)}
	switch r.IntN(3) {
	case 0: // nil: null
	case 1:
		c.Inherited = []string{}
	default:
		c.Inherited = []string{"wire_diameter_mm", pick(r, oddStrings)}
	}
	return c
}

// checkPage compares the item writer's page with jsonAnswer's, metric and
// inch-pound. Where jsonAnswer writes no valid JSON (a conversion to
// inch-pound past the largest double leaves a member without digits), the
// item writer must refuse the page.
func checkPage[T any](t *testing.T, p db.Page[T], item itemWriter[T]) {
	t.Helper()
	for _, inch := range []bool{false, true} {
		want, werr := encodedPage(p, inch)
		got, gerr := appendPage(nil, p, item, inch)
		if werr == nil && !json.Valid(want) { // an inch-pound conversion past the largest double: no digits
			if gerr == nil {
				t.Fatalf("inch=%v: wrote %s where the rewriting wrote no valid JSON (%s); want a refusal", inch, got, want)
			}
			continue
		}
		if (werr != nil) != (gerr != nil) {
			t.Fatalf("inch=%v: error %v, encoding/json's %v", inch, gerr, werr)
		}
		if werr == nil && !bytes.Equal(got, want) {
			t.Fatalf("inch=%v:\n got %s\nwant %s", inch, got, want)
		}
	}
}

// TestListAnswerMatchesEncodingJSON writes pages of random coupons (odd
// strings, absent and present optional members, floats of every form,
// times in several zones, both unit systems) through appendCoupon and
// through encoding/json and the answer's rewriting, and wants the same bytes.
func TestListAnswerMatchesEncodingJSON(t *testing.T) {
	t.Parallel()
	r := rand.New(rand.NewPCG(1, 2))
	for range 400 {
		p := db.Page[db.Coupon]{Items: make([]db.Coupon, r.IntN(6))}
		for i := range p.Items {
			p.Items[i] = randomCoupon(r)
		}
		if r.IntN(2) == 0 {
			p.Next = pick(r, oddStrings)
		}
		checkPage(t, p, appendCoupon)
	}
	checkPage(t, db.Page[db.Coupon]{}, appendCoupon) // no items: []
}

// TestOneAnswerMatchesEncodingJSON: a created or corrected coupon's answer
// (appendOne) is the bytes jsonAnswer writes for it, metric and inch-pound.
func TestOneAnswerMatchesEncodingJSON(t *testing.T) {
	t.Parallel()
	r := rand.New(rand.NewPCG(5, 6))
	for range 400 {
		c := randomCoupon(r)
		for _, inch := range []bool{false, true} {
			want, werr := json.Marshal(c)
			if werr == nil {
				want, werr = rewriteAnswer(want, inch)
			}
			got, gerr := appendOne(nil, &c, appendCoupon, inch)
			if werr == nil && !json.Valid(want) { // an inch-pound conversion past the largest double
				if gerr == nil {
					t.Fatalf("inch=%v: wrote %s where the rewriting wrote no valid JSON; want a refusal", inch, got)
				}
				continue
			}
			if (werr != nil) != (gerr != nil) {
				t.Fatalf("inch=%v: error %v, encoding/json's %v", inch, gerr, werr)
			}
			if werr == nil && !bytes.Equal(got, append(want, '\n')) {
				t.Fatalf("inch=%v:\n got %s\nwant %s", inch, got, want)
			}
		}
	}
}

// TestListAnswerRefusesAsEncodingJSON: a value encoding/json refuses (NaN,
// an infinity, a year past 9999, a zone hour past 23) fails the page in
// both.
func TestListAnswerRefusesAsEncodingJSON(t *testing.T) {
	t.Parallel()
	r := rand.New(rand.NewPCG(3, 4))
	for name, spoil := range map[string]func(*db.Coupon){
		"NaN":       func(c *db.Coupon) { c.CurrentA = math.NaN() },
		"Inf":       func(c *db.Coupon) { f := math.Inf(-1); c.PreheatC = &f },
		"Year10000": func(c *db.Coupon) { c.CreatedAt = time.Date(10000, 1, 1, 0, 0, 0, 0, time.UTC) },
		"Zone24h":   func(c *db.Coupon) { c.CreatedAt = c.CreatedAt.In(time.FixedZone("", 24*3600)) },
	} {
		c := randomCoupon(r)
		spoil(&c)
		p := db.Page[db.Coupon]{Items: []db.Coupon{c}}
		for _, inch := range []bool{false, true} {
			_, werr := encodedPage(p, inch)
			_, gerr := appendPage(nil, p, appendCoupon, inch)
			if werr == nil || gerr == nil {
				t.Errorf("%s inch=%v: error %v, encoding/json's %v; want both", name, inch, gerr, werr)
			}
		}
	}
}

// FuzzListAnswer compares appendCoupon with encoding/json for coupons
// built from fuzzed strings, numbers and times.
func FuzzListAnswer(f *testing.F) {
	f.Add("LB-1", "<&>\u2028", 6.35, 9.524999999999999, int64(1700000000123456789), int64(-1), "")
	f.Add("\xff", "\"\\", 1e-7, 1e21, int64(0), int64(3), "next")
	f.Fuzz(func(t *testing.T, s1, s2 string, f1, f2 float64, nanos, n int64, next string) {
		if math.IsNaN(f1) || math.IsInf(f1, 0) || math.IsNaN(f2) || math.IsInf(f2, 0) {
			return // encoding/json refuses them; TestListAnswerRefusesAsEncodingJSON
		}
		at := time.Unix(0, nanos).In(zones[uint64(n)%uint64(len(zones))])
		c := db.Coupon{Meta: db.Meta{Site: s1, ID: uuid.New(), Revision: int(n), CreatedAt: at, CreatedBy: s2, Reason: s1 + s2},
			CouponData: db.CouponData{CouponMark: s2, WelderID: s1, WeldedOn: db.DateOf(at), ThicknessMM: f1, PassNumber: int(n),
				CurrentA: f2, VoltageV: f1 * f2, TravelSpeedMMPerS: f2, CTWDMM: &f1, PreheatC: &f2, Polarity: &s2},
			Process: s1, Inherited: []string{s2}}
		checkPage(t, db.Page[db.Coupon]{Items: []db.Coupon{c, c}, Next: next}, appendCoupon)
	})
}

// filled sets every field of v (a pointer to a struct), through embedded
// structs and pointers, to a value that is not its zero value, so that an
// item writer that leaves a member out differs from encoding/json.
func filled(t *testing.T, v reflect.Value) {
	t.Helper()
	switch v.Interface().(type) {
	case time.Time:
		v.Set(reflect.ValueOf(time.Date(2024, 5, 6, 7, 8, 9, 123, time.UTC)))
		return
	case db.Date:
		v.Set(reflect.ValueOf(db.DateOf(time.Date(2024, 5, 6, 0, 0, 0, 0, time.UTC))))
		return
	}
	switch v.Kind() {
	case reflect.Struct:
		for i := range v.NumField() {
			filled(t, v.Field(i))
		}
	case reflect.Pointer:
		v.Set(reflect.New(v.Type().Elem()))
		filled(t, v.Elem())
	case reflect.String:
		v.SetString("x<y")
	case reflect.Float64:
		v.SetFloat(2.5)
	case reflect.Int, reflect.Int64:
		v.SetInt(3)
	case reflect.Bool:
		v.SetBool(true)
	case reflect.Array: // a UUID
		for i := range v.Len() {
			v.Index(i).SetUint(uint64(i + 1))
		}
	case reflect.Slice:
		v.Set(reflect.MakeSlice(v.Type(), 1, 1))
		filled(t, v.Index(0))
	default:
		t.Fatalf("filled: no value for a %s", v.Type())
	}
}

// TestListAnswerWritesEveryField fills every field of each row type that
// has an item writer: a member the writer leaves out (a field added to the
// struct and not to its writer) fails here.
func TestListAnswerWritesEveryField(t *testing.T) {
	t.Parallel()
	var c db.Coupon
	filled(t, reflect.ValueOf(&c).Elem())
	checkPage(t, db.Page[db.Coupon]{Items: []db.Coupon{c}}, appendCoupon)
}
