package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"os"
	"slices"
	"strings"
	"sync"
	"time"
)

// importUsage is the usage of "etchlog import" without a known subcommand.
const importUsage = `usage: etchlog import coupons [flags] FILE.csv

Checks a CSV file of coupons with their sections against a running etchlog
(a dry run: nothing is written) or, with -commit, imports it.
Run "etchlog import coupons -h" for the flags and the file's columns.`

// cmdImport sends a coupon file to a running server's POST
// /v1/coupons/import, in parts cut between coupons so each fits the
// server's body limit, and prints every refused row. A dry run is the
// default; -commit writes, each part in its own transaction, with a
// progress bar on stderr.
func cmdImport(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	if len(args) > 0 && slices.Contains([]string{"-h", "-help", "--help", "help"}, args[0]) {
		fmt.Fprintln(stdout, importUsage)
		return nil
	}
	if len(args) == 0 || args[0] != "coupons" {
		fmt.Fprintln(stderr, importUsage)
		return fmt.Errorf("import: want \"import coupons FILE.csv\"")
	}
	fs := newFlagSet("import coupons", "import coupons [flags] FILE.csv",
		"Checks FILE.csv (a dry run: nothing is written) or, with -commit, imports it into a running etchlog.\n"+
			"One row per section, the coupon's columns repeated on each of its rows; columns are the API's\n"+
			"field names, quantities in any accepted spelling (thickness_in, preheat_f...). See README, \"Importing coupons\".")
	target := fs.String("url", "http://127.0.0.1:8080", "base URL of the running etchlog")
	token := fs.String("token", getenv("ETCHLOG_TOKEN"), "technician or engineer token (default $ETCHLOG_TOKEN)")
	commit := fs.Bool("commit", false, "write the coupons that pass (default: a dry run, nothing written)")
	partSize := fs.Int("part-size", 256<<10, "size of the parts sent, in bytes, cut between coupons (at most the server's -body-limit)")
	if err := parseFlags(fs, args[1:], stdout, stderr); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return fmt.Errorf("import coupons: want one FILE.csv, got %d arguments", fs.NArg())
	}
	if *token == "" {
		return fmt.Errorf("import coupons: give -token or set ETCHLOG_TOKEN (a technician's or engineer's token)")
	}
	data, err := os.ReadFile(fs.Arg(0))
	if err != nil {
		return fmt.Errorf("import coupons: %w", err)
	}
	parts, err := importParts(data, *partSize)
	if err != nil {
		return fmt.Errorf("import coupons: %w", err)
	}
	mode := "dry-run"
	if *commit {
		mode = "commit"
	}
	cl := &http.Client{Timeout: 5 * time.Minute}
	var total importTally
	bar := progress{w: stderr, total: parts.rows, what: map[bool]string{true: "importing", false: "checking"}[*commit]}
	inFlight := importInFlight
	if parts.shared {
		inFlight = 1 // a coupon's rows lie in two parts: the parts go one at a time, in file order
	}
	sender := sendParts(inFlight, parts.list, func(p importPart) (importReport, error) {
		return postImport(ctx, cl, *target, *token, mode, p)
	})
	defer sender.stop()
	for i, p := range parts.list {
		a := sender.answer(i)
		if a.err != nil {
			// The parts sent after it are answered before the command
			// ends, and said to be written when they were.
			var after []string
			for j := i + 1; j < sender.stop(); j++ {
				if b := <-sender.answers[j]; b.err == nil {
					total.add(b.rep)
					after = append(after, fmt.Sprintf("rows %d–%d", parts.list[j].firstRow, parts.list[j].firstRow+parts.list[j].rows-1))
				}
			}
			bar.finish()
			err := fmt.Errorf("import coupons: rows %d–%d: %w", p.firstRow, p.firstRow+p.rows-1, a.err)
			if len(after) > 0 && *commit {
				err = fmt.Errorf("%w (already sent, %s went in; importing the file again writes only what is still missing)", err, strings.Join(after, ", "))
			}
			return err
		}
		total.add(a.rep)
		bar.advance(p.rows)
	}
	bar.finish()
	return total.print(stdout, *commit)
}

