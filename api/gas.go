package api

import "etchlog/predict"

// gasClassOut is a shielding gas as a composition with its classification
// under ISO 14175 (the edition and how it is known are in Standard).
type gasClassOut struct {
	Composition predict.GasComposition `json:"composition"`
	ISO14175    string                 `json:"iso14175,omitempty"`
	Standard    string                 `json:"standard"`
}

// gasClassOf reads gas as a composition and classifies it; nil when the
// text is not a composition (an unusual trade name) or empty.
func gasClassOf(gas string) *gasClassOut {
	g, err := predict.ParseGas(gas)
	if err != nil {
		return nil
	}
	return &gasClassOut{Composition: g, ISO14175: predict.ISO14175(g), Standard: predict.GasStandardEdition}
}
