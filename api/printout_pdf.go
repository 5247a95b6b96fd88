package api

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"strings"

	"github.com/go-pdf/fpdf"
)

// The printed record is A4, portrait, in the PDF core fonts (Helvetica for
// text, Courier for hashes), so it needs no font files. Text is written in
// Windows-1252, which holds every character the record uses (°, ², ·, –).

const (
	pageMarginMM = 15.0
	lineMM       = 4.6 // height of one line of 9 pt text
	bodyPt       = 9.0
)

// sheet draws the printed record on one fpdf document.
type sheet struct {
	pdf   *fpdf.Fpdf
	tr    func(string) string // UTF-8 → Windows-1252
	width float64             // printable width
	rec   printedRecord
}

// renderRecordPDF lays the record out and returns the PDF bytes.
func renderRecordPDF(rec printedRecord) ([]byte, error) {
	pdf := fpdf.New("P", "mm", "A4", "")
	pdf.SetMargins(pageMarginMM, pageMarginMM+6, pageMarginMM)
	pdf.SetAutoPageBreak(true, pageMarginMM+6)
	pdf.SetCreationDate(rec.Printed)
	pdf.SetModificationDate(rec.Printed)
	s := &sheet{pdf: pdf, tr: pdf.UnicodeTranslatorFromDescriptor(""), rec: rec}
	w, _ := pdf.GetPageSize()
	s.width = w - 2*pageMarginMM
	pdf.SetTitle("Qualification record "+rec.QR.RecordNumber, true)
	pdf.SetAuthor("etchlog, site "+rec.QR.Site, true)
	pdf.AliasNbPages("{pages}")
	pdf.SetHeaderFunc(s.header)
	pdf.SetFooterFunc(s.footer)
	pdf.AddPage()

	s.title()
	s.caution()
	s.recordFacts()
	s.asWelded()
	s.testResults()
	s.coupons()
	s.signOffs()
	s.checkpoint()

	var out bytes.Buffer
	if err := pdf.Output(&out); err != nil {
		return nil, fmt.Errorf("api: print record %s: %w", rec.QR.ID, err)
	}
	return out.Bytes(), nil
}

// header runs at the top of every page: site, record and revision, and when printed.
func (s *sheet) header() {
	p := s.pdf
	p.SetY(pageMarginMM - 4)
	p.SetFont("Helvetica", "", 7.5)
	p.SetTextColor(70, 70, 70)
	left := fmt.Sprintf("etchlog · site %s · qualification record %s, revision %d", s.rec.QR.Site, s.rec.QR.RecordNumber, s.rec.QR.Revision)
	p.CellFormat(s.width*0.65, 4, s.tr(left), "", 0, "L", false, 0, "")
	p.CellFormat(s.width*0.35, 4, s.tr("printed "+s.rec.Printed.Format("2006-01-02 15:04 UTC")+" by "+s.rec.PrintedBy), "", 1, "R", false, 0, "")
	p.SetDrawColor(150, 150, 150)
	p.Line(pageMarginMM, p.GetY()+0.5, pageMarginMM+s.width, p.GetY()+0.5)
	p.SetTextColor(0, 0, 0)
	p.SetY(pageMarginMM + 6)
}

// footer runs at the bottom of every page: the page count and the checkpoint.
func (s *sheet) footer() {
	p := s.pdf
	_, h := p.GetPageSize()
	p.SetY(h - pageMarginMM)
	p.SetFont("Helvetica", "", 7.5)
	p.SetTextColor(70, 70, 70)
	cp := "printed before this revision reached the log"
	if pr := s.rec.Proof; pr != nil {
		cp = fmt.Sprintf("log checkpoint: size %d, root %s", pr.Checkpoint.Size, b64(pr.Checkpoint.Root))
	}
	p.CellFormat(s.width*0.8, 4, s.tr(cp), "", 0, "L", false, 0, "")
	p.CellFormat(s.width*0.2, 4, fmt.Sprintf("page %d of {pages}", p.PageNo()), "", 0, "R", false, 0, "")
	p.SetTextColor(0, 0, 0)
}

func (s *sheet) title() {
	p, qr := s.pdf, s.rec.QR
	p.SetFont("Helvetica", "B", 16)
	p.CellFormat(s.width, 8, s.tr("Procedure qualification record "+qr.RecordNumber), "", 1, "L", false, 0, "")
	p.SetFont("Helvetica", "", 10)
	state := fmt.Sprintf("Revision %d of %d", qr.Revision, s.rec.Revisions)
	switch {
	case qr.Voided:
		state += " · VOIDED: " + qr.Reason
	case qr.Revision < s.rec.Revisions:
		state += " · a later revision exists; this is not the current record"
	}
	units := "metric units"
	if s.rec.Inch {
		units = "inch-pound units (stored metric, converted exactly)"
	}
	p.CellFormat(s.width, 5.5, s.tr(fmt.Sprintf("%s · %s · outcome: %s · %s", state, qr.Process, words(qr.Outcome), units)), "", 1, "L", false, 0, "")
	p.Ln(2)
}

