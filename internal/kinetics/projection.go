package kinetics

import (
	"math"
)

// Projection methods beyond the forecasters, as written in reports.
const (
	ProjReached = "reached" // the target has been reached
	ProjNone    = "none"    // no projection: Why says why
)

// Projection is the projected time to the target moisture.
type Projection struct {
	TargetH, LowH, HighH float64 // hours from the first reading; NaN where unknown
	Level                float64 // the share of outcomes the range is meant to hold
	Method               string  // MethodCombined, ProjReached or ProjNone
	Why                  string  // when there is no projection, or a caveat
	AsymptoteG           float64 // mass the exponential method levels off at (NaN if not used)
	WindowFromH          float64 // first reading used
	Methods              []MethodEstimate
	Checks               int         // back-test checks the weights and the range rest on
	Path                 []PathPoint // the combined course from now to the target
	Reference            *ReferenceUse
	MoreReferences       []*ReferenceUse // further reference runs, when several are given
}

// MethodEstimate is what one method projects and how far it is trusted.
type MethodEstimate struct {
	Name     string
	TargetH  float64 // +Inf: it says the target is not reached
	Weight   float64
	Error    float64 // median |relative error| of the time left in the back-test; NaN: no checks yet
	Checks   int
	Disabled string // why it made no projection
}

// PathPoint is a point of the projected course: dry-basis moisture at a
// time.
type PathPoint struct {
	TimeH, MoistureDB float64
}

// NoProjection is a projection that was not made, with the reason.
func NoProjection(why string) Projection {
	nan := math.NaN()
	return Projection{TargetH: nan, LowH: nan, HighH: nan, AsymptoteG: nan, WindowFromH: nan, Level: ProjectionLevel, Method: ProjNone, Why: why}
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
	g := func(ti float64, p, gr []float64) float64 {
		e := math.Exp(-p[2] * (ti - t0))
		gr[0] = 1
		gr[1] = e
		gr[2] = -p[1] * (ti - t0) * e
		return p[0] + p[1]*e
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
	g := func(ti float64, p, gr []float64) float64 {
		e := math.Exp(-p[1] * (ti - t0))
		gr[0] = e
		gr[1] = -p[0] * (ti - t0) * e
		return mInf + p[0]*e
	}
	// Starting values from a straight line in ln(m − m∞), scaled to about
	// 1 at the first point (logLinear expects moisture ratios).
	scale := m[0] - mInf
	if !(scale > 0) {
		return &expFit{t0: t0, mInf: mInf}
	}
	a, k := logLinear(shift(t, t0), shiftV(m, mInf, scale), 0, false)
	a *= scale
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

func shiftV(v []float64, by, scale float64) []float64 {
	out := make([]float64, len(v))
	for i := range v {
		out[i] = (v[i] - by) / scale
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
