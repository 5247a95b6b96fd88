package db

import (
	"context"
	"fmt"
)

// FitGroup fits model to the coupons that filter f selects at site, reading
// them as a stream: memory does not grow with the group (predict's
// PenetrationStream and MeltingStream), so a group of a million coupons fits
// in the space of a few. It stores nothing, and its fit names no sample ids;
// arcLengthMM is the Lesnewich model's arc length (ignored by the Jackson
// models). The refusals are CreateCalibration's.
func (s *Store) FitGroup(ctx context.Context, site string, f SampleFilter, model CalibrationModel, arcLengthMM float64) (CalibrationFit, error) {
	run, err := runSelection(ctx, s.long, site, f, model, arcLengthMM, 0, true, nil)
	if err != nil {
		return CalibrationFit{}, fmt.Errorf("db: fit group: %w", err)
	}
	return run.Fit, nil
}
