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
// encoding/json. Call Flush at the end.
type ExportWriter struct {
	w    *bufio.Writer
	line []byte
}

// jsonAppender is a record that appends its own JSON encoding.
type jsonAppender interface{ AppendJSON([]byte) []byte }

// NewExportWriter returns an ExportWriter on w with a 64 KiB buffer.
func NewExportWriter(w io.Writer) *ExportWriter {
	return &ExportWriter{w: bufio.NewWriterSize(w, 64<<10), line: make([]byte, 0, 4096)}
}

// Line writes one line; it has the signature of Store.Export's emit.
func (e *ExportWriter) Line(kind string, v any) error {
	b := append(e.line[:0], `{"kind":`...)
	b = logfmt.AppendJSONString(b, kind)
	b = append(b, `,"record":`...)
	if a, ok := v.(jsonAppender); ok {
		b = a.AppendJSON(b)
	} else {
		j, err := json.Marshal(v)
		if err != nil {
			return err
		}
		b = append(b, j...)
	}
	b = append(b, '}', '\n')
	e.line = b
	_, err := e.w.Write(b)
	return err
}

// Flush writes what is buffered.
func (e *ExportWriter) Flush() error { return e.w.Flush() }
