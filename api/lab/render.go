package lab

import (
	"bytes"
	"html/template"
	"io/fs"
	"net/http"
	"path"
	"slices"

	"etchlog/db"
)

// shared are the template files every page is parsed with: the layout and
// the partials (caution, pager, fields).
var shared = []string{"templates/layout.html", "templates/partials.html"}

// View is what every template receives: the layout's data and the page's own
// (Data). Templates reach the layout's helpers through it, e.g.
// {{csrfField $}} or {{quantity $ "current_a" .CurrentA}}.
type View struct {
	Title string
	User  db.User
	Units Units
	Nav   []navItem
	Path  string // the page's path and query, for "come back here" links
	CSRF  string
	Data  any
}

// navItem is one entry of the header's navigation.
type navItem struct {
	Label, Path string
	Roles       []string
	Current     bool
	order       int
}

// parseTemplates parses each page file of templates/ together with the
// shared files, so every page has its own "title" and "content".
func (l *Lab) parseTemplates() error {
	base, err := template.New("layout.html").Funcs(funcs).ParseFS(templateFS, shared...)
	if err != nil {
		return err
	}
	files, err := fs.Glob(templateFS, "templates/*.html")
	if err != nil {
		return err
	}
	for _, f := range files {
		if slices.Contains(shared, f) {
			continue
		}
		t, err := base.Clone()
		if err != nil {
			return err
		}
		if t, err = t.ParseFS(templateFS, f); err != nil {
			return err
		}
		l.views[path.Base(f)] = t
	}
	return nil
}

// Render writes a page: the layout around the template file's "content",
// with data as View.Data. The page is rendered into memory first, so a
// template error becomes an error page, not half a page.
func (rq *Request) Render(status int, file, title string, data any) error {
	t, ok := rq.lab.views[file]
	if !ok {
		return &Problem{Status: http.StatusInternalServerError, Title: "No such page template", Detail: file}
	}
	v := View{Title: title, User: rq.User, Units: rq.Units, Path: rq.URL.RequestURI(), CSRF: rq.csrf, Data: data}
	for _, n := range rq.lab.nav {
		if slices.Contains(n.Roles, rq.User.Role) {
			n.Current = n.Path == rq.URL.Path
			v.Nav = append(v.Nav, n)
		}
	}
	var b bytes.Buffer
	if err := t.ExecuteTemplate(&b, "layout.html", v); err != nil {
		rq.lab.log.Error("lab template failed", "file", file, "err", err)
		if file == "error.html" {
			http.Error(rq.W, "the page could not be shown", http.StatusInternalServerError)
			return nil
		}
		return err
	}
	rq.W.Header().Set("Content-Type", "text/html; charset=utf-8")
	rq.W.WriteHeader(status)
	_, err := rq.W.Write(b.Bytes())
	return err
}

// funcs are the helpers every template may call.
var funcs = template.FuncMap{
	"csrfField": func(v View) template.HTML {
		return template.HTML(`<input type="hidden" name="` + csrfFieldName + `" value="` + template.HTMLEscapeString(v.CSRF) + `">`)
	},
	"quantity":  func(v View, name string, value any) string { return FormatQuantity(v.Units, name, value) },
	"unit":      func(v View, name string) string { return UnitLabel(v.Units, name) },
	"fieldName": func(v View, name string) string { return FieldName(v.Units, name) },
	"field":     newField,
	"hint":      withHint,
	"choice":    asChoice,
	"pager":     newPager,
	"flagText":  FlagSentence,
	"label":     VariableLabel,
}
