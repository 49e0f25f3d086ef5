package kinetics

import (
	"fmt"
	"math"
	"sort"
	"sync"
)

// analyzeInOrder is Analyze on readings whose times increase. It is a
// pipeline of stages, each a function of what the stages before it found,
// so that a reader sees the flow here and a benchmark can time each one:
//
//	clean       net values, rejected readings, balance noise, steps
//	rate        smoothed mass and drying rate, segment by segment
//	moisture    dry solids, moisture content, moisture ratio, target
//	periods     constant-rate period and its end; steady weight
//	fits        thin-layer models on the binned moisture ratio
//	diffusivity Fick's law (Crank's series) over the falling-rate period
//	projection  the moisture course the projection works on
//	backtest    the projection at the newest reading, weighted by how
//	            each method would have done earlier in this run
func analyzeInOrder(s Series, setup Setup, opt Options) (*Result, error) {
	if opt.MaxFitPoints <= 0 {
		opt.MaxFitPoints = 2000
	}
	r := newResult(s)
	t := s.TimeH

	c := clean(s, setup)
	r.NoiseSD, r.Removed, r.SuspectedRemovals = c.noiseSD, c.removed, c.suspected
	r.Points.NetG, r.Points.Reject = c.net, c.reject
	r.countRejects()
	if c.kept == 0 {
		r.warn("no usable readings: all are unstable, out of order, or not positive after a tare of %g g", setup.TareG)
		return r, nil
	}

	sm := rate(t, c)
	r.Points.smooth = sm.s
	if sm.first < 0 {
		r.warn("too few usable readings to smooth: %d kept, and fewer than 5 of them between two steps or at distinct times", c.kept)
		return r, nil
	}

	mo := moisture(s, setup, c, sm, r.warn)
	r.setMoisture(mo)

	// The fits, the periods with the diffusivity (which starts where the
	// constant-rate period ends) and the projection need only what the
	// stages above found: they run side by side, each with its own
	// warnings, put in the result in this order.
	var wPeriods, wFits, wDiff, wProj warnings
	fitT, fitMR := binnedBy(t, c.keep, opt.MaxFitPoints, mo.conv.mr)
	r.FitPoints = len(fitT)
	fittable := mo.solids != nil && len(fitT) >= 5 && minOf(fitMR) <= 0.95
	project := mo.solids != nil && !math.IsNaN(setup.TargetX()) && !mo.ratioOnly
	parallel(
		func() {
			r.ConstantRate, r.EndOfRunH = periods(t, c, sm, mo.solids, setup)
			if r.ConstantRate != nil && r.ConstantRate.Ongoing {
				wPeriods.add("still in the constant-rate period: its end and the critical moisture are not known yet")
			}
			if fittable {
				r.Diffusivity = diffusivity(fitT, fitMR, t[sm.first], r.ConstantRate, setup, wDiff.add)
			}
		},
		func() {
			switch {
			case mo.solids == nil:
				wFits.add("model fits, diffusivity and projection need the dry solids: give --initial-moisture or --dry-mass")
			case len(fitT) < 5:
				wFits.add("model fits need at least 5 usable moisture ratios, have %d", len(fitT))
			case !fittable:
				wFits.add("the moisture ratio has fallen only to %.3f: too early for model fits", minOf(fitMR))
			default:
				r.Fits, r.FitFailures, r.Best = fits(fitT, fitMR, wFits.add)
			}
		},
		func() {
			if !project {
				return
			}
			r.track = projection(t, c.keep, mo.conv.x, mo.xe, r.InitialMoistureDB, setup.TargetX(), opt, wProj.add)
			if math.IsNaN(r.TargetReachedH) {
				r.Projection = backtestProjection(r.track)
				if r.Projection.Why != "" {
					wProj.add("projection: %s", r.Projection.Why)
				}
			}
		},
	)
	for _, w := range [][]string{wPeriods, wFits, wDiff, wProj} {
		r.Warnings = append(r.Warnings, w...)
	}
	if tr := r.TargetReachedH; !math.IsNaN(tr) {
		r.Projection = NoProjection("")
		r.Projection.TargetH, r.Projection.LowH, r.Projection.HighH, r.Projection.Method = tr, tr, tr, ProjReached
	}

	if !r.MassKnown {
		r.forgetMasses(s.Kind, mo.ratioOnly)
	}
	return r, nil
}

