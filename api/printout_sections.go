package api

import (
	"fmt"
	"strings"

	"etchlog/db"
	"etchlog/predict"
)

// The parts of the printed record, in the order they are printed.

// recordFacts prints what the record is: who welded what, when, and the
// bookkeeping of the printed revision.
func (s *sheet) recordFacts() {
	qr, inch := s.rec.QR, s.rec.Inch
	s.section("The record")
	rows := [][]string{
		{"Record number", qr.RecordNumber, "Welded on", qr.WeldedOn.String()},
		{"Welder", qr.WelderID, "Position", qr.Position},
		{"Filler", qr.FillerClassification, "Wire diameter", quantity("wire_diameter_mm", qr.WireDiameterMM, inch)},
		{"Shielding gas", orDash(qr.ShieldingGas), "Polarity", qr.Polarity},
		{"Transfer mode", words(qr.TransferMode), "Base metal", qr.BaseMetalGroup},
		{"Thickness", quantity("thickness_mm", qr.ThicknessMM, inch), "Required penetration", optQuantity("min_penetration_mm", qr.MinPenetrationMM, inch)},
		{"Revision written", qr.CreatedAt.UTC().Format("2006-01-02 15:04 UTC") + " by " + qr.CreatedBy, "Reason", orDash(qr.Reason)},
		{"Record id", qr.ID.String(), "Remarks", orDash(qr.Remarks)},
	}
	s.table([]float64{0.15, 0.37, 0.17, 0.31}, nil, rows, nil)
}

// printedVariables are the variables a record welds, in the order printed.
var printedVariables = []predict.Variable{predict.VarCurrent, predict.VarVoltage, predict.VarTravelSpeed,
	predict.VarWireFeedSpeed, predict.VarCTWD, predict.VarHeatInput, predict.VarWireDiameter, predict.VarThickness,
	predict.VarPreheat, predict.VarInterpass, predict.VarShieldingGas, predict.VarTransferMode, predict.VarPolarity,
	predict.VarFiller, predict.VarPosition, predict.VarBaseMetal}

// asWelded prints each variable as welded beside the qualified range of
// every current procedure that cites the record.
func (s *sheet) asWelded() {
	obs := s.rec.QR.Observation()
	s.section("As welded, beside the qualified ranges")
	if len(s.rec.Procedures) == 0 {
		s.note("No current procedure cites this record as support, so no qualified range is derived from it. The values as welded:")
	}
	head := []string{"Variable", "As welded"}
	widths := []float64{0.28, 0.18}
	for _, pp := range s.rec.Procedures {
		p := pp.Procedure
		col := fmt.Sprintf("%s rev %d", p.Code, p.Revision)
		if pp.Ranges != nil {
			col += fmt.Sprintf(", ranges rev %d", pp.Ranges.Version)
		} else {
			col += ", no ranges derived"
		}
		head = append(head, col)
	}
	for range s.rec.Procedures {
		widths = append(widths, (1-0.46)/float64(len(s.rec.Procedures)))
	}
	if len(s.rec.Procedures) == 0 {
		widths = []float64{0.4, 0.6}
	}
	var rows [][]string
	for _, v := range printedVariables {
		row := []string{variableLabel(string(v)), weldedText(&obs, v, s.rec.Inch)}
		for _, pp := range s.rec.Procedures {
			row = append(row, s.rangeText(pp.Ranges, v))
		}
		rows = append(rows, row)
	}
	s.table(widths, head, rows, nil)
	for _, pp := range s.rec.Procedures {
		if r := pp.Ranges; r != nil {
			s.note(fmt.Sprintf("%s: ranges rev %d (%s, rule set %s rev %d) written %s by %s%s.", pp.Procedure.Code, r.Version, r.Action,
				r.RuleSetID, r.RuleSetVersion, r.CreatedAt.UTC().Format("2006-01-02"), r.CreatedBy, staleNote(r)))
		}
	}
}

// weldedText is one variable as the record welded it.
func weldedText(o *predict.Observation, v predict.Variable, inch bool) string {
	if t, ok := o.Text(v); ok && t != "" { // a number variable has no text
		return t
	}
	if _, number := predict.LookupQuantity(string(v)); !number {
		return "not recorded"
	}
	if x, ok := o.Number(v); ok {
		return quantity(string(v), x, inch)
	}
	return "not recorded"
}

// rangeText is a procedure's qualified range of one variable, in words.
func (s *sheet) rangeText(r *db.ProcedureRanges, v predict.Variable) string {
	if r == nil {
		return "—"
	}
	vr, ok := r.Ranges.Lookup(v)
	switch {
	case !ok:
		return "not ruled"
	case vr.Unavailable != "":
		return "none: " + vr.Unavailable
	case len(vr.Allowed) > 0:
		return strings.Join(vr.Allowed, ", ")
	}
	var bands []string
	for _, b := range vr.Bands {
		bands = append(bands, bandText(string(v), b, s.rec.Inch))
	}
	if len(bands) == 0 {
		return "any"
	}
	return strings.Join(bands, "; ")
}

func staleNote(r *db.ProcedureRanges) string {
	switch {
	case r.Stale != "":
		return "; no longer follows its evidence: " + r.Stale
	case r.DerivedFromOlderRevision:
		return fmt.Sprintf("; derived from procedure rev %d, which is not the current one", r.ProcedureRevision)
	}
	return ""
}