// importInFlight is how many parts the command keeps unread: while the
// database writes one part, the server reads and checks the next. At
// 100,000 rows that took the import from 0.59x of a raw COPY to 0.66-0.87x
// (README, "Importing coupons"). Two parts in flight never share a coupon
// mark (importPartList.shared), so each part finds the file's earlier
// coupons as it would one after the other; another writer's mark taken
// meanwhile is refused as before.
const importInFlight = 2

// partAnswer is the server's answer to one part.
type partAnswer struct {
	rep importReport
	err error
}

// partSender posts a file's parts in file order, at most n unread at a
// time: a part is sent only once the answer n parts before it was read
// without an error, so after a refused part at most n-1 later ones have
// been sent.
type partSender struct {
	answers     []chan partAnswer
	slots, halt chan struct{}
	done        chan int
	once        sync.Once
	sent        int
}

// sendParts starts sending parts with post, at most n unread at a time.
func sendParts(n int, parts []importPart, post func(importPart) (importReport, error)) *partSender {
	s := &partSender{answers: make([]chan partAnswer, len(parts)), slots: make(chan struct{}, n),
		halt: make(chan struct{}), done: make(chan int, 1)}
	for i := range s.answers {
		s.answers[i] = make(chan partAnswer, 1)
	}
	go func() {
		sent := 0
		defer func() { s.done <- sent }()
		for i, p := range parts {
			select {
			case s.slots <- struct{}{}:
			case <-s.halt:
				return
			}
			select {
			case <-s.halt:
				return
			default:
			}
			sent++
			go func() {
				rep, err := post(p)
				s.answers[i] <- partAnswer{rep, err}
			}()
		}
	}()
	return s
}

// answer waits for part i's answer, read in file order; an answer without
// an error lets the next part go.
func (s *partSender) answer(i int) partAnswer {
	a := <-s.answers[i]
	if a.err == nil {
		<-s.slots
	}
	return a
}

// stop ends the sending and returns how many parts were sent; no part is
// sent after it.
func (s *partSender) stop() int {
	s.once.Do(func() { close(s.halt); s.sent = <-s.done })
	return s.sent
}

// importPart is a slice of the file sent as one request: the header and
// whole coupons' rows.
type importPart struct {
	body     []byte
	firstRow int // file row of its first data row (the header is row 1)
	rows     int
}

// importPartList is a file cut into parts; shared is set when a coupon
// mark has rows in more than one part.
type importPartList struct {
	list   []importPart
	rows   int
	shared bool
}

// importParts cuts a file into parts of at most limit bytes (a coupon
// larger than that is a part of its own), only where the coupon mark
// changes, so no coupon is split between two transactions. Rows the reader
// cannot parse stay with their neighbours: the server names them.
func importParts(data []byte, limit int) (importPartList, error) {
	data = bytes.TrimPrefix(data, []byte("\uFEFF"))
	r := csv.NewReader(bytes.NewReader(data))
	r.FieldsPerRecord = -1
	header, err := r.Read()
	if err != nil {
		// The server words what is wrong with the header.
		return importPartList{list: []importPart{{body: data, firstRow: 2}}}, nil
	}
	head := data[:r.InputOffset()]
	mark := slices.Index(header, "coupon_mark")
	var out importPartList
	start, startRow, rows := r.InputOffset(), 2, 0
	prevMark := ""
	partOf := map[string]int{} // each mark's part
	for row := 2; ; row++ {
		before := r.InputOffset()
		rec, err := r.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		m := prevMark
		if err == nil && mark >= 0 && mark < len(rec) {
			m = rec[mark]
		}
		if rows > 0 && m != prevMark && int(r.InputOffset()-start)+len(head) > limit {
			out.list = append(out.list, importPart{body: join(head, data[start:before]), firstRow: startRow, rows: rows})
			start, startRow, rows = before, row, 0
		}
		prevMark = m
		if k, seen := partOf[m]; seen && k != len(out.list) {
			out.shared = true
		}
		partOf[m] = len(out.list)
		rows++
		out.rows++
	}
	if rows > 0 {
		out.list = append(out.list, importPart{body: join(head, data[start:]), firstRow: startRow, rows: rows})
	}
	if len(out.list) == 0 {
		return out, fmt.Errorf("the file has a header and no rows")
	}
	return out, nil
}

