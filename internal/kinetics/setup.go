package kinetics

import (
	"fmt"
	"math"
)

// Setup holds the run parameters. Unknown values are NaN. Changing any of
// them and analysing again recomputes every derived value; the readings are
// never changed.
type Setup struct {
	TareG             float64   // subtracted from every reading (default 0)
	InitialMassG      float64   // net mass at the start; NaN: the first accepted reading
	InitialMoistureWB float64   // percent, wet basis, from an oven test of a like sample
	DryMassG          float64   // dry solids left on the balance at the end (oven test of the sample)
	TargetWBPct       float64   // target moisture, percent wet basis
	TargetDB          float64   // target moisture, dry basis (used when TargetWBPct is NaN)
	EquilibriumDB     float64   // equilibrium moisture X_e, dry basis (default 0)
	AreaM2            float64   // tray area, for the flux
	ThicknessMM       float64   // slice thickness
	Faces             int       // 1 on a solid tray, 2 on a mesh; 0: not given (2 assumed)
	Removals          []Removal // pieces taken out
	SteadyPct         float64   // end of run: change within this percent of the mass...
	SteadyWindowH     float64   // ...over this many hours
	AirTempC          float64   // the dryer's air temperature setpoint, °C (NaN: not given); for studies
}

// Removal is a piece taken off the balance at ElapsedH hours, of MassG grams.
type Removal struct {
	ElapsedH float64
	MassG    float64
}

// NewSetup returns a setup with every optional value unknown and the
// documented defaults: tare 0, X_e 0, steady within 0.5 % over 1 h
// (common practice for calling a drying curve flat; both configurable).
func NewSetup() Setup {
	nan := math.NaN()
	return Setup{
		TareG: 0, InitialMassG: nan, InitialMoistureWB: nan, DryMassG: nan,
		TargetWBPct: nan, TargetDB: nan, EquilibriumDB: 0, AreaM2: nan, ThicknessMM: nan,
		SteadyPct: 0.5, SteadyWindowH: 1, AirTempC: nan,
	}
}

// Validate checks values that cannot be right whatever the data.
func (s Setup) Validate() error {
	checks := []struct {
		name   string
		v      float64
		lo, hi float64
		open   bool
	}{
		{"initial moisture (% wet basis)", s.InitialMoistureWB, 0, 100, true},
		{"target moisture (% wet basis)", s.TargetWBPct, 0, 100, true},
		{"dry mass (g)", s.DryMassG, 0, math.Inf(1), true},
		{"initial mass (g)", s.InitialMassG, 0, math.Inf(1), true},
		{"target moisture (dry basis)", s.TargetDB, 0, math.Inf(1), false},
		{"equilibrium moisture (dry basis)", s.EquilibriumDB, 0, math.Inf(1), false},
		{"tray area (m²)", s.AreaM2, 0, math.Inf(1), true},
		{"thickness (mm)", s.ThicknessMM, 0, math.Inf(1), true},
		{"steady tolerance (%)", s.SteadyPct, 0, 100, true},
		{"steady window (h)", s.SteadyWindowH, 1.0 / 60, 1000, false},
		{"tare (g)", s.TareG, 0, math.Inf(1), false},
		{"air temperature (°C)", s.AirTempC, -40, 400, true},
	}
	for _, c := range checks {
		if math.IsNaN(c.v) {
			continue
		}
		if math.IsInf(c.v, 0) || c.v < c.lo || c.v > c.hi || c.open && (c.v == c.lo || c.v == c.hi) {
			return fmt.Errorf("%s = %v is out of range: expected %s", c.name, c.v, rangeText(c.lo, c.hi, c.open))
		}
	}
	if s.InitialMoistureWB < 100 && s.TargetWBPct >= s.InitialMoistureWB {
		return fmt.Errorf("target moisture %v %% is not below the initial moisture %v %% (wet basis): nothing to dry", s.TargetWBPct, s.InitialMoistureWB)
	}
	if x0 := WetToDry(s.InitialMoistureWB / 100); s.TargetDB >= x0 && math.IsNaN(s.TargetWBPct) {
		return fmt.Errorf("target moisture %v (dry basis) is not below the initial moisture %.4g (dry basis): nothing to dry", s.TargetDB, x0)
	}
	if s.Faces != 0 && s.Faces != 1 && s.Faces != 2 {
		return fmt.Errorf("drying faces = %d: expected 1 (solid tray) or 2 (mesh)", s.Faces)
	}
	for _, r := range s.Removals {
		if !(r.MassG > 0) || !(r.ElapsedH >= 0) || math.IsInf(r.MassG, 0) || math.IsInf(r.ElapsedH, 0) {
			return fmt.Errorf("removal of %v g at %v h: expected a positive mass at a time ≥ 0", r.MassG, r.ElapsedH)
		}
	}
	return nil
}

// TargetX returns the target as dry-basis moisture, NaN when none is set.
func (s Setup) TargetX() float64 {
	if !math.IsNaN(s.TargetWBPct) {
		return WetToDry(s.TargetWBPct / 100)
	}
	return s.TargetDB
}

// WetToDry converts wet-basis moisture x (fraction) to dry basis X = x/(1 − x).
func WetToDry(x float64) float64 { return x / (1 - x) }

// DryToWet converts dry-basis moisture X to wet basis x = X/(1 + X) (fraction).
func DryToWet(X float64) float64 { return X / (1 + X) }

// MassAtMoisture is the mass of a sample with dry solids ms at wet-basis
// moisture x (fraction): ms/(1 − x) (DOMAIN.md quantities).
func MassAtMoisture(ms, x float64) float64 { return ms / (1 - x) }

// HalfThicknessM is the diffusion length L in metres: half the thickness
// when drying from both faces, the whole thickness from one.
func (s Setup) HalfThicknessM() float64 {
	l := s.ThicknessMM / 1000
	if s.Faces == 1 {
		return l
	}
	return l / 2
}

func rangeText(lo, hi float64, open bool) string {
	switch {
	case math.IsInf(hi, 1) && open:
		return fmt.Sprintf("above %g", lo)
	case math.IsInf(hi, 1):
		return fmt.Sprintf("%g or more", lo)
	case open:
		return fmt.Sprintf("between %g and %g", lo, hi)
	}
	return fmt.Sprintf("from %g to %g", lo, hi)
}
