package kinetics

import (
	"fmt"
	"math"
)

// Projection methods, as written in reports.
const (
	ProjReached     = "reached"                    // the target has been reached
	ProjExponential = "exponential_to_asymptote"   // rolling fit of m∞ + A·e^(−k t)
	ProjEquilibrium = "exponential_to_equilibrium" // asymptote fixed at the given equilibrium: earliest time
	ProjLinear      = "linear_at_current_rate"     // lower bound: the rate will fall
	ProjNone        = "none"
)

// Projection is the projected time to the target mass.
type Projection struct {
	TargetH, LowH, HighH float64 // hours from the first reading; NaN where unknown
	Method               string
	Why                  string  // when there is no projection or only a bound
	AsymptoteG           float64 // fitted mass the run tends to (exponential method)
	WindowFromH          float64 // data used
}

// minProjectionPoints is the fewest readings a rolling fit may rest on.
const minProjectionPoints = 12

// Project estimates when the mass reaches targetG, at time nowH, from the
// kept readings (t, m) of the falling-rate period (from fromH).
//
// An exponential approach to an asymptote, m∞ + A·e^(−k t), is fitted on a
// recent window chosen from the data: candidate windows halve from the
// whole falling-rate period down to 20 readings, and the shortest one whose
// projected time has a standard error under 10 % of the time remaining is
// used. Drying curves slow down more than one exponential allows (the
// falling rate of a diffusion curve is a sum of exponentials), so older
// data pull the fitted asymptote up and the projection late: the shortest
// window that still pins the fit down has the least of that bias. The range
// spans that projection ±2 standard errors and the projection of the next
// longer window.
//
// floorG is the lowest mass the run can reach (dry solids at the given
// equilibrium moisture); a fit levelling off below solidsG (the dry solids)
// is not physical and is not used. When the fitted asymptote lies above the target
// (early in a run the curve bends more than it will later) the fit is
// redone with the asymptote fixed at floorG, and its projection is given as
// the earliest time; otherwise that earliest time widens the low end of
// the range. rateNow is the current smoothed rate (g/h), for the
// linear bound used while the rate is still constant.
func Project(t, m []float64, fromH, nowH, targetG, floorG, solidsG, rateNow float64, constantNow bool) Projection {
	p := Projection{TargetH: math.NaN(), LowH: math.NaN(), HighH: math.NaN(), AsymptoteG: math.NaN(), Method: ProjNone}
	mNow := math.NaN()
	for i := len(t) - 1; i >= 0; i-- {
		if t[i] <= nowH {
			mNow = m[i]
			break
		}
	}
	if math.IsNaN(mNow) || math.IsNaN(targetG) {
		p.Why = "no readings or no target mass"
		return p
	}
	if targetG >= mNow {
		p.Method, p.TargetH, p.LowH, p.HighH = ProjReached, nowH, nowH, nowH
		return p
	}
	linear := func(why string) Projection {
		p.Why = why
		if rateNow > 0 {
			p.Method = ProjLinear
			p.TargetH = nowH + (mNow-targetG)/rateNow
			p.LowH = p.TargetH
			p.Why += "; linear at the current rate is shown as an earliest time (the rate will fall)"
		}
		return p
	}
	if constantNow {
		return linear("still in the constant-rate period: an exponential fit does not apply yet")
	}
	tt, mm := sliceFrom(t, m, fromH)
	for len(tt) > 0 && tt[len(tt)-1] > nowH {
		tt, mm = tt[:len(tt)-1], mm[:len(mm)-1]
	}
	if len(tt) < minProjectionPoints || tt[len(tt)-1]-tt[0] <= 0 {
		return linear("too few readings in the falling-rate period for a fit")
	}
	dt := (tt[len(tt)-1] - tt[0]) / float64(len(tt)-1)
	type cand struct {
		from, at, sd, mInf float64
	}
	var cands []cand // longest window first
	for w := nowH - tt[0]; w >= 20*dt; w /= 2 {
		a, b := sliceFrom(tt, mm, nowH-w)
		if len(a) < minProjectionPoints {
			break
		}
		f := fitExpAsymptote(a, b, nowH, math.NaN())
		c := cand{from: a[0], at: math.NaN(), sd: math.NaN(), mInf: math.NaN()}
		if f.ok && !(f.mInf < solidsG) { // below the dry solids: not physical
			c.mInf = f.mInf
			if targetG > f.mInf {
				c.at, c.sd = f.solve(targetG)
			}
		}
		cands = append(cands, c)
	}
	// The fit with the asymptote at the floor: the earliest time, used as
	// the fallback and as the low end of the range.
	floorAt, floorFrom := math.NaN(), math.NaN()
	if floorG < targetG {
		a, b := sliceFrom(tt, mm, nowH-(nowH-tt[0])/2)
		if len(a) >= minProjectionPoints {
			if f := fitExpAsymptote(a, b, nowH, floorG); f.ok {
				floorAt, _ = f.solve(targetG)
				floorFrom = a[0]
			}
		}
	}
	pick := -1
	for i := len(cands) - 1; i >= 0; i-- { // shortest first
		c := cands[i]
		if !math.IsNaN(c.at) && !math.IsNaN(c.sd) && c.sd <= 0.1*(c.at-nowH) {
			pick = i
			break
		}
	}
	if pick < 0 {
		// Nothing pins the asymptote: fix it at the floor, if that is below
		// the target, and call the result the earliest time.
		if !math.IsNaN(floorAt) {
			p.Method, p.TargetH, p.LowH = ProjEquilibrium, floorAt, floorAt
			p.AsymptoteG, p.WindowFromH = floorG, floorFrom
			p.Why = "the curve cannot yet tell where it levels off; with the asymptote at the given equilibrium moisture this is the earliest time"
			return p
		}
		var mInf float64 = math.NaN()
		for _, c := range cands {
			if !math.IsNaN(c.mInf) {
				mInf = c.mInf
			}
		}
		if !math.IsNaN(mInf) && mInf >= targetG {
			return linear(fmt.Sprintf("the run is levelling off at about %.2f g, above the target: it may not be reached at these drying conditions", mInf))
		}
		return linear("the exponential fit does not pin the time down yet")
	}
	c := cands[pick]
	p.Method, p.TargetH, p.AsymptoteG, p.WindowFromH = ProjExponential, c.at, c.mInf, c.from
	lo, hi := c.at-2*c.sd, c.at+2*c.sd
	if pick > 0 && !math.IsNaN(cands[pick-1].at) {
		lo = math.Min(lo, cands[pick-1].at)
		hi = math.Max(hi, cands[pick-1].at)
	}
	if !math.IsNaN(floorAt) {
		lo = math.Min(lo, floorAt)
	}
	p.LowH, p.HighH = math.Max(lo, nowH), hi
	return p
}

