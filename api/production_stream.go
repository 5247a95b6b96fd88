package api

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"mime"
	"net/http"
	"runtime"
	"strconv"
	"time"

	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// A production stream (POST /v1/production-records/stream) is NDJSON or CSV
// of any length, as weld-monitoring equipment writes it. Rows are bound and
// validated as the batch endpoint's are (decodeBody, Server.check, the
// guard's checkBody), and stored in chunks: each chunk of up to `chunk` rows
// is one batch in one transaction (db.ProductionChunk), committed before the
// next is read past. The first chunk holding a bad row is stored not at all
// and ends the stream; the answer says how many records were stored and the
// line to resend from. Memory holds at most a chunk being read, one being
// written and parseWindow+1 lines (each at most maxStreamLine bytes).

const (
	streamPath = "/v1/production-records/stream"
	// defaultChunk is how many rows a chunk holds unless the request says.
	defaultChunk = 5000
	// maxStreamLine bounds one line of NDJSON or one CSV record.
	maxStreamLine = 64 << 10
	// streamPatience is how long a stream may take to deliver one chunk, and
	// the server to answer after its last: the server's read and write
	// timeouts (a whole request's) move on by it at every chunk.
	streamPatience = 60 * time.Second
)

// streamReport is the answer to a production stream, and on a refusal the
// problem's `stream` member: what was stored before it stopped.
type streamReport struct {
	Records    int `json:"records"`               // records stored
	Chunks     int `json:"chunks"`                // chunks (batches) stored
	Flagged    int `json:"flagged"`               // stored records with at least one flag
	Lines      int `json:"lines"`                 // lines read through the last stored chunk
	ChunkSize  int `json:"chunk_size"`            // rows per chunk
	ResumeLine int `json:"resume_line,omitempty"` // on a refusal: the first line not stored
}

// streamError is a refused stream with what was stored before the refusal.
type streamError struct {
	err    error
	report streamReport
}

func (e *streamError) Error() string { return e.err.Error() }
func (e *streamError) Unwrap() error { return e.err }

// streamChunk is one chunk as read: its rows and the line each starts on,
// or the issues of its bad rows, or the error that ended the reading.
type streamChunk struct {
	recs      []db.ProductionRecordData
	lines     []int
	firstLine int
	lastLine  int
	bad       *invalidError
	err       error
	prep      *db.PreparedChunk // the rows prepared for storing
}

func (s *Server) handleProductionStream(c echo.Context) error {
	size, err := queryInt(c, "chunk")
	if err != nil {
		return err
	}
	if size == 0 {
		size = defaultChunk
	}
	if size < 1 || size > db.MaxProductionChunk {
		return unprocessable(FieldIssue{"chunk", fmt.Sprintf("must be 1 to %d rows", db.MaxProductionChunk)})
	}
	src, err := streamSource(c)
	if err != nil {
		return err
	}
	ctx, cancel := context.WithCancel(c.Request().Context())
	defer cancel()
	chunks := make(chan streamChunk, 1)
	rc := http.NewResponseController(c.Response())
	// Not every connection has deadlines (HTTP/2 streams may not): then the
	// server's own timeouts hold, and nothing is lost by trying.
	patience := func() {
		_ = rc.SetReadDeadline(time.Now().Add(streamPatience))
		_ = rc.SetWriteDeadline(time.Now().Add(2 * streamPatience))
	}
	patience()
	go s.readChunks(ctx, actorOf(c), src, size, chunks, patience)
	report := streamReport{ChunkSize: size}
	for ch := range chunks {
		stop := func(err error) error {
			report.ResumeLine = ch.firstLine
			return &streamError{err: err, report: report}
		}
		switch {
		case ch.err != nil:
			return stop(ch.err)
		case ch.bad != nil:
			return stop(ch.bad)
		case ch.prep == nil:
			continue
		}
		r, err := s.store.StoreProductionChunk(ctx, ch.prep)
		if err != nil {
			return stop(err)
		}
		report.Records += r.Records
		report.Flagged += r.Flagged
		report.Chunks++
		report.Lines = ch.lastLine
	}
	if report.Records == 0 {
		return badRequest("body", "holds no production records")
	}
	return c.JSON(http.StatusOK, report)
}

