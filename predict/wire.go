package predict

import "math"

// NominalWire is one nominal solid-wire size as sold in metric and
// inch-pound markets, treated as the same wire (common practice, no
// source): 0.035 in (0.889 mm) and 0.9 mm are one size.
type NominalWire struct {
	MM   float64 `json:"mm"`   // metric nominal size
	Inch string  `json:"inch"` // inch-pound nominal size as written
	In   float64 `json:"in"`   // the same in inches
}

// NominalWires is the table of nominal sizes, smallest first.
var NominalWires = []NominalWire{
	{0.6, "0.024", 0.024}, {0.8, "0.030", 0.030}, {0.9, "0.035", 0.035}, {1.0, "0.040", 0.040},
	{1.2, "0.045", 0.045}, {1.4, "0.052", 0.052}, {1.6, "1/16", 0.0625}, {2.0, "5/64", 0.078125},
	{2.4, "3/32", 0.09375}, {3.2, "1/8", 0.125}, {4.0, "5/32", 0.15625},
}

// WireToleranceMM is how far (mm) a diameter may lie from a table entry's
// metric size or its inch size in mm and still be that nominal size
// (common practice, no source; the table's neighbours are ≥ 0.06 mm apart).
const WireToleranceMM = 0.03

// NominalWireMM returns the metric nominal size of a wire diameter (mm):
// the table entry whose metric size, or inch size × 25.4, lies within
// WireToleranceMM; otherwise the diameter rounded to 0.001 mm and false.
func NominalWireMM(d float64) (float64, bool) {
	for _, w := range NominalWires {
		if math.Abs(d-w.MM) <= WireToleranceMM || math.Abs(d-InchToMM(w.In)) <= WireToleranceMM {
			return w.MM, true
		}
	}
	return math.Round(d*1000) / 1000, false
}
