package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"etchlog/db/dbtest"
	"etchlog/openapi/spectest"
)

// TestREADME runs the README's API tour verbatim against "etchlog demo" on a
// fresh database: every ```sh block that calls curl, in order, in one bash
// session (so variables carry over), with only the demo's address
// localhost:8080 replaced by the test server's. Every curl must answer 2xx,
// and every ```json block must match the answer of the last curl before it:
// each key it shows has the same value (numbers exactly), arrays show some of
// the answer's items in order, and the string "…" stands for any value.
// Every answer is also checked against openapi.yaml.
// It needs bash, curl and jq, as a reader of the README does.
func TestREADME(t *testing.T) {
	t.Parallel()
	for _, tool := range []string{"bash", "curl", "jq"} {
		if _, err := exec.LookPath(tool); err != nil {
			if os.Getenv("CI") != "" {
				t.Fatalf("%s is not installed (CI is set: bash .ci/setup installs it)", tool)
			}
			t.Skipf("%s is not installed: the README tour needs bash, curl and jq", tool)
		}
	}
	readme, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	blocks := fencedBlocks(string(readme))
	var script strings.Builder
	var curls []int         // README line of each curl call in the script
	var shows []shownAnswer // json blocks and the curl they answer
	for _, b := range blocks {
		switch {
		case b.lang == "sh" && len(curlLines(b.text)) > 0:
			fmt.Fprintf(&script, "# README.md line %d\n%s\n", b.line, b.text)
			for _, l := range curlLines(b.text) {
				curls = append(curls, b.line+1+l)
			}
		case b.lang == "json":
			if len(curls) == 0 {
				t.Fatalf("README.md line %d: a json block before any curl call: it must show an answer", b.line)
			}
			shows = append(shows, shownAnswer{line: b.line, text: b.text, call: len(curls) - 1})
		}
	}
	if len(curls) == 0 {
		t.Fatal("README.md has no ```sh block calling curl")
	}

	ctx, cancel := context.WithCancel(context.Background())
	r := start(t, ctx, dbtest.EmptyDatabase(t), "demo", "-addr", "127.0.0.1:0")
	defer func() {
		cancel()
		if err := r.stop(t); err != nil {
			t.Errorf("demo after cancellation = %v", err)
		}
	}()
	addr := strings.TrimPrefix(r.base, "http://")
	body := strings.NewReplacer("localhost:8080", addr, "127.0.0.1:8080", addr).Replace(script.String())

	// curl is wrapped so that each call leaves its method and URL, its
	// answer's headers and its body in a directory, named by the time it
	// started (calls run one by one); the output is unchanged.
	logDir := t.TempDir()
	prelude := `set -euo pipefail
trap 'echo "README command failed (exit $?): $BASH_COMMAND" >&2' ERR
curl() {
  local f
  f="$ETCHLOG_README_LOG/$(date +%s%N)"
  command curl --dump-header "$f.head" --write-out '%{stderr}%{method} %{url_effective}\n' "$@" 2>"$f.req" | tee "$f.body"
}
`
	cmd := exec.CommandContext(ctx, "bash", "-c", prelude+body)
	cmd.Dir = t.TempDir() // the tour writes site.ndjson
	cmd.Env = append(os.Environ(), "ETCHLOG_README_LOG="+logDir)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	done := make(chan error, 1)
	go func() { done <- cmd.Run() }()
	select {
	case err = <-done:
	case <-time.After(2 * time.Minute):
		t.Fatalf("the README tour did not finish within 2 minutes\nstderr:\n%s", &stderr)
	}
	if err != nil {
		t.Fatalf("the README tour failed: %v\nstderr:\n%s\nstdout (last 2000 bytes):\n%s", err, &stderr, tail(stdout.String(), 2000))
	}

	calls := loggedCalls(t, logDir)
	if len(calls) != len(curls) {
		t.Fatalf("the tour made %d curl calls, the README's text has %d (loops or conditionals are not allowed)", len(calls), len(curls))
	}
	for i, c := range calls {
		if c.status < 200 || c.status > 299 {
			t.Errorf("README.md line %d: curl answered %d, want 2xx:\n%s", curls[i], c.status, tail(string(c.body), 600))
		}
		if err := spectest.Default.Check(c.req, c.status, c.header, c.body); err != nil {
			t.Errorf("README.md line %d: %v", curls[i], err)
		}
	}
	for _, s := range shows {
		var want, got any
		if err := json.Unmarshal([]byte(s.text), &want); err != nil {
			t.Errorf("README.md line %d: the json block does not parse: %v", s.line, err)
			continue
		}
		if err := json.Unmarshal(calls[s.call].body, &got); err != nil {
			t.Errorf("README.md line %d: the answer it shows (the curl on line %d) is not JSON: %v", s.line, curls[s.call], err)
			continue
		}
		if diff := shownIn(want, got, "$"); diff != "" {
			t.Errorf("README.md line %d shows what the curl on line %d did not answer: %s\nanswer: %s", s.line, curls[s.call], diff, tail(string(calls[s.call].body), 1500))
		}
	}
}