// readChunks reads src into chunks of size rows, prepares each for storing
// (ids, leaves) and sends them on out, so that the next chunk is read and
// prepared while the database writes this one; it stops after a chunk with
// a bad row or a read error, or when ctx ends.
func (s *Server) readChunks(ctx context.Context, actor db.Actor, src rowSource, size int, out chan<- streamChunk, patience func()) {
	defer close(out)
	defer func() { // this goroutine is outside echo's recovery: a fault ends the stream, not the server
		if r := recover(); r != nil {
			s.log.Error("production stream reader failed", "panic", r)
			select {
			case out <- streamChunk{err: fmt.Errorf("the stream could not be read past this point")}:
			case <-ctx.Done():
			}
		}
	}()
	parsed := s.parseAhead(ctx, src)
	for {
		patience()
		ch := streamChunk{recs: make([]db.ProductionRecordData, 0, size), lines: make([]int, 0, size)}
		var issues []FieldIssue
		status := http.StatusUnprocessableEntity
		rows, done := 0, false
		for rows < size {
			var r *parsedRow
			select {
			case r = <-parsed:
			case <-ctx.Done():
				return
			}
			<-r.done
			line, err := r.line, r.readErr
			if errors.Is(err, errEndOfStream) {
				done = true
				break
			}
			if ch.firstLine == 0 {
				ch.firstLine = line
			}
			ch.lastLine = line
			var inv *invalidError
			if errors.As(err, &inv) { // this line is bad; the rest of the chunk is still read for its issues
				issues, status = lineIssues(issues, status, line, inv)
				rows++
				continue
			}
			if err != nil {
				ch.err = badRequest("line "+strconv.Itoa(line), "the stream could not be read on: "+err.Error())
				if !errors.Is(err, errTooLong) {
					ch.err = badRequest("body", "could not be read to its end")
				}
				done = true
				break
			}
			rec, err := r.rec, r.err
			if errors.As(err, &inv) {
				issues, status = lineIssues(issues, status, line, inv)
			} else if err != nil {
				ch.err = err
				done = true
				break
			} else if issues == nil {
				ch.recs = append(ch.recs, rec)
				ch.lines = append(ch.lines, line)
			}
			rows++
			if len(issues) >= maxIssues {
				break
			}
		}
		if issues != nil {
			ch.bad, done = &invalidError{status: status, issues: issues}, true
		}
		if ch.bad == nil && ch.err == nil && len(ch.recs) > 0 {
			lines := ch.lines
			var err error
			ch.prep, err = s.store.PrepareProductionChunk(ctx, actor, ch.recs, func(i int) string { return "line " + strconv.Itoa(lines[i]) })
			if err != nil {
				ch.err, done = err, true
			}
		}
		select {
		case out <- ch:
		case <-ctx.Done():
			return
		}
		if done {
			return
		}
	}
}

// parseWindow is how many rows the stream reads and parses ahead of the
// row being gathered into a chunk; parseAhead parses them on as many
// goroutines as the process has processors.
const parseWindow = 64

// parsedRow is one row of the stream as read (its line, or the read's
// error) and, once done is closed, as bound and validated (streamRow).
type parsedRow struct {
	line    int
	obj     []byte
	readErr error
	rec     db.ProductionRecordData
	err     error
	done    chan struct{}
}

