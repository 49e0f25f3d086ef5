package kinetics

import (
	"math"
	"sort"
)

// solids is the dry solids on the balance: s0 from the start, times a
// factor after each removal.
type solids struct {
	s0      float64
	times   []float64
	factors []float64 // cumulative, after each time
}

func (s *solids) at(t float64) float64 {
	k := sort.SearchFloat64s(s.times, t)
	for k < len(s.times) && s.times[k] <= t {
		k++
	}
	if k == 0 {
		return s.s0
	}
	return s.s0 * s.factors[k-1]
}

// solidsProfile works out the dry solids from the setup. DOMAIN.md: a piece
// of mass Δm taken out at mass m leaves solids m_s·(1 − Δm/m), the piece
// having the moisture of the rest. A dry mass from an oven test is the
// solids left at the end.
func solidsProfile(warn func(string, ...any), kind SeriesKind, setup Setup, t []float64, smooth func(int) float64, keep []bool, m0 float64) *solids {
	if kind != SeriesMass {
		return &solids{s0: 1}
	}
	rem := append([]Removal(nil), setup.Removals...)
	sort.Slice(rem, func(i, j int) bool { return rem[i].ElapsedH < rem[j].ElapsedH })
	sp := &solids{}
	f := 1.0
	for _, rm := range rem {
		if rm.ElapsedH > t[len(t)-1] {
			continue
		}
		j := lastKeptBefore(t, keep, rm.ElapsedH)
		if j < 0 {
			warn("removal at %.2f h is before the first reading: ignored", rm.ElapsedH)
			continue
		}
		mb := smooth(j)
		if !(rm.MassG < mb) {
			warn("removal of %.2f g at %.2f h is not less than the mass then (%.2f g): ignored", rm.MassG, rm.ElapsedH, mb)
			continue
		}
		f *= 1 - rm.MassG/mb
		sp.times = append(sp.times, rm.ElapsedH)
		sp.factors = append(sp.factors, f)
	}
	switch {
	case !math.IsNaN(setup.DryMassG):
		sp.s0 = setup.DryMassG / f
		if !math.IsNaN(setup.InitialMoistureWB) {
			implied := 100 * (1 - sp.s0/m0)
			if math.Abs(implied-setup.InitialMoistureWB) > 2 {
				warn("the dry mass implies an initial moisture of %.1f %% wet basis, not the %.1f %% given; the dry mass is used", implied, setup.InitialMoistureWB)
			}
		}
	case !math.IsNaN(setup.InitialMoistureWB):
		sp.s0 = m0 * (1 - setup.InitialMoistureWB/100)
	default:
		warn("no initial moisture or dry mass given: moisture contents are not known (--initial-moisture PCT or --dry-mass G)")
		return nil
	}
	if !(sp.s0 < m0) {
		warn("the dry mass (%.2f g at the start) is not less than the initial mass %.2f g: check --dry-mass and --tare", sp.s0, m0)
		return nil
	}
	return sp
}

func lastKeptBefore(t []float64, keep []bool, at float64) int {
	j := -1
	for i := range t {
		if t[i] >= at {
			break
		}
		if keep[i] {
			j = i
		}
	}
	return j
}

// reachedAt is the first time the smoothed moisture is at or below xt,
// interpolated between readings; NaN if never.
func reachedAt(t []float64, sm *smoothing, sp *solids, xt float64) float64 {
	prevT, prevX := math.NaN(), math.NaN()
	at := math.NaN()
	sm.each(func(i int, smooth, _ float64) bool {
		x := smooth/sp.at(t[i]) - 1
		if x <= xt {
			if math.IsNaN(prevT) || prevX == x {
				at = t[i]
			} else {
				at = prevT + (t[i]-prevT)*(prevX-xt)/(prevX-x)
			}
			return false
		}
		prevT, prevX = t[i], x
		return true
	})
	return at
}
