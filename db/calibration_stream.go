package db

import (
	"context"
	"errors"
	"fmt"

	"etchlog/predict"
)

// FitGroup fits model to the coupons that filter f selects at site, reading
// them as a stream: memory does not grow with the group (predict's
// PenetrationStream and MeltingStream), so a group of a million coupons fits
// in the space of a few. It stores nothing, and its fit names no sample ids;
// arcLengthMM is the Lesnewich model's arc length (ignored by the Jackson
// models). The refusals are CreateCalibration's.
func (s *Store) FitGroup(ctx context.Context, site string, f SampleFilter, model CalibrationModel, arcLengthMM float64) (CalibrationFit, error) {
	var fit CalibrationFit
	var err error
	if model == CalibrationLesnewich {
		ms := predict.NewMeltingStream()
		err = forGroupCoupons(ctx, s.long, site, f, func(c *groupCoupon) error {
			smp, ok, err := meltingSampleOf(c, arcLengthMM)
			if ok {
				err = ms.Add(smp)
			}
			return err
		})
		if err == nil {
			var m predict.MeltingFit
			m, err = ms.Fit()
			fit.Melting = &m
		}
	} else {
		ps := predict.NewPenetrationStream()
		err = forGroupCoupons(ctx, s.long, site, f, func(c *groupCoupon) error {
			if smp, ok := penetrationSampleOf(c); ok {
				return ps.Add(smp)
			}
			return nil
		})
		if err == nil {
			var p predict.PenetrationFit
			p, err = ps.Fit(predict.ModelKind(model))
			fit.Penetration = &p
		}
	}
	var ie *predict.InputError
	if errors.As(err, &ie) {
		err = &FieldError{Field: "coupons", Reason: "a selected coupon cannot be fitted: " + err.Error()}
	}
	if err != nil {
		return CalibrationFit{}, fmt.Errorf("db: fit group: %w", err)
	}
	return fit, nil
}
