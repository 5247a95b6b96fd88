package api

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"log/slog"
	"net/http"
	"reflect"
	"sync/atomic"
	"time"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// Every list answers JSON pages by default. With format=csv it answers the
// whole list as one CSV file instead (RFC 4180: CRLF line ends, a header
// row, fields quoted where they hold a comma, quote or line break, UTF-8),
// read page by page from the store and written as it is read, so memory
// stays that of one page however long the list is. The file starts at
// cursor when one is given; limit is refused (the file is the whole list).
// With spreadsheet=true the file starts with the UTF-8 byte-order mark and
// text that a spreadsheet would run as a formula (a leading =, +, -, @, tab
// or carriage return) gets a leading apostrophe.

const (
	formatCSV        = "csv"
	csvWriteWait     = 30 * time.Second // how long one write may wait for the client, as for the export
	utf8ByteOrderMrk = "\ufeff"
)

// csvPageSize is how many rows are read from the store per page of a CSV
// answer (a test lowers it to cross page boundaries with few records).
var csvPageSize = func() *atomic.Int64 {
	var n atomic.Int64
	n.Store(db.MaxPageSize)
	return &n
}()

// lister reads one page of a list, starting at cursor.
type lister[T any] func(ctx context.Context, cursor string, limit int) (db.Page[T], error)

// answerList answers a list operation: one JSON page, or with format=csv
// the whole list from cursor on, under the file name name.csv.
func answerList[T any](s *Server, c echo.Context, name string, list lister[T]) error {
	limit, err := queryInt(c, "limit")
	if err != nil {
		return err
	}
	ctx := c.Request().Context()
	if c.QueryParam("format") != formatCSV {
		p, err := list(ctx, c.QueryParam("cursor"), limit)
		if err != nil {
			return err
		}
		if written, err := writePage(c, p); written {
			return err
		}
		return c.JSON(http.StatusOK, pageOf(p))
	}
	if c.QueryParams().Has("limit") {
		return badRequest("limit", "a CSV answer is the whole list from cursor on; leave limit out, or ask for JSON pages")
	}
	size := int(csvPageSize.Load())
	p, err := list(ctx, c.QueryParam("cursor"), size)
	if err != nil { // nothing is sent yet: the refusal is an ordinary problem
		return err
	}
	w, err := startCSV[T](s, c, name)
	if err != nil {
		return err
	}
	for {
		if err := writeRows(w, p.Items); err != nil {
			return w.abort(err)
		}
		if len(p.Items) < size {
			return w.end()
		}
		if p, err = list(ctx, p.Next, size); err != nil {
			return w.abort(err)
		}
	}
}

// answerAll answers a list the store reads whole (a record's revisions,
// the rule sets): JSON {items}, or with format=csv the same items as CSV.
func answerAll[T any](s *Server, c echo.Context, name string, items []T) error {
	if c.QueryParam("format") != formatCSV {
		return c.JSON(http.StatusOK, pageOf(db.Page[T]{Items: items}))
	}
	w, err := startCSV[T](s, c, name)
	if err != nil {
		return err
	}
	if err := writeRows(w, items); err != nil {
		return w.abort(err)
	}
	return w.end()
}

// csvAnswer writes one CSV answer row by row.
type csvAnswer struct {
	c        echo.Context
	log      *slog.Logger
	w        *csv.Writer
	rc       *http.ResponseController
	cols     []csvColumn
	inch     bool
	sheet    bool
	cells    []string
	extended time.Time
}

// startCSV sends the status, the headers, the byte-order mark when asked
// and the header row of items of type T.
func startCSV[T any](s *Server, c echo.Context, name string) (*csvAnswer, error) {
	units, _ := c.Get(ctxUnits).(string)
	a := &csvAnswer{c: c, log: s.log, rc: http.NewResponseController(c.Response()), inch: units == unitsInchPound,
		sheet: c.QueryParam("spreadsheet") == "true"}
	a.cols = csvColumns(reflect.TypeFor[T](), a.inch)
	res := c.Response()
	res.Header().Set(echo.HeaderContentType, "text/csv; charset=utf-8; header=present")
	res.Header().Set(echo.HeaderContentDisposition, `attachment; filename="`+name+`.csv"`)
	res.WriteHeader(http.StatusOK)
	a.extend()
	if a.sheet {
		if _, err := res.Write([]byte(utf8ByteOrderMrk)); err != nil {
			return nil, a.abort(err)
		}
	}
	a.w = csv.NewWriter(res)
	a.w.UseCRLF = true
	header := make([]string, len(a.cols))
	for i, col := range a.cols {
		header[i] = col.header
	}
	if err := a.w.Write(header); err != nil {
		return nil, a.abort(err)
	}
	return a, nil
}

// extend moves the write deadline forward while rows go out, so a long
// list completes while the client keeps reading.
func (a *csvAnswer) extend() {
	if now := time.Now(); now.Sub(a.extended) > time.Second {
		_ = a.rc.SetWriteDeadline(now.Add(csvWriteWait)) // unsupported by some test writers: the server's applies
		a.extended = now
	}
}

// writeRows writes one page of items, each read as the JSON answer writes it.
func writeRows[T any](a *csvAnswer, items []T) error {
	for _, item := range items {
		b, err := json.Marshal(item)
		if err != nil {
			return err
		}
		tree, err := answerTree(b, a.inch)
		if err != nil {
			return err
		}
		a.cells = csvCells(tree, a.cols, a.sheet, a.cells)
		if err := a.w.Write(a.cells); err != nil {
			return err
		}
	}
	a.w.Flush()
	a.extend()
	if err := a.w.Error(); err != nil {
		return err
	}
	_ = a.rc.Flush()
	return nil
}

// end flushes the last rows.
func (a *csvAnswer) end() error {
	a.w.Flush()
	return a.w.Error()
}

// abort ends an answer whose status is already sent. A client that went
// away is logged; any other failure cuts the connection without the final
// chunk, so no client takes a part of the list for the whole of it.
func (a *csvAnswer) abort(err error) error {
	ctx := a.c.Request().Context()
	if ctx.Err() != nil {
		return nil
	}
	a.log.Error("csv answer interrupted", "request_id", a.c.Response().Header().Get(echo.HeaderXRequestID), "err", err)
	panic(http.ErrAbortHandler)
}
