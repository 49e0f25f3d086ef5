package simulate

import (
	"math"
	"testing"

	"parch/internal/kinetics"
)

func TestAppleRingsCurve(t *testing.T) {
	m, err := NewModel(AppleRings())
	if err != nil {
		t.Fatal(err)
	}
	// Dry solids: m0·(1 − x0) (DOMAIN.md quantities table).
	if got := m.DryMassG(); math.Abs(got-200*(1-0.865)) > 1e-9 {
		t.Errorf("dry mass %v", got)
	}
	if got := m.MassG(0); math.Abs(got-200) > 1e-9 {
		t.Errorf("mass at 0 h = %v, want 200", got)
	}
	// Mass and rate are continuous where the constant-rate period ends.
	tc := m.ConstantRateEndH()
	if !(tc > 0.3 && tc < 2) {
		t.Fatalf("constant-rate period ends at %v h; the scenario wants a short one", tc)
	}
	eps := 1e-5
	before := (m.MassG(tc-2*eps) - m.MassG(tc-eps)) / eps
	after := (m.MassG(tc+eps) - m.MassG(tc+2*eps)) / eps
	if math.Abs(before-after) > 1e-3*before {
		t.Errorf("rate jumps at the end of the constant-rate period: %v -> %v g/h", before, after)
	}
	if math.Abs(before-m.ConstantRateGPerH()) > 1e-3*before {
		t.Errorf("rate before end %v, constant rate %v", before, m.ConstantRateGPerH())
	}
	// Falling-rate period follows Crank's plane sheet with D/L²: the moisture
	// ratio between two times in it obeys the series exactly.
	s := AppleRings()
	half := s.ThicknessMM / 2000
	foPerH := s.DiffusivityM2s / (half * half) * 3600
	x0 := 0.865 / 0.135
	mr := func(h float64) float64 { return (m.MoistureDB(h) - s.EquilibriumDB) / (x0 - s.EquilibriumDB) }
	fo5 := kinetics.PlaneSheetFo(mr(5))
	fo8 := kinetics.PlaneSheetFo(mr(8))
	if math.Abs((fo8-fo5)-3*foPerH) > 1e-6 {
		t.Errorf("Fo advanced %v over 3 h, want %v", fo8-fo5, 3*foPerH)
	}
}

func TestRunIsDeterministicAndQuantised(t *testing.T) {
	m, _ := NewModel(AppleRings())
	var a, b []Sample
	m.Run(7, func(s Sample) bool { a = append(a, s); return len(a) < 2000 })
	m.Run(7, func(s Sample) bool { b = append(b, s); return len(b) < 2000 })
	unstable := 0
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("sample %d differs between runs with the same seed", i)
		}
		if q := a[i].MassG / 0.01; math.Abs(q-math.Round(q)) > 1e-6 {
			t.Fatalf("mass %v not on the 0.01 g grid", a[i].MassG)
		}
		if !a[i].Stable {
			unstable++
		}
	}
	if unstable == 0 {
		t.Error("the first door opening (3.2 h) should give unsettled readings")
	}
}

// With the critical moisture at the initial one there is no constant-rate
// period: the curve is Crank's from the first reading.
func TestNoConstantRateScenario(t *testing.T) {
	sc := AppleRings()
	sc.CriticalDB = 99
	m, err := NewModel(sc)
	if err != nil {
		t.Fatal(err)
	}
	if m.ConstantRateEndH() != 0 || math.Abs(m.MassG(0)-200) > 1e-9 {
		t.Fatalf("end %v, mass at 0 %v", m.ConstantRateEndH(), m.MassG(0))
	}
	half := sc.ThicknessMM / 2000
	fo := sc.DiffusivityM2s * 3600 / (half * half)
	x0 := 0.865 / 0.135
	if got, want := m.MoistureDB(2), sc.EquilibriumDB+(x0-sc.EquilibriumDB)*kinetics.PlaneSheetMR(2*fo); math.Abs(got-want) > 1e-9 {
		t.Errorf("X at 2 h = %v, want %v", got, want)
	}
}
