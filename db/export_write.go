package db

import (
	"bufio"
	"encoding/json"
	"io"

	"etchlog/db/logfmt"
)

// ExportWriter writes the lines of an export as newline-delimited JSON,
// {"kind": ..., "record": ...} per line, byte for byte as encoding/json
// would, through a buffer. A record that can append its own JSON (a leaf:
// logfmt.ExportLeaf.AppendJSON) skips reflection; the others go through
// encoding/json. Store.ExportTo writes the lines it can write itself (coupon
// records, leaves) straight into its line buffer. Call Flush at the end.
type ExportWriter struct {
	w      *bufio.Writer
	line   []byte
	onLine func()
}

// jsonAppender is a record that appends its own JSON encoding.
type jsonAppender interface{ AppendJSON([]byte) []byte }

// NewExportWriter returns an ExportWriter on w with a 64 KiB buffer.
func NewExportWriter(w io.Writer) *ExportWriter {
	return &ExportWriter{w: bufio.NewWriterSize(w, 64<<10), line: make([]byte, 0, 4096)}
}

// OnLine makes f run before each line is written (the endpoint moves its
// write deadline there).
func (e *ExportWriter) OnLine(f func()) { e.onLine = f }

// Line writes one line; it has the signature of Store.Export's emit.
func (e *ExportWriter) Line(kind string, v any) error {
	b := e.begin(kind)
	if a, ok := v.(jsonAppender); ok {
		b = a.AppendJSON(b)
	} else {
		j, err := json.Marshal(v)
		if err != nil {
			e.drop(b)
			return err
		}
		b = append(b, j...)
	}
	return e.end(b)
}

// begin starts a line of kind in the line buffer; the record is appended
// to what it returns, then end writes the line (or drop forgets it).
func (e *ExportWriter) begin(kind string) []byte {
	b := append(e.line[:0], `{"kind":`...)
	b = logfmt.AppendJSONString(b, kind)
	return append(b, `,"record":`...)
}

// end closes and writes a line begun with begin.
func (e *ExportWriter) end(b []byte) error {
	b = append(b, '}', '\n')
	e.line = b[:0]
	if e.onLine != nil {
		e.onLine()
	}
	_, err := e.w.Write(b)
	return err
}

// drop forgets a line begun with begin, keeping its buffer.
func (e *ExportWriter) drop(b []byte) { e.line = b[:0] }

// Flush writes what is buffered.
func (e *ExportWriter) Flush() error { return e.w.Flush() }
