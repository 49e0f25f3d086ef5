package kinetics

import (
	"math"
	"sort"
)

// The back-test: the run judges the projection methods on itself.
//
// The run so far is replayed at earlier cut points. At each cut every
// method projects the course from the data up to the cut; the moisture the
// run then reached at later readings shows how each projection would have
// done. A method's error is the log ratio of the time it said was left to
// the time that really was, ln((P − c)/(T − c)), so that being twice too
// long and half too short weigh alike. The methods are weighted by those
// errors (DOMAIN.md, live estimates), and the range is taken from the
// errors the combination itself would have made (empirical quantiles),
// mixed with a wide prior that dominates while the history is short.

// MethodCombined names the projection made by weighting the methods.
const MethodCombined = "combined"

// ProjectionLevel is the share of outcomes the projected range is meant to
// hold.
const ProjectionLevel = 0.8

// The range is not central: a low end later than the truth makes an
// operator come back to an over-dried batch, so the low end sits at the
// 4 % quantile and the high end at the 84 %.
const (
	rangeLowQ  = 0.04
	rangeHighQ = rangeLowQ + ProjectionLevel
)

const (
	maxCuts      = 24   // back-test cut points over the run so far
	maxLevels    = 40   // readings used as levels to score the cuts against
	maxBins      = 240  // time bins the methods are fitted on
	errCap       = 1.4  // |log error| counted at most (a factor of about 4)
	priorPseudoN = 4.0  // weight of the prior against the back-test's samples
	kernelWidth  = 0.15 // how alike two fractions of the way must be
)

// method is a forecaster as the back-test uses it, with its prior weight.
type method struct {
	forecaster
	prior float64
}

// btCut is the run as known at one cut point: the first k points.
type btCut struct {
	k       int
	at      float64  // time of the newest point used
	courses []course // per method, nil where it could not project
	rate    float64  // the rate then (free moisture per hour), NaN if unknown
}

// btSample is one check: a level the run reached after a cut, when it got
// there, and what each method said at the cut.
type btSample struct {
	cut   int
	level float64
	t     float64   // when the run got there
	frac  float64   // how far through the way to this level the cut was
	pred  []float64 // per method: when it said the run would get there
	err   []float64 // per method: capped log error; NaN where it had no course
}

// backtest holds the cut points and checks of a run.
type backtest struct {
	t, y    []float64
	y0, xe  float64 // free moisture at the start; equilibrium moisture
	methods []method
	cuts    []btCut
	samples []btSample // in order of cut
}

// newBacktest replays the run (binned free moisture t, y, oldest first) at
// cut points and scores every method against what followed.
func newBacktest(t, y []float64, y0, xe float64, methods []method) *backtest {
	b := &backtest{t: t, y: y, y0: y0, xe: xe, methods: methods}
	n := len(t)
	if n < 4 {
		return b
	}
	span := t[n-1] - t[0]
	last := -1
	for j := 1; j <= maxCuts; j++ {
		at := t[0] + span*float64(j)/maxCuts
		k := sort.SearchFloat64s(t, at+1e-12) // points at or before at
		if j == maxCuts {
			k = n
		}
		if k <= last || k < 4 || !(y[0]-y[k-1] > 0.02*y0) {
			continue
		}
		last = k
		b.cuts = append(b.cuts, b.cutAt(k))
	}
	// Levels: readings spread over the run; each scores every cut before it.
	stride := max(1, n/maxLevels)
	for ci, c := range b.cuts[:max(len(b.cuts)-1, 0)] {
		for i := c.k; i < n; i += stride {
			lv := y[i]
			if !(lv < y[c.k-1]) {
				continue
			}
			s := btSample{cut: ci, level: lv, t: t[i], frac: (c.at - t[0]) / (t[i] - t[0]), err: make([]float64, len(methods))}
			s.pred = b.projectCut(ci, lv)
			for m, p := range s.pred {
				s.err[m] = logErr(p, t[i], c.at)
			}
			b.samples = append(b.samples, s)
		}
	}
	return b
}

