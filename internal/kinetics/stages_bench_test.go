package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"
)

// bench1M is an invented run for timing only: 10^6 readings 0.1 s apart
// (27.8 h) of 200 g of a product at 86.5 % wet basis, a constant-rate start,
// a falling rate, two pieces taken off, spikes and balance noise.
func bench1M() (Series, Setup) {
	const n = 1_000_000
	rng := rand.New(rand.NewPCG(1, 2))
	s := Series{TimeH: make([]float64, n), Value: make([]float64, n), Stable: make([]int8, n)}
	solids := 200 * (1 - 0.865)
	x0, xe, xc := 200/solids-1, 0.05, 4.5
	rc := 0.9 // 1/h, dry basis, in the constant-rate period
	tc := (x0 - xc) / rc
	k := rc / (xc - xe)
	for i := range n {
		h := float64(i) * 0.1 / 3600
		x := x0 - rc*h
		if h > tc {
			x = xe + (xc-xe)*math.Exp(-k*(h-tc))
		}
		m := solids * (1 + x)
		if h > 3 {
			m -= 4.3
		}
		if h > 5 {
			m -= 2.98
		}
		m += 0.02 * rng.NormFloat64()
		if rng.IntN(2000) == 0 {
			m += 3 * rng.Float64()
		}
		s.TimeH[i], s.Value[i], s.Stable[i] = h, math.Round(m*100)/100, 1
	}
	setup := NewSetup()
	setup.InitialMoistureWB = 86.5
	setup.TargetWBPct = 12
	setup.ThicknessMM = 6
	setup.Removals = []Removal{{ElapsedH: 3, MassG: 4.3}}
	return s, setup
}

func nowarn(string, ...any) {}

// BenchmarkStages times each stage of the analysis on a 10^6-reading run,
// each given what the stages before it found; Analyze is the whole.
func BenchmarkStages(b *testing.B) {
	s, setup := bench1M()
	t := s.TimeH
	c := clean(s, setup)
	sm := rate(t, c)
	mo := moisture(s, setup, c, sm, nowarn)
	cr, _ := periods(t, c, sm, mo.solids, setup)
	fitT, fitMR := binnedBy(t, c.keep, 2000, mo.conv.mr)
	tr := projection(t, c.keep, mo.conv.x, mo.xe, mo.initialDB, setup.TargetX(), Options{}, nowarn)
	stages := []struct {
		name string
		run  func()
	}{
		{"clean", func() { clean(s, setup) }},
		{"rate", func() { rate(t, c) }},
		{"moisture", func() { moisture(s, setup, c, sm, nowarn) }},
		{"periods", func() { periods(t, c, sm, mo.solids, setup) }},
		{"fits", func() { binnedBy(t, c.keep, 2000, mo.conv.mr); fits(fitT, fitMR, nowarn) }},
		{"diffusivity", func() { diffusivity(fitT, fitMR, t[sm.first], cr, setup, nowarn) }},
		{"projection", func() { projection(t, c.keep, mo.conv.x, mo.xe, mo.initialDB, setup.TargetX(), Options{}, nowarn) }},
		{"backtest", func() { tr.bt = nil; backtestProjection(tr) }},
		{"Analyze", func() { Analyze(s, setup, Options{}) }},
	}
	for _, st := range stages {
		b.Run(st.name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				st.run()
			}
		})
	}
}

// The invented dense run above, analysed whole: the unannounced drop at
// 5 h is found (of its own size) among spikes one reading in 2000, without
// the spike pass a sparse log needs before its search for steps; the
// announced one at 3 h is not reported again.
func TestDenseRunStep(t *testing.T) {
	s, setup := bench1M()
	r, err := Analyze(s, setup, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(r.SuspectedRemovals) != 1 {
		t.Fatalf("suspected removals %+v, want one at 5 h", r.SuspectedRemovals)
	}
	st := r.SuspectedRemovals[0]
	if math.Abs(st.ElapsedH-5) > 0.01 || math.Abs(st.MassG-2.98) > 0.3 {
		t.Errorf("suspected removal at %.3f h of %.2f g, want 5 h and 2.98 g", st.ElapsedH, st.MassG)
	}
	if r.RejectedBy["spike"] < 300 {
		t.Errorf("spikes rejected %d; about 500 were put in (one in 2000, up to 3 g)", r.RejectedBy["spike"])
	}
}
