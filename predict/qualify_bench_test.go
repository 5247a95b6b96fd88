package predict_test

import (
	"math/rand/v2"
	"testing"

	"etchlog/predict"
)

// BenchmarkEvaluate checks 100,000 production records (fixture values, about
// one in twenty outside the current band) against one procedure's ranges,
// in process, and reports records/s.
func BenchmarkEvaluate(b *testing.B) {
	q, err := predict.Derive([]predict.Rule{
		{Variable: predict.VarCurrent, Kind: predict.RulePercentBand, BelowPct: fp(10), AbovePct: fp(10)},
		{Variable: predict.VarVoltage, Kind: predict.RulePercentBand, BelowPct: fp(7), AbovePct: fp(7)},
		{Variable: predict.VarTravelSpeed, Kind: predict.RulePercentBand, BelowPct: fp(25), AbovePct: fp(25)},
		{Variable: predict.VarWireFeedSpeed, Kind: predict.RulePercentBand, BelowPct: fp(10), AbovePct: fp(10)},
		{Variable: predict.VarShieldingGas, Kind: predict.RuleSame},
		{Variable: predict.VarHeatInput, Kind: predict.RulePercentBand, AbovePct: fp(0)},
	}, []predict.PQRValues{pqr("PQR-1", map[predict.Variable]float64{
		predict.VarCurrent: 200, predict.VarVoltage: 24, predict.VarTravelSpeed: 6, predict.VarWireFeedSpeed: 8,
	}, map[predict.Variable]string{predict.VarShieldingGas: "Ar-10CO2"})})
	if err != nil {
		b.Fatal(err)
	}
	const n = 100_000
	rng := rand.New(rand.NewPCG(1, 2))
	records := make([]predict.Observation, n)
	for i := range records {
		o := &records[i]
		o.SetNumber(predict.VarCurrent, 200*(1+0.11*(2*rng.Float64()-1)))
		o.SetNumber(predict.VarVoltage, 24*(1+0.05*(2*rng.Float64()-1)))
		o.SetNumber(predict.VarTravelSpeed, 6*(1+0.2*(2*rng.Float64()-1)))
		o.SetNumber(predict.VarWireFeedSpeed, 8*(1+0.05*(2*rng.Float64()-1)))
	}
	c := predict.NewChecker(q)
	var flags []predict.Flag
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		total := 0
		for i := range records {
			flags = c.Evaluate(&records[i], flags[:0])
			total += len(flags)
		}
		if total == 0 {
			b.Fatal("no record flagged; the fixture should put some outside the range")
		}
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "records/s")
}