// cutAt projects with every method from the first k points.
func (b *backtest) cutAt(k int) btCut {
	c := btCut{k: k, at: b.t[k-1], courses: make([]course, len(b.methods)), rate: math.NaN()}
	for m, f := range b.methods {
		c.courses[m] = f.fit(b.t[:k], b.y[:k], b.y0)
	}
	if lin := fitLinearCourse(b.t[:k], b.y[:k], b.y0); lin != nil {
		c.rate = lin(c.at) - lin(c.at+1)
	}
	return c
}

// logErr is ln((pred − at)/(truth − at)), capped at ±errCap; NaN when the
// method made no projection.
func logErr(pred, truth, at float64) float64 {
	if math.IsNaN(pred) {
		return math.NaN()
	}
	if math.IsInf(pred, 1) {
		return errCap
	}
	e := math.Log(math.Max(pred-at, 1e-9) / (truth - at))
	return math.Max(-errCap, math.Min(errCap, e))
}

// kernel weighs a check by how alike its fraction of the way is to the
// one in question (a floor keeps every check in play).
func kernel(a, b float64) float64 {
	d := (a - b) / kernelWidth
	return 0.05 + math.Exp(-0.5*d*d)
}

// weightsAt are the method weights known at time asOf (from checks that
// were complete by then), for a projection at fraction frac of the way.
// Each method's mean squared error is shrunk toward a prior error, so that
// a short history leaves the weights near the priors.
func (b *backtest) weightsAt(asOf, frac float64) ([]float64, []float64, float64) {
	nm := len(b.methods)
	sse := make([]float64, nm)
	wsum := make([]float64, nm)
	var neff, w2 float64
	for _, s := range b.samples {
		if s.t > asOf {
			continue
		}
		w := kernel(s.frac, frac)
		neff += w
		w2 += w * w
		for m, e := range s.err {
			if math.IsNaN(e) {
				e = errCap // no projection counts as a bad one
			}
			sse[m] += w * e * e
			wsum[m] += w
		}
	}
	if w2 > 0 {
		neff = neff * neff / w2
	}
	const priorMSE = 0.3 * 0.3
	wt := make([]float64, nm)
	rms := make([]float64, nm)
	total := 0.0
	for m := range b.methods {
		mse := priorMSE
		rms[m] = math.NaN()
		if wsum[m] > 0 {
			obs := sse[m] / wsum[m]
			rms[m] = math.Sqrt(obs)
			mse = (neff*obs + priorPseudoN*priorMSE) / (neff + priorPseudoN)
		}
		wt[m] = b.methods[m].prior / (mse + 0.02*0.02)
		total += wt[m]
	}
	for m := range wt {
		wt[m] /= total
	}
	return wt, rms, neff
}

// combine is the weighted geometric mean of the time left by the methods
// that project; +Inf when most of the weight says the level is not
// reached; NaN when no method projects.
func combine(preds, wt []float64, at float64) float64 {
	var lw, sw, inf float64
	for m, p := range preds {
		switch {
		case math.IsNaN(p) || wt[m] == 0:
		case math.IsInf(p, 1):
			inf += wt[m]
		default:
			lw += wt[m] * math.Log(math.Max(p-at, 1e-9))
			sw += wt[m]
		}
	}
	if inf > sw {
		return math.Inf(1)
	}
	if sw == 0 {
		return math.NaN()
	}
	return at + math.Exp(lw/sw)
}

// projectCut projects the level from cut ci with every method.
func (b *backtest) projectCut(ci int, level float64) []float64 {
	c := b.cuts[ci]
	horizon := b.horizon(c.at)
	preds := make([]float64, len(b.methods))
	for m, cr := range c.courses {
		preds[m] = crossing(cr, c.at, level, horizon)
	}
	return preds
}

// combinedAt is the combination as it would have been made at cut ci (its
// weights from the checks complete by then), for the level.
func (b *backtest) combinedAt(ci int, level float64) (float64, []float64, []float64) {
	c := b.cuts[ci]
	preds := b.projectCut(ci, level)
	equal := make([]float64, len(preds))
	for m := range equal {
		equal[m] = b.methods[m].prior
	}
	first := combine(preds, equal, c.at)
	frac := 0.5
	if finite(first) && first > b.t[0] {
		frac = (c.at - b.t[0]) / (first - b.t[0])
	}
	wt, _, _ := b.weightsAt(c.at, frac)
	return combine(preds, wt, c.at), preds, wt
}

