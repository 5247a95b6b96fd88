package db

import (
	"context"

	"github.com/google/uuid"
)

// QualificationRecordData is what a procedure qualification record (PQR) states:
// the values actually welded and the outcome of each test. Units: mm, mm/s
// (travel speed), m/min (wire feed speed), A, V, °C, MPa.
type QualificationRecordData struct {
	RecordNumber         string   `db:"record_number" json:"record_number" validate:"required,max=64"`
	Process              string   `db:"process" json:"process" validate:"required,enum"`
	WeldedOn             Date     `db:"welded_on" json:"welded_on" validate:"required,plausible_day"`
	WelderID             string   `db:"welder_id" json:"welder_id" validate:"required,max=64"`
	FillerClassification string   `db:"filler_classification" json:"filler_classification" validate:"required,max=64"`
	WireDiameterMM       float64  `db:"wire_diameter_mm" json:"wire_diameter_mm" validate:"required,quantity"`
	ShieldingGas         string   `db:"shielding_gas" json:"shielding_gas" validate:"max=64"`
	Polarity             string   `db:"polarity" json:"polarity" validate:"required,enum"`
	TransferMode         string   `db:"transfer_mode" json:"transfer_mode" validate:"omitempty,enum"`
	Position             string   `db:"position" json:"position" validate:"required,max=8"`
	BaseMetalGroup       string   `db:"base_metal_group" json:"base_metal_group" validate:"required,max=64"`
	ThicknessMM          float64  `db:"thickness_mm" json:"thickness_mm" validate:"required,quantity"`
	CurrentA             float64  `db:"current_a" json:"current_a" validate:"required,quantity"`
	VoltageV             float64  `db:"voltage_v" json:"voltage_v" validate:"required,quantity"`
	TravelSpeedMMPerS    float64  `db:"travel_speed_mm_s" json:"travel_speed_mm_s" validate:"required,quantity"`
	WireFeedSpeedMPerMin *float64 `db:"wire_feed_speed_m_min" json:"wire_feed_speed_m_min,omitempty" validate:"omitempty,quantity"`
	CTWDMM               *float64 `db:"ctwd_mm" json:"ctwd_mm,omitempty" validate:"omitempty,quantity"`
	PreheatC             *float64 `db:"preheat_c" json:"preheat_c,omitempty" validate:"omitempty,quantity"`
	InterpassC           *float64 `db:"interpass_c" json:"interpass_c,omitempty" validate:"omitempty,quantity"`
	VisualResult         string   `db:"visual_result" json:"visual_result" validate:"required,enum"`
	BendResult           string   `db:"bend_result" json:"bend_result" validate:"required,enum"`
	TensileResult        string   `db:"tensile_result" json:"tensile_result" validate:"required,enum"`
	MacroResult          string   `db:"macro_result" json:"macro_result" validate:"required,enum"`
	TensileStrengthMPa   *float64 `db:"tensile_strength_mpa" json:"tensile_strength_mpa,omitempty" validate:"omitempty,quantity"`
	Outcome              string   `db:"outcome" json:"outcome" validate:"required,enum"`
	Remarks              string   `db:"remarks" json:"remarks" validate:"max=2000"`
	// MinPenetrationMM is the record's own acceptance criterion, when it
	// states one: the least penetration a macro-etch section must show.
	MinPenetrationMM *float64 `db:"min_penetration_mm" json:"min_penetration_mm,omitempty" validate:"omitempty,quantity"`
}

// QualificationRecord is one stored revision of a PQR.
type QualificationRecord struct {
	Meta
	QualificationRecordData
	// SignOff is this revision's sign-off by an engineer; null until signed.
	SignOff *SignOff `db:"-" json:"sign_off"`
}

var qualificationRecords = table{name: "qualification_records", entity: "qualification_record", fields: recordColumns(QualificationRecordData{})}