// warnings gathers the warnings of one stage.
type warnings []string

func (w *warnings) add(format string, a ...any) { *w = append(*w, fmt.Sprintf(format, a...)) }

// parallel runs the functions side by side and returns when all are done.
// A panic in one is raised again here, in the caller's goroutine, where the
// dashboard recovers from it (a panic in a goroutine of its own would end
// the program, recording and all).
func parallel(fns ...func()) {
	var wg sync.WaitGroup
	panics := make([]any, len(fns))
	for i, fn := range fns {
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer func() { panics[i] = recover() }()
			fn()
		}()
	}
	wg.Wait()
	for _, p := range panics {
		if p != nil {
			panic(p)
		}
	}
}

// newResult is a Result with every figure not known yet.
func newResult(s Series) *Result {
	n := len(s.TimeH)
	nan := math.NaN()
	r := &Result{Readings: n, RejectedBy: map[string]int{}, FitFailures: map[string]string{},
		MassKnown: s.Kind == SeriesMass}
	r.InitialMassG, r.DryMassG, r.InitialDryMassG, r.FinalMassG = nan, nan, nan, nan
	r.FinalMoistureWBPct, r.FinalMoistureDB, r.InitialMoistureDB = nan, nan, nan
	r.TargetMoistureWBPct, r.TargetMassG, r.TargetReachedH, r.EndOfRunH = nan, nan, nan, nan
	r.Projection = NoProjection("no target moisture or no dry solids")
	r.DurationH = s.TimeH[n-1] - s.TimeH[0]
	return r
}

// stepPoints bounds the points the search for steps looks at.
const stepPoints = 20000

// cleaned is what the clean stage finds: every reading's net value and
// whether it is kept, the balance's noise, and the steps (removals) that
// break the run into segments.
type cleaned struct {
	net       []float64 // value after tare; moisture input as the mass of 1 g of solids
	reject    []uint8   // 0 kept, else a RejectReason code
	keep      []bool
	kept      int
	noiseSD   float64
	dt, span  float64 // mean spacing and span of the kept readings, h
	blockH    float64 // block length of the robust trend, h
	removed   []Removal
	suspected []Step
	breaks    []float64 // times of every step, sorted
	mrX0      float64   // initial moisture a moisture ratio is scaled to; NaN if none
}