// parseAhead reads src in order on one goroutine and binds and validates
// its rows on several, handing them out in the order read: the rows a
// chunk gathers, the issues it reports and where it stops are exactly
// those of reading and parsing one row at a time, but parsing uses every
// processor. At most parseWindow rows (each at most maxStreamLine bytes)
// wait; reading stops at the first error that ends the stream, or when ctx
// ends.
func (s *Server) parseAhead(ctx context.Context, src rowSource) <-chan *parsedRow {
	ordered := make(chan *parsedRow, parseWindow)
	jobs := make(chan *parsedRow, parseWindow)
	for range runtime.GOMAXPROCS(0) {
		go func() {
			for r := range jobs {
				s.parseRow(r)
			}
		}()
	}
	go func() {
		defer close(jobs)
		for {
			r := &parsedRow{done: make(chan struct{})}
			func() {
				defer func() { // outside echo's recovery: a fault ends the stream, not the server
					if p := recover(); p != nil {
						s.log.Error("production stream reader failed", "panic", p)
						r.readErr = fmt.Errorf("the stream could not be read past this point")
					}
				}()
				var obj []byte
				r.line, obj, r.readErr = src.next()
				r.obj = bytes.Clone(obj) // the source may reuse its buffer
			}()
			var inv *invalidError
			last := r.readErr != nil && !errors.As(r.readErr, &inv)
			if r.readErr != nil {
				close(r.done)
			}
			select {
			case ordered <- r:
			case <-ctx.Done():
				return
			}
			if last {
				return
			}
			if r.readErr == nil {
				select {
				case jobs <- r:
				case <-ctx.Done():
					return
				}
			}
		}
	}()
	return ordered
}

// parseRow binds and validates one row read (streamRow) and marks it done.
func (s *Server) parseRow(r *parsedRow) {
	defer close(r.done)
	defer func() {
		if p := recover(); p != nil {
			s.log.Error("production stream row failed", "panic", p)
			r.err = fmt.Errorf("the stream could not be read past this point")
		}
	}()
	r.rec, r.err = s.streamRow(r.obj)
	r.obj = nil
}

// lineIssues adds a bad line's issues, each field named after its line
// ("line 17.current_a"), and applies the status rule (any shape issue: 400).
func lineIssues(issues []FieldIssue, status, line int, inv *invalidError) ([]FieldIssue, int) {
	if inv.status == http.StatusBadRequest {
		status = http.StatusBadRequest
	}
	for _, is := range inv.issues {
		field := "line " + strconv.Itoa(line)
		if is.Field != "" && is.Field != "body" {
			field += "." + is.Field
		}
		issues = append(issues, FieldIssue{field, is.Reason})
	}
	return issues, status
}

// streamRow binds and validates one row (a JSON object) as the batch
// endpoint binds and validates each of its records: directly when the row
// reads plainly and passes (production_stream_fast.go), else by the JSON
// path (streamRowJSON), which words every fault.
func (s *Server) streamRow(obj []byte) (db.ProductionRecordData, error) {
	var d db.ProductionRecordData
	if productionRows().read(s, obj, &d) {
		return d, nil
	}
	return s.streamRowJSON(obj)
}

// streamRowJSON binds and validates one row by the JSON body's path.
func (s *Server) streamRowJSON(obj []byte) (db.ProductionRecordData, error) {
	var d db.ProductionRecordData
	if err := checkBody(obj); err != nil {
		return d, err
	}
	sent, err := decodeBody(obj, &d)
	if err == nil {
		err = s.check(d)
	}
	var inv *invalidError
	if errors.As(err, &inv) {
		sent.reword(inv.issues)
	}
	return d, err
}

// streamSource picks the reader for the request's Content-Type.
func streamSource(c echo.Context) (rowSource, error) {
	ct := c.Request().Header.Get(echo.HeaderContentType)
	mt, params, err := mime.ParseMediaType(ct)
	if err != nil {
		return nil, badRequest("Content-Type", "must be application/x-ndjson or text/csv")
	}
	if cs, ok := params["charset"]; ok && cs != "utf-8" && cs != "UTF-8" {
		return nil, badRequest("Content-Type", "the only charset taken is utf-8")
	}
	switch mt {
	case "application/x-ndjson":
		return newNDJSONSource(c.Request().Body), nil
	case "text/csv":
		return newCSVSource(c.Request().Body)
	}
	return nil, badRequest("Content-Type", "must be application/x-ndjson or text/csv")
}