// spread is the distribution of the combination's own log errors, seen
// at asOf for a projection at fraction frac, mixed with the prior.
type spread struct {
	e, w    []float64
	priorSD float64
	priorW  float64
}

func (b *backtest) spreadAt(asOf, frac float64) spread {
	sp := spread{priorSD: priorSD(frac), priorW: priorPseudoN}
	// The combination's error at each complete check, with the weights it
	// would have had then.
	byCut := map[int][]float64{}
	for _, s := range b.samples {
		if s.t > asOf {
			continue
		}
		preds := s.pred
		wt, ok := byCut[s.cut]
		if !ok {
			c := b.cuts[s.cut]
			_, _, wt = b.combinedAt(s.cut, b.y[c.k-1]) // weights as known at the cut
			byCut[s.cut] = wt
		}
		p := combine(preds, wt, b.cuts[s.cut].at)
		e := logErr(p, s.t, b.cuts[s.cut].at)
		if math.IsNaN(e) {
			e = errCap
		}
		sp.e = append(sp.e, e)
		sp.w = append(sp.w, kernel(s.frac, frac))
	}
	return sp
}

// priorSD is the spread of log errors assumed before the run has shown
// its own: wider the earlier in the run (the further to extrapolate).
func priorSD(frac float64) float64 {
	f := math.Min(math.Max(frac, 0.05), 1)
	return 0.08 + 0.45*(1-f)
}

