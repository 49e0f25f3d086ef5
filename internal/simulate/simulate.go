// Package simulate makes drying runs of invented scenarios: a short
// constant-rate period followed by a falling rate controlled by Fickian
// diffusion in a plane sheet (Crank 1975, ch. 4), as a balance would report
// it: noise, 0.01 g resolution, door openings with spikes and unsettled
// readings, and an air-temperature channel. Used by `parch demo`,
// `parch simulate` and tests that need a run whose true constants are known.
package simulate

import (
	"fmt"
	"math"
	"math/rand/v2"

	"parch/internal/kinetics"
)

// Scenario is an invented drying run. All of it is ours: the numbers are
// plausible for fruit slices in a laboratory tray dryer, not taken from any
// measured run.
type Scenario struct {
	Name              string
	InitialMassG      float64 // product on the tared balance at the start
	InitialMoistureWB float64 // fraction, wet basis
	EquilibriumDB     float64 // equilibrium moisture, dry basis
	CriticalDB        float64 // where the constant-rate period ends, dry basis
	ThicknessMM       float64
	Faces             int     // 2 on a mesh tray, 1 on a solid tray
	DiffusivityM2s    float64 // effective diffusivity in the falling-rate period
	DurationH         float64
	IntervalS         float64 // balance reading interval
	NoiseG            float64 // standard deviation of balance noise
	ResolutionG       float64
	AirTempC          float64
	AirNoiseC         float64
	Doors             []Door
	// Removals are pieces taken out during the run (announced or not):
	// each takes its grams of product at the moisture of the rest.
	Removals []Removal
}

// Removal is a piece of MassG grams taken off the rack at AtH hours.
type Removal struct {
	AtH, MassG float64
}

// Door is a door opening: the operator reaches in, the balance sees a hand
// and a draught, the air cools and recovers.
type Door struct {
	AtH       float64
	DurationS float64
}

// AppleRings is the built-in demo: invented apple rings, 6 mm, on a mesh tray
// at 60 °C, 16 h.
func AppleRings() Scenario {
	return Scenario{
		Name:              "apple rings, 6 mm, mesh tray, 60 °C (invented demo scenario)",
		InitialMassG:      200,
		InitialMoistureWB: 0.865,
		EquilibriumDB:     0.05,
		CriticalDB:        4.5,
		ThicknessMM:       6,
		Faces:             2,
		DiffusivityM2s:    5e-10,
		DurationH:         16,
		IntervalS:         10,
		NoiseG:            0.02,
		ResolutionG:       0.01,
		AirTempC:          60,
		AirNoiseC:         0.15,
		Doors:             []Door{{AtH: 3.2, DurationS: 45}, {AtH: 9.5, DurationS: 30}},
	}
}

// Model is the noiseless drying curve of a scenario.
type Model struct {
	s        Scenario
	drySolid float64 // g
	x0       float64 // initial dry-basis moisture
	rateC    float64 // constant rate, dry basis, 1/h
	endC     float64 // end of the constant-rate period, h
	tau0     float64 // Fourier number on the diffusion curve where it takes over
	xStart   float64 // virtual initial moisture of the diffusion curve
	foPerH   float64 // D/L² in 1/h
}

// NewModel checks a scenario and prepares its curve. The constant-rate
// period ends where a diffusion curve with the same moisture and the same
// rate takes over, so mass and rate are continuous.
func NewModel(s Scenario) (*Model, error) {
	switch {
	case s.InitialMassG <= 0:
		return nil, fmt.Errorf("simulate: initial mass %v g must be positive", s.InitialMassG)
	case !(s.InitialMoistureWB > 0 && s.InitialMoistureWB < 1):
		return nil, fmt.Errorf("simulate: initial moisture %v must be a fraction between 0 and 1", s.InitialMoistureWB)
	case s.DiffusivityM2s <= 0 || s.ThicknessMM <= 0:
		return nil, fmt.Errorf("simulate: diffusivity and thickness must be positive")
	case s.IntervalS <= 0 || s.DurationH <= 0:
		return nil, fmt.Errorf("simulate: interval and duration must be positive")
	}
	m := &Model{s: s}
	m.drySolid = s.InitialMassG * (1 - s.InitialMoistureWB)
	m.x0 = s.InitialMoistureWB / (1 - s.InitialMoistureWB)
	half := s.ThicknessMM / 1000
	if s.Faces == 2 {
		half /= 2
	}
	m.foPerH = s.DiffusivityM2s / (half * half) * 3600
	xc := math.Min(s.CriticalDB, m.x0)
	if xc <= s.EquilibriumDB {
		return nil, fmt.Errorf("simulate: critical moisture %v must exceed equilibrium %v", xc, s.EquilibriumDB)
	}
	// The diffusion curve's relative rate −MR'/MR falls from ∞ towards
	// π²/4 per unit Fo. Pick the point on it whose relative rate gives, at
	// xc, the rate of a curve that starts there: with no constant-rate period
	// (xc = x0) the diffusion curve starts at Fo = 0.
	if xc >= m.x0 {
		m.endC, m.tau0, m.xStart = 0, 0, m.x0
		m.rateC = math.Inf(1)
		return m, nil
	}
	// Constant rate chosen so the diffusion curve that takes over at xc has
	// the same rate there: rate = (xc − xe)·(−MR'/MR)(τ0)·foPerH, with τ0 the
	// Fourier number where MR = (xc − xe)/(x0 − xe) on a curve started at x0.
	mrC := (xc - s.EquilibriumDB) / (m.x0 - s.EquilibriumDB)
	m.tau0 = kinetics.PlaneSheetFo(mrC)
	rel := relRate(m.tau0)
	m.rateC = (xc - s.EquilibriumDB) * rel * m.foPerH
	m.endC = (m.x0 - xc) / m.rateC
	m.xStart = s.EquilibriumDB + (xc-s.EquilibriumDB)/kinetics.PlaneSheetMR(m.tau0)
	return m, nil
}

