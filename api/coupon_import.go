package api

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"net/http"
	"slices"
	"strconv"

	"github.com/getkin/kin-openapi/openapi3filter"
	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// An import file is CSV (RFC 4180, UTF-8, an optional byte-order mark):
// a header row of column names, then one row per section, the coupon's
// columns repeated on each of its rows (a coupon without sections takes one
// row with section left empty). The rows of one coupon follow one another.
// Column names are the API's field names, a quantity in any spelling the
// registry accepts (thickness_in, travel_speed_in_min, preheat_f...), and
// an empty cell is a field left out. Each row is read as a JSON body would
// be: the same spelling rewrite, the same validator and the same words.

// The import's body is CSV text: the handler reads it row by row and names
// every fault, so the request check only needs its media type.
func init() { openapi3filter.RegisterBodyDecoder("text/csv", openapi3filter.PlainBodyDecoder) }

// importReport is the answer of an import, dry run or commit.
type importReport struct {
	Mode       string        `json:"mode"`
	Written    bool          `json:"written"`
	Rows       int           `json:"rows"`
	Coupons    int           `json:"coupons"`
	New        int           `json:"new_coupons"`
	NewSection int           `json:"new_sections"`
	Unchanged  int           `json:"unchanged_coupons"`
	Refused    int           `json:"refused_coupons"`
	Errors     []db.RowIssue `json:"errors"`
}

// Import modes: a dry run checks and writes nothing; a commit writes.
const (
	importDryRun = "dry-run"
	importCommit = "commit"
)

func (s *Server) handleCouponImport(c echo.Context) error {
	if !isCSV(c.Request()) {
		return badRequest("Content-Type", "must be text/csv: the import takes a CSV file")
	}
	mode := c.QueryParam("mode")
	if mode == "" {
		mode = importDryRun
	}
	if mode != importDryRun && mode != importCommit {
		return unprocessable(FieldIssue{"mode", fmt.Sprintf("want %s or %s (got %q)", importDryRun, importCommit, mode)})
	}
	firstRow := 2
	if v := c.QueryParam("first_row"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil || n < 2 || n > 100_000_000 {
			return unprocessable(FieldIssue{"first_row", "want a whole number from 2 to 100000000: the file row of the body's first data row"})
		}
		firstRow = n
	}
	body, err := io.ReadAll(c.Request().Body)
	if err != nil {
		return err
	}
	rep, err := s.importCSV(c, body, firstRow, mode == importCommit)
	if err != nil {
		return err
	}
	return c.JSON(http.StatusOK, rep)
}

// importCSV reads an import file and imports (commit) or checks it.
func (s *Server) importCSV(c echo.Context, body []byte, firstRow int, commit bool) (importReport, error) {
	rep := importReport{Mode: importDryRun, Errors: []db.RowIssue{}}
	if commit {
		rep.Mode = importCommit
	}
	r := csv.NewReader(bytes.NewReader(bytes.TrimPrefix(body, []byte("\uFEFF"))))
	r.FieldsPerRecord = -1
	r.ReuseRecord = true // each row kept is cloned
	header, err := r.Read()
	if errors.Is(err, io.EOF) {
		return rep, badRequest("body", "is empty: give a header row of column names, then the rows")
	}
	if err != nil {
		return rep, badRequest("body", "the header row is not CSV: "+csvReason(err))
	}
	im, err := newImportColumns(header)
	if err != nil {
		return rep, err
	}
	// The rows are read beside the store's first round trip: the records
	// their cells name are read (and on a commit their procedures' flag
	// locks taken) while each row is checked.
	var recs []csvRow
	for row := firstRow; ; row++ {
		rec, err := r.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		recs = append(recs, csvRow{row, slices.Clone(rec), err})
	}
	rep.Rows = len(recs)
	var b *importBatch
	done := make(chan struct{})
	go func() {
		defer close(done)
		b = s.readRows(im, recs)
	}()
	res, err := s.store.ImportCouponsAhead(c.Request().Context(), actorOf(c), im.keys(recs), func() []db.ImportCoupon {
		<-done
		return b.coupons
	}, commit)
	<-done
	rep.Coupons = len(b.coupons)
	if err != nil {
		return rep, err
	}
	rep.Written = commit && res.Created > 0
	rep.New, rep.NewSection, rep.Unchanged, rep.Refused = res.Created, res.Sections, res.Unchanged, res.Refused
	rep.Errors = b.merge(res.Issues)
	return rep, nil
}
