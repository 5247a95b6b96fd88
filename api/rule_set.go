package api

import (
	"errors"
	"fmt"
	"net/http"

	"github.com/labstack/echo/v4"

	"etchlog/db"
	"etchlog/predict"
)

// ruleIn is one rule as a request gives it: the variable may use an
// alternate spelling (preheat_f, ctwd_in...), and then below, above and
// tolerance are differences in that unit (25 °F of difference = 13.9 °C).
type ruleIn struct {
	Variable  string              `json:"variable"`
	Kind      predict.RuleKind    `json:"kind"`
	BelowPct  *float64            `json:"below_pct"`
	AbovePct  *float64            `json:"above_pct"`
	Below     *float64            `json:"below"`
	Above     *float64            `json:"above"`
	MinFactor *float64            `json:"min_factor"`
	MaxFactor *float64            `json:"max_factor"`
	Tolerance *float64            `json:"tolerance"`
	Positions map[string][]string `json:"positions"`
	Note      string              `json:"note"`
}

// ruleSetIn is the request body of POST /v1/rule-sets.
type ruleSetIn struct {
	ID         string   `json:"id"`
	Name       string   `json:"name"`
	Process    string   `json:"process"`
	Notes      string   `json:"notes"`
	FromMemory bool     `json:"from_memory"`
	Rules      []ruleIn `json:"rules"`
}

// data converts the rules into stored units.
func (in ruleSetIn) data() (db.RuleSetData, error) {
	d := db.RuleSetData{RuleSetID: in.ID, Name: in.Name, Process: in.Process, Notes: in.Notes, FromMemory: in.FromMemory}
	for i, r := range in.Rules {
		sp, ok := predict.ParseVariable(r.Variable)
		if !ok {
			return d, unprocessable(FieldIssue{fmt.Sprintf("rules[%d].variable", i), fmt.Sprintf("unknown variable %q", r.Variable)})
		}
		conv := func(p *float64) *float64 {
			if p == nil {
				return nil
			}
			v := sp.Delta(*p)
			return &v
		}
		d.Rules = append(d.Rules, predict.Rule{Variable: sp.Variable, Kind: r.Kind, BelowPct: r.BelowPct, AbovePct: r.AbovePct,
			Below: conv(r.Below), Above: conv(r.Above), MinFactor: r.MinFactor, MaxFactor: r.MaxFactor,
			Tolerance: conv(r.Tolerance), Positions: r.Positions, Note: r.Note})
	}
	return d, nil
}

// listIssue turns predict's refusal of one list entry into a 422 naming it
// (rules[3].kind, variables[0].max); other errors pass through.
func listIssue(err error) error {
	var le *predict.ListError
	if errors.As(err, &le) {
		return unprocessable(FieldIssue{le.Path(), le.Reason})
	}
	return err
}

func (s *Server) handleRuleSetCreate(c echo.Context) error {
	var in ruleSetIn
	if err := bind(c, &in); err != nil {
		return err
	}
	d, err := in.data()
	if err != nil {
		return err
	}
	if err := s.check(d); err != nil {
		return err
	}
	rs, err := s.store.CreateRuleSet(c.Request().Context(), actorOf(c), d)
	if err != nil {
		return listIssue(err)
	}
	c.Response().Header().Set(echo.HeaderLocation, fmt.Sprintf("/v1/rule-sets/%s?revision=%d", rs.RuleSetID, rs.Version))
	return c.JSON(http.StatusCreated, rs)
}

func (s *Server) handleRuleSetList(c echo.Context) error {
	sets, err := s.store.RuleSets(c.Request().Context(), actorOf(c).Site)
	if err != nil {
		return err
	}
	return answerAll(s, c, "rule-sets", sets)
}

func (s *Server) handleRuleSetGet(c echo.Context) error {
	ver, err := queryInt(c, "revision")
	if err != nil {
		return err
	}
	rs, err := s.store.RuleSet(c.Request().Context(), actorOf(c).Site, c.Param("rule_set_id"), ver)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, rs)
}
