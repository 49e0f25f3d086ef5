package study

import (
	"fmt"
	"math"
)

// GasConstant R in J/(mol·K) (CODATA 2018, exact since the 2019 SI).
const GasConstant = 8.314462618

// Arrhenius is a fit of a rate parameter against temperature,
// P = P0·exp(−Ea/(R·T)) (Arrhenius 1889), as drying papers report it for
// the effective diffusivity: ln P against 1/T by weighted least squares.
type Arrhenius struct {
	Parameter string  // what was fitted: "deff_m2_per_s" or "lewis_k_per_h"
	EaKJ      float64 // activation energy, kJ/mol
	EaSEKJ    float64 // its standard error
	P0        float64 // the pre-exponential factor, in the parameter's unit
	R2        float64 // of ln P against 1/T
	Points    []Point // the runs used
	Weighted  bool    // by the runs' own standard errors
}

// Point is one run's value at its air temperature.
type Point struct {
	Label    string
	AirTempC float64
	Value    float64
	StdErr   float64 // NaN when not known
}

// ErrTooFewTemperatures is returned with fewer than 3 distinct temperatures.
var ErrTooFewTemperatures = fmt.Errorf("an Arrhenius fit needs runs at 3 or more distinct air temperatures")

// FitArrhenius fits ln P = ln P0 − (Ea/R)·(1/T). Points are weighted by
// 1/(SE/P)² when every point has a standard error (the variance of ln P by
// the delta method), equally otherwise; the standard error of Ea is scaled
// by the scatter of the points about the line (as least-squares libraries
// do by default), so it does not claim more than the data show.
func FitArrhenius(parameter string, pts []Point) (*Arrhenius, error) {
	var use []Point
	temps := map[float64]bool{}
	for _, p := range pts {
		if p.Value > 0 && !math.IsInf(p.Value, 0) && !math.IsNaN(p.AirTempC) && p.AirTempC > -273.15 {
			use = append(use, p)
			temps[math.Round(p.AirTempC*10)/10] = true
		}
	}
	if len(temps) < 3 {
		return nil, fmt.Errorf("%w (%d here)", ErrTooFewTemperatures, len(temps))
	}
	weighted := true
	for _, p := range use {
		if !(p.StdErr > 0) {
			weighted = false
		}
	}
	n := float64(len(use))
	var sw, sx, sy, sxx, sxy float64
	x := make([]float64, len(use))
	y := make([]float64, len(use))
	w := make([]float64, len(use))
	for i, p := range use {
		x[i] = 1 / (p.AirTempC + 273.15)
		y[i] = math.Log(p.Value)
		w[i] = 1
		if weighted {
			rel := p.StdErr / p.Value
			w[i] = 1 / (rel * rel)
		}
		sw += w[i]
		sx += w[i] * x[i]
		sy += w[i] * y[i]
	}
	mx, my := sx/sw, sy/sw
	for i := range x {
		sxx += w[i] * (x[i] - mx) * (x[i] - mx)
		sxy += w[i] * (x[i] - mx) * (y[i] - my)
	}
	if !(sxx > 0) {
		return nil, ErrTooFewTemperatures
	}
	b := sxy / sxx
	a := my - b*mx
	var ssr, sst float64
	for i := range x {
		r := y[i] - (a + b*x[i])
		ssr += w[i] * r * r
		sst += w[i] * (y[i] - my) * (y[i] - my)
	}
	dof := n - 2
	seB := math.NaN()
	if dof > 0 {
		seB = math.Sqrt(ssr / dof / sxx)
	}
	r2 := math.NaN()
	if sst > 0 {
		r2 = 1 - ssr/sst
	}
	return &Arrhenius{Parameter: parameter, EaKJ: -b * GasConstant / 1000, EaSEKJ: seB * GasConstant / 1000,
		P0: math.Exp(a), R2: r2, Points: use, Weighted: weighted}, nil
}

// At is the fitted value at an air temperature (°C).
func (f *Arrhenius) At(airTempC float64) float64 {
	return f.P0 * math.Exp(-f.EaKJ*1000/(GasConstant*(airTempC+273.15)))
}
