package api_test

import (
	"net/http"
	"testing"
)

// TestPage checks "/" sends a browser to the lab pages' start page.
func TestPage(t *testing.T) {
	t.Parallel()
	e := newEnv(t)
	c := &http.Client{CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
	res, err := c.Get(e.url + "/")
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther || res.Header.Get("Location") != "/lab/" {
		t.Errorf("GET / = %d to %q, want 303 to /lab/", res.StatusCode, res.Header.Get("Location"))
	}
}
