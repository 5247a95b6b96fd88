package db

import (
	"github.com/google/uuid"
	"github.com/jackc/pgx/v5/pgtype"
)

// sendUUIDsAsBytes makes the connection's type map send a uuid.UUID
// parameter, or a *uuid.UUID, as the 16 bytes it holds. Without it pgx finds no plan of its
// own for the type and goes through its driver.Valuer, formatting the
// UUID as text and parsing that text back, for every id of every write.
func sendUUIDsAsBytes(m *pgtype.Map) {
	m.TryWrapEncodePlanFuncs = append([]pgtype.TryWrapEncodePlanFunc{tryWrapUUID}, m.TryWrapEncodePlanFuncs...)
}

func tryWrapUUID(value any) (pgtype.WrappedEncodePlanNextSetter, any, bool) {
	switch u := value.(type) {
	case uuid.UUID:
		return &uuidBytesPlan{}, pgtype.UUID{Bytes: u, Valid: true}, true
	case *uuid.UUID: // an optional link; pgx sends a nil pointer as NULL before planning
		if u != nil {
			return &uuidPointerPlan{}, pgtype.UUID{Bytes: *u, Valid: true}, true
		}
	}
	return nil, nil, false
}

// uuidPointerPlan encodes a *uuid.UUID as the pgtype.UUID of the bytes it
// points to (NULL for nil).
type uuidPointerPlan struct{ next pgtype.EncodePlan }

func (p *uuidPointerPlan) SetNext(next pgtype.EncodePlan) { p.next = next }

func (p *uuidPointerPlan) Encode(value any, buf []byte) ([]byte, error) {
	u := value.(*uuid.UUID)
	if u == nil {
		return nil, nil
	}
	return p.next.Encode(pgtype.UUID{Bytes: *u, Valid: true}, buf)
}

// uuidBytesPlan encodes a uuid.UUID as the pgtype.UUID of the same bytes.
type uuidBytesPlan struct{ next pgtype.EncodePlan }

func (p *uuidBytesPlan) SetNext(next pgtype.EncodePlan) { p.next = next }

func (p *uuidBytesPlan) Encode(value any, buf []byte) ([]byte, error) {
	return p.next.Encode(pgtype.UUID{Bytes: value.(uuid.UUID), Valid: true}, buf)
}
