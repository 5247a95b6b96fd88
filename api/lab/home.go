package lab

import "net/http"

func init() {
	Register(Page{Pattern: "GET " + Prefix + "/{$}", Roles: Everyone, Template: "home.html", Handle: home})
}

// home is the start page: who is signed in and the pages of their role.
func home(rq *Request) error {
	return rq.Render(http.StatusOK, "home.html", "Start", nil)
}