func sliceFrom(t, m []float64, from float64) ([]float64, []float64) {
	for i := range t {
		if t[i] >= from {
			return t[i:], m[i:]
		}
	}
	return nil, nil
}

// expFit is m(t) = mInf + A·exp(−k (t − t0)).
type expFit struct {
	mInf, a, k, t0 float64
	cov            [3][3]float64
	ok             bool
}

// fitExpAsymptote fits m∞ + A·e^(−k (t − t0)); with fixed not NaN, m∞ is
// held at fixed.
func fitExpAsymptote(t, m []float64, t0, fixed float64) *expFit {
	if !math.IsNaN(fixed) {
		return fitExpFixed(t, m, t0, fixed)
	}
	f := func(ti float64, p []float64) float64 { return p[0] + p[1]*math.Exp(-p[2]*(ti-t0)) }
	g := func(ti float64, p, gr []float64) {
		e := math.Exp(-p[2] * (ti - t0))
		gr[0] = 1
		gr[1] = e
		gr[2] = -p[1] * (ti - t0) * e
	}
	// Start: asymptote below the last mass, k from the mean log slope.
	n := len(t)
	span := t[n-1] - t[0]
	drop := m[0] - m[n-1]
	k0 := 1 / math.Max(span, 1e-6)
	best := (*lmResult)(nil)
	for _, frac := range []float64{0.5, 1, 2} {
		mInf := m[n-1] - frac*math.Max(drop, 1e-6)
		r := levenbergMarquardt(lmProblem{f: f, grad: g}, t, m, []float64{mInf, m[n-1] - mInf, k0}, 200)
		if !math.IsNaN(r.SSE) && (best == nil || r.SSE < best.SSE) {
			rr := r
			best = &rr
		}
	}
	e := &expFit{t0: t0}
	if best == nil || !(best.P[2] > 0) || best.Cov == nil {
		return e
	}
	e.mInf, e.a, e.k = best.P[0], best.P[1], best.P[2]
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			e.cov[i][j] = best.Cov.At(i, j)
		}
	}
	e.ok = e.a > 0
	return e
}

func fitExpFixed(t, m []float64, t0, mInf float64) *expFit {
	f := func(ti float64, p []float64) float64 { return mInf + p[0]*math.Exp(-p[1]*(ti-t0)) }
	g := func(ti float64, p, gr []float64) {
		e := math.Exp(-p[1] * (ti - t0))
		gr[0] = e
		gr[1] = -p[0] * (ti - t0) * e
	}
	a, k := logLinear(shift(t, t0), shiftV(m, mInf), 0, false)
	r := levenbergMarquardt(lmProblem{f: f, grad: g}, t, m, []float64{a, k}, 200)
	e := &expFit{t0: t0, mInf: mInf}
	if math.IsNaN(r.SSE) || !(r.P[1] > 0) || r.Cov == nil {
		return e
	}
	e.a, e.k = r.P[0], r.P[1]
	e.cov[1][1], e.cov[1][2], e.cov[2][1], e.cov[2][2] = r.Cov.At(0, 0), r.Cov.At(0, 1), r.Cov.At(1, 0), r.Cov.At(1, 1)
	e.ok = e.a > 0
	return e
}

func shift(v []float64, by float64) []float64 {
	out := make([]float64, len(v))
	for i := range v {
		out[i] = v[i] - by
	}
	return out
}

func shiftV(v []float64, by float64) []float64 {
	out := make([]float64, len(v))
	for i := range v {
		out[i] = (v[i] - by) / 1
	}
	return out
}

// solve returns when the fit reaches target and its standard error (delta
// method on the parameter covariance).
func (e *expFit) solve(target float64) (float64, float64) {
	tt := func(mInf, a, k float64) float64 {
		r := (target - mInf) / a
		if !(r > 0) || !(k > 0) {
			return math.NaN()
		}
		return e.t0 - math.Log(r)/k
	}
	t := tt(e.mInf, e.a, e.k)
	if math.IsNaN(t) {
		return t, math.NaN()
	}
	p := [3]float64{e.mInf, e.a, e.k}
	var g [3]float64
	for i := range p {
		h := 1e-6 * math.Max(math.Abs(p[i]), 1e-9)
		q := p
		q[i] += h
		g[i] = (tt(q[0], q[1], q[2]) - t) / h
	}
	v := 0.0
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			v += g[i] * e.cov[i][j] * g[j]
		}
	}
	if !(v >= 0) {
		return t, math.NaN()
	}
	return t, math.Sqrt(v)
}
