package db

import "etchlog/predict"

// What each record kind carries, as a predict.Observation. A variable a
// record kind has no field for is out of its scope and never flagged (a
// production record says nothing about gas or position); an optional field
// left empty is "missing" and flagged not_checkable when a range needs it.

// Observation is what the record welded, variable by variable, as the
// qualified-range rules read it (heat input computed from V, I and S).
func (q QualificationRecordData) Observation() predict.Observation { return pqrObservation(q) }

// pqrObservation is what a qualification record welded: every variable.
func pqrObservation(q QualificationRecordData) predict.Observation {
	var o predict.Observation
	o.SetNumber(predict.VarCurrent, q.CurrentA)
	o.SetNumber(predict.VarVoltage, q.VoltageV)
	o.SetNumber(predict.VarTravelSpeed, q.TravelSpeedMMPerS)
	o.SetOptional(predict.VarWireFeedSpeed, q.WireFeedSpeedMPerMin)
	o.SetOptional(predict.VarCTWD, q.CTWDMM)
	o.SetNumber(predict.VarWireDiameter, q.WireDiameterMM)
	o.SetNumber(predict.VarThickness, q.ThicknessMM)
	o.SetOptional(predict.VarPreheat, q.PreheatC)
	o.SetOptional(predict.VarInterpass, q.InterpassC)
	o.SetText(predict.VarShieldingGas, q.ShieldingGas)
	o.SetText(predict.VarTransferMode, q.TransferMode)
	o.SetText(predict.VarPolarity, q.Polarity)
	o.SetText(predict.VarFiller, q.FillerClassification)
	o.SetText(predict.VarPosition, q.Position)
	o.SetText(predict.VarBaseMetal, q.BaseMetalGroup)
	return o
}

// couponObservation is what a coupon records, after it has taken the fields
// it leaves out from its procedure (Coupon.inherit). Coupons have no transfer
// mode, filler classification or base-metal group field: out of scope.
func couponObservation(c CouponData) predict.Observation {
	var o predict.Observation
	o.SetNumber(predict.VarCurrent, c.CurrentA)
	o.SetNumber(predict.VarVoltage, c.VoltageV)
	o.SetNumber(predict.VarTravelSpeed, c.TravelSpeedMMPerS)
	o.SetOptional(predict.VarWireFeedSpeed, c.WireFeedSpeedMPerMin)
	o.SetOptional(predict.VarCTWD, c.CTWDMM)
	o.SetOptional(predict.VarWireDiameter, c.WireDiameterMM)
	o.SetNumber(predict.VarThickness, c.ThicknessMM)
	o.SetOptional(predict.VarPreheat, c.PreheatC)
	o.SetOptional(predict.VarInterpass, c.InterpassC)
	o.SetText(predict.VarShieldingGas, c.ShieldingGas)
	if c.Polarity != nil {
		o.SetText(predict.VarPolarity, *c.Polarity)
	} else {
		o.SetMissing(predict.VarPolarity)
	}
	o.SetText(predict.VarPosition, c.Position)
	return o
}

// productionObservation is what a production record logs: the electrical
// and motion parameters only.
func productionObservation(r ProductionRecordData) predict.Observation {
	var o predict.Observation
	o.SetNumber(predict.VarCurrent, r.CurrentA)
	o.SetNumber(predict.VarVoltage, r.VoltageV)
	o.SetNumber(predict.VarTravelSpeed, r.TravelSpeedMMPerS)
	o.SetNumber(predict.VarWireFeedSpeed, r.WireFeedSpeedMPerMin)
	o.SetOptional(predict.VarCTWD, r.CTWDMM)
	return o
}
