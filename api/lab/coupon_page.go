package lab

import (
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"

	"etchlog/db"
)

func init() {
	Register(Page{Pattern: "GET " + Prefix + "/coupons/{id}", Roles: Everyone, Template: "coupon.html", Handle: couponPage})
}

// couponView is the coupon page's data.
type couponView struct {
	Coupon    db.Coupon
	Procedure string // "WPS-TR-101 rev 3"
	Saved     int    // the revision just saved (0: none)
	Sections  []db.Measurement
	Flags     []string // the coupon's flags as sentences, requirement flags first
	// Prediction is set when a flag compares with a model's prediction, so
	// the page shows the safety caution.
	Prediction bool
	Facts      []fact
	Recorder   bool // may add sections, correct and void
	Forms      couponForms
	Section    []formField
	Accept     []string
}

// couponForms are the coupon page's own forms, given back with the API's
// reasons after a refusal.
type couponForms struct {
	Section, Void *Form
}

// fact is one labelled value of a record.
type fact struct{ Label, Value string }

// couponPage shows one coupon: its values, sections, flags in words, and
// (for a technician or engineer) the forms to add a section or void it.
func couponPage(rq *Request) error {
	c, err := rq.readCoupon()
	if err != nil {
		return err
	}
	return rq.showCoupon(http.StatusOK, c, couponForms{})
}

func (rq *Request) showCoupon(status int, c db.Coupon, forms couponForms) error {
	ps := newProcedures(rq.API)
	v := couponView{Coupon: c, Procedure: ps.name(c.ProcedureID), Forms: forms, Section: sectionFields,
		Recorder: slices.Contains(Recorders, rq.User.Role) && !c.Voided, Accept: enumValues("acceptance")}
	v.Saved, _ = strconv.Atoi(rq.URL.Query().Get("saved"))
	secs, err := allPages[db.Measurement](rq.API, "/v1/coupons/"+c.ID.String()+"/measurements", nil)
	if err != nil {
		return err
	}
	v.Sections = secs
	flags, err := allPages[db.Flag](rq.API, "/v1/flags", url.Values{"subject_id": {c.ID.String()}})
	if err != nil {
		return err
	}
	slices.SortStableFunc(flags, func(a, b db.Flag) int { return flagRank(a) - flagRank(b) })
	for _, f := range flags {
		v.Flags = append(v.Flags, FlagSentence(rq.Units, f, v.Procedure))
		v.Prediction = v.Prediction || strings.HasPrefix(f.Variable, "predicted_") || f.Kind == "model" && f.Variable != "heat_input_j_mm"
	}
	v.Facts = couponFacts(rq.Units, c, v.Procedure)
	if forms.Section == nil {
		v.Forms.Section = &Form{Values: url.Values{"section": {nextSection(secs)}, "inspector": {rq.User.Name}}}
	}
	if forms.Void == nil {
		v.Forms.Void = &Form{Values: url.Values{}}
	}
	title := "Coupon " + c.CouponMark
	if c.Voided {
		title += " (voided)"
	}
	return rq.Render(status, "coupon.html", title, v)
}

// flagRank puts requirement flags first, then values out of range, then
// the ones that could not be checked.
func flagRank(f db.Flag) int {
	switch f.Kind {
	case "requirement":
		return 0
	case "not_checkable":
		return 3
	case "suspect_units":
		return 1
	}
	return 2
}

// nextSection is the label after the coupon's sections: A, B, … Z, AA.
func nextSection(secs []db.Measurement) string {
	used := map[string]bool{}
	for _, s := range secs {
		used[s.Section] = true
	}
	for n := 0; ; n++ {
		if l := sectionLabel(n); !used[l] {
			return l
		}
	}
}

// sectionLabel is the n-th label counted from 0: A … Z, AA, AB …
func sectionLabel(n int) string {
	s := ""
	for n++; n > 0; n = (n - 1) / 26 {
		s = string(rune('A'+(n-1)%26)) + s
	}
	return s
}

// couponFacts lists a coupon's values in words and the chosen units.
func couponFacts(u Units, c db.Coupon, procedure string) []fact {
	inherited := func(name string) string {
		if slices.Contains(c.Inherited, name) {
			return " (from the procedure)"
		}
		return ""
	}
	text := func(s string) string {
		if s == "" {
			return "not recorded"
		}
		return s
	}
	pol := "not recorded"
	if c.Polarity != nil {
		pol = *c.Polarity
	}
	return []fact{
		{"Procedure", text(procedure)}, {"Process", c.Process}, {"Welded on", c.WeldedOn.String()},
		{"Welder", c.WelderID}, {"Joint type", c.JointType}, {"Position", c.Position},
		{"Pass number", strconv.Itoa(c.PassNumber)},
		{"Base-metal thickness", FormatQuantity(u, "thickness_mm", c.ThicknessMM)},
		{"Current", FormatQuantity(u, "current_a", c.CurrentA)},
		{"Voltage", FormatQuantity(u, "voltage_v", c.VoltageV)},
		{"Travel speed", FormatQuantity(u, "travel_speed_mm_s", c.TravelSpeedMMPerS)},
		{"Wire feed speed", FormatQuantity(u, "wire_feed_speed_m_min", c.WireFeedSpeedMPerMin)},
		{"CTWD", FormatQuantity(u, "ctwd_mm", c.CTWDMM)},
		{"Wire diameter", FormatQuantity(u, "wire_diameter_mm", c.WireDiameterMM) + inherited("wire_diameter_mm")},
		{"Polarity", pol + inherited("polarity")},
		{"Shielding gas", text(c.ShieldingGas) + inherited("shielding_gas")},
		{"Preheat", FormatQuantity(u, "preheat_c", c.PreheatC)},
		{"Interpass temperature", FormatQuantity(u, "interpass_c", c.InterpassC)},
		{"Filler lot", text(c.FillerLot)}, {"Power source", text(c.PowerSourceID)},
		{"Revision", strconv.Itoa(c.Revision) + " by " + c.CreatedBy + ", " + c.CreatedAt.UTC().Format("2006-01-02 15:04") + " UTC"},
	}
}
