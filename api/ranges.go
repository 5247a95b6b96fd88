package api

import (
	"fmt"
	"net/http"
	"strings"

	"github.com/labstack/echo/v4"

	"etchlog/predict"
)

// deriveIn is the request body of POST /v1/procedures/{id}/ranges.
type deriveIn struct {
	RuleSetID      string `json:"rule_set_id"`
	RuleSetVersion int    `json:"rule_set_revision"`
}

// narrowingIn tightens one variable; the variable's spelling gives the unit
// of min and max (ctwd_in: inches, heat_input_kj_in: kJ/in).
type narrowingIn struct {
	Variable string   `json:"variable"`
	Min      *float64 `json:"min"`
	Max      *float64 `json:"max"`
	Allowed  []string `json:"allowed"`
}

// narrowIn is the request body of POST /v1/procedures/{id}/ranges/narrow.
type narrowIn struct {
	BaseVersion *int          `json:"base_revision"`
	Reason      *string       `json:"reason"`
	Variables   []narrowingIn `json:"variables"`
}

// narrowings converts the request into stored units.
func (in narrowIn) narrowings() ([]predict.Narrowing, error) {
	var issues issues
	switch {
	case in.BaseVersion == nil:
		issues.missing("base_revision", "is required: the ranges revision this narrowing is based on")
	case *in.BaseVersion < 1:
		issues.refused("base_revision", fmt.Sprintf("%d is not a revision: revisions count from 1", *in.BaseVersion))
	}
	switch {
	case in.Reason == nil:
		issues.missing("reason", "is required: say why the range is narrowed")
	case strings.TrimSpace(*in.Reason) == "":
		issues.refused("reason", "is blank: say why the range is narrowed")
	}
	out := make([]predict.Narrowing, 0, len(in.Variables))
	for i, v := range in.Variables {
		sp, ok := predict.ParseVariable(v.Variable)
		if !ok {
			issues.refused(fmt.Sprintf("variables[%d].variable", i), fmt.Sprintf("unknown variable %q", v.Variable))
			continue
		}
		conv := func(p *float64) *float64 {
			if p == nil {
				return nil
			}
			x := sp.Value(*p)
			return &x
		}
		out = append(out, predict.Narrowing{Variable: sp.Variable, Min: conv(v.Min), Max: conv(v.Max), Allowed: v.Allowed})
	}
	return out, issues.err()
}

func (s *Server) handleRangesDerive(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	var in deriveIn
	if err := bind(c, &in); err != nil {
		return err
	}
	if in.RuleSetID == "" {
		return badRequest("rule_set_id", "is required: the rule set to derive the ranges under")
	}
	pr, err := s.store.DeriveRanges(c.Request().Context(), actorOf(c), id, in.RuleSetID, in.RuleSetVersion)
	if err != nil {
		return err
	}
	c.Response().Header().Set(echo.HeaderLocation, fmt.Sprintf("/v1/procedures/%s/ranges?revision=%d", id, pr.Version))
	return c.JSON(http.StatusCreated, pr)
}

func (s *Server) handleRangesGet(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	ver, err := queryInt(c, "revision")
	if err != nil {
		return err
	}
	pr, err := s.store.ProcedureRanges(c.Request().Context(), actorOf(c).Site, id, ver)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, pr)
}

func (s *Server) handleRangesNarrow(c echo.Context) error {
	id, err := pathID(c)
	if err != nil {
		return err
	}
	var in narrowIn
	if err := bind(c, &in); err != nil {
		return err
	}
	changes, err := in.narrowings()
	if err != nil {
		return err
	}
	pr, err := s.store.NarrowRanges(c.Request().Context(), actorOf(c), id, *in.BaseVersion, *in.Reason, changes)
	if err != nil {
		return listIssue(err)
	}
	c.Response().Header().Set(echo.HeaderLocation, fmt.Sprintf("/v1/procedures/%s/ranges?revision=%d", id, pr.Version))
	return c.JSON(http.StatusCreated, pr)
}
