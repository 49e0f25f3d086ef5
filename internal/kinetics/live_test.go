package kinetics_test

import (
	"math"
	"testing"

	"parch/internal/kinetics"
	"parch/internal/simulate"
)

// The live rate follows the simulated run's true rate (its noiseless
// curve), moisture agrees with the full analysis, and the periods come in
// the order the run has them.
func TestLiveAgreesWithAnalyze(t *testing.T) {
	s, m := simulated(t, simulate.AppleRings(), 1)
	setup := demoSetup()
	live := kinetics.NewLive(setup)
	full, err := kinetics.Analyze(s, setup, kinetics.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var periods []kinetics.Period
	worst, sumSq, nSq := 0.0, 0.0, 0
	for i := range s.TimeH {
		p := live.Add(s.TimeH[i], s.Value[i], s.Stable[i])
		if !p.Kept {
			continue
		}
		if n := len(periods); n == 0 || periods[n-1] != p.Period {
			periods = append(periods, p.Period)
		}
		h := s.TimeH[i]
		nearDoor := false
		for _, d := range simulate.AppleRings().Doors {
			nearDoor = nearDoor || math.Abs(h-d.AtH) < 0.25
		}
		if h > 0.2 && h < 12 && !nearDoor {
			const eps = 1e-4
			truth := (m.MassG(h-eps) - m.MassG(h+eps)) / (2 * eps)
			e := math.Abs(p.RateGPH-truth) / math.Max(truth, 1)
			worst = math.Max(worst, e)
			sumSq += e * e
			nSq++
		}
		if math.Abs(p.X-full.Points.X(i)) > 1e-6 {
			t.Fatalf("reading %d: live X %v, analysed %v", i, p.X, full.Points.X(i))
		}
	}
	rms := math.Sqrt(sumSq / float64(nSq))
	t.Logf("periods %v; live rate error rms %.1f %%, worst %.1f %% (outside door openings)", periods, 100*rms, 100*worst)
	// The window is sized for 5 % noise (one standard deviation, RateWindow);
	// the worst of thousands of readings lies near four.
	if rms > 0.06 || worst > 0.25 {
		t.Errorf("live rate off the true rate: rms %.1f %%, worst %.1f %%", 100*rms, 100*worst)
	}
	want := []kinetics.Period{kinetics.PeriodStarting, kinetics.PeriodConstant, kinetics.PeriodFalling, kinetics.PeriodSteady}
	if len(periods) != len(want) {
		t.Fatalf("periods %v, want %v", periods, want)
	}
	for i := range want {
		if periods[i] != want[i] {
			t.Fatalf("periods %v, want %v", periods, want)
		}
	}
}

// BenchmarkLiveAdd: the cost of one reading after 10⁶ readings; compare
// with -benchtime runs of different lengths: it must not grow with n.
func BenchmarkLiveAdd(b *testing.B) {
	for _, n := range []int{1000, 200_000} {
		b.Run(map[int]string{1000: "after1e3", 200_000: "after2e5"}[n], func(b *testing.B) {
			setup := kinetics.NewSetup()
			setup.InitialMoistureWB = 86
			live := kinetics.NewLive(setup)
			h := 0.0
			mass := func(h float64) float64 { return 30 + 170*math.Exp(-0.3*h) + 0.01*math.Sin(h*1e4) }
			for i := 0; i < n; i++ {
				h = float64(i) / 3600
				live.Add(h, mass(h), 1)
			}
			b.ResetTimer()
			for i := 0; b.Loop(); i++ {
				h += 1.0 / 3600
				live.Add(h, mass(h), 1)
			}
		})
	}
}