// relRate is −(dMR/dFo)/MR on the plane-sheet curve, by central difference.
func relRate(fo float64) float64 {
	h := 1e-6 * math.Max(fo, 1e-3)
	d := (kinetics.PlaneSheetMR(fo+h) - kinetics.PlaneSheetMR(fo-h)) / (2 * h)
	return -d / kinetics.PlaneSheetMR(fo)
}

// DryMassG is the dry solids on the balance.
func (m *Model) DryMassG() float64 { return m.drySolid }

// ConstantRateEndH is when the constant-rate period ends (0 when there is none).
func (m *Model) ConstantRateEndH() float64 { return m.endC }

// ConstantRateGPerH is the water loss rate in the constant-rate period.
func (m *Model) ConstantRateGPerH() float64 { return m.rateC * m.drySolid }

// MoistureDB is the true dry-basis moisture at elapsed hours h.
func (m *Model) MoistureDB(h float64) float64 {
	if m.endC > 0 && h <= m.endC {
		return m.x0 - m.rateC*h
	}
	fo := m.tau0 + (h-m.endC)*m.foPerH
	return m.s.EquilibriumDB + (m.xStart-m.s.EquilibriumDB)*kinetics.PlaneSheetMR(fo)
}

// MassG is the true product mass at elapsed hours h, after the pieces
// removed by then.
func (m *Model) MassG(h float64) float64 { return m.SolidsAt(h) * (1 + m.MoistureDB(h)) }

// SolidsAt is the dry solids on the balance at elapsed hours h: each
// removal takes its share of them.
func (m *Model) SolidsAt(h float64) float64 {
	s := m.drySolid
	for _, r := range m.s.Removals {
		if h >= r.AtH {
			s *= 1 - r.MassG/(s*(1+m.MoistureDB(r.AtH)))
		}
	}
	return s
}

// Sample is one balance reading of a simulated run.
type Sample struct {
	ElapsedS float64
	MassG    float64 // as the balance shows it: noise, spikes, resolution
	Stable   bool
	AirTempC float64
	Raw      string // the line a balance would send
}

// Run produces the samples of a scenario in order; the same seed gives the
// same run. fn returning false stops early.
func (m *Model) Run(seed uint64, fn func(Sample) bool) {
	s := m.s
	rng := rand.New(rand.NewPCG(seed, 0x5eed))
	n := int(s.DurationH*3600/s.IntervalS) + 1
	air := s.AirTempC
	for i := 0; i < n; i++ {
		el := float64(i) * s.IntervalS
		h := el / 3600
		mass := m.MassG(h) + rng.NormFloat64()*s.NoiseG
		stable := true
		// The air relaxes back to the setpoint with a time constant of
		// about three minutes after a door has been open.
		air += (s.AirTempC - air) * (1 - math.Exp(-s.IntervalS/180))
		for _, d := range s.Doors {
			from := d.AtH * 3600
			if el >= from && el < from+d.DurationS {
				// a hand on the rack and a draught: unsettled, offset readings
				mass += 3 + 12*rng.Float64()
				stable = false
				air = s.AirTempC - 8 - 2*rng.Float64()
			} else if el >= from+d.DurationS && el < from+d.DurationS+s.IntervalS {
				stable = false // still settling
				mass += rng.NormFloat64() * 0.3
			}
		}
		if s.ResolutionG > 0 {
			mass = math.Round(mass/s.ResolutionG) * s.ResolutionG
		}
		t := air + rng.NormFloat64()*s.AirNoiseC
		flag := "ST"
		if !stable {
			flag = "US"
		}
		smp := Sample{ElapsedS: el, MassG: mass, Stable: stable, AirTempC: math.Round(t*10) / 10,
			Raw: fmt.Sprintf("%s %9.2f g", flag, mass)}
		if !fn(smp) {
			return
		}
	}
}
