package api

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"reflect"
	"strconv"
	"unicode/utf8"

	"etchlog/db"
	"etchlog/predict"
)

// rowSource yields a stream's rows one at a time: the line a row starts on
// and the row as a JSON object. A bad line is an *invalidError (the reading
// goes on); errEndOfStream ends it; any other error ends the stream.
type rowSource interface {
	next() (line int, obj []byte, err error)
}

// errEndOfStream is the end of a stream's rows.
var errEndOfStream = errors.New("end of stream")

// ndjsonSource reads one JSON object per line; blank lines are skipped.
type ndjsonSource struct {
	r    *bufio.Reader
	line int
}

func newNDJSONSource(r io.Reader) *ndjsonSource {
	return &ndjsonSource{r: bufio.NewReaderSize(r, maxStreamLine)}
}

func (s *ndjsonSource) next() (int, []byte, error) {
	for {
		b, err := s.r.ReadSlice('\n')
		if len(b) > 0 || err == nil {
			s.line++
		}
		switch {
		case errors.Is(err, bufio.ErrBufferFull):
			return s.line, nil, fmt.Errorf("%w: it is longer than %d bytes", errTooLong, maxStreamLine)
		case err != nil && !errors.Is(err, io.EOF):
			return s.line, nil, err
		}
		b = bytes.TrimSpace(b)
		if len(b) > 0 {
			return s.line, b, nil
		}
		if err != nil {
			return s.line, nil, errEndOfStream
		}
	}
}

// errTooLong ends a stream whose line or record exceeds maxStreamLine.
var errTooLong = errors.New("overlong row")

// csvSource reads RFC 4180 CSV with a header row naming each column as the
// JSON field it fills (any registered spelling of a quantity: current_a,
// travel_speed_in_min, ctwd_in...). An empty cell leaves its field out.
type csvSource struct {
	r      *csv.Reader
	lim    *recordLimit
	header []string
	text   []bool // columns whose field is text (ids, names, times), never a number
	line   int    // the line the last record read ended on
}

// textFields are the production record fields that are not numbers.
var textFields = func() map[string]bool {
	out := map[string]bool{}
	for _, f := range jsonFields(reflect.TypeOf(db.ProductionRecordData{})) {
		if k := f.typ.Kind(); k != reflect.Float64 && !(k == reflect.Pointer && f.typ.Elem().Kind() == reflect.Float64) {
			out[f.name] = true
		}
	}
	return out
}()

// streamColumns are the names a CSV header may give: every field of a
// production record and every registered spelling of its quantities.
var streamColumns = func() map[string]bool {
	out := map[string]bool{}
	for _, f := range jsonFields(reflect.TypeOf(db.ProductionRecordData{})) {
		out[f.name] = true
		if q, ok := predict.LookupQuantity(f.name); ok {
			for _, sp := range q.Spellings() {
				out[sp] = true
			}
		}
	}
	return out
}()

func newCSVSource(r io.Reader) (*csvSource, error) {
	lim := &recordLimit{r: r}
	cr := csv.NewReader(lim)
	cr.ReuseRecord = true
	head, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, badRequest("body", "holds no production records (a CSV stream starts with a header row)")
	}
	if err != nil {
		return nil, badRequest("line 1", "the header row does not read as CSV: "+csvReason(err))
	}
	s := &csvSource{r: cr, lim: lim, header: append([]string(nil), head...)}
	for i, h := range s.header {
		if !utf8.ValidString(h) || hasControl(h, false) {
			return nil, badRequest("line 1", fmt.Sprintf("column %d of the header is not printable UTF-8", i+1))
		}
		if !streamColumns[h] {
			return nil, badRequest("line 1."+h, "unknown column: a production record has no such field (nor spelling of one)")
		}
		s.text = append(s.text, textFields[h])
	}
	cr.FieldsPerRecord = len(s.header)
	lim.mark(cr.InputOffset())
	return s, nil
}

func (s *csvSource) next() (int, []byte, error) {
	rec, err := s.r.Read()
	s.lim.mark(s.r.InputOffset())
	var pe *csv.ParseError
	switch {
	case errors.Is(err, io.EOF):
		return s.line, nil, errEndOfStream
	case errors.Is(err, errTooLong):
		return s.line + 1, nil, err
	case errors.As(err, &pe):
		s.line = pe.Line
		return pe.StartLine, nil, badRequest("", "does not read as CSV: "+csvReason(err))
	case err != nil:
		return s.line + 1, nil, err
	}
	line, _ := s.r.FieldPos(0)
	s.line, _ = s.r.FieldPos(len(rec) - 1)
	var b bytes.Buffer
	b.WriteByte('{')
	n := 0
	for i, cell := range rec {
		if cell == "" {
			continue
		}
		if n > 0 {
			b.WriteByte(',')
		}
		n++
		name, _ := json.Marshal(s.header[i])
		b.Write(name)
		b.WriteByte(':')
		if !s.text[i] && isJSONNumber([]byte(cell)) {
			b.WriteString(cell)
			continue
		}
		v, _ := json.Marshal(cell) // invalid UTF-8 becomes U+FFFD here: refuse it first
		if !utf8.ValidString(cell) {
			return line, nil, badRequest(s.header[i], "is not valid UTF-8")
		}
		b.Write(v)
	}
	b.WriteByte('}')
	return line, b.Bytes(), nil
}

// csvReason words a CSV parse error without the reader's package wording.
func csvReason(err error) string {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return pe.Err.Error() + " (column " + strconv.Itoa(pe.Column) + ")"
	}
	return err.Error()
}

// recordLimit passes a stream through while no record grows past
// maxStreamLine bytes beyond the last record boundary marked.
type recordLimit struct {
	r        io.Reader
	read     int64
	boundary int64
}

func (l *recordLimit) mark(offset int64) { l.boundary = offset }

func (l *recordLimit) Read(p []byte) (int, error) {
	if l.read-l.boundary > maxStreamLine+4096 { // 4096: what the CSV reader buffers ahead
		return 0, fmt.Errorf("%w: a record is longer than %d bytes", errTooLong, maxStreamLine)
	}
	n, err := l.r.Read(p)
	l.read += int64(n)
	return n, err
}
