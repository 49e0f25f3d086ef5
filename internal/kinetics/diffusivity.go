package kinetics

import (
	"fmt"
	"math"
)

// Diffusivity is an effective moisture diffusivity fitted to a moisture
// ratio curve with Crank's plane-sheet series (all terms, see PlaneSheetMR).
type Diffusivity struct {
	DM2PerS   float64 // effective diffusivity, m²/s
	StdErr    float64 // its standard error, m²/s
	LagH      float64 // time shift of the diffusion curve (see FitDiffusivity)
	FromH     float64 // time range used
	ToH       float64
	N         int
	RMSE      float64 // sqrt(SSE/N) in moisture ratio
	Converged bool
}

// FitDiffusivity fits D in MR(t) = PlaneSheetMR(D·(t − lag)/L²) by least
// squares, L the diffusion length in metres (half the thickness drying from
// both faces, the whole thickness from one), t in hours. With fitLag the
// curve may start late (after a constant-rate period, when the falling rate
// begins from a moisture profile the series does not assume); otherwise the
// lag is 0. Points with MR outside (0, 1] are skipped.
func FitDiffusivity(t, mr []float64, lM float64, fitLag bool) (*Diffusivity, error) {
	if !(lM > 0) {
		return nil, fmt.Errorf("kinetics: diffusion length %v m: need the slice thickness", lM)
	}
	var tt, yy []float64
	for i := range t {
		if mr[i] > 0 && mr[i] <= 1 && finite(t[i]) {
			tt = append(tt, t[i])
			yy = append(yy, mr[i])
		}
	}
	np := 1
	if fitLag {
		np = 2
	}
	if len(tt) < np+2 {
		return nil, fmt.Errorf("kinetics: %d usable moisture ratios for the diffusivity: %w", len(tt), ErrTooFewPoints)
	}
	// Parameters: ln(D/L² in 1/h) and the lag (h). Start from the slope of
	// ln MR against t, which for long times is −π²D/(4L²) (Crank 1975, ch. 4).
	_, k := logLinear(tt, yy, 0, false)
	p0 := []float64{math.Log(4 * k / (math.Pi * math.Pi))}
	if fitLag {
		p0 = append(p0, 0)
	}
	f := func(ti float64, p []float64) float64 {
		lag := 0.0
		if len(p) > 1 {
			lag = p[1]
		}
		return PlaneSheetMR(math.Exp(p[0]) * (ti - lag))
	}
	best := levenbergMarquardt(lmProblem{f: f}, tt, yy, p0, 300)
	for _, scale := range []float64{0.3, 3} {
		q0 := append([]float64(nil), p0...)
		q0[0] += math.Log(scale)
		r := levenbergMarquardt(lmProblem{f: f}, tt, yy, q0, 300)
		if r.SSE < best.SSE {
			best = r
		}
	}
	if math.IsNaN(best.SSE) {
		return nil, fmt.Errorf("kinetics: diffusivity fit failed: %s", best.Reason)
	}
	dl2 := math.Exp(best.P[0]) // 1/h
	d := &Diffusivity{
		DM2PerS: dl2 * lM * lM / 3600, FromH: tt[0], ToH: tt[len(tt)-1], N: len(tt),
		RMSE: math.Sqrt(best.SSE / float64(len(tt))), Converged: best.Converged, StdErr: math.NaN(),
	}
	if best.Cov != nil {
		d.StdErr = d.DM2PerS * math.Sqrt(math.Max(best.Cov.At(0, 0), 0))
	}
	if fitLag {
		d.LagH = best.P[1]
	}
	return d, nil
}