// join returns a new slice holding a then b.
func join(a, b []byte) []byte { return append(append(make([]byte, 0, len(a)+len(b)), a...), b...) }

// importReport is the server's answer to one part.
type importReport struct {
	Rows      int `json:"rows"`
	Coupons   int `json:"coupons"`
	New       int `json:"new_coupons"`
	Sections  int `json:"new_sections"`
	Unchanged int `json:"unchanged_coupons"`
	Refused   int `json:"refused_coupons"`
	Errors    []struct {
		Row    int    `json:"row"`
		Column string `json:"column"`
		Reason string `json:"reason"`
	} `json:"errors"`
}

// postImport sends one part and decodes the report; any other answer is an
// error carrying the server's problem text.
func postImport(ctx context.Context, cl *http.Client, base, token, mode string, p importPart) (importReport, error) {
	url := fmt.Sprintf("%s/v1/coupons/import?mode=%s&first_row=%d", strings.TrimRight(base, "/"), mode, p.firstRow)
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, url, bytes.NewReader(p.body))
	if err != nil {
		return importReport{}, err
	}
	req.Header.Set("Content-Type", "text/csv")
	req.Header.Set("Authorization", "Bearer "+token)
	res, err := cl.Do(req)
	if err != nil {
		return importReport{}, err
	}
	defer res.Body.Close()
	body, err := io.ReadAll(res.Body)
	if err != nil {
		return importReport{}, err
	}
	if res.StatusCode != http.StatusOK {
		return importReport{}, fmt.Errorf("the server answered %s: %s", res.Status, bytes.TrimSpace(body))
	}
	var rep importReport
	if err := json.Unmarshal(body, &rep); err != nil {
		return importReport{}, fmt.Errorf("the server's report: %w", err)
	}
	return rep, nil
}

// importTally adds up the parts' reports.
type importTally struct {
	importReport
	lines []string
}

func (t *importTally) add(r importReport) {
	t.Rows += r.Rows
	t.Coupons += r.Coupons
	t.New += r.New
	t.Sections += r.Sections
	t.Unchanged += r.Unchanged
	t.Refused += r.Refused
	for _, e := range r.Errors {
		col := e.Column
		if col == "" {
			col = "(whole row)"
		}
		t.lines = append(t.lines, fmt.Sprintf("row %d, %s: %s", e.Row, col, e.Reason))
	}
}

// print writes the report; refused rows make the command fail, so a script
// notices them.
func (t *importTally) print(w io.Writer, commit bool) error {
	verb := "dry run (nothing written)"
	if commit {
		verb = "imported"
	}
	fmt.Fprintf(w, "%s: %d rows, %d coupons: %d new with %d sections, %d unchanged, %d refused\n",
		verb, t.Rows, t.Coupons, t.New, t.Sections, t.Unchanged, t.Refused)
	for _, l := range t.lines {
		fmt.Fprintln(w, l)
	}
	if !commit && t.New > 0 {
		fmt.Fprintf(w, "run again with -commit to write the %d new coupons\n", t.New)
	}
	if len(t.lines) > 0 {
		return fmt.Errorf("import coupons: %d refused values in %d coupons", len(t.lines), t.Refused)
	}
	return nil
}

// progress draws a text progress bar of rows done.
type progress struct {
	w           io.Writer
	total, done int
	what        string
}

func (p *progress) advance(n int) {
	p.done += n
	const width = 30
	fill := width * p.done / max(p.total, 1)
	fmt.Fprintf(p.w, "\r%s [%s%s] %d/%d rows", p.what, strings.Repeat("#", fill), strings.Repeat(".", width-fill), p.done, p.total)
}

// finish ends the bar's line.
func (p *progress) finish() {
	if p.done > 0 {
		fmt.Fprintln(p.w)
	}
}
