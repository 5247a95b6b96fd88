package api_test

import (
	"bytes"
	"encoding/base64"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/transparency-dev/merkle/proof"
	"github.com/transparency-dev/merkle/rfc6962"
)

// pdfText runs Debian's pdftotext (poppler-utils) over a PDF and returns its
// text, laid out as printed. Without the program the test skips on a
// laptop and fails in CI (.ci/setup installs it).
func pdfText(t *testing.T, pdf []byte) string {
	t.Helper()
	bin, err := exec.LookPath("pdftotext")
	if err != nil {
		if os.Getenv("CI") != "" {
			t.Fatal("pdftotext is missing: bash .ci/setup installs poppler-utils")
		}
		t.Skip("pdftotext (poppler-utils) is not installed")
	}
	path := filepath.Join(t.TempDir(), "record.pdf")
	if err := os.WriteFile(path, pdf, 0o600); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(bin, "-layout", "-enc", "UTF-8", path, "-").Output()
	if err != nil {
		t.Fatalf("pdftotext: %v", err)
	}
	return string(out)
}

// printedSite stores a PQR, a procedure citing it with derived ranges, two
// coupons naming the PQR with two sections each, and a sign-off of the PQR.
// It returns the PQR's id and the coupon marks.
func printedSite(t *testing.T, e *testEnv) (string, []string) {
	t.Helper()
	pqr := e.mustQualificationRecord()
	proc := e.create("/v1/procedures", "engineer", procedureBody(uniq("WPS"), pqr))["id"].(string)
	e.create("/v1/procedures/"+proc+"/ranges", "engineer", map[string]any{"rule_set_id": "structural-style-gmaw"})
	var marks []string
	for range 2 {
		mark := uniq("PRT")
		c := e.create("/v1/coupons", "technician", couponBody(proc, pqr, mark))["id"].(string)
		for _, sec := range []string{"A", "B"} {
			e.create("/v1/coupons/"+c+"/measurements", "technician", measurementBody(sec))
		}
		marks = append(marks, mark)
	}
	e.create("/v1/qualification-records/"+pqr+"/sign-off", "engineer",
		map[string]any{"revision": 1, "statement": "Witnessed the tests; results as recorded."})
	return pqr, marks
}

// TestPrintedRecord prints a qualification record and reads the PDF back
// with pdftotext: the record number, the coupon marks, the sign-off, the
// caution, and the log checkpoint it was printed against, which must be
// the one GET /v1/log/checkpoint signs. The leaf hash and proof hashes
// printed on the paper must lead to the printed root hash by the RFC 9162
// inclusion proof check (section 2.1.3.2), done by the transparency-dev
// merkle library, so the paper alone can be checked.
func TestPrintedRecord(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	pqr, marks := printedSite(t, e)
	e.do(http.MethodGet, "/v1/qualification-records", "auditor", nil) // waits until the writes are logged

	r := e.do(http.MethodGet, "/v1/qualification-records/"+pqr+"?format=pdf", "auditor", nil)
	if r.status != http.StatusOK || r.header.Get("Content-Type") != "application/pdf" || !bytes.HasPrefix(r.body, []byte("%PDF-")) {
		t.Fatalf("print: %d %q %.40q", r.status, r.header.Get("Content-Type"), r.body)
	}
	text := pdfText(t, r.body)
	cp := strings.Split(string(e.do(http.MethodGet, "/v1/log/checkpoint", "auditor", nil).body), "\n")
	if len(cp) < 3 {
		t.Fatalf("checkpoint note %q", cp)
	}
	size, root := cp[1], cp[2]
	number := e.do(http.MethodGet, "/v1/qualification-records/"+pqr, "auditor", nil).object(t)["record_number"].(string)
	for _, want := range append([]string{number, "Witnessed the tests; results as recorded.", "Caution",
		"governing welding code", root, "Log size " + size}, marks...) {
		if !strings.Contains(squash(text), squash(want)) {
			t.Errorf("printed record lacks %q:\n%s", want, text)
		}
	}
	// The qualified current range of the fixture PQR: 280 A ± 10 % under the
	// structural-style set (from memory, as the built-in set says).
	if !strings.Contains(text, "252–308 A") {
		t.Errorf("printed record lacks the qualified current range 252–308 A:\n%s", text)
	}
	checkPrintedProof(t, text)

	inch := pdfText(t, e.do(http.MethodGet, "/v1/qualification-records/"+pqr+"?format=pdf&units=inch-pound", "auditor", nil).body)
	// Preheat 20 °C = 20 × 9/5 + 32 = 68 °F (NIST SP 811, Appendix B.9);
	// the current keeps its unit.
	for _, want := range []string{"68 °F", "252–308 A", "in/min", "inch-pound units"} {
		if !strings.Contains(inch, want) {
			t.Errorf("inch-pound printout lacks %q:\n%s", want, inch)
		}
	}
}

// squash folds runs of white space, as a laid-out page breaks them differently.
func squash(s string) string { return strings.Join(strings.Fields(s), " ") }

// checkPrintedProof reads the log size, root, leaf index, leaf hash and
// proof hashes off the printed text and verifies the inclusion proof.
func checkPrintedProof(t *testing.T, text string) {
	t.Helper()
	field := func(label string) string {
		m := regexp.MustCompile(`(?m)^\s*` + label + `\s+(\S+)\s*$`).FindStringSubmatch(text)
		if m == nil {
			t.Fatalf("no %q line in:\n%s", label, text)
		}
		return m[1]
	}
	hash := func(s string) []byte {
		b, err := base64.StdEncoding.DecodeString(s)
		if err != nil || len(b) != 32 {
			t.Fatalf("printed hash %q is not 32 bytes of base64: %v", s, err)
		}
		return b
	}
	size, err1 := strconv.ParseUint(field("Log size"), 10, 64)
	index, err2 := strconv.ParseUint(field("Leaf index"), 10, 64)
	if err1 != nil || err2 != nil {
		t.Fatalf("printed size or index: %v %v", err1, err2)
	}
	var hashes [][]byte
	for _, m := range regexp.MustCompile(`(?m)^\s*Proof hash \d+\s+(\S+)\s*$`).FindAllStringSubmatch(text, -1) {
		hashes = append(hashes, hash(m[1]))
	}
	if err := proof.VerifyInclusion(rfc6962.DefaultHasher, index, size, hash(field("Leaf hash")), hashes, hash(field("Root hash"))); err != nil {
		t.Errorf("the printed proof does not lead to the printed root: %v", err)
	}
}

// TestPrintedRecordRefusals: a record of another kind or a wrong format is refused.
func TestPrintedRecordRefusals(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	wantProblem(t, "missing", e.do(http.MethodGet, "/v1/qualification-records/01a2b3c4-0000-7000-8000-000000000000?format=pdf", "auditor", nil), http.StatusNotFound, "")
	wantProblem(t, "format", e.do(http.MethodGet, "/v1/qualification-records/"+e.pqr()+"?format=csv", "auditor", nil), http.StatusUnprocessableEntity, "format")
}