// quantile of the mixture of the weighted checks and a prior centred on
// no error. Each check is blurred by the prior's spread: a run's own
// back-test sees only how the methods did over the part of the curve it
// has, not how the curve will bend further down (on measured runs the
// errors beyond the data are several times those the back-test shows;
// testdata/measured), so its checks place the range and the prior sets
// its least width.
func (sp spread) quantile(q float64) float64 {
	phi := func(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }
	n := effN(sp.w)
	var sw float64
	for _, w := range sp.w {
		sw += w
	}
	cdf := func(x float64) float64 {
		var s float64
		for i, e := range sp.e {
			s += sp.w[i] * phi((x-e)/sp.priorSD)
		}
		if sw > 0 {
			s = s / sw * n
		}
		return (s + sp.priorW*phi(x/sp.priorSD)) / (n + sp.priorW)
	}
	lo, hi := -5.0, 5.0
	for i := 0; i < 50; i++ {
		mid := (lo + hi) / 2
		if cdf(mid) < q {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

func effN(w []float64) float64 {
	var s, s2 float64
	for _, v := range w {
		s += v
		s2 += v * v
	}
	if s2 == 0 {
		return 0
	}
	return s * s / s2
}

// horizon is how far ahead a projection from at is searched: fifty times
// the time so far (a run that needs longer is "not reached").
func (b *backtest) horizon(at float64) float64 {
	return at + 50*math.Max(at-b.t[0], b.t[1]-b.t[0])
}

// priors are the methods' prior weights.
func (b *backtest) priors() []float64 {
	w := make([]float64, len(b.methods))
	for m := range w {
		w[m] = b.methods[m].prior
	}
	return w
}

// fracOf is how far through the way to a projected time the cut at is.
func (b *backtest) fracOf(at, projected float64) float64 {
	if !finite(projected) || !(projected > b.t[0]) {
		return 0.5
	}
	return math.Min(1, (at-b.t[0])/(projected-b.t[0]))
}

// projectionAt is the projection made at cut ci to the free-moisture
// level: the methods weighted by the checks complete by then, the range
// from the combination's own errors at like fractions of the way.
func (b *backtest) projectionAt(ci int, level float64) Projection {
	p := NoProjection("")
	c := b.cuts[ci]
	p.WindowFromH = b.t[0]
	preds := b.projectCut(ci, level)
	comb := combine(preds, b.priors(), c.at)
	frac := b.fracOf(c.at, comb)
	var wt []float64
	for it := 0; it < 2; it++ {
		wt, _, _ = b.weightsAt(c.at, frac)
		comb = combine(preds, wt, c.at)
		frac = b.fracOf(c.at, comb)
	}
	// Each method's record in the checks complete by now.
	errs := make([][]float64, len(b.methods))
	for _, s := range b.samples {
		if s.t > c.at {
			continue
		}
		p.Checks++
		for m, e := range s.err {
			if !math.IsNaN(e) {
				errs[m] = append(errs[m], math.Abs(math.Exp(e)-1))
			}
		}
	}
	for m, f := range b.methods {
		me := MethodEstimate{Name: f.name, TargetH: preds[m], Weight: wt[m], Error: math.NaN(), Checks: len(errs[m])}
		if len(errs[m]) > 0 {
			me.Error = median(errs[m])
		}
		if math.IsNaN(preds[m]) {
			me.Weight = 0
			me.Disabled = "the data so far do not support it"
		}
		p.Methods = append(p.Methods, me)
	}
	renormalise(p.Methods)
	switch {
	case math.IsNaN(comb):
		p.Why = "no method can project from the data so far"
		return p
	case math.IsInf(comb, 1):
		p.Why = "most of the weight says the run levels off above the target: it may not be reached at these conditions"
		return p
	}
	sp := b.spreadAt(c.at, frac)
	// A reference run of the same product sees the curve's bend that this
	// run's own data cannot: on measured runs it cut the error by more
	// than half (testdata/measured), so the prior spread narrows with the
	// weight the back-test gives it, to half at most.
	for m, f := range b.methods {
		if f.name == MethodReference && finite(preds[m]) {
			sp.priorSD *= 1 - 0.5*wt[m]
		}
	}
	left := comb - c.at
	est := c.at + left*math.Exp(-sp.quantile(0.5))
	lo := c.at + left*math.Exp(-sp.quantile(rangeHighQ))
	hi := c.at + left*math.Exp(-sp.quantile(rangeLowQ))
	// The rate of a run at steady conditions does not rise above its peak:
	// at that rate the target cannot come sooner than this.
	peak := 0.0
	for _, cc := range b.cuts[:ci+1] {
		if cc.rate > peak {
			peak = cc.rate
		}
	}
	if yNow := b.y[c.k-1]; peak > 0 && yNow > level {
		lo = math.Max(lo, c.at+(yNow-level)/peak)
	}
	est = math.Max(est, lo)
	hi = math.Max(hi, est)
	p.TargetH, p.LowH, p.HighH, p.Method = est, lo, hi, MethodCombined
	if p.Checks == 0 {
		p.Why = "too little of the run to back-test yet: the range is wide"
	}
	p.Path = b.path(ci, level, wt, est)
	return p
}

// renormalise makes the weights of the methods that project sum to 1.
func renormalise(ms []MethodEstimate) {
	total := 0.0
	for _, m := range ms {
		total += m.Weight
	}
	for i := range ms {
		if total > 0 {
			ms[i].Weight /= total
		}
	}
}

// path is the combined course from cut ci down to the level, stretched so
// that it ends at the estimate.
func (b *backtest) path(ci int, level float64, wt []float64, est float64) []PathPoint {
	c := b.cuts[ci]
	yNow := b.y[c.k-1]
	const steps = 16
	var out []PathPoint
	out = append(out, PathPoint{c.at, yNow + b.xe})
	var raw []PathPoint
	for i := 1; i <= steps; i++ {
		lv := yNow + (level-yNow)*float64(i)/steps
		at := combine(b.projectCut(ci, lv), wt, c.at)
		if !finite(at) {
			return nil
		}
		raw = append(raw, PathPoint{at, lv + b.xe})
	}
	end := raw[len(raw)-1].TimeH
	if !(end > c.at) {
		return nil
	}
	scale := (est - c.at) / (end - c.at)
	prev := c.at
	for _, q := range raw {
		at := math.Max(prev, c.at+(q.TimeH-c.at)*scale)
		out = append(out, PathPoint{at, q.MoistureDB})
		prev = at
	}
	return out
}
