package logfmt

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
)

// Report is the outcome of verifying an export against signed checkpoints.
type Report struct {
	Site           string   `json:"site"`
	Leaves         uint64   `json:"leaves"`
	Root           []byte   `json:"root"`
	CheckpointSize uint64   `json:"checkpoint_size"`
	OlderSize      *uint64  `json:"older_checkpoint_size,omitempty"`
	OK             bool     `json:"ok"`
	Problems       []string `json:"problems"`
	Dropped        int      `json:"problems_not_listed"`
}

// VerifyExport reads an export line by line, recomputes every leaf from its
// fact and the tree root, and checks it against the checkpoint (and, when
// given, an older checkpoint the auditor kept: its root must be the root of
// the first leaves, so the log only grew since). Memory stays O(log n).
func VerifyExport(r io.Reader, vkey string, checkpoint, older []byte) (Report, error) {
	var rep Report
	site, _, err := OpenCheckpoint(checkpoint, vkey)
	if err != nil {
		return rep, err
	}
	rep.Site = site
	v := NewVerifier(site, vkey)
	if rep.CheckpointSize, err = v.Checkpoint(checkpoint, "checkpoint"); err != nil {
		return rep, err
	}
	if older != nil {
		n, err := v.Checkpoint(older, "older checkpoint")
		if err != nil {
			return rep, err
		}
		rep.OlderSize = &n
		if n > rep.CheckpointSize {
			v.Problem("the older checkpoint (size %d) is larger than the newer one (size %d)", n, rep.CheckpointSize)
		}
	}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 1<<20), 256<<20)
	var line struct {
		Kind   string          `json:"kind"`
		Record json.RawMessage `json:"record"`
	}
	headed := false
	for n := 1; sc.Scan(); n++ {
		if l, ok := leafLine(sc.Bytes()); ok && headed {
			v.Leaf(l)
			continue
		}
		line.Kind, line.Record = "", nil
		if err := json.Unmarshal(sc.Bytes(), &line); err != nil {
			return rep, fmt.Errorf("export line %d: %w", n, err)
		}
		switch line.Kind {
		case LineHeader:
			var h ExportHeader
			if err := json.Unmarshal(line.Record, &h); err != nil {
				return rep, fmt.Errorf("export line %d: %w", n, err)
			}
			if h.Site != site {
				return rep, fmt.Errorf("the export is site %q's, the checkpoint site %q's", h.Site, site)
			}
			headed = true
		case LineCheckpoint:
			var c ExportCheckpoint
			if err := json.Unmarshal(line.Record, &c); err != nil {
				return rep, fmt.Errorf("export line %d: %w", n, err)
			}
			_, _ = v.Checkpoint([]byte(c.Note), "the export's checkpoint")
		case LineLeaf:
			var l ExportLeaf
			if err := json.Unmarshal(line.Record, &l); err != nil {
				return rep, fmt.Errorf("export line %d: %w", n, err)
			}
			v.Leaf(l)
		case LineUnlogged:
			var u Unlogged
			if err := json.Unmarshal(line.Record, &u); err != nil {
				return rep, fmt.Errorf("export line %d: %w", n, err)
			}
			v.Unlogged(u)
		case LineError:
			v.Problem("the export broke off (line %d): make it again", n)
		}
	}
	if err := sc.Err(); err != nil {
		return rep, fmt.Errorf("read export: %w", err)
	}
	if !headed {
		return rep, fmt.Errorf("not an etchlog export: no header line")
	}
	rep.OK = v.Finish()
	rep.Leaves, rep.Root, rep.Problems, rep.Dropped = v.Leaves, v.Root(), v.Problems, v.Dropped
	if rep.Problems == nil {
		rep.Problems = []string{}
	}
	return rep, nil
}

// leafLinePrefix opens every leaf line as the export writes it.
const leafLinePrefix = `{"kind":"leaf","record":`

// leafLine reads a leaf line written as the export writes it: the prefix,
// one JSON value, the closing brace. Such a line is an object of exactly
// those two keys, so decoding the value alone gives what decoding the line
// gives, and the line is read once instead of twice. Any other line (a
// value that does not decode alone included) answers false and is read
// whole, which words its fault.
func leafLine(b []byte) (ExportLeaf, bool) {
	var l ExportLeaf
	if len(b) < len(leafLinePrefix)+2 || string(b[:len(leafLinePrefix)]) != leafLinePrefix || b[len(b)-1] != '}' {
		return l, false
	}
	if json.Unmarshal(b[len(leafLinePrefix):len(b)-1], &l) != nil {
		return ExportLeaf{}, false
	}
	return l, true
}
