package api

import (
	"bytes"
	"encoding/json"
)

// cleanBody reports whether checkBody's walk would find nothing to refuse
// in body, valid UTF-8, reading it byte by byte instead of token by token
// (no allocation per token; most bodies are like this). It answers true
// only when it is sure: a body over multiErrorBodyLimit (large bodies are
// walked token by token as before: passed at once, eight parallel 1 MiB
// bodies reached the OpenAPI check's decode together and the heap grew
// 104-137 MiB against 68-96 MiB, past TestHostileBodiesMemory's bound),
// a body that is not valid JSON, nests deeper than
// maxDepth, holds an escape sequence in a string, a field name with a dot
// or bracket (which the walk's path would cut differently), an object of
// more than cleanKeys fields, or any text the walk refuses answers false,
// and checkBody walks it to name the faults.
func cleanBody(body []byte) bool {
	if len(body) > multiErrorBodyLimit || !json.Valid(body) {
		return false
	}
	s := cleanScan{b: body}
	s.space()
	return s.value("")
}

// cleanKeys is the most fields of one object cleanBody compares pairwise
// for repeats; a larger object goes to the walk.
const cleanKeys = 64

// cleanScan reads a body json.Valid accepted; its methods answer false at
// the first doubt.
type cleanScan struct {
	b     []byte
	i     int
	depth int
}

func (s *cleanScan) space() { s.i = skipSpace(s.b, s.i) }

// value reads one value whose field name (the walk's last path element) is
// name, and the white space after it.
func (s *cleanScan) value(name string) bool {
	switch s.b[s.i] {
	case '{', '[':
		if s.depth++; s.depth > maxDepth {
			return false
		}
		open := s.b[s.i]
		s.i++
		s.space()
		ok := false
		if open == '{' {
			ok = s.object()
		} else {
			ok = s.array()
		}
		if !ok {
			return false
		}
		s.depth--
	case '"':
		v, ok := s.text()
		if !ok || textRefusal(name, string(v)) != "" {
			return false
		}
	default: // a number, true, false or null: up to the next delimiter
		for s.i < len(s.b) && !jsonDelimiter(s.b[s.i]) {
			s.i++
		}
	}
	s.space()
	return true
}

func jsonDelimiter(c byte) bool {
	switch c {
	case ',', ']', '}', ' ', '\t', '\n', '\r':
		return true
	}
	return false
}

// object reads the members after '{' and the closing '}'.
func (s *cleanScan) object() bool {
	var kept [32][]byte // a coupon's fields fit: no allocation for the list
	keys := kept[:0]
	for s.b[s.i] != '}' {
		k, ok := s.text()
		if !ok || len(keys) == cleanKeys || bytes.ContainsAny(k, ".[]") || hasControl(string(k), false) {
			return false
		}
		for _, seen := range keys {
			if bytes.Equal(seen, k) {
				return false
			}
		}
		keys = append(keys, k)
		s.space()
		s.i++ // ':'
		s.space()
		if !s.value(string(k)) {
			return false
		}
		if s.b[s.i] == ',' {
			s.i++
			s.space()
		}
	}
	s.i++
	return true
}

// array reads the elements after '[' and the closing ']'.
func (s *cleanScan) array() bool {
	for s.b[s.i] != ']' {
		if !s.value("") {
			return false
		}
		if s.b[s.i] == ',' {
			s.i++
			s.space()
		}
	}
	s.i++
	return true
}

// text reads a string at s.i and returns its bytes between the quotes,
// which are the string itself when it holds no escape (ok false otherwise).
func (s *cleanScan) text() ([]byte, bool) {
	start := s.i + 1
	end := bytes.IndexByte(s.b[start:], '"')
	if end < 0 {
		return nil, false
	}
	v := s.b[start : start+end]
	s.i = start + end + 1
	return v, bytes.IndexByte(v, '\\') < 0
}