// clean is the first stage: values as masses, readings rejected with their
// reason (unstable, not positive, implausible, transient spikes), the
// balance noise, and steps: declared removals and drops that look like one.
func clean(s Series, setup Setup) cleaned {
	t := s.TimeH
	n := len(t)
	c := cleaned{reject: make([]uint8, n), keep: make([]bool, n), mrX0: math.NaN()}
	tare := setup.TareG
	// Masses with no tare are their own net values: the column is shared,
	// not copied (neither is ever written after this).
	shared := s.Kind == SeriesMass && tare == 0
	if shared {
		c.net = s.Value
	} else {
		c.net = make([]float64, n)
	}
	// A moisture ratio becomes dry-basis moisture when the initial moisture
	// is known: X = X_e + MR·(X0 − X_e).
	if s.Kind == SeriesMR && !math.IsNaN(setup.InitialMoistureWB) {
		c.mrX0 = WetToDry(setup.InitialMoistureWB / 100)
	}
	for i := 0; i < n; i++ {
		v := s.Value[i]
		switch {
		case s.Kind == SeriesMass:
			v -= tare
		case !math.IsNaN(c.mrX0):
			v = 1 + setup.EquilibriumDB + v*(c.mrX0-setup.EquilibriumDB)
		default:
			v = 1 + v
		}
		if !shared {
			c.net[i] = v
		}
		switch {
		case i > 0 && t[i] < t[i-1]:
			c.reject[i] = RejOrder
		case s.Stable != nil && s.Stable[i] < 0:
			c.reject[i] = RejUnstable
		case !(v > 0) || math.IsInf(v, 0) || math.IsNaN(t[i]):
			c.reject[i] = RejNotPositive
		case v > MaxValue:
			c.reject[i] = RejImplausible
		default:
			c.keep[i] = true
			c.kept++
		}
	}
	if c.kept == 0 {
		return c
	}

	// Balance noise, resolution and typical mass from the kept readings,
	// in one pass that keeps only the samples each needs.
	nk := c.kept
	var firstT, lastT float64
	var first []float64 // the first 5000, for the resolution
	// NoiseSD's second differences: every step-th triple of kept readings.
	step := max(1, (nk-2+noiseSample-1)/noiseSample)
	d2 := make([]float64, 0, min(nk, noiseSample+1))
	// thin's evenly spaced masses, for the median mass.
	mm := make([]float64, 0, min(nk, noiseSample+1))
	thinStep := float64(nk) / float64(noiseSample)
	nextThin := 0
	q := 0 // index among the kept readings
	var m1, m2 float64
	for i := range c.keep {
		if !c.keep[i] {
			continue
		}
		v := c.net[i]
		if q == 0 {
			firstT = t[i]
		}
		lastT = t[i]
		if q < 5000 {
			first = append(first, v)
		}
		if q >= 2 && nk >= 5 && (q-2)%step == 0 {
			d2 = append(d2, v-2*m1+m2) // middle reading q−1
		}
		if nk <= noiseSample || q == int(float64(nextThin)*thinStep) {
			mm = append(mm, v)
			nextThin++
		}
		m2, m1 = m1, v
		q++
	}
	c.noiseSD = math.NaN()
	if nk >= 5 {
		med := medianInPlace(d2)
		for j := range d2 {
			d2[j] = math.Abs(d2[j] - med)
		}
		c.noiseSD = 1.4826 * medianInPlace(d2) / math.Sqrt(6)
	}
	res := Resolution(first)
	// The typical mass sets how large a drop counts as a step: the median
	// of 10^5 evenly spaced readings is plenty for that.
	medMass := medianInPlace(mm)
	c.span = lastT - firstT
	c.dt = c.span / math.Max(float64(nk-1), 1)
	c.blockH = math.Max(5.0/60, 7*c.dt)
	if c.span > 0 {
		c.blockH = math.Min(c.blockH, math.Max(c.span/4, c.dt))
	}

	// Steps: declared removals and suspected ones break the trend and the
	// smoothing, so that neither is smeared over.
	var declared []float64
	for _, rm := range setup.Removals {
		if rm.ElapsedH <= t[n-1] {
			declared = append(declared, rm.ElapsedH)
			c.removed = append(c.removed, rm)
		}
	}
	floor := math.Max(3*res, 3*c.noiseSD)
	if s.Kind == SeriesMass && nk >= 20 {
		// Transient spikes first, so they are not taken for steps; the
		// readings they cost near a real step come back below.
		// A long run is searched as medians of bins of at least five
		// readings (decimateForSteps): a median of five stands off two
		// spikes, so the spike pass is needed only below that.
		noSpikes := c.keep
		if nk < 5*stepPoints {
			noSpikes = append([]bool(nil), c.keep...)
			RejectSpikes(t, c.net, noSpikes, c.blockH, declared, floor, 1)
		}
		limit := math.Max(math.Max(15*c.noiseSD, 5*res), 0.005*medMass)
		dt, dm, dk, dblock := decimateForSteps(t, c.net, noSpikes, stepPoints)
		steps := filterSteps(FindSteps(dt, dm, dk, dblock, limit, declared), limit, declared, c.blockH)
		c.suspected = refineSteps(steps, t, c.net, c.keep, c.blockH)
	}
	c.breaks = append([]float64(nil), declared...)
	for _, st := range c.suspected {
		c.breaks = append(c.breaks, st.ElapsedH)
	}
	sort.Float64s(c.breaks)
	// With fewer than 20 readings a spike cannot be told from the curve:
	// keep them all.
	if nk >= 20 && RejectSpikes(t, c.net, c.keep, c.blockH, c.breaks, floor, 2) > 0 {
		for i := range c.keep {
			if !c.keep[i] && c.reject[i] == KeepOK {
				c.reject[i] = RejSpike
				c.kept--
			}
		}
	}
	return c
}

