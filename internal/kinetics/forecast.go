package kinetics

import (
	"math"
	"strings"
)

// A course is a projected future of the free moisture y = X − X_e (dry
// basis): its value at a time in hours. It is what one projection method
// says will happen after the data it was fitted on.
type course func(tH float64) float64

// forecaster is one way of projecting the course of a run from its data so
// far. None of them holds for every product (DOMAIN.md, live estimates):
// the back-test weighs them by how they did on the run itself.
type forecaster struct {
	name  string // as written in the JSON report
	title string // as written on screen and in report.md
	// fit projects from binned free moisture y at times t (hours from the
	// first reading, oldest first; y0 the free moisture at the start). It
	// returns nil when the data do not support this method.
	fit func(t, y []float64, y0 float64) course
}

// Forecast method names (the JSON report's projection.methods[].name).
const (
	MethodLinear      = "linear_at_current_rate"
	MethodExponential = "exponential_to_asymptote"
	MethodLogLine     = "ln_moisture_line"
	MethodPage        = "page"
	MethodLogarithmic = "logarithmic"
	MethodMidilli     = "midilli"
	MethodRateCurve   = "rate_curve"
	MethodReference   = "reference"
)

// forecasters are the single-run methods, in the order reports list them.
var forecasters = []forecaster{
	{MethodLinear, "linear at the current rate", fitLinearCourse},
	{MethodExponential, "exponential to an asymptote", fitExpCourse},
	{MethodLogLine, "straight line in ln X", fitLogLineCourse},
	{MethodPage, "Page", modelCourse("page")},
	{MethodLogarithmic, "Logarithmic", modelCourse("logarithmic")},
	{MethodMidilli, "Midilli et al.", modelCourse("midilli")},
	{MethodRateCurve, "drying-rate curve", fitRateCurveCourse},
}

// MethodTitle is a method's name as people read it.
func MethodTitle(name string) string {
	switch name {
	case MethodReference:
		return "reference run"
	case MethodCombined:
		return "combined"
	}
	if n, ok := strings.CutPrefix(name, MethodReference+"_"); ok {
		return "reference run " + n
	}
	for _, f := range forecasters {
		if f.name == name {
			return f.title
		}
	}
	return name
}

// recentFrom is the start of the newest fraction frac of the data's time
// span, keeping at least minN points.
func recentFrom(t []float64, frac float64, minN int) int {
	n := len(t)
	from := t[n-1] - frac*(t[n-1]-t[0])
	k := n - 1
	for k > 0 && t[k-1] >= from {
		k--
	}
	return min(k, max(n-minN, 0))
}

// fitLinearCourse carries the current rate on: a straight line fitted to
// the newest sixth of the run (at least 4 points). While the rate is
// constant this is the projection; after, the earliest time (the rate
// falls).
func fitLinearCourse(t, y []float64, _ float64) course {
	n := len(t)
	if n < 4 {
		return nil
	}
	k := recentFrom(t, 1.0/6, 4)
	now := t[n-1]
	v, s, err := LocalPoly(t[k:], y[k:], now, 1)
	if err != nil || !(s < 0) || !(v > 0) {
		return nil
	}
	return func(tH float64) float64 { return v + s*(tH-now) }
}

// fitExpCourse fits y∞ + A·e^(−k (t − now)) to the newest half of the run
// (at least 6 points). A curve that levels off below the equilibrium
// (y∞ < 0) is not physical: then y∞ is held at 0.
func fitExpCourse(t, y []float64, _ float64) course {
	n := len(t)
	if n < 6 {
		return nil
	}
	k := recentFrom(t, 0.5, 6)
	now := t[n-1]
	tt, yy := t[k:], y[k:]
	if !(yy[0] > yy[len(yy)-1]) {
		return nil
	}
	f := fitExpAsymptote(tt, yy, now, math.NaN())
	if !f.ok || f.mInf < 0 {
		f = fitExpAsymptote(tt, yy, now, 0)
	}
	if !f.ok {
		return nil
	}
	return func(tH float64) float64 { return f.mInf + f.a*math.Exp(-f.k*(tH-now)) }
}

// fitLogLineCourse is the spreadsheet habit: a straight line in ln y
// against time through every point.
func fitLogLineCourse(t, y []float64, _ float64) course {
	var st, sy, stt, sty, c float64
	for i := range t {
		if !(y[i] > 0) {
			continue
		}
		l := math.Log(y[i])
		st += t[i]
		sy += l
		stt += t[i] * t[i]
		sty += t[i] * l
		c++
	}
	den := c*stt - st*st
	if c < 3 || !(den > 0) {
		return nil
	}
	slope := (c*sty - st*sy) / den
	icpt := (sy - slope*st) / c
	if !(slope < 0) {
		return nil
	}
	return func(tH float64) float64 { return math.Exp(icpt + slope*tH) }
}

