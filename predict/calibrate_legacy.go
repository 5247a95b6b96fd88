package predict

import "encoding/json"

// Calibrations fitted before the API settled on one vocabulary were stored
// with other words: model "jackson_fixed_exponents" / "jackson_free_exponents"
// and unit suffixes spelt with "per" (travel_speed_mm_per_s,
// alpha_kg_per_h_a...). Stored rows are append-only and their hashed log
// payloads must stay as written, so they are not rewritten: these decoders
// read both spellings, and everything is written and answered in the current
// one (jackson_fixed, travel_speed_mm_s, alpha_kg_h_a).

// legacyModels maps the earlier stored model words to the current ones.
var legacyModels = map[ModelKind]ModelKind{
	"jackson_fixed_exponents": ModelJacksonFixed,
	"jackson_free_exponents":  ModelJacksonFree,
}

// UnmarshalJSON reads a model word, current or earlier.
func (m *ModelKind) UnmarshalJSON(b []byte) error {
	var s string
	if err := json.Unmarshal(b, &s); err != nil {
		return err
	}
	*m = ModelKind(s)
	if cur, ok := legacyModels[*m]; ok {
		*m = cur
	}
	return nil
}

// take sets *dst from an earlier spelling when it was present.
func take(dst *float64, legacy *float64) {
	if legacy != nil {
		*dst = *legacy
	}
}

// UnmarshalJSON reads a penetration sample, also with travel_speed_mm_per_s.
func (s *PenetrationSample) UnmarshalJSON(b []byte) error {
	type plain PenetrationSample
	var v struct {
		plain
		TravelSpeed *float64 `json:"travel_speed_mm_per_s"`
	}
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	take(&v.TravelSpeedMMPerS, v.TravelSpeed)
	*s = PenetrationSample(v.plain)
	return nil
}

// UnmarshalJSON reads a melting sample, also with melting_rate_kg_per_h.
func (s *MeltingSample) UnmarshalJSON(b []byte) error {
	type plain MeltingSample
	var v struct {
		plain
		MeltingRate *float64 `json:"melting_rate_kg_per_h"`
	}
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	take(&v.MeltingRateKgPerH, v.MeltingRate)
	*s = MeltingSample(v.plain)
	return nil
}

// UnmarshalJSON reads a Lesnewich fit, also with the "per" spellings.
func (f *MeltingFit) UnmarshalJSON(b []byte) error {
	type plain MeltingFit
	var v struct {
		plain
		Alpha      *float64 `json:"alpha_kg_per_h_a"`
		Beta       *float64 `json:"beta_kg_per_h_a2_mm"`
		AlphaSE    *float64 `json:"alpha_std_err_kg_per_h_a"`
		BetaSE     *float64 `json:"beta_std_err_kg_per_h_a2_mm"`
		AlphaLb    *float64 `json:"alpha_lb_per_h_a"`
		BetaLb     *float64 `json:"beta_lb_per_h_a2_in"`
		AlphaLbSE  *float64 `json:"alpha_std_err_lb_per_h_a"`
		BetaLbSE   *float64 `json:"beta_std_err_lb_per_h_a2_in"`
		ResidualSD *float64 `json:"residual_sd_kg_per_h"`
	}
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	take(&v.AlphaKgPerHA, v.Alpha)
	take(&v.BetaKgPerHA2MM, v.Beta)
	take(&v.AlphaStdErrKgPerHA, v.AlphaSE)
	take(&v.BetaStdErrKgPerHA2MM, v.BetaSE)
	take(&v.AlphaLbPerHA, v.AlphaLb)
	take(&v.BetaLbPerHA2In, v.BetaLb)
	take(&v.AlphaStdErrLbPerHA, v.AlphaLbSE)
	take(&v.BetaStdErrLbPerHA2In, v.BetaLbSE)
	take(&v.ResidualSDKgPerH, v.ResidualSD)
	*f = MeltingFit(v.plain)
	return nil
}
