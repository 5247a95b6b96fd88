package api_test

import (
	"errors"
	"fmt"
	"math"
	"net/http"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"etchlog/db"
	"etchlog/predict"
)

// rangeRule is one bound from a validate tag of a stored data type.
type rangeRule struct {
	field string  // JSON name
	tag   string  // gte, gt or lte
	bound float64 // the tag's parameter
	isInt bool
}

// rangeRules reads the numeric bounds (gte, gt, lte) and string lengths
// (max) from the validate tags of a stored data type; a field tagged
// "quantity" has the bounds its JSON name has in the quantity registry.
func rangeRules(data any) (bounds []rangeRule, maxLen map[string]int) {
	maxLen = map[string]int{}
	t := reflect.TypeOf(data)
	for i := range t.NumField() {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		kind := f.Type.Kind()
		if kind == reflect.Pointer {
			kind = f.Type.Elem().Kind()
		}
		for _, part := range strings.Split(f.Tag.Get("validate"), ",") {
			tag, param, ok := strings.Cut(part, "=")
			if part == "dive" {
				break // rules after dive are about list items
			}
			switch {
			case part == "quantity":
				q, found := predict.LookupQuantity(name)
				if !found {
					panic(name + ": tagged quantity but not in the registry")
				}
				lo, hi := "gte", "lte"
				if q.MinOpen {
					lo = "gt"
				}
				if q.MaxOpen {
					hi = "lt"
				}
				bounds = append(bounds, rangeRule{name, lo, q.Min, kind == reflect.Int})
				if !math.IsInf(q.Max, 1) {
					bounds = append(bounds, rangeRule{name, hi, q.Max, kind == reflect.Int})
				}
			case !ok:
			case kind == reflect.String && tag == "max":
				maxLen[name], _ = strconv.Atoi(param)
			case tag == "gte" || tag == "gt" || tag == "lte":
				v, err := strconv.ParseFloat(param, 64)
				if err != nil {
					panic(fmt.Sprintf("%s: bad %s", name, part))
				}
				bounds = append(bounds, rangeRule{name, tag, v, kind == reflect.Int})
			}
		}
	}
	return bounds, maxLen
}

// edge returns the last accepted and the first refused value at a bound. For
// real numbers they are adjacent float64 values, so the validator and the
// database's CHECK must agree to the last bit.
func (r rangeRule) edge() (inside, outside float64) {
	step := func(v, dir float64) float64 {
		if r.isInt {
			return v + dir
		}
		return math.Nextafter(v, dir*math.Inf(1))
	}
	switch r.tag {
	case "gte":
		return r.bound, step(r.bound, -1)
	case "gt":
		return step(r.bound, +1), r.bound
	case "lt":
		return step(r.bound, -1), r.bound
	default: // lte
		return r.bound, step(r.bound, +1)
	}
}

// TestRange sends every bounded number of every input schema at its bound
// (accepted, so the database CHECK agrees with the validate tag) and just
// outside it (422 naming the field). The outside value, stored through the
// Store without the API's validation, must be refused by the database too.
func TestRange(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, k := range inputKinds() {
		bounds, _ := rangeRules(k.data())
		if len(bounds) == 0 {
			t.Fatalf("%s: no bounds found in the validate tags", k.name)
		}
		for _, r := range bounds {
			inside, outside := r.edge()
			with := func(v float64) map[string]any {
				b := k.body(e)
				b[r.field] = v
				// Keep the procedure's thickness range ordered while one end moves.
				if r.field == "thickness_min_mm" {
					b["thickness_max_mm"] = 300.0
				} else if r.field == "thickness_max_mm" {
					b["thickness_min_mm"] = 0.5
				}
				return b
			}
			t.Run(fmt.Sprintf("%s/%s_%s_%v/Inside", k.name, r.field, r.tag, r.bound), func(t *testing.T) {
				if res := e.do(http.MethodPost, k.path(e), k.role, with(inside)); res.status != http.StatusCreated {
					t.Errorf("%s = %v (at %s=%v): status = %d %s, want 201", r.field, inside, r.tag, r.bound, res.status, res.body)
				}
			})
			t.Run(fmt.Sprintf("%s/%s_%s_%v/Outside", k.name, r.field, r.tag, r.bound), func(t *testing.T) {
				res := e.do(http.MethodPost, k.path(e), k.role, with(outside))
				wantProblem(t, fmt.Sprintf("%s = %v", r.field, outside), res, http.StatusUnprocessableEntity, r.field)
				if err := k.direct(e, with(outside)); !errors.Is(err, db.ErrInvalid) {
					t.Errorf("Store create with %s = %v: err = %v, want the database to refuse it (ErrInvalid)", r.field, outside, err)
				}
			})
		}
	}
}

// TestLength sends every length-limited text field at its limit (accepted)
// and one character longer (422 naming the field).
func TestLength(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	for _, k := range inputKinds() {
		_, maxLen := rangeRules(k.data())
		for field, n := range maxLen {
			text := func(n int) string { // unique, for the fields that must be
				u := uniq("L")
				return u + strings.Repeat("x", n-len(u))
			}
			t.Run(fmt.Sprintf("%s/%s_%d", k.name, field, n), func(t *testing.T) {
				b := k.body(e)
				b[field] = text(n)
				if r := e.do(http.MethodPost, k.path(e), k.role, b); r.status != http.StatusCreated {
					t.Errorf("%s of %d characters: status = %d %s, want 201", field, n, r.status, r.body)
				}
				b[field] = text(n + 1)
				r := e.do(http.MethodPost, k.path(e), k.role, b)
				wantProblem(t, fmt.Sprintf("%s of %d characters", field, n+1), r, http.StatusUnprocessableEntity, field)
			})
		}
	}
	t.Run("Procedure/positions", func(t *testing.T) {
		k := kindNamed("Procedure")
		for _, c := range []struct {
			positions []any
			status    int
			field     string
		}{
			{[]any{"12345678"}, http.StatusCreated, ""},
			{[]any{"1G", "123456789"}, http.StatusUnprocessableEntity, "positions.1"},
			{[]any{}, http.StatusUnprocessableEntity, "positions"},
		} {
			b := k.body(e)
			b["positions"] = c.positions
			r := e.do(http.MethodPost, k.path(e), k.role, b)
			if c.status == http.StatusCreated {
				if r.status != c.status {
					t.Errorf("positions %v: status = %d %s, want 201", c.positions, r.status, r.body)
				}
				continue
			}
			wantProblem(t, fmt.Sprintf("positions %v", c.positions), r, c.status, c.field)
		}
	})
}

// TestThicknessOrder refuses a procedure whose thickness range is reversed,
// naming both ends in the field and reason.
func TestThicknessOrder(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	b := procedureBody(uniq("WPS"))
	b["thickness_min_mm"], b["thickness_max_mm"] = 20.0, 10.0
	p := wantProblem(t, "thickness 20 to 10 mm", e.do(http.MethodPost, "/v1/procedures", "engineer", b), http.StatusUnprocessableEntity, "thickness_max_mm")
	if len(p.Errors) == 1 && !strings.Contains(p.Errors[0].Reason, "thickness_min_mm") {
		t.Errorf("reason %q does not name thickness_min_mm", p.Errors[0].Reason)
	}
	b["thickness_min_mm"], b["thickness_max_mm"] = 10.0, 10.0
	if r := e.do(http.MethodPost, "/v1/procedures", "engineer", b); r.status != http.StatusCreated {
		t.Errorf("thickness 10 to 10 mm: status = %d %s, want 201", r.status, r.body)
	}
}