// caution prints the safety caution in a ruled box.
func (s *sheet) caution() {
	p := s.pdf
	p.SetFont("Helvetica", "B", bodyPt)
	p.SetFillColor(245, 245, 245)
	text := "Caution: " + printCaution
	p.MultiCell(s.width, lineMM, s.tr(text), "1", "L", true)
	p.Ln(3)
}

// printCaution is the caution every printed record carries.
const printCaution = "This printout is a copy of stored records for review. Ranges, flags and any figure derived " +
	"by the software are estimates and do not qualify a procedure; qualification follows the governing welding code. " +
	"Defer to local codes, the code of record and licensed or certified engineering and inspection practice."

// section starts a titled part of the record, with a bar in the margin.
func (s *sheet) section(title string) {
	p := s.pdf
	_, h := p.GetPageSize()
	if p.GetY() > h-pageMarginMM-30 { // keep a title with its first lines
		p.AddPage()
	}
	p.Ln(2)
	y := p.GetY()
	p.SetFillColor(60, 60, 60)
	p.Rect(pageMarginMM, y+0.8, 1.4, 4.6, "F")
	p.SetX(pageMarginMM + 3)
	p.SetFont("Helvetica", "B", 11.5)
	p.CellFormat(s.width-3, 6, s.tr(title), "", 1, "L", false, 0, "")
	p.Ln(1)
	p.SetFont("Helvetica", "", bodyPt)
}

// note writes one paragraph of body text.
func (s *sheet) note(text string) {
	s.pdf.SetFont("Helvetica", "", bodyPt)
	s.pdf.MultiCell(s.width, lineMM, s.tr(text), "", "L", false)
}

// table writes a table with a shaded header row, wrapping cells and
// repeating the header after a page break (nil head: no header row).
// widths are fractions of the width; mono marks the columns in Courier.
func (s *sheet) table(widths []float64, head []string, rows [][]string, mono map[int]bool) {
	p := s.pdf
	_, h := p.GetPageSize()
	var draw func(cells []string, bold, shade bool)
	draw = func(cells []string, bold, shade bool) {
		style := ""
		if bold {
			style = "B"
		}
		lines := 1
		split := make([][][]byte, len(cells))
		for i, c := range cells {
			s.cellFont(style, mono[i] && !bold)
			split[i] = p.SplitLines([]byte(s.tr(c)), widths[i]*s.width)
			lines = max(lines, len(split[i]))
		}
		rowH := float64(lines)*lineMM + 1
		if p.GetY()+rowH > h-pageMarginMM-6 {
			p.AddPage()
			if !bold && head != nil {
				draw(head, true, true)
			}
		}
		x, y := pageMarginMM, p.GetY()
		for i := range cells {
			w := widths[i] * s.width
			s.cellFont(style, mono[i] && !bold)
			if shade {
				p.SetFillColor(230, 230, 230)
				p.Rect(x, y, w, rowH, "F")
			}
			for j, ln := range split[i] {
				p.SetXY(x, y+0.5+float64(j)*lineMM)
				p.CellFormat(w, lineMM, string(ln), "", 0, "L", false, 0, "")
			}
			x += w
		}
		p.SetDrawColor(190, 190, 190)
		p.Line(pageMarginMM, y+rowH, pageMarginMM+s.width, y+rowH)
		p.SetXY(pageMarginMM, y+rowH)
	}
	if head != nil {
		draw(head, true, true)
	}
	for _, r := range rows {
		draw(r, false, false)
	}
	p.SetFont("Helvetica", "", bodyPt)
	p.Ln(2)
}

// cellFont picks the table font: Courier for ids and hashes.
func (s *sheet) cellFont(style string, mono bool) {
	if mono {
		s.pdf.SetFont("Courier", style, 8)
		return
	}
	s.pdf.SetFont("Helvetica", style, bodyPt)
}

// b64 writes a hash as the API does (standard base64).
func b64(b []byte) string { return base64.StdEncoding.EncodeToString(b) }

// words turns an enumerated word into plain words (not_tested → not tested).
func words(s string) string {
	if s == "" {
		return "—"
	}
	return strings.ReplaceAll(s, "_", " ")
}
