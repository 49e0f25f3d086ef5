package kinetics_test

import (
	"math"
	"testing"

	"parch/internal/kinetics"
	"parch/internal/simulate"
)

// simulated returns an invented run as a Series, and its model.
func simulated(t testing.TB, sc simulate.Scenario, seed uint64) (kinetics.Series, *simulate.Model) {
	t.Helper()
	m, err := simulate.NewModel(sc)
	if err != nil {
		t.Fatal(err)
	}
	var s kinetics.Series
	m.Run(seed, func(smp simulate.Sample) bool {
		s.TimeH = append(s.TimeH, smp.ElapsedS/3600)
		s.Value = append(s.Value, smp.MassG)
		st := int8(1)
		if !smp.Stable {
			st = -1
		}
		s.Stable = append(s.Stable, st)
		return true
	})
	return s, m
}

func demoSetup() kinetics.Setup {
	setup := kinetics.NewSetup()
	setup.InitialMoistureWB = 86.5
	setup.TargetWBPct = 18
	setup.ThicknessMM = 6
	setup.Faces = 2
	setup.EquilibriumDB = 0.05
	return setup
}

// trueReached is when the noiseless simulated curve reaches moisture xt.
func trueReached(m *simulate.Model, xt float64) float64 {
	lo, hi := 0.0, 100.0
	for i := 0; i < 100; i++ {
		mid := (lo + hi) / 2
		if m.MoistureDB(mid) > xt {
			lo = mid
		} else {
			hi = mid
		}
	}
	return lo
}

// The demo run's constants are known (simulate package): the analysis must
// recover them. Tolerances are ours, stated per check.
func TestRecoversSimulatedConstants(t *testing.T) {
	sc := simulate.AppleRings()
	for _, seed := range []uint64{1, 2, 3} {
		s, m := simulated(t, sc, seed)
		r, err := kinetics.Analyze(s, demoSetup(), kinetics.Options{})
		if err != nil {
			t.Fatal(err)
		}
		// Dry solids from m0·(1 − x0): within 0.1 % (m0 is a smoothed reading).
		if rel(r.DryMassG, m.DryMassG()) > 1e-3 {
			t.Errorf("seed %d: dry mass %.3f, true %.3f", seed, r.DryMassG, m.DryMassG())
		}
		// Diffusivity from Crank's series: within 3 %.
		if r.Diffusivity == nil || rel(r.Diffusivity.DM2PerS, sc.DiffusivityM2s) > 0.03 {
			t.Errorf("seed %d: diffusivity %+v, true %g", seed, r.Diffusivity, sc.DiffusivityM2s)
		}
		// Constant-rate period: found, ends within 0.1 h (the smoothed rate
		// needs a little time to fall 8 %), rate within 2 %.
		cr := r.ConstantRate
		if cr == nil || math.Abs(cr.EndH-m.ConstantRateEndH()) > 0.1 || rel(cr.RateGPerH, m.ConstantRateGPerH()) > 0.02 {
			t.Errorf("seed %d: constant rate %+v, true end %.3f h rate %.2f g/h", seed, cr, m.ConstantRateEndH(), m.ConstantRateGPerH())
		}
		// Target reached: within 3 minutes of the noiseless curve.
		want := trueReached(m, kinetics.WetToDry(0.18))
		if math.Abs(r.TargetReachedH-want) > 0.05 {
			t.Errorf("seed %d: target reached at %.3f h, true %.3f h", seed, r.TargetReachedH, want)
		}
		if r.Rejected == 0 || r.RejectedBy["unstable"] == 0 {
			t.Errorf("seed %d: the door openings' unsettled readings were not rejected: %v", seed, r.RejectedBy)
		}
		if len(r.SuspectedRemovals) != 0 {
			t.Errorf("seed %d: suspected removals in a run with none: %v", seed, r.SuspectedRemovals)
		}
		t.Logf("seed %d: dry %.3f g, D %.4g, constant rate to %.3f h (true %.3f) at %.2f g/h (true %.2f), target at %.3f h (true %.3f)",
			seed, r.DryMassG, r.Diffusivity.DM2PerS, cr.EndH, m.ConstantRateEndH(), cr.RateGPerH, m.ConstantRateGPerH(), r.TargetReachedH, want)
		if r.Best == nil {
			t.Errorf("seed %d: no best model", seed)
		}
	}
}

// "What would we have known at hour N?": the projection from data up to a
// third of the way to the target lands within 10 % and its range holds the
// true time.
func TestProjectionFromPartialRun(t *testing.T) {
	sc := simulate.AppleRings()
	s, m := simulated(t, sc, 1)
	want := trueReached(m, kinetics.WetToDry(0.18))
	for _, frac := range []float64{0.35, 0.5, 0.75} {
		until := frac * want
		r, err := kinetics.Analyze(s, demoSetup(), kinetics.Options{UntilH: until})
		if err != nil {
			t.Fatal(err)
		}
		p := r.Projection
		if p.Method != kinetics.MethodCombined || rel(p.TargetH-until, want-until) > 0.10 {
			t.Errorf("at %.2f h: projected %.3f h by %s, true %.3f h", until, p.TargetH, p.Method, want)
		}
		t.Logf("at %.2f h: projected %.3f h (%.3f–%.3f), true %.3f h", until, p.TargetH, p.LowH, p.HighH, want)
		if !(p.LowH <= want && want <= p.HighH) {
			t.Errorf("at %.2f h: range %.3f–%.3f h misses the true %.3f h", until, p.LowH, p.HighH, want)
		}
	}
}

func rel(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

// The projection history replays what the projection said during the run:
// it ends at "reached", and once a third of the way in it stays within
// 15 % of the true remaining time.
func TestProjectionHistory(t *testing.T) {
	s, m := simulated(t, simulate.AppleRings(), 2)
	setup := demoSetup()
	r, err := kinetics.Analyze(s, setup, kinetics.Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := trueReached(m, kinetics.WetToDry(0.18))
	h := r.ProjectionHistory()
	if len(h) < 12 || h[len(h)-1].Method != kinetics.ProjReached {
		t.Fatalf("history %+v", h)
	}
	for i, p := range h {
		if i > 0 && p.AtH < h[i-1].AtH {
			t.Fatalf("history out of order at %d", i)
		}
		t.Logf("at %.2f h: %.2f h (%.2f–%.2f) %s", p.AtH, p.TargetH, p.LowH, p.HighH, p.Method)
		// Within the last half hour the time left is too short for a
		// relative error to mean much.
		if p.Method == kinetics.MethodCombined && p.AtH > want/3 && want-p.AtH > 0.5 && rel(p.TargetH-p.AtH, want-p.AtH) > 0.15 {
			t.Errorf("at %.2f h: projected %.2f h, true %.2f h", p.AtH, p.TargetH, want)
		}
	}
}