// smoothed is what the rate stage finds: the smoothed mass and the drying
// rate at every kept reading (worked out when asked), the first and last
// reading that has them (−1 when none has), how many have a rate, and the
// highest rate.
type smoothed struct {
	s           *smoothing
	first, last int
	known       int
	peak        float64
}

// rate is the second stage: a local polynomial (Savitzky–Golay style) over
// each stretch between steps gives the smoothed mass and −dm/dt.
func rate(t []float64, c cleaned) smoothed {
	sm := smoothed{first: -1, last: -1}
	sm.s = smoothSegments(t, c.net, c.keep, c.breaks, c.noiseSD)
	sm.s.each(func(i int, _, rt float64) bool {
		if sm.first < 0 {
			sm.first = i
		}
		sm.last = i
		if !math.IsNaN(rt) {
			sm.known++
			sm.peak = math.Max(sm.peak, rt)
		}
		return true
	})
	return sm
}

// moistened is what the moisture stage finds.
type moistened struct {
	solids    *solids // nil when the dry solids are not known
	m0        float64 // initial mass
	xe        float64 // equilibrium moisture the moisture ratio uses
	ratioOnly bool    // a moisture ratio with no initial moisture: no moisture contents
	conv      *moistureOf
	initialDB float64
	finalDB   float64
	targetWB  float64
	targetG   float64
	reachedH  float64
	finalG    float64
	dryEndG   float64 // dry solids at the newest reading
	projWhy   string  // why there is no projection, when the stage knows
}

// moisture is the third stage: the dry solids over time (less each
// removal), from which every reading's moisture content (wet and dry
// basis), moisture ratio, and rate per gram of solids and per square metre
// follow (Points works them out when asked), and when the target was
// reached.
func moisture(s Series, setup Setup, c cleaned, sm smoothed, warn func(string, ...any)) moistened {
	t := s.TimeH
	n := len(t)
	nan := math.NaN()
	mo := moistened{xe: setup.EquilibriumDB, initialDB: nan, finalDB: nan, targetWB: nan, targetG: nan, reachedH: nan}
	mo.ratioOnly = s.Kind == SeriesMR && math.IsNaN(c.mrX0)
	if mo.ratioOnly {
		mo.xe = 0
	}
	// The initial mass is the first kept reading as read: smoothing would
	// pull it along the steep start of a curve.
	mo.m0 = c.net[sm.first]
	if !math.IsNaN(setup.InitialMassG) && s.Kind == SeriesMass {
		mo.m0 = setup.InitialMassG
	}
	mo.finalG = sm.s.smooth(sm.last)
	mo.solids = solidsProfile(warn, s.Kind, setup, t, sm.s.smooth, c.keep, mo.m0)
	if s.Kind == SeriesMass {
		checkRemovals(warn, c.removed, t, c.net, c.keep)
	}
	mo.conv = &moistureOf{t: t, net: c.net, rate: sm.s.rate, reject: c.reject, solids: mo.solids, xe: mo.xe, x0: nan, area: setup.AreaM2}
	sp := mo.solids
	if sp == nil {
		return mo
	}
	xe := mo.xe
	sEnd := sp.at(t[n-1])
	mo.dryEndG = sEnd
	x0 := mo.m0/sp.s0 - 1
	mo.initialDB = x0
	mo.conv.x0 = x0
	if !(x0 > xe) {
		warn("initial moisture %.3g (dry basis) is not above the equilibrium moisture %.3g: moisture ratio not defined", x0, xe)
	}
	xf := mo.finalG/sEnd - 1
	mo.finalDB = xf
	if xf < 0 {
		warn("the final mass %.2f g is below the dry solids %.2f g: check the dry mass or the initial moisture", mo.finalG, sEnd)
	}
	if xt := setup.TargetX(); mo.ratioOnly && !math.IsNaN(xt) {
		mo.projWhy = "the input is a moisture ratio: give the initial moisture (--initial-moisture) to place the target on it"
		warn("projection: %s", mo.projWhy)
	} else if !math.IsNaN(xt) {
		mo.targetWB = 100 * DryToWet(xt)
		mo.targetG = sEnd * (1 + xt)
		mo.reachedH = reachedAt(t, sm.s, sp, xt)
		if mo.reachedH == t[sm.first] {
			warn("the target %.1f %% wet basis is at or above the initial moisture: reached at the start", mo.targetWB)
		}
	} else {
		warn("no target moisture given (--target): no target mass, no projection")
	}
	return mo
}