// modelCourse fits a thin-layer model to the moisture ratio y/y0 so far.
func modelCourse(name string) func(t, y []float64, y0 float64) course {
	m := ModelByName(name)
	return func(t, y []float64, y0 float64) course {
		if len(t) < len(m.Params)+3 || !(y0 > 0) {
			return nil
		}
		mr := make([]float64, len(y))
		for i := range y {
			mr[i] = y[i] / y0
		}
		f, err := FitModel(m, t, mr)
		if err != nil || !f.Converged || f.Degenerate || !finite(f.P...) {
			return nil
		}
		p := f.P
		return func(tH float64) float64 { return y0 * m.f(tH, p) }
	}
}

// fitRateCurveCourse works in the drying-rate plane: over the newest half
// of the run the rate −dy/dt is fitted as a power of the free moisture,
// R = c·y^p (p = 1 is an exponential approach, p > 1 a rate that falls
// faster than the moisture), and dt = −dy/R is integrated from now:
// y(t)^(1−p) = y_now^(1−p) − (1−p)·c·(t − now).
func fitRateCurveCourse(t, y []float64, _ float64) course {
	n := len(t)
	if n < 8 {
		return nil
	}
	k := recentFrom(t, 0.5, 8)
	tt, yy := t[k:], y[k:]
	// Rates from a local straight line over groups of points, so that
	// noise between neighbours does not swamp the slope.
	g := max(2, len(tt)/8)
	var lx, ly []float64
	for a := 0; a+g <= len(tt); a += g {
		b := min(a+2*g, len(tt))
		mid := (tt[a] + tt[b-1]) / 2
		v, s, err := LocalPoly(tt[a:b], yy[a:b], mid, 1)
		if err != nil || !(s < 0) || !(v > 0) {
			continue
		}
		lx = append(lx, math.Log(v))
		ly = append(ly, math.Log(-s))
	}
	if len(lx) < 3 {
		return nil
	}
	var sx, sy, sxx, sxy float64
	for i := range lx {
		sx += lx[i]
		sy += ly[i]
		sxx += lx[i] * lx[i]
		sxy += lx[i] * ly[i]
	}
	c := float64(len(lx))
	den := c*sxx - sx*sx
	p := 1.0
	if den > 1e-12 {
		p = (c*sxy - sx*sy) / den
	}
	// The moisture range of a window is narrow; a power outside what
	// drying curves show (about 0.5 to 4) is noise, not shape.
	p = math.Min(math.Max(p, 0.5), 4)
	lc := (sy - p*sx) / c
	rc := math.Exp(lc)
	now := tt[len(tt)-1]
	yNow, _, err := LocalPoly(tt[max(0, len(tt)-2*g):], yy[max(0, len(yy)-2*g):], now, 1)
	if err != nil || !(yNow > 0) {
		return nil
	}
	if math.Abs(p-1) < 1e-6 {
		return func(tH float64) float64 { return yNow * math.Exp(-rc*(tH-now)) }
	}
	a := math.Pow(yNow, 1-p)
	return func(tH float64) float64 {
		v := a - (1-p)*rc*(tH-now)
		if v <= 0 {
			return 0
		}
		return math.Pow(v, 1/(1-p))
	}
}

// crossing is the first time after from at which the course falls to
// level, searched up to horizon; +Inf when it does not get there.
func crossing(c course, from, level, horizon float64) float64 {
	if c == nil {
		return math.NaN()
	}
	if v := c(from); v <= level {
		return from
	}
	// Steps that grow geometrically: fine near now, coarse far out.
	span := horizon - from
	prev := from
	const steps = 120
	for i := 1; i <= steps; i++ {
		u := float64(i) / steps
		at := from + span*u*u*u
		v := c(at)
		if math.IsNaN(v) {
			return math.NaN()
		}
		if v <= level {
			lo, hi := prev, at
			for j := 0; j < 50 && hi-lo > 1e-6*(1+math.Abs(hi)); j++ {
				mid := (lo + hi) / 2
				if c(mid) <= level {
					hi = mid
				} else {
					lo = mid
				}
			}
			return hi
		}
		prev = at
	}
	return math.Inf(1)
}
