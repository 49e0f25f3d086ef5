package kinetics

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// USDA FoodData Central, SR Legacy 09004 (apples, raw, without skin):
// 86.67 g water per 100 g. A 243.7 g tray load dried to 18 % wet basis
// keeps its 32.49 g of solids: 32.485/0.82 = 39.62 g.
func TestMoistureArithmeticUSDAApple(t *testing.T) {
	ms := 243.7 * (1 - 0.8667)
	if got := MassAtMoisture(ms, 0.18); math.Abs(got-39.616) > 0.005 {
		t.Errorf("mass at 18 %% wb = %.4f g, want 39.62", got)
	}
	x := WetToDry(0.8667)
	if math.Abs(x-6.502) > 0.001 || math.Abs(DryToWet(x)-0.8667) > 1e-12 {
		t.Errorf("dry basis %.4f", x)
	}
}

// crankRun makes a run with no constant-rate period: a slab drying by
// diffusion from the start (Crank 1975, ch. 4), D/L² = 0.2 1/h, starting a
// little way in (Fo 0.02) as a real sample warming up does, with a fixed
// ±0.01 g ripple for noise.
func crankRun(n int, spacingH float64) Series {
	var s Series
	for i := 0; i < n; i++ {
		h := float64(i) * spacingH
		x := 0.05 + 6*PlaneSheetMR(0.02+0.2*h) + 0.01/30*math.Sin(float64(i)*2.3)
		s.TimeH = append(s.TimeH, h)
		s.Value = append(s.Value, 30*(1+x))
		s.Stable = append(s.Stable, 1)
	}
	return s
}

func TestNoConstantRateIsInvented(t *testing.T) {
	setup := NewSetup()
	setup.DryMassG = 30
	r, err := Analyze(crankRun(1500, 0.01), setup, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if r.ConstantRate != nil {
		t.Fatalf("found a constant-rate period in a pure diffusion curve: %+v", *r.ConstantRate)
	}
}

func TestDeclaredRemovalRescalesSolids(t *testing.T) {
	s := crankRun(1500, 0.01)
	// A 10 g piece taken out at 5 h (applied to the readings after it).
	var mAt float64
	for i, h := range s.TimeH {
		if h >= 5 {
			if mAt == 0 {
				mAt = s.Value[i-1]
			}
			s.Value[i] -= 10 * s.Value[i] / mAt
		}
	}
	setup := NewSetup()
	x0 := 0.05 + 6*PlaneSheetMR(0.02)
	setup.InitialMoistureWB = 100 * x0 / (1 + x0)
	setup.Removals = []Removal{{ElapsedH: 5, MassG: 10}}
	r, err := Analyze(s, setup, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// DOMAIN.md: solids left = m_s·(1 − Δm/m).
	want := 30 * (1 - 10/mAt)
	if math.Abs(r.DryMassG-want) > 0.01 || math.Abs(r.InitialDryMassG-30) > 0.01 {
		t.Errorf("dry mass at end %.3f (want %.3f), at start %.3f (want 30)", r.DryMassG, want, r.InitialDryMassG)
	}
	// Moisture is continuous across the removal.
	last := s.Value[len(s.Value)-1]
	if got := r.FinalMoistureDB; math.Abs(got-(last/want-1)) > 0.01 {
		t.Errorf("final X %.4f, want %.4f", got, last/want-1)
	}
	if len(r.SuspectedRemovals) != 0 {
		t.Errorf("a declared removal reported as suspected: %v", r.SuspectedRemovals)
	}
	// Undeclared, the same drop is reported for the user to confirm and not applied.
	setup.Removals = nil
	r, _ = Analyze(s, setup, Options{})
	if len(r.SuspectedRemovals) != 1 || math.Abs(r.SuspectedRemovals[0].ElapsedH-5) > 0.02 ||
		math.Abs(r.SuspectedRemovals[0].MassG-10) > 0.5 {
		t.Errorf("suspected removals %+v, want one of about 10 g at 5 h", r.SuspectedRemovals)
	}
	if math.Abs(r.DryMassG-30) > 0.01 {
		t.Errorf("a suspected removal was applied: dry mass %.3f", r.DryMassG)
	}
}

func TestSpikesRejected(t *testing.T) {
	s := crankRun(1500, 0.01)
	for _, i := range []int{200, 201, 202, 700, 1200} {
		s.Value[i] += 8 // a hand on the rack, readings marked stable
	}
	setup := NewSetup()
	setup.DryMassG = 30
	r, _ := Analyze(s, setup, Options{})
	if r.RejectedBy["spike"] != 5 {
		t.Errorf("rejected %v, want 5 spikes", r.RejectedBy)
	}
}

// Bad input gives a clear message or NaN with a reason, never a panic.
func TestBadInputs(t *testing.T) {
	one := Series{TimeH: []float64{0}, Value: []float64{100}}
	equal := Series{}
	for i := 0; i < 50; i++ {
		equal.TimeH = append(equal.TimeH, float64(i)*0.1)
		equal.Value = append(equal.Value, 100)
	}
	neg := Series{TimeH: []float64{0, 1, 2}, Value: []float64{-5, -4, -3}}
	big := NewSetup()
	big.DryMassG = 500
	big.TargetWBPct = 18
	passed := NewSetup()
	passed.DryMassG = 10 // 95 % moisture at 200 g: the 18 % target is far below, 97 % above
	passed.TargetWBPct = 97
	equalSetup := NewSetup()
	equalSetup.InitialMoistureWB = 86
	equalSetup.TargetWBPct = 18
	tests := []struct {
		name  string
		s     Series
		setup Setup
		warn  string
	}{
		{"one reading", one, NewSetup(), "too few"},
		{"all equal", equal, equalSetup, ""},
		{"negative masses", neg, NewSetup(), "no usable readings"},
		{"dry mass larger than sample", crankRun(200, 0.05), big, "not less than the initial mass"},
		{"target already passed", crankRun(200, 0.05), passed, "reached at the start"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r, err := Analyze(tc.s, tc.setup, Options{})
			if err != nil {
				t.Fatal(err)
			}
			if tc.warn != "" && !strings.Contains(strings.Join(r.Warnings, "|"), tc.warn) {
				t.Errorf("warnings %q lack %q", r.Warnings, tc.warn)
			}
		})
	}
	if _, err := Analyze(Series{}, NewSetup(), Options{}); !errors.Is(err, ErrNoReadings) {
		t.Errorf("empty series: %v", err)
	}
	bad := NewSetup()
	bad.InitialMoistureWB = 120
	if _, err := Analyze(one, bad, Options{}); err == nil || !strings.Contains(err.Error(), "initial moisture") {
		t.Errorf("moisture 120 %%: %v", err)
	}
	// Issue 9, case 11: a target above the initial moisture is refused.
	bad = NewSetup()
	bad.InitialMoistureWB, bad.TargetWBPct = 80, 90
	if _, err := Analyze(one, bad, Options{}); err == nil || !strings.Contains(err.Error(), "not below the initial moisture") {
		t.Errorf("target 90 %% over 80 %%: %v", err)
	}
	// Issue 9, case 4: a steady window too small to mean anything.
	bad = NewSetup()
	bad.SteadyWindowH = 1e-300
	if _, err := Analyze(one, bad, Options{}); err == nil || !strings.Contains(err.Error(), "steady window") {
		t.Errorf("steady window 1e-300 h: %v", err)
	}
}
