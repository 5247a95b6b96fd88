package lab

import (
	"encoding/json"
	"errors"
	"io"
	"net/http"
	"net/url"
	"strconv"
)

func init() {
	Register(
		Page{Pattern: "GET " + Prefix + "/import", Roles: Recorders, Nav: "Import", NavOrder: 60,
			Template: "import.html", Handle: importPage},
		Page{Pattern: "POST " + Prefix + "/import", Roles: Recorders, Template: "import.html", Handle: importFile},
		Page{Pattern: "POST " + Prefix + "/import/part", Roles: Recorders, Handle: importPart},
	)
}

// importLimit is the largest file the page sends in one request: the
// API's default body limit. The page's script sends a larger file in parts.
const importLimit = 1 << 20

// importReport is the API's report of an import (POST /v1/coupons/import).
type importReport struct {
	Mode       string `json:"mode"`
	Written    bool   `json:"written"`
	Rows       int    `json:"rows"`
	Coupons    int    `json:"coupons"`
	New        int    `json:"new_coupons"`
	NewSection int    `json:"new_sections"`
	Unchanged  int    `json:"unchanged_coupons"`
	Refused    int    `json:"refused_coupons"`
	Errors     []struct {
		Row    int    `json:"row"`
		Column string `json:"column"`
		Reason string `json:"reason"`
	} `json:"errors"`
}

// importView is what import.html shows: the report of the last pass, and
// the file's text to commit after a dry run.
type importView struct {
	Report  *importReport
	CSV     string
	Name    string
	Problem *Problem
	Limit   int
}

// importPage shows the upload form.
func importPage(rq *Request) error {
	return rq.Render(http.StatusOK, "import.html", "Import coupons", importView{Limit: importLimit})
}

// importFile checks (dry run) or commits a chosen file through the API and
// shows the report; after a dry run the page carries the file's text, so
// the commit sends exactly what was checked.
func importFile(rq *Request) error {
	v := importView{Limit: importLimit}
	mode := rq.PostFormValue("mode")
	if mode != "commit" {
		mode = "dry-run"
	}
	text, name, err := importText(rq)
	if err != nil {
		var p *Problem
		if errors.As(err, &p) {
			v.Problem = p
			return rq.Render(p.Status, "import.html", "Import coupons", v)
		}
		return err
	}
	var rep importReport
	if err := rq.API.PostCSV("/v1/coupons/import?mode="+url.QueryEscape(mode), []byte(text), &rep); err != nil {
		var p *Problem
		if errors.As(err, &p) {
			v.Problem = p
			return rq.Render(p.Status, "import.html", "Import coupons", v)
		}
		return err
	}
	v.Report, v.Name = &rep, name
	if mode == "dry-run" && rep.New > 0 {
		v.CSV = text
	}
	return rq.Render(http.StatusOK, "import.html", "Import coupons", v)
}

// importText reads the file chosen (field "file") or, for a commit after a
// dry run, the text the page carried (field "csv").
func importText(rq *Request) (text, name string, err error) {
	if t := rq.PostFormValue("csv"); t != "" {
		return t, rq.PostFormValue("name"), nil
	}
	f, h, err := rq.FormFile("file")
	if err != nil {
		return "", "", &Problem{Status: http.StatusBadRequest, Title: "No file", Detail: "Choose a CSV file to check."}
	}
	defer f.Close()
	if h.Size > importLimit {
		return "", "", &Problem{Status: http.StatusRequestEntityTooLarge, Title: "The file is larger than 1 MiB",
			Detail: "With scripts on, this page sends a large file in parts; without them, use etchlog import coupons FILE.csv."}
	}
	b, err := io.ReadAll(io.LimitReader(f, importLimit+1))
	if err != nil {
		return "", "", err
	}
	return string(b), h.Filename, nil
}

// importPart passes one part of a large file (sent by the page's script as
// text/csv, with the form token in X-Form-Token) to the API and answers its
// report, or its problem, as JSON.
func importPart(rq *Request) error {
	q := url.Values{"mode": {rq.URL.Query().Get("mode")}, "first_row": {rq.URL.Query().Get("first_row")}}
	if _, err := strconv.Atoi(q.Get("first_row")); err != nil {
		q.Del("first_row")
	}
	body, err := io.ReadAll(http.MaxBytesReader(rq.W, rq.Body, importLimit))
	if err != nil {
		return writeJSON(rq.W, http.StatusRequestEntityTooLarge, map[string]string{"title": "The part is larger than 1 MiB"})
	}
	var rep importReport
	if err := rq.API.PostCSV("/v1/coupons/import?"+q.Encode(), body, &rep); err != nil {
		var p *Problem
		if errors.As(err, &p) {
			return writeJSON(rq.W, p.Status, p)
		}
		return err
	}
	return writeJSON(rq.W, http.StatusOK, rep)
}

// writeJSON answers v as JSON with status.
func writeJSON(w http.ResponseWriter, status int, v any) error {
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(status)
	return json.NewEncoder(w).Encode(v)
}