// setMoisture puts the moisture stage's figures in the result.
func (r *Result) setMoisture(mo moistened) {
	r.Points.conv = mo.conv
	r.InitialMassG, r.FinalMassG = mo.m0, mo.finalG
	if mo.solids == nil {
		return
	}
	r.DryMassG = mo.dryEndG
	r.InitialDryMassG = mo.solids.s0
	r.InitialMoistureDB, r.FinalMoistureDB = mo.initialDB, mo.finalDB
	r.FinalMoistureWBPct = 100 * DryToWet(mo.finalDB)
	r.TargetMoistureWBPct, r.TargetMassG, r.TargetReachedH = mo.targetWB, mo.targetG, mo.reachedH
	if mo.projWhy != "" {
		r.Projection = NoProjection(mo.projWhy)
	}
}

// periods is the fourth stage: the constant-rate period, if the rate shows
// one, with the critical moisture where it ends; and the end of the run,
// when the weight has become steady.
func periods(t []float64, c cleaned, sm smoothed, sp *solids, setup Setup) (*ConstantRate, float64) {
	return constantRate(t, c, sm, sp), steadyAt(t, c.net, c.keep, c.breaks, setup.SteadyWindowH, setup.SteadyPct)
}

func constantRate(t []float64, c cleaned, sm smoothed, sp *solids) *ConstantRate {
	peakRate := math.Max(sm.peak, 0)
	hPeak := RateWindow(peakRate, c.noiseSD, c.dt, 3*c.dt, math.Max(math.Min(c.span/6, 2), 3*c.dt))
	rateSD := math.Sqrt(1.5 * c.noiseSD * c.noiseSD * c.dt / math.Pow(hPeak, 3))
	// The readings with a rate, every step-th of a dense log (and the
	// last): FindConstantRate's own thinning, done here so that the run's
	// rates are never gathered whole.
	step := max(1, sm.known/4000)
	var tt, ss, rr []float64
	k, took := 0, false
	var lt, ls, lr float64
	sm.s.each(func(i int, s, r float64) bool {
		if math.IsNaN(r) {
			return true
		}
		took = k%step == 0
		if took {
			tt, ss, rr = append(tt, t[i]), append(ss, s), append(rr, r)
		}
		k++
		lt, ls, lr = t[i], s, r
		return true
	})
	if k > 0 && !took {
		tt, ss, rr = append(tt, lt), append(ss, ls), append(rr, lr)
	}
	cr := FindConstantRate(tt, ss, rr, rateSD, hPeak)
	if cr != nil && sp != nil && !cr.Ongoing {
		cr.CriticalDB = sm.s.smooth(indexAt(t, c.keep, cr.EndH))/sp.at(cr.EndH) - 1
	}
	return cr
}

