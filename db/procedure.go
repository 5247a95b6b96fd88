package db

import (
	"context"
	"fmt"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
)

// ProcedureData is what a welding procedure specification (WPS) states.
// Lengths are in mm.
type ProcedureData struct {
	Code                 string      `db:"code" json:"code" validate:"required,max=64"`
	Title                string      `db:"title" json:"title" validate:"required,max=200"`
	Process              string      `db:"process" json:"process" validate:"required,enum"`
	FillerClassification string      `db:"filler_classification" json:"filler_classification" validate:"required,max=64"`
	WireDiameterMM       float64     `db:"wire_diameter_mm" json:"wire_diameter_mm" validate:"required,quantity"`
	ShieldingGas         string      `db:"shielding_gas" json:"shielding_gas" validate:"max=64"`
	Polarity             string      `db:"polarity" json:"polarity" validate:"required,enum"`
	TransferMode         string      `db:"transfer_mode" json:"transfer_mode" validate:"omitempty,enum"`
	Positions            []string    `db:"positions" json:"positions" validate:"required,min=1,dive,required,max=8"`
	BaseMetalGroup       string      `db:"base_metal_group" json:"base_metal_group" validate:"required,max=64"`
	ThicknessMinMM       float64     `db:"thickness_min_mm" json:"thickness_min_mm" validate:"required,quantity"`
	ThicknessMaxMM       float64     `db:"thickness_max_mm" json:"thickness_max_mm" validate:"required,quantity,gtefield=ThicknessMinMM"`
	MinPenetrationMM     *float64    `db:"min_penetration_mm" json:"min_penetration_mm,omitempty" validate:"omitempty,quantity"`
	Status               string      `db:"status" json:"status" validate:"required,enum"`
	SupportingRecordIDs  []uuid.UUID `db:"supporting_record_ids" json:"supporting_record_ids"`
}

// Procedure is one stored revision of a WPS.
type Procedure struct {
	Meta
	ProcedureData
	// SignOff is this revision's sign-off by an engineer; null until signed.
	SignOff *SignOff `db:"-" json:"sign_off"`
}

var procedures = table{name: "procedures", entity: "procedure", fields: recordColumns(ProcedureData{})}

// supportingIDs is SupportingRecordIDs with none as an empty list, as it is stored
// and read back (so a write returns what a read returns).
func (p ProcedureData) supportingIDs() []uuid.UUID {
	if p.SupportingRecordIDs == nil {
		return []uuid.UUID{}
	}
	return p.SupportingRecordIDs
}

// checkSupport verifies that every supporting qualification record exists at the site.
func (p ProcedureData) checkSupport(ctx context.Context, site string) func(pgx.Tx) error {
	return func(tx pgx.Tx) error {
		for _, id := range p.SupportingRecordIDs {
			if err := exists(ctx, tx, qualificationRecords, site, id, "supporting_record_ids"); err != nil {
				return err
			}
		}
		return nil
	}
}

// CreateProcedure stores revision 1 of a new procedure. A new procedure has
// no coupons or production records yet, so there are no flags to compute.
func (s *Store) CreateProcedure(ctx context.Context, a Actor, p ProcedureData) (Procedure, error) {
	p.SupportingRecordIDs = p.supportingIDs()
	m, err := s.newRecord(a)
	if err != nil {
		return Procedure{}, err
	}
	if err := s.write(ctx, "create procedure",
		p.checkSupport(ctx, a.Site),
		procedures.writeRevision(ctx, m, recordValues(p)),
		s.logged(ctx, procedures, m, actionCreate),
	); err != nil {
		return Procedure{}, s.duplicateKey(ctx, procedures, "code", a.Site, p.Code, err)
	}
	return Procedure{Meta: m, ProcedureData: p}, nil
}

// CorrectProcedure stores the next revision of a procedure and re-evaluates
// its flags. The code is the procedure's identity and cannot change; void it
// and create another instead.
func (s *Store) CorrectProcedure(ctx context.Context, a Actor, id uuid.UUID, ch Change, p ProcedureData) (Procedure, error) {
	p.SupportingRecordIDs = p.supportingIDs()
	m := s.nextRevision(a, id, ch, false)
	if err := s.write(ctx, "correct procedure "+id.String(),
		procedures.baseIs(ctx, a.Site, id, ch),
		p.checkCorrection(ctx, a.Site, id),
		procedures.writeRevision(ctx, m, recordValues(p)),
		s.logged(ctx, procedures, m, actionCorrect),
		procedureFlags(ctx, m),
	); err != nil {
		return Procedure{}, err
	}
	return Procedure{Meta: m, ProcedureData: p}, nil
}

// checkCorrection verifies that a correction keeps the procedure's code and
// that its supporting records exist.
func (p ProcedureData) checkCorrection(ctx context.Context, site string, id uuid.UUID) func(pgx.Tx) error {
	return func(tx pgx.Tx) error {
		old, err := getRecord[Procedure](ctx, tx, procedures, site, id, 0)
		if err != nil {
			return err
		}
		if old.Code != p.Code {
			return &FieldError{Field: "code", Reason: fmt.Sprintf("the code %q cannot change; void this procedure and create a new one", old.Code)}
		}
		return p.checkSupport(ctx, site)(tx)
	}
}

// VoidProcedure voids a procedure with a reason and removes its flags.
func (s *Store) VoidProcedure(ctx context.Context, a Actor, id uuid.UUID, ch Change) (Procedure, error) {
	m := s.nextRevision(a, id, ch, true)
	if err := s.write(ctx, "void procedure "+id.String(),
		procedures.baseIs(ctx, a.Site, id, ch),
		procedures.voidLatest(ctx, m),
		s.logged(ctx, procedures, m, actionVoid),
		dropProcedureFlags(ctx, m),
	); err != nil {
		return Procedure{}, err
	}
	return s.Procedure(ctx, a.Site, id, 0)
}

// Procedure reads the latest revision of a procedure, or revision rev when rev > 0.
func (s *Store) Procedure(ctx context.Context, site string, id uuid.UUID, rev int) (Procedure, error) {
	return readOne[Procedure](ctx, s, procedures, site, id, rev)
}

// ProcedureRevisions lists every revision of a procedure, oldest first.
func (s *Store) ProcedureRevisions(ctx context.Context, site string, id uuid.UUID) ([]Procedure, error) {
	return revisions[Procedure](ctx, s, procedures, site, id)
}

// ProcedureFilter selects procedures in a list.
type ProcedureFilter struct {
	Process       string
	Status        string
	IncludeVoided bool
}
