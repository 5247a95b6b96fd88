package lab

import (
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"etchlog/api/lab/chart"
	"etchlog/db"
	"etchlog/predict"
)

func init() {
	Register(Page{Pattern: "GET " + Prefix + "/procedures/{id}/window", Roles: Everyone, Template: "window.html", Handle: windowPage})
}

// windowAnswer is the part of POST /v1/parameter-window the page shows.
type windowAnswer struct {
	Feasible      bool     `json:"feasible"`
	BindingLimits []string `json:"binding_limits"`
	Nominal       *struct {
		CurrentA          float64  `json:"current_a"`
		VoltageV          float64  `json:"voltage_v"`
		TravelSpeedMMPerS float64  `json:"travel_speed_mm_s"`
		PenetrationMM     *float64 `json:"penetration_mm"`
		HeatInputJMM      *float64 `json:"heat_input_j_mm"`
		ArcEnergyJMM      float64  `json:"arc_energy_j_mm"`
	} `json:"nominal"`
	Infeasible *struct {
		Message string `json:"message"`
	} `json:"infeasible"`
	FeasibleCells int `json:"feasible_cells"`
	Cells         []struct {
		VoltageV          float64 `json:"voltage_v"`
		TravelSpeedMMPerS float64 `json:"travel_speed_mm_s"`
		Feasible          bool    `json:"feasible"`
		CurrentA          struct {
			Min      float64 `json:"min"`
			Max      float64 `json:"max"`
			MinLimit string  `json:"min_limit"`
			MaxLimit string  `json:"max_limit"`
		} `json:"current_a"`
	} `json:"cells"`
	PenetrationSource        string            `json:"penetration_source"`
	PenetrationModel         string            `json:"penetration_model"`
	PenetrationCalibrationID string            `json:"penetration_calibration_id"`
	Basis                    string            `json:"basis"`
	LimitsFrom               map[string]string `json:"limits_from"`
	Unchecked                []string          `json:"unchecked_limits"`
	Notes                    []string          `json:"notes"`
	Caution                  string            `json:"caution"`
}

// limitWords is one limit named in the page's words.
type limitWords struct{ Code, Words string }

// windowView is what window.html shows.
type windowView struct {
	Proc       db.Procedure
	Form       *Form
	JointTypes []string
	Answer     *windowAnswer
	Figure     *figure
	Binding    []string
	Key        []limitWords
	From       []limitWords
}

// windowPage asks the API for the procedure's parameter window with the
// joint type (for the calibration group) and optional heat input limit
// given in the form (a read: the form is sent with GET) and draws the grid.
func windowPage(rq *Request) error {
	id := rq.PathValue("id")
	v := windowView{JointTypes: mustEnum("joint_type").Values}
	if err := rq.API.Get("/v1/procedures/"+url.PathEscape(id), &v.Proc); err != nil {
		return err
	}
	q := rq.URL.Query()
	v.Form = &Form{Values: q}
	if q.Get("joint_type") == "" {
		q.Set("joint_type", "fillet")
	}
	heatField := FieldName(rq.Units, "max_heat_input_j_mm")
	in := map[string]any{"procedure_id": id, "joint_type": q.Get("joint_type")}
	if b := q.Get("basis"); b != "" {
		in["basis"] = b
	}
	if h := strings.TrimSpace(q.Get(heatField)); h != "" {
		x, err := strconv.ParseFloat(h, 64)
		if err != nil {
			v.Form.Problem = &Problem{Status: http.StatusUnprocessableEntity, Title: "Not a number",
				Fields: map[string]string{heatField: fmt.Sprintf("%q is not a number", h)}, Order: []string{heatField}}
			return rq.Render(http.StatusUnprocessableEntity, "window.html", "Parameter window of "+v.Proc.Code, v)
		}
		in[heatField] = x
	}
	if k := strings.TrimSpace(q.Get("jackson_k")); k != "" {
		x, err := strconv.ParseFloat(k, 64)
		if err != nil {
			v.Form.Problem = &Problem{Status: http.StatusUnprocessableEntity, Title: "Not a number",
				Fields: map[string]string{"jackson_k": fmt.Sprintf("%q is not a number", k)}, Order: []string{"jackson_k"}}
			return rq.Render(http.StatusUnprocessableEntity, "window.html", "Parameter window of "+v.Proc.Code, v)
		}
		in["jackson_k"] = map[string]any{"value": x, "units": q.Get("jackson_k_units")}
	}
	var ans windowAnswer
	if err := rq.API.Post("/v1/parameter-window", in, &ans); err != nil {
		p, refused := err.(*Problem)
		if !refused {
			return err
		}
		v.Form.Problem = p
		return rq.Render(p.Status, "window.html", "Parameter window of "+v.Proc.Code, v)
	}
	v.Answer = &ans
	if err := v.draw(rq.Units); err != nil {
		return err
	}
	return rq.Render(http.StatusOK, "window.html", "Parameter window of "+v.Proc.Code, v)
}

// draw makes the grid chart and words the binding limits and sources.
func (v *windowView) draw(u Units) error {
	a := v.Answer
	speed, speedUnit := display(u, "travel_speed_mm_s")
	var cells []chart.WindowCell
	seen := map[string]bool{}
	for _, c := range a.Cells {
		cells = append(cells, chart.WindowCell{X: c.VoltageV, Y: speed(c.TravelSpeedMMPerS), Feasible: c.Feasible,
			LowA: c.CurrentA.Min, HighA: c.CurrentA.Max, LowLimit: c.CurrentA.MinLimit, HighLimit: c.CurrentA.MaxLimit})
		for _, l := range []string{c.CurrentA.MinLimit, c.CurrentA.MaxLimit} {
			if lc, ok := chart.LimitCodes[l]; ok && !seen[l] {
				seen[l] = true
				v.Key = append(v.Key, limitWords{lc.Code, lc.Words})
			}
		}
	}
	var nominal *chart.WindowNominal
	if a.Nominal != nil {
		nominal = &chart.WindowNominal{X: a.Nominal.VoltageV, Y: speed(a.Nominal.TravelSpeedMMPerS), CurrentA: a.Nominal.CurrentA}
	}
	title := "Feasible current span over voltage and travel speed"
	svg, err := chart.Window(title, "voltage, V", "travel speed, "+speedUnit, cells, nominal)
	if err != nil {
		return err
	}
	v.Figure = &figure{ID: "window-grid", Heading: title, SVG: template.HTML(svg),
		Caption: "Each cell is one voltage and travel speed: its text gives the width of the current range that meets every limit there " +
			"and the limits that set its lower and upper end (key below); a cell reading none has no such current."}
	for _, l := range a.BindingLimits {
		v.Binding = append(v.Binding, chart.LimitCodes[l].Words)
	}
	for k, from := range a.LimitsFrom {
		v.From = append(v.From, limitWords{VariableLabel(k), from})
	}
	sortWords(v.From)
	return nil
}

// sortWords orders limits by their names, so the page reads the same each time.
func sortWords(ws []limitWords) {
	for i := 1; i < len(ws); i++ {
		for j := i; j > 0 && ws[j].Code < ws[j-1].Code; j-- {
			ws[j], ws[j-1] = ws[j-1], ws[j]
		}
	}
}

// mustEnum is the registry's enumerated word name.
func mustEnum(name string) predict.Enum {
	e, ok := predict.LookupEnum(name)
	if !ok {
		panic("lab: no registered enum " + name)
	}
	return e
}