// testResults prints the record's own test results.
func (s *sheet) testResults() {
	qr := s.rec.QR
	s.section("Test results")
	rows := [][]string{
		{"Visual examination", words(qr.VisualResult)},
		{"Bend test", words(qr.BendResult)},
		{"Tensile test", words(qr.TensileResult) + tensile(qr.TensileStrengthMPa)},
		{"Macro-etch", words(qr.MacroResult)},
		{"Outcome", words(qr.Outcome)},
	}
	s.table([]float64{0.3, 0.7}, []string{"Test", "Result"}, rows, nil)
}

func tensile(mpa *float64) string {
	if mpa == nil {
		return ""
	}
	return ", " + quantity("tensile_strength_mpa", *mpa, false)
}

// coupons prints every current coupon welded under the record with its sections.
func (s *sheet) coupons() {
	inch := s.rec.Inch
	s.section("Coupons and macro-etch sections")
	if len(s.rec.Coupons) == 0 {
		s.note("No current coupon names this record.")
		return
	}
	var rows [][]string
	for _, pc := range s.rec.Coupons {
		c := pc.Coupon
		params := fmt.Sprintf("%s, %s, %s", quantity("current_a", c.CurrentA, inch), quantity("voltage_v", c.VoltageV, inch),
			quantity("travel_speed_mm_s", c.TravelSpeedMMPerS, inch))
		head := []string{c.CouponMark, c.WeldedOn.String() + ", " + c.WelderID, params}
		if len(pc.Sections) == 0 {
			rows = append(rows, append(head, "no section", "", "", ""))
		}
		for i, m := range pc.Sections {
			if i > 0 {
				head = []string{"", "", ""}
			}
			rows = append(rows, append(head, m.Section, quantity("penetration_mm", m.PenetrationMM, inch),
				quantity("bead_width_mm", m.BeadWidthMM, inch), words(m.Acceptance)+" ("+m.Inspector+")"))
		}
	}
	s.table([]float64{0.14, 0.16, 0.22, 0.08, 0.13, 0.12, 0.15},
		[]string{"Coupon", "Welded", "Current, voltage, travel", "Section", "Penetration", "Bead width", "Acceptance"}, rows, nil)
}

// signOffs prints every sign-off of the record, of any revision, one
// block each, so statements and hashes read whole.
func (s *sheet) signOffs() {
	s.section("Sign-offs")
	if len(s.rec.SignOffs) == 0 {
		s.note("No revision of this record is signed off.")
		return
	}
	p := s.pdf
	for _, so := range s.rec.SignOffs {
		p.SetFont("Helvetica", "B", bodyPt)
		p.MultiCell(s.width, lineMM, s.tr(fmt.Sprintf("Revision %d, signed by %s (%s) on %s", so.RecordRevision, so.SignedBy,
			so.SignerRole, so.SignedAt.UTC().Format("2006-01-02 15:04 UTC"))), "", "L", false)
		s.note("Statement: " + so.Statement)
		p.SetFont("Helvetica", "", bodyPt)
		p.CellFormat(52, lineMM, s.tr("Log hash of the signed revision:"), "", 0, "L", false, 0, "")
		p.SetFont("Courier", "", 8)
		p.CellFormat(s.width-52, lineMM, b64(so.SignedHash), "", 1, "L", false, 0, "")
		p.Ln(1.5)
	}
}

// checkpoint prints the log checkpoint and this revision's inclusion proof.
func (s *sheet) checkpoint() {
	s.section("Log checkpoint")
	pr := s.rec.Proof
	if pr == nil {
		s.note("This revision had not reached the signed log when the record was printed; print it again in a moment to carry a checkpoint.")
		return
	}
	s.note(fmt.Sprintf("Printed against the site's log of %d leaves. Revision %d of this record is leaf %d; the hashes below lead "+
		"from its leaf hash to the root hash (RFC 9162, section 2.1.3). To check this paper later: ask the service for "+
		"GET /v1/log/consistency?from=%d, which proves the log today still begins with this one, and for "+
		"GET /v1/log/inclusion?entity=qualification_record&entity_id=%s&revision=%d, whose leaf hash must match.",
		pr.Checkpoint.Size, pr.Revision, pr.Index, pr.Checkpoint.Size, pr.EntityID, pr.Revision))
	rows := [][]string{
		{"Log size", fmt.Sprintf("%d", pr.Checkpoint.Size)},
		{"Root hash", b64(pr.Checkpoint.Root)},
		{"Leaf index", fmt.Sprintf("%d", pr.Index)},
		{"Leaf hash", b64(pr.LeafHash)},
	}
	for i, h := range pr.Hashes {
		rows = append(rows, []string{fmt.Sprintf("Proof hash %d", i+1), b64(h)})
	}
	s.table([]float64{0.22, 0.78}, []string{"", "base64, as the API writes it"}, rows, map[int]bool{1: true})
	s.note("The signed checkpoint, as GET /v1/log/checkpoint gives it:")
	s.pdf.SetFont("Courier", "", 8)
	s.pdf.MultiCell(s.width, 3.8, s.tr(strings.TrimRight(pr.Checkpoint.Note, "\n")), "1", "L", false)
}

func orDash(s string) string {
	if strings.TrimSpace(s) == "" {
		return "—"
	}
	return s
}
