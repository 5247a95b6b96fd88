package chart

import (
	"encoding/xml"
	"io"
	"regexp"
	"strings"
	"testing"
)

// element is what the tests read back from a chart: every SVG element with
// its attributes and the text directly inside it.
type element struct {
	name  string
	attrs map[string]string
	text  string
	inA   string // the href of the enclosing link, if any
}

// parseSVG reads the chart back with encoding/xml: it must be well-formed
// XML on its own (it is placed inline in pages).
func parseSVG(t *testing.T, svg []byte) []element {
	t.Helper()
	d := xml.NewDecoder(strings.NewReader(string(svg)))
	var out []element
	var stack []int
	var links []string
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("chart is not well-formed XML: %v\n%s", err, svg)
		}
		switch tk := tok.(type) {
		case xml.StartElement:
			e := element{name: tk.Name.Local, attrs: map[string]string{}}
			for _, a := range tk.Attr {
				e.attrs[a.Name.Local] = a.Value
			}
			if len(links) > 0 {
				e.inA = links[len(links)-1]
			}
			if e.name == "a" {
				links = append(links, e.attrs["href"])
			}
			out = append(out, e)
			stack = append(stack, len(out)-1)
		case xml.EndElement:
			if tk.Name.Local == "a" {
				links = links[:len(links)-1]
			}
			stack = stack[:len(stack)-1]
		case xml.CharData:
			if len(stack) > 0 {
				out[stack[len(stack)-1]].text += string(tk)
			}
		}
	}
	if len(out) == 0 || out[0].name != "svg" {
		t.Fatalf("chart does not start with <svg>")
	}
	return out
}

// byClass returns the elements whose class list holds class.
func byClass(els []element, class string) []element {
	var out []element
	for _, e := range els {
		for _, c := range strings.Fields(e.attrs["class"]) {
			if c == class {
				out = append(out, e)
			}
		}
	}
	return out
}

// texts returns the text of every <text> element.
func texts(els []element) []string {
	var out []string
	for _, e := range els {
		if e.name == "text" {
			out = append(out, strings.TrimSpace(e.text))
		}
	}
	return out
}

// fetching matches anything that would make a browser fetch: a URL
// scheme other than the two XML namespace declarations, a CSS url(),
// @import or @font-face, or an embedded or linked image.
var fetching = regexp.MustCompile(`(?i)(https?:|//[a-z]|url\(|@import|@font-face|<image|<script|<foreignObject)`)

// selfContained fails when the chart would fetch anything.
func selfContained(t *testing.T, svg []byte) {
	t.Helper()
	s := strings.NewReplacer(`xmlns="http://www.w3.org/2000/svg"`, "", `xmlns:xlink="http://www.w3.org/1999/xlink"`, "").Replace(string(svg))
	if m := fetching.FindString(s); m != "" {
		t.Errorf("chart is not self-contained: found %q", m)
	}
	if strings.Contains(s, "<?xml") {
		t.Errorf("chart keeps its XML prolog, which may not appear inline in HTML")
	}
}
