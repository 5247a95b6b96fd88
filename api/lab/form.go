package lab

import (
	"net/url"
	"strings"

	"etchlog/predict"
)

// Form is what a person typed into a form and the API's refusal of it, for
// showing the form again with each reason next to its field.
type Form struct {
	Values  url.Values
	Problem *Problem
}

// Value returns what was typed into field name.
func (f *Form) Value(name string) string {
	if f == nil {
		return ""
	}
	return f.Values.Get(name)
}

// Error returns the API's reason for refusing field name ("" when none).
func (f *Form) Error(name string) string {
	if f == nil {
		return ""
	}
	return f.Problem.Field(name)
}

// Field is one labelled input of a form, as the "field" partial draws it:
// the label, the input under the field name the API takes, the unit beside
// it and the refusal, in words, under it.
type Field struct {
	ID, Name, Label, Unit, Value, Error string
	// Type is the input type: "number" for a quantity (decimal keypad on a
	// phone, any step), "text" otherwise; the "field" partial reads it.
	Type string
	// Hint is shown under the input (a qualified range, an inherited value).
	Hint string
	// Options, when set, make the field a choice ("choice" partial); Blank
	// labels the empty choice ("" offers none).
	Options []string
	Blank   string
}

// withHint returns f with a hint under it: {{template "field" (hint (field …) "qualified 160–220 A")}}.
func withHint(f Field, hint string) Field {
	f.Hint = hint
	return f
}

// asChoice returns f as a choice among options, with blank labelling the
// empty choice: {{template "choice" (choice (field …) .Data.JointTypes "")}}.
func asChoice(f Field, options []string, blank string) Field {
	f.Options, f.Blank = options, blank
	return f
}

// newField builds the Field of name (a quantity's stored name, which is
// spelled in the chosen units, or any other field of the API) from what the
// form holds. Template use: {{template "field" (field $ .Data.Form "current_a" "Current")}}.
func newField(v View, f *Form, name, label string) Field {
	fd := Field{Name: name, Label: label, Type: "text"}
	if _, ok := predict.LookupQuantity(name); ok {
		fd.Name, fd.Unit, fd.Type = FieldName(v.Units, name), UnitLabel(v.Units, name), "number"
	}
	fd.ID = "f-" + strings.ReplaceAll(fd.Name, ".", "-")
	fd.Value = f.Value(fd.Name)
	fd.Error = f.Error(fd.Name)
	if fd.Error == "" && fd.Name != name {
		fd.Error = f.Error(name)
	}
	return fd
}

// Pager is the "next page" and "first page" links of a list: every list
// pages by the API's next_cursor, and none is capped.
type Pager struct {
	Next, First string
}

// newPager builds the links for a page of shown items asked with limit: a
// page shorter than limit is the end of what is there now. Template use:
// {{template "pager" (pager $ .Data.NextCursor (len .Data.Items) .Data.Limit)}}.
func newPager(v View, next string, shown, limit int) Pager {
	u, err := url.Parse(v.Path)
	if err != nil {
		return Pager{}
	}
	q := u.Query()
	var p Pager
	if q.Get("cursor") != "" {
		q.Del("cursor")
		u.RawQuery = q.Encode()
		p.First = u.RequestURI()
	}
	if next != "" && shown >= limit && limit > 0 {
		q.Set("cursor", next)
		u.RawQuery = q.Encode()
		p.Next = u.RequestURI()
	}
	return p
}