// block is one fenced code block of a Markdown file.
type block struct {
	lang, text string
	line       int // of the opening fence, from 1
}

// fencedBlocks returns the ``` blocks of a Markdown text in order.
func fencedBlocks(md string) []block {
	var out []block
	var cur *block
	var body []string
	for i, line := range strings.Split(md, "\n") {
		trimmed := strings.TrimSpace(line)
		switch {
		case cur == nil && strings.HasPrefix(trimmed, "```"):
			cur = &block{lang: strings.TrimSpace(strings.TrimPrefix(trimmed, "```")), line: i + 1}
			body = nil
		case cur != nil && trimmed == "```":
			cur.text = strings.Join(body, "\n")
			out = append(out, *cur)
			cur = nil
		case cur != nil:
			body = append(body, line)
		}
	}
	return out
}

// curlWord is curl in command position: at the start, or after a space,
// "(", "|", ";" or "&".
var curlWord = regexp.MustCompile(`(^|[\s(|;&])curl\s`)

// curlLines returns the line (from 0) of each curl call in a shell text,
// ignoring comments and quoted text.
func curlLines(sh string) []int {
	code := shellCode(sh)
	var lines []int
	for _, m := range curlWord.FindAllStringIndex(code, -1) {
		at := m[0] + strings.Index(code[m[0]:m[1]], "curl")
		lines = append(lines, strings.Count(code[:at], "\n"))
	}
	return lines
}

// shellCode returns sh with comments removed and quoted text blanked, so
// words inside request bodies or comments are not taken for commands.
func shellCode(sh string) string {
	var b strings.Builder
	var quote rune // 0, '\'' or '"'
	comment := false
	prev := '\n'
	for _, c := range sh {
		switch {
		case comment:
			if c == '\n' {
				comment = false
				b.WriteRune(c)
			}
		case quote != 0:
			if c == quote {
				quote = 0
			}
			if c == '\n' {
				b.WriteRune(c)
			} else {
				b.WriteRune(' ')
			}
		case c == '\'' || c == '"':
			quote = c
			b.WriteRune(' ')
		case c == '#' && (prev == ' ' || prev == '\t' || prev == '\n'):
			comment = true
		default:
			b.WriteRune(c)
		}
		prev = c
	}
	return b.String()
}

// shownAnswer is a json block and the index of the curl call it answers.
type shownAnswer struct {
	line int
	text string
	call int
}

// loggedCall is one curl call of the tour: the request's method and URL,
// and the answer's final status, headers and body.
type loggedCall struct {
	req    *http.Request
	status int
	header http.Header
	body   []byte
}

// loggedCalls reads the wrapper's log, in the order the calls started.
func loggedCalls(t *testing.T, dir string) []loggedCall {
	t.Helper()
	heads, _ := filepath.Glob(filepath.Join(dir, "*.head"))
	sort.Slice(heads, func(i, j int) bool {
		a, _ := strconv.ParseInt(strings.TrimSuffix(filepath.Base(heads[i]), ".head"), 10, 64)
		b, _ := strconv.ParseInt(strings.TrimSuffix(filepath.Base(heads[j]), ".head"), 10, 64)
		return a < b
	})
	var out []loggedCall
	for _, h := range heads {
		base := strings.TrimSuffix(h, ".head")
		head, err := os.ReadFile(h)
		if err != nil {
			t.Fatal(err)
		}
		body, err := os.ReadFile(base + ".body")
		if err != nil {
			t.Fatal(err)
		}
		what, err := os.ReadFile(base + ".req") // "METHOD URL", or curl's complaint
		if err != nil {
			t.Fatal(err)
		}
		method, target, _ := strings.Cut(strings.TrimSpace(string(what)), " ")
		req, err := http.NewRequest(method, target, nil)
		if err != nil {
			t.Fatalf("curl call %s: %q: %v", filepath.Base(base), what, err)
		}
		// The last header block is the final answer (after any 100 Continue).
		blocks := strings.Split(strings.TrimSpace(strings.ReplaceAll(string(head), "\r\n", "\n")), "\n\n")
		last := blocks[len(blocks)-1] + "\n\n"
		res, err := http.ReadResponse(bufio.NewReader(strings.NewReader(strings.ReplaceAll(last, "\n", "\r\n"))), req)
		if err != nil {
			t.Fatalf("curl call %s: headers %q: %v", filepath.Base(base), head, err)
		}
		res.Body.Close()
		out = append(out, loggedCall{req: req, status: res.StatusCode, header: res.Header, body: body})
	}
	return out
}

