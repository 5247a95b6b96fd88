package api

import (
	"context"
	"encoding/json"
	"fmt"
	"strconv"
	"time"

	"github.com/google/uuid"
	"github.com/labstack/echo/v4"

	"etchlog/db"
)

// ownedFields are the bookkeeping a read answers and the server owns. A
// client may send a record back as it read it (GET, change a field, PUT with
// base_revision and reason): each owned field it carries is ignored when it
// equals the revision the change is based on, and refused (422, named) when
// it differs. A new record (POST) may not carry them: the server assigns them.
type ownedFields struct {
	Site      *string    `json:"site,omitempty"`
	ID        *uuid.UUID `json:"id,omitempty"`
	Revision  *int       `json:"revision,omitempty"`
	CreatedAt *time.Time `json:"created_at,omitempty"`
	CreatedBy *string    `json:"created_by,omitempty"`
	Voided    *bool      `json:"voided,omitempty"`
	// SignOff is the read's sign-off (null when unsigned), kept raw so that
	// null and absent differ.
	SignOff json.RawMessage `json:"sign_off,omitempty"`
}

// given lists the owned fields a body carries, by JSON name.
func (o ownedFields) given() []string {
	var names []string
	for _, f := range []struct {
		name string
		set  bool
	}{{"site", o.Site != nil}, {"id", o.ID != nil}, {"revision", o.Revision != nil},
		{"created_at", o.CreatedAt != nil}, {"created_by", o.CreatedBy != nil}, {"voided", o.Voided != nil},
		{"sign_off", len(o.SignOff) > 0}} {
		if f.set {
			names = append(names, f.name)
		}
	}
	return names
}

// onCreate refuses owned fields on a new record.
func (o ownedFields) onCreate() error {
	var v issues
	for _, name := range o.given() {
		v.refused(name, "is set by the server; leave it out of a new record")
	}
	return v.err()
}

// against compares the owned fields a correction carries with the stored
// revision it is based on and that revision's sign-off (nil: unsigned).
func (o ownedFields) against(m db.Meta, signed *db.SignOff) error {
	var v issues
	if len(o.SignOff) > 0 {
		var sent *struct {
			ID uuid.UUID `json:"id"`
		}
		switch err := json.Unmarshal(o.SignOff, &sent); {
		case err != nil:
			v.refused("sign_off", "is owned by the server: send it back as read (an object or null) or leave it out")
		case sent == nil && signed != nil:
			v.refused("sign_off", fmt.Sprintf("is owned by the server: null differs from the stored sign-off %s; leave it out or send it unchanged", signed.ID))
		case sent != nil && (signed == nil || sent.ID != signed.ID):
			v.refused("sign_off", "is owned by the server: it differs from the base revision's sign-off; leave it out or send it unchanged")
		}
	}
	differs := func(name, sent, stored string) {
		v.refused(name, fmt.Sprintf("is owned by the server: %s differs from the stored %s; leave it out or send it unchanged", sent, stored))
	}
	if o.Site != nil && *o.Site != m.Site {
		differs("site", strconv.Quote(*o.Site), strconv.Quote(m.Site))
	}
	if o.ID != nil && *o.ID != m.ID {
		differs("id", o.ID.String(), m.ID.String())
	}
	if o.Revision != nil && *o.Revision != m.Revision {
		differs("revision", strconv.Itoa(*o.Revision), fmt.Sprintf("%d (base_revision)", m.Revision))
	}
	if o.CreatedAt != nil && !o.CreatedAt.Equal(m.CreatedAt) {
		differs("created_at", o.CreatedAt.Format(time.RFC3339Nano), m.CreatedAt.Format(time.RFC3339Nano))
	}
	if o.CreatedBy != nil && *o.CreatedBy != m.CreatedBy {
		differs("created_by", strconv.Quote(*o.CreatedBy), strconv.Quote(m.CreatedBy))
	}
	if o.Voided != nil && *o.Voided != m.Voided {
		differs("voided", strconv.FormatBool(*o.Voided), strconv.FormatBool(m.Voided))
	}
	return v.err()
}

// checkOwned compares a correction's owned fields with the revision named by
// its base_revision; a base revision that does not exist is left to the
// store's stale-revision check (409).
func checkOwned[R any](ctx context.Context, c echo.Context, get func(context.Context, string, uuid.UUID, int) (R, error),
	id uuid.UUID, base int, o ownedFields) error {
	if len(o.given()) == 0 {
		return nil
	}
	rec, err := get(ctx, actorOf(c).Site, id, base)
	if err != nil {
		return nil
	}
	var signed *db.SignOff
	if s, ok := any(rec).(interface{ RecordSignOff() *db.SignOff }); ok {
		signed = s.RecordSignOff()
	}
	return o.against(metaOf(rec), signed)
}

// metaOf returns the bookkeeping of a stored record revision.
func metaOf(rec any) db.Meta {
	type metaer interface{ RecordMeta() db.Meta }
	return rec.(metaer).RecordMeta()
}
