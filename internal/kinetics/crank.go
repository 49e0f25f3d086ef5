package kinetics

import "math"

// PlaneSheetMR is the mean moisture ratio of a plane sheet losing moisture
// from both faces by Fickian diffusion with constant D, uniform initial
// moisture and the surface at equilibrium (Crank, The Mathematics of
// Diffusion, 2nd ed., 1975, ch. 4, eqs. 4.18 and 4.20):
//
//	MR = Σ_{n≥0} 8/((2n+1)²π²) · exp(−(2n+1)² π² Fo / 4),  Fo = D t / L²
//
// with L the half-thickness (for a sheet drying from one face only, L is the
// whole thickness). For small Fo, where that series converges slowly, the
// equivalent error-function series is used:
//
//	MR = 1 − 2 √Fo [π^(−1/2) + 2 Σ_{n≥1} (−1)ⁿ ierfc(n/√Fo)]
//
// Fo ≤ 0 gives 1. Both series are summed to convergence.
func PlaneSheetMR(fo float64) float64 {
	switch {
	case math.IsNaN(fo):
		return math.NaN()
	case fo <= 0:
		return 1
	case fo < 0.1:
		s := 1 / math.Sqrt(math.Pi)
		r := math.Sqrt(fo)
		for n := 1; n < 50; n++ {
			term := 2 * ierfc(float64(n)/r)
			if term == 0 {
				break
			}
			if n%2 == 1 {
				s -= term
			} else {
				s += term
			}
		}
		return 1 - 2*r*s
	}
	sum := 0.0
	for n := 0; n < 1000; n++ {
		k := float64(2*n + 1)
		term := 8 / (k * k * math.Pi * math.Pi) * math.Exp(-k*k*math.Pi*math.Pi*fo/4)
		sum += term
		if term < 1e-17*sum {
			break
		}
	}
	return sum
}

// ierfc is the first repeated integral of erfc: exp(−x²)/√π − x·erfc(x)
// (Crank 1975, appendix, eq. 2.13 of ch. 2).
func ierfc(x float64) float64 {
	return math.Exp(-x*x)/math.Sqrt(math.Pi) - x*math.Erfc(x)
}

// PlaneSheetFo inverts PlaneSheetMR: the Fourier number at which the mean
// moisture ratio falls to mr (0 < mr < 1), by bisection on the monotone curve.
func PlaneSheetFo(mr float64) float64 {
	if !(mr > 0 && mr < 1) {
		return math.NaN()
	}
	lo, hi := 0.0, 1.0
	for PlaneSheetMR(hi) > mr {
		hi *= 2
	}
	for i := 0; i < 200 && hi-lo > 1e-15*hi; i++ {
		mid := (lo + hi) / 2
		if PlaneSheetMR(mid) > mr {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}
