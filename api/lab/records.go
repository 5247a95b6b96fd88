package lab

import (
	"net/url"
	"strconv"

	"github.com/google/uuid"

	"etchlog/db"
)

// couponPageLimit is how many coupons a page of the coupon list shows.
const couponPageLimit = 50

// allPages reads every page of an API list (for short lists a page shows
// whole, such as a coupon's sections or flags, or a form's procedure choice):
// nothing is capped.
func allPages[T any](c *Client, path string, q url.Values) ([]T, error) {
	if q == nil {
		q = url.Values{}
	}
	q.Set("limit", "200")
	var out []T
	for {
		l, err := GetList[T](c, path, q)
		if err != nil {
			return nil, err
		}
		out = append(out, l.Items...)
		if len(l.Items) < 200 || l.NextCursor == "" {
			return out, nil
		}
		q.Set("cursor", l.NextCursor)
	}
}

// procedures reads the site's current procedures, by id, for naming them
// on a page ("WPS-TR-101 rev 3") without one call per row.
type procedures struct {
	c    *Client
	byID map[uuid.UUID]db.Procedure
}

func newProcedures(c *Client) *procedures {
	return &procedures{c: c, byID: map[uuid.UUID]db.Procedure{}}
}

// get reads one procedure once per page.
func (p *procedures) get(id uuid.UUID) (db.Procedure, error) {
	if pr, ok := p.byID[id]; ok {
		return pr, nil
	}
	var pr db.Procedure
	if err := p.c.Get("/v1/procedures/"+id.String(), &pr); err != nil {
		return db.Procedure{}, err
	}
	p.byID[id] = pr
	return pr, nil
}

// name is a procedure's code and revision, "WPS-TR-101 rev 3", or "" when
// id is nil or unreadable.
func (p *procedures) name(id *uuid.UUID) string {
	if id == nil {
		return ""
	}
	pr, err := p.get(*id)
	if err != nil {
		return ""
	}
	return procedureName(pr)
}

// procedureName is "code rev N".
func procedureName(pr db.Procedure) string {
	return pr.Code + " rev " + strconv.Itoa(pr.Revision)
}

// all lists every current procedure, for a choice on a form.
func (p *procedures) all() ([]db.Procedure, error) {
	list, err := allPages[db.Procedure](p.c, "/v1/procedures", nil)
	for _, pr := range list {
		p.byID[pr.ID] = pr
	}
	return list, err
}