// shownIn reports how want (a README json block) is not shown in got (the
// answer), or "" when it is: objects by the keys want has, arrays as an
// in-order selection of got's items, "…" as any value, numbers exactly.
func shownIn(want, got any, path string) string {
	if want == "…" {
		return ""
	}
	switch w := want.(type) {
	case map[string]any:
		g, ok := got.(map[string]any)
		if !ok {
			return fmt.Sprintf("%s: an object in the README, %s in the answer", path, kind(got))
		}
		keys := make([]string, 0, len(w))
		for k := range w {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			gv, ok := g[k]
			if !ok {
				return fmt.Sprintf("%s.%s: in the README, not in the answer", path, k)
			}
			if d := shownIn(w[k], gv, path+"."+k); d != "" {
				return d
			}
		}
		return ""
	case []any:
		g, ok := got.([]any)
		if !ok {
			return fmt.Sprintf("%s: an array in the README, %s in the answer", path, kind(got))
		}
		j := 0
		for i, wv := range w {
			first := ""
			for ; j < len(g); j++ {
				d := shownIn(wv, g[j], fmt.Sprintf("%s[%d]", path, j))
				if d == "" {
					break
				}
				if first == "" {
					first = d
				}
			}
			if j == len(g) {
				if first == "" {
					first = "no item left in the answer"
				}
				return fmt.Sprintf("%s: README item %d matches no later item of the answer (first mismatch: %s)", path, i, first)
			}
			j++
		}
		return ""
	default:
		if want != got {
			return fmt.Sprintf("%s = %v in the answer, %v in the README", path, jsonText(got), jsonText(want))
		}
		return ""
	}
}

func kind(v any) string {
	switch v.(type) {
	case map[string]any:
		return "an object"
	case []any:
		return "an array"
	}
	return jsonText(v)
}

func jsonText(v any) string {
	b, _ := json.Marshal(v)
	return string(b)
}

// tail returns the last n bytes of s.
func tail(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return "…" + s[len(s)-n:]
}

// TestREADMEHelpers checks the README tour's parsing and matching on small
// cases made up for the purpose.
func TestREADMEHelpers(t *testing.T) {
	t.Parallel()
	sh := "A='x curl y' # curl in a comment\ncurl -s a | jq .\nP=$(curl -s b)\necho '\ncurl inside quotes\n'; curl c"
	if got, want := curlLines(sh), []int{1, 2, 5}; !slices.Equal(got, want) {
		t.Errorf("curlLines = %v, want %v", got, want)
	}
	answer := map[string]any{"id": "u1", "n": 5.582137161084529, "items": []any{
		map[string]any{"k": "a", "v": 1.0}, map[string]any{"k": "b", "v": 2.0}, map[string]any{"k": "c", "v": 3.0}}}
	for _, c := range []struct {
		readme string
		ok     bool
	}{
		{`{"id": "…", "n": 5.582137161084529}`, true},
		{`{"n": 5.58}`, false}, // numbers exactly, not rounded
		{`{"id": "u2"}`, false},
		{`{"missing": 1}`, false},
		{`{"items": [{"k": "a"}, {"k": "c", "v": 3}]}`, true}, // some items, in order
		{`{"items": [{"k": "c"}, {"k": "a"}]}`, false},        // out of order
		{`{"items": [{"k": "a"}, {"k": "a"}]}`, false},        // one answer item shown twice
		{`{"items": {"k": "a"}}`, false},
	} {
		var want any
		if err := json.Unmarshal([]byte(c.readme), &want); err != nil {
			t.Fatal(err)
		}
		if d := shownIn(want, answer, "$"); (d == "") != c.ok {
			t.Errorf("shownIn(%s) = %q, want ok %v", c.readme, d, c.ok)
		}
	}
}