// No flag derives from a PQR directly: its values reach flags only through
// ranges derived from it (DeriveRanges), so PQR writes have no flag step.

// CreateQualificationRecord stores revision 1 of a new PQR.
func (s *Store) CreateQualificationRecord(ctx context.Context, a Actor, q QualificationRecordData) (QualificationRecord, error) {
	m, err := s.newRecord(a)
	if err != nil {
		return QualificationRecord{}, err
	}
	if err := s.write(ctx, "create qualification_record",
		claimMark(ctx, recordNumber, m, q.RecordNumber),
		qualificationRecords.writeRevision(ctx, m, recordValues(q)),
		s.logged(ctx, qualificationRecords, m, actionCreate),
	); err != nil {
		return QualificationRecord{}, s.duplicateKey(ctx, qualificationRecords, "record_number", a.Site, q.RecordNumber, err)
	}
	return QualificationRecord{Meta: m, QualificationRecordData: q}, nil
}

// CorrectQualificationRecord stores the next revision of a PQR.
func (s *Store) CorrectQualificationRecord(ctx context.Context, a Actor, id uuid.UUID, ch Change, q QualificationRecordData) (QualificationRecord, error) {
	m := s.nextRevision(a, id, ch, false)
	if err := s.write(ctx, "correct qualification_record "+id.String(),
		qualificationRecords.baseIs(ctx, a.Site, id, ch),
		claimMark(ctx, recordNumber, m, q.RecordNumber),
		qualificationRecords.writeRevision(ctx, m, recordValues(q)),
		s.logged(ctx, qualificationRecords, m, actionCorrect),
		recordFlags(ctx, m),
	); err != nil {
		return QualificationRecord{}, err
	}
	return QualificationRecord{Meta: m, QualificationRecordData: q}, nil
}

// VoidQualificationRecord voids a PQR with a reason.
func (s *Store) VoidQualificationRecord(ctx context.Context, a Actor, id uuid.UUID, ch Change) (QualificationRecord, error) {
	m := s.nextRevision(a, id, ch, true)
	if err := s.write(ctx, "void qualification_record "+id.String(),
		qualificationRecords.baseIs(ctx, a.Site, id, ch),
		qualificationRecords.voidLatest(ctx, m),
		s.logged(ctx, qualificationRecords, m, actionVoid),
		recordFlags(ctx, m),
	); err != nil {
		return QualificationRecord{}, err
	}
	return s.QualificationRecord(ctx, a.Site, id, 0)
}

// QualificationRecord reads the latest revision of a PQR, or revision rev when rev > 0.
func (s *Store) QualificationRecord(ctx context.Context, site string, id uuid.UUID, rev int) (QualificationRecord, error) {
	return readOne[QualificationRecord](ctx, s, qualificationRecords, site, id, rev)
}

// QualificationRecordRevisions lists every revision of a PQR, oldest first.
func (s *Store) QualificationRecordRevisions(ctx context.Context, site string, id uuid.UUID) ([]QualificationRecord, error) {
	return revisions[QualificationRecord](ctx, s, qualificationRecords, site, id)
}

// QualificationRecordFilter selects PQRs in a list; welding days are
// half-open (WeldedFrom included, WeldedTo not).
type QualificationRecordFilter struct {
	Process       string
	WelderID      string
	Outcome       string
	WeldedFrom    *Date
	WeldedTo      *Date
	IncludeVoided bool
}

// QualificationRecords lists current PQRs after the cursor, in log order
// through the list's key (qualification_list.go).
func (s *Store) QualificationRecords(ctx context.Context, site string, qf QualificationRecordFilter, cursor string, limit int) (Page[QualificationRecord], error) {
	return logPage(qualificationRecords.name, qualificationRecords.entity, cursor, limit, func(from int64, limit int) ([]QualificationRecord, int64, error) {
		return s.listQualificationRecords(ctx, site, qf, from, limit)
	})
}