// fits is the model stage: every thin-layer model fitted to the binned
// moisture ratio, the failures with their reasons, and the best fit.
func fits(fitT, fitMR []float64, warn func(string, ...any)) ([]*Fit, map[string]string, *Fit) {
	fs, failed := FitAll(fitT, fitMR)
	for name, why := range failed {
		warn("%s not fitted: %s", name, why)
	}
	for _, f := range fs {
		if !f.Converged {
			warn("%s fit did not converge: %s", f.Model.Name, f.Note)
		} else if f.Degenerate {
			warn("%s: %s", f.Model.Name, f.Note)
		}
	}
	return fs, failed, Best(fs)
}

// diffusivity is the Fick stage: the effective diffusivity from the
// falling-rate part of the binned moisture ratio (from firstH, or the end
// of the constant-rate period).
func diffusivity(fitT, fitMR []float64, firstH float64, cr *ConstantRate, setup Setup, warn func(string, ...any)) *Diffusivity {
	if !(setup.ThicknessMM > 0) {
		warn("diffusivity needs the slice thickness (--thickness)")
		return nil
	}
	if setup.Faces == 0 {
		warn("drying faces not given: 2 assumed (a mesh tray); use --faces 1 for a solid tray")
	}
	from := firstH
	if cr != nil {
		from = cr.EndH
		if cr.Ongoing {
			from = math.Inf(1) // no falling-rate data yet
		}
	}
	var dtT, dMR []float64
	for i := range fitT {
		if fitT[i] >= from && fitMR[i] >= 0.02 {
			dtT = append(dtT, fitT[i])
			dMR = append(dMR, fitMR[i])
		}
	}
	d, err := FitDiffusivity(dtT, dMR, setup.HalfThicknessM(), cr != nil)
	if err != nil {
		warn("diffusivity not fitted: %v", err)
		return nil
	}
	if !d.Converged {
		warn("diffusivity fit did not converge")
	}
	return d
}

// projection is the stage that gathers what the projection works on: the
// kept moisture contents, binned, as free moisture, with the reference
// runs that meet this run's moisture.
func projection(t []float64, keep []bool, x func(int) float64, xe, x0, xt float64, opt Options, warn func(string, ...any)) *track {
	var refs []*Reference
	for _, ref := range append([]*Reference{opt.Reference}, opt.MoreReferences...) {
		if ref == nil {
			continue
		}
		if !ref.Overlaps(x0, xt) {
			warn("reference run %s not used: its moisture (%.3g to %.3g dry basis) does not meet this run's (%.3g down to the target %.3g); another product or another unit?",
				ref.Name, ref.X0, ref.XEnd, x0, xt)
			continue
		}
		refs = append(refs, ref.ForEquilibrium(xe))
	}
	return newTrack(t, keep, x, xe, x0, xt, refs)
}

// backtestProjection is the last stage: each method is replayed at earlier
// cut points of this run and weighted by how near it came; the projection
// at the newest reading combines them, with its range.
func backtestProjection(tr *track) Projection {
	return tr.project()
}

// forgetMasses sets the gram figures to NaN for moisture or moisture-ratio
// input, and says why.
func (r *Result) forgetMasses(kind SeriesKind, ratioOnly bool) {
	nan := math.NaN()
	r.InitialMassG, r.DryMassG, r.InitialDryMassG, r.FinalMassG, r.TargetMassG = nan, nan, nan, nan, nan
	r.Projection.AsymptoteG = nan
	if r.ConstantRate != nil {
		r.ConstantRate.RateGPerH = nan
	}
	switch {
	case ratioOnly:
		r.FinalMoistureDB, r.FinalMoistureWBPct, r.InitialMoistureDB, r.TargetMoistureWBPct = nan, nan, nan, nan
		r.warn("input is a moisture ratio: no masses or moisture contents, only fits and times (give --initial-moisture for moisture contents)")
	case kind == SeriesMR:
		r.warn("input is a moisture ratio, turned into moisture content with the initial moisture given: figures in grams are not known")
	default:
		r.warn("input is dry-basis moisture: figures in grams are not known")
	}
}
