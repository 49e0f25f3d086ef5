package kinetics

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// SeriesKind says what the values of a Series are.
type SeriesKind int

const (
	SeriesMass       SeriesKind = iota // grams on the balance
	SeriesMoistureDB                   // dry-basis moisture X
	SeriesMR                           // moisture ratio
)

// Series is a run's readings: elapsed hours from the first reading, the
// values (grams unless Kind says otherwise) and the balance's stability
// flag (1 stable, −1 unstable, 0 not said).
type Series struct {
	TimeH  []float64
	Value  []float64
	Stable []int8
	Kind   SeriesKind
}

// Options tune an analysis.
type Options struct {
	UntilH       float64    // analyse only readings up to this time; NaN or 0: all
	MaxFitPoints int        // model fits use at most this many time-binned points (default 2000)
	Reference    *Reference // an earlier run of the same product, for the projection
	// MoreReferences are further earlier runs (--reference repeated).
	MoreReferences []*Reference
}

// Points are the derived values at every reading (NaN where not known).
type Points struct {
	Reject  []uint8   // 0 kept, else a RejectReason code
	NetG    []float64 // value after tare
	SmoothG []float64 // smoothed mass
	RateG   []float64 // drying rate −dm/dt, g/h
	RateDB  []float64 // −dX/dt, 1/h (dry basis)
	Flux    []float64 // kg/(m²·h), with the tray area
	X       []float64 // dry-basis moisture
	WBPct   []float64 // wet-basis moisture, %
	MR      []float64 // moisture ratio
}

// Result is everything parch reports about a run. NaN means "cannot be
// computed"; Warnings say why.
type Result struct {
	Readings            int
	Rejected            int
	RejectedBy          map[string]int
	DurationH           float64
	InitialMassG        float64
	DryMassG            float64 // dry solids at the end of the analysed span
	InitialDryMassG     float64 // dry solids at the start
	FinalMassG          float64
	FinalMoistureWBPct  float64
	FinalMoistureDB     float64
	InitialMoistureDB   float64
	TargetMoistureWBPct float64
	TargetMassG         float64
	TargetReachedH      float64
	Projection          Projection
	ConstantRate        *ConstantRate
	Fits                []*Fit
	FitFailures         map[string]string
	FitPoints           int
	Best                *Fit
	Diffusivity         *Diffusivity
	EndOfRunH           float64
	Removed             []Removal
	SuspectedRemovals   []Step
	NoiseSD             float64
	Points              Points
	Warnings            []string
	MassKnown           bool // false for moisture or MR input: gram figures are NaN
	AfterCut            int  // readings after the UntilH cut, not analysed

	track *track // the projection's history, for ProjectionHistory
}

func (r *Result) warn(format string, a ...any) {
	r.Warnings = append(r.Warnings, fmt.Sprintf(format, a...))
}

// MaxValue is the largest reading taken as a mass (g) or moisture: a
// million grams is far beyond a laboratory balance, and values near the
// float limit overflow every difference taken of them.
const MaxValue = 1e6

// ErrNoReadings is returned for an empty series.
var ErrNoReadings = errors.New("no readings")

// Analyze computes every derived value of a run from its readings and setup.
// It never changes the readings. Values it cannot compute are NaN (or nil)
// with the reason in Warnings; it returns an error only when there is
// nothing to analyse.
func Analyze(s Series, setup Setup, opt Options) (*Result, error) {
	if err := setup.Validate(); err != nil {
		return nil, err
	}
	n := len(s.TimeH)
	if len(s.Value) != n || (s.Stable != nil && len(s.Stable) != n) {
		return nil, fmt.Errorf("kinetics: series columns differ in length")
	}
	if n == 0 {
		return nil, ErrNoReadings
	}
	pick, why := inOrder(s.TimeH, opt.UntilH)
	if len(pick) == 0 {
		for _, w := range why {
			if w == RejAfterCut {
				return nil, ErrNothingBeforeCut
			}
		}
		return nil, ErrNoReadings
	}
	if len(pick) == n {
		return analyzeInOrder(s, setup, opt)
	}
	sub := Series{Kind: s.Kind, TimeH: gather(s.TimeH, pick), Value: gather(s.Value, pick)}
	if s.Stable != nil {
		sub.Stable = gather(s.Stable, pick)
	}
	r, err := analyzeInOrder(sub, setup, opt)
	if err != nil {
		return nil, err
	}
	r.spread(pick, why)
	return r, nil
}

// ErrNothingBeforeCut is returned when no reading is at or before the
// UntilH cut.
var ErrNothingBeforeCut = errors.New("no reading at or before the cut")

func gather[T any](v []T, idx []int) []T {
	out := make([]T, len(idx))
	for j, i := range idx {
		out[j] = v[i]
	}
	return out
}

// spread maps the figures of the readings analysed (pick) back onto every
// reading of the series, marking the others with why they were left out.
func (r *Result) spread(pick []int, why []uint8) {
	n := len(why)
	widen := func(v []float64) []float64 {
		out := make([]float64, n)
		for i := range out {
			out[i] = math.NaN()
		}
		for j, i := range pick {
			if j < len(v) { // an analysis that stopped early has no figures
				out[i] = v[j]
			}
		}
		return out
	}
	p := &r.Points
	p.NetG, p.SmoothG, p.RateG, p.RateDB = widen(p.NetG), widen(p.SmoothG), widen(p.RateG), widen(p.RateDB)
	p.Flux, p.X, p.WBPct, p.MR = widen(p.Flux), widen(p.X), widen(p.WBPct), widen(p.MR)
	rej := append([]uint8(nil), why...)
	for j, i := range pick {
		if j < len(p.Reject) {
			rej[i] = p.Reject[j]
		}
	}
	p.Reject = rej
	r.Readings, r.AfterCut = 0, 0
	order, jumps := 0, 0
	for _, w := range why {
		switch w {
		case RejAfterCut:
			r.AfterCut++
		case RejOrder, RejDuplicate:
			order++
		case RejTimeJump:
			jumps++
		}
	}
	r.Readings = n - r.AfterCut
	r.countRejects()
	if jumps > 0 {
		r.warn("%d readings more than %g h from the rest of the run were left out as time jumps (a clock change? a wrong time unit?)", jumps, MaxGapH)
	}
	if order > 0 {
		r.warn("%d readings out of time order or with a time already used were left out (the longest run of readings in time order is analysed)", order)
	}
}

// analyzeInOrder is Analyze on readings whose times increase.
func analyzeInOrder(s Series, setup Setup, opt Options) (*Result, error) {
	n := len(s.TimeH)
	if opt.MaxFitPoints <= 0 {
		opt.MaxFitPoints = 2000
	}
	t := s.TimeH[:n]
	r := &Result{Readings: n, RejectedBy: map[string]int{}, FitFailures: map[string]string{},
		MassKnown: s.Kind == SeriesMass}
	nan := math.NaN()
	r.InitialMassG, r.DryMassG, r.InitialDryMassG, r.FinalMassG = nan, nan, nan, nan
	r.FinalMoistureWBPct, r.FinalMoistureDB, r.InitialMoistureDB = nan, nan, nan
	r.TargetMoistureWBPct, r.TargetMassG, r.TargetReachedH, r.EndOfRunH = nan, nan, nan, nan
	r.Projection = NoProjection("no target moisture or no dry solids")
	r.DurationH = t[n-1] - t[0]

	// Values as masses: moisture input becomes the mass of 1 g of solids.
	tare := setup.TareG
	pts := &r.Points
	pts.NetG = make([]float64, n)
	pts.Reject = make([]uint8, n)
	keep := make([]bool, n)
	// A moisture ratio becomes dry-basis moisture when the initial moisture
	// is known: X = X_e + MR·(X0 − X_e).
	mrX0 := math.NaN()
	if s.Kind == SeriesMR && !math.IsNaN(setup.InitialMoistureWB) {
		mrX0 = WetToDry(setup.InitialMoistureWB / 100)
	}
	for i := 0; i < n; i++ {
		v := s.Value[i]
		switch {
		case s.Kind == SeriesMass:
			v -= tare
		case !math.IsNaN(mrX0):
			v = 1 + setup.EquilibriumDB + v*(mrX0-setup.EquilibriumDB)
		default:
			v = 1 + v
		}
		pts.NetG[i] = v
		switch {
		case i > 0 && t[i] < t[i-1]:
			pts.Reject[i] = RejOrder
		case s.Stable != nil && s.Stable[i] < 0:
			pts.Reject[i] = RejUnstable
		case !(v > 0) || math.IsInf(v, 0) || math.IsNaN(t[i]):
			pts.Reject[i] = RejNotPositive
		case v > MaxValue:
			pts.Reject[i] = RejImplausible
		default:
			keep[i] = true
		}
	}
	kept := countTrue(keep)
	if kept == 0 {
		r.countRejects()
		r.warn("no usable readings: all are unstable, out of order, or not positive after a tare of %g g", tare)
		return r, nil
	}

	// Balance noise and resolution from the kept readings.
	km := make([]float64, 0, kept)
	kt := make([]float64, 0, kept)
	for i := range keep {
		if keep[i] {
			km = append(km, pts.NetG[i])
			kt = append(kt, t[i])
		}
	}
	r.NoiseSD = NoiseSD(km)
	res := Resolution(km)
	span := kt[len(kt)-1] - kt[0]
	dt := span / math.Max(float64(len(kt)-1), 1)
	blockH := math.Max(5.0/60, 7*dt)
	if span > 0 {
		blockH = math.Min(blockH, math.Max(span/4, dt))
	}

	// Steps: declared removals and suspected ones break the trend and the
	// smoothing, so that neither is smeared over.
	var declared []float64
	for _, rm := range setup.Removals {
		if rm.ElapsedH <= t[n-1] {
			declared = append(declared, rm.ElapsedH)
			r.Removed = append(r.Removed, rm)
		}
	}
	medMass := median(km)
	floor := math.Max(3*res, 3*r.NoiseSD)
	if s.Kind == SeriesMass && len(km) >= 20 {
		// Transient spikes first, so they are not taken for steps; the
		// readings they cost near a real step come back below.
		noSpikes := append([]bool(nil), keep...)
		RejectSpikes(t, pts.NetG, noSpikes, blockH, declared, floor, 1)
		limit := math.Max(math.Max(15*r.NoiseSD, 5*res), 0.005*medMass)
		dt, dm, dk, dblock := decimateForSteps(t, pts.NetG, noSpikes, 20000)
		steps := filterSteps(FindSteps(dt, dm, dk, dblock, limit, declared), limit, declared, blockH)
		r.SuspectedRemovals = refineSteps(steps, t, pts.NetG, keep, blockH)
	}
	breaks := append([]float64(nil), declared...)
	for _, st := range r.SuspectedRemovals {
		breaks = append(breaks, st.ElapsedH)
	}
	sort.Float64s(breaks)
	// With fewer than 20 readings a spike cannot be told from the curve:
	// keep them all.
	if len(km) >= 20 && RejectSpikes(t, pts.NetG, keep, blockH, breaks, floor, 2) > 0 {
		for i := range keep {
			if !keep[i] && pts.Reject[i] == KeepOK {
				pts.Reject[i] = RejSpike
			}
		}
	}
	r.countRejects()

	// Smoothed mass and rate, segment by segment between steps.
	pts.SmoothG, pts.RateG = smoothSegments(t, pts.NetG, keep, breaks, r.NoiseSD)
	first, last := -1, -1
	for i := range keep {
		if keep[i] && !math.IsNaN(pts.SmoothG[i]) {
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	if first < 0 {
		r.warn("too few usable readings to smooth: %d kept, and fewer than 5 of them between two steps or at distinct times", countTrue(keep))
		return r, nil
	}
	// The initial mass is the first kept reading as read: smoothing would
	// pull it along the steep start of a curve.
	m0 := pts.NetG[first]
	if !math.IsNaN(setup.InitialMassG) && s.Kind == SeriesMass {
		m0 = setup.InitialMassG
	}
	r.InitialMassG = m0
	r.FinalMassG = pts.SmoothG[last]

	// Dry solids over time: S0 at the start, reduced by each removal.
	solids := solidsProfile(r, s.Kind, setup, t, pts.SmoothG, keep, m0)
	if s.Kind == SeriesMass {
		r.checkRemovals(t, pts.NetG, keep)
	}

	n0 := n
	pts.X = nanSlice(n0)
	pts.WBPct = nanSlice(n0)
	pts.MR = nanSlice(n0)
	pts.RateDB = nanSlice(n0)
	pts.Flux = nanSlice(n0)
	xe := setup.EquilibriumDB
	ratioOnly := s.Kind == SeriesMR && math.IsNaN(mrX0) // moisture contents not known
	if ratioOnly {
		xe = 0
	}
	if solids != nil {
		sEnd := solids.at(t[n-1])
		r.DryMassG = sEnd
		r.InitialDryMassG = solids.s0
		x0 := m0/solids.s0 - 1
		r.InitialMoistureDB = x0
		if !(x0 > xe) {
			r.warn("initial moisture %.3g (dry basis) is not above the equilibrium moisture %.3g: moisture ratio not defined", x0, xe)
		}
		for i := 0; i < n; i++ {
			if pts.Reject[i] == RejOrder || !(pts.NetG[i] > 0) {
				continue
			}
			sol := solids.at(t[i])
			x := pts.NetG[i]/sol - 1
			pts.X[i] = x
			pts.WBPct[i] = 100 * DryToWet(x)
			if x0 > xe {
				pts.MR[i] = (x - xe) / (x0 - xe)
			}
			if !math.IsNaN(pts.RateG[i]) {
				pts.RateDB[i] = pts.RateG[i] / sol
				if setup.AreaM2 > 0 {
					pts.Flux[i] = pts.RateG[i] / 1000 / setup.AreaM2
				}
			}
		}
		xf := r.FinalMassG/sEnd - 1
		r.FinalMoistureDB = xf
		r.FinalMoistureWBPct = 100 * DryToWet(xf)
		if xf < 0 {
			r.warn("the final mass %.2f g is below the dry solids %.2f g: check the dry mass or the initial moisture", r.FinalMassG, sEnd)
		}
		if xt := setup.TargetX(); ratioOnly && !math.IsNaN(xt) {
			r.Projection = NoProjection("the input is a moisture ratio: give the initial moisture (--initial-moisture) to place the target on it")
			r.warn("projection: %s", r.Projection.Why)
		} else if !math.IsNaN(xt) {
			r.TargetMoistureWBPct = 100 * DryToWet(xt)
			r.TargetMassG = sEnd * (1 + xt)
			r.TargetReachedH = reachedAt(t, pts.SmoothG, keep, solids, xt)
			if r.TargetReachedH == t[first] {
				r.warn("the target %.1f %% wet basis is at or above the initial moisture: reached at the start", r.TargetMoistureWBPct)
			}
		} else {
			r.warn("no target moisture given (--target): no target mass, no projection")
		}
	}

	// Drying periods.
	peakRate := 0.0
	for i := range pts.RateG {
		if keep[i] && pts.RateG[i] > peakRate {
			peakRate = pts.RateG[i]
		}
	}
	hPeak := RateWindow(peakRate, r.NoiseSD, dt, 3*dt, math.Max(math.Min(span/6, 2), 3*dt))
	rateSD := math.Sqrt(1.5 * r.NoiseSD * r.NoiseSD * dt / math.Pow(hPeak, 3))
	if cr := FindConstantRate(t, pts.SmoothG, maskNaN(pts.RateG, keep), rateSD, hPeak); cr != nil {
		if solids != nil && !cr.Ongoing {
			cr.CriticalDB = pts.SmoothG[indexAt(t, keep, cr.EndH)]/solids.at(cr.EndH) - 1
		}
		if cr.Ongoing {
			r.warn("still in the constant-rate period: its end and the critical moisture are not known yet")
		}
		r.ConstantRate = cr
	}

	// Model fits on the moisture ratio.
	fitT, fitMR := binned(t, pts.MR, keep, opt.MaxFitPoints)
	r.FitPoints = len(fitT)
	switch {
	case solids == nil:
		r.warn("model fits, diffusivity and projection need the dry solids: give --initial-moisture or --dry-mass")
	case len(fitT) < 5:
		r.warn("model fits need at least 5 usable moisture ratios, have %d", len(fitT))
	case minOf(fitMR) > 0.95:
		r.warn("the moisture ratio has fallen only to %.3f: too early for model fits", minOf(fitMR))
	default:
		r.Fits, r.FitFailures = FitAll(fitT, fitMR)
		for name, why := range r.FitFailures {
			r.warn("%s not fitted: %s", name, why)
		}
		for _, f := range r.Fits {
			if !f.Converged {
				r.warn("%s fit did not converge: %s", f.Model.Name, f.Note)
			} else if f.Degenerate {
				r.warn("%s: %s", f.Model.Name, f.Note)
			}
		}
		r.Best = Best(r.Fits)
	}

	// Diffusivity from the falling-rate period.
	if solids != nil && len(fitT) >= 5 && minOf(fitMR) <= 0.95 {
		switch {
		case !(setup.ThicknessMM > 0):
			r.warn("diffusivity needs the slice thickness (--thickness)")
		default:
			if setup.Faces == 0 {
				r.warn("drying faces not given: 2 assumed (a mesh tray); use --faces 1 for a solid tray")
			}
			from := t[first]
			if r.ConstantRate != nil {
				from = r.ConstantRate.EndH
			}
			if r.ConstantRate != nil && r.ConstantRate.Ongoing {
				from = math.Inf(1) // no falling-rate data yet
			}
			var dtT, dMR []float64
			for i := range fitT {
				if fitT[i] >= from && fitMR[i] >= 0.02 {
					dtT = append(dtT, fitT[i])
					dMR = append(dMR, fitMR[i])
				}
			}
			d, err := FitDiffusivity(dtT, dMR, setup.HalfThicknessM(), r.ConstantRate != nil)
			if err != nil {
				r.warn("diffusivity not fitted: %v", err)
			} else {
				r.Diffusivity = d
				if !d.Converged {
					r.warn("diffusivity fit did not converge")
				}
			}
		}
	}

	// Projection to the target.
	if solids != nil && !math.IsNaN(setup.TargetX()) && !ratioOnly {
		var refs []*Reference
		for _, ref := range append([]*Reference{opt.Reference}, opt.MoreReferences...) {
			if ref == nil {
				continue
			}
			if !ref.Overlaps(r.InitialMoistureDB, setup.TargetX()) {
				r.warn("reference run %s not used: its moisture (%.3g to %.3g dry basis) does not meet this run's (%.3g down to the target %.3g); another product or another unit?",
					ref.Name, ref.X0, ref.XEnd, r.InitialMoistureDB, setup.TargetX())
				continue
			}
			refs = append(refs, ref.ForEquilibrium(xe))
		}
		r.track = newTrack(t, pts.X, keep, xe, r.InitialMoistureDB, setup.TargetX(), refs)
	}
	switch {
	case !math.IsNaN(r.TargetReachedH):
		tr := r.TargetReachedH
		r.Projection = NoProjection("")
		r.Projection.TargetH, r.Projection.LowH, r.Projection.HighH, r.Projection.Method = tr, tr, tr, ProjReached
	case r.track != nil:
		r.Projection = r.track.project()
		if r.Projection.Why != "" {
			r.warn("projection: %s", r.Projection.Why)
		}
	}

	// End of run: steady weight.
	r.EndOfRunH = steadyAt(t, pts.NetG, keep, breaks, setup.SteadyWindowH, setup.SteadyPct)

	if !r.MassKnown {
		r.InitialMassG, r.DryMassG, r.InitialDryMassG, r.FinalMassG, r.TargetMassG = nan, nan, nan, nan, nan
		r.Projection.AsymptoteG = nan
		if r.ConstantRate != nil {
			r.ConstantRate.RateGPerH = nan
		}
		if ratioOnly {
			r.FinalMoistureDB, r.FinalMoistureWBPct, r.InitialMoistureDB, r.TargetMoistureWBPct = nan, nan, nan, nan
			r.warn("input is a moisture ratio: no masses or moisture contents, only fits and times (give --initial-moisture for moisture contents)")
		} else if s.Kind == SeriesMR {
			r.warn("input is a moisture ratio, turned into moisture content with the initial moisture given: figures in grams are not known")
		} else {
			r.warn("input is dry-basis moisture: figures in grams are not known")
		}
	}
	return r, nil
}

func (r *Result) countRejects() {
	r.Rejected = 0
	r.RejectedBy = map[string]int{}
	for _, c := range r.Points.Reject {
		if c != KeepOK && c != RejAfterCut {
			r.Rejected++
			r.RejectedBy[RejectReason(c)]++
		}
	}
}

func indexAt(t []float64, keep []bool, at float64) int {
	best := -1
	for i := range t {
		if keep[i] && (best < 0 || math.Abs(t[i]-at) < math.Abs(t[best]-at)) {
			best = i
		}
	}
	return best
}

// smoothSegments runs SmoothRate on each stretch between steps.
func smoothSegments(t, m []float64, keep []bool, breaks []float64, sd float64) ([]float64, []float64) {
	n := len(t)
	smooth, rate := nanSlice(n), nanSlice(n)
	bounds := append([]float64{math.Inf(-1)}, breaks...)
	bounds = append(bounds, math.Inf(1))
	for b := 0; b+1 < len(bounds); b++ {
		seg := make([]bool, n)
		for i := range t {
			seg[i] = keep[i] && t[i] >= bounds[b] && t[i] < bounds[b+1]
		}
		sm, rt := SmoothRate(t, m, seg, sd)
		for i := range t {
			if seg[i] {
				smooth[i], rate[i] = sm[i], rt[i]
			}
		}
	}
	return smooth, rate
}

// binned averages kept, finite values into at most maxN equal time bins.
func binned(t, v []float64, keep []bool, maxN int) ([]float64, []float64) {
	// One pass to count and find the span, one to bin: nothing the size of
	// the run is copied when it is binned.
	n, first, last := 0, -1, -1
	for i := range t {
		if keep[i] && !math.IsNaN(v[i]) {
			n++
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	if n <= maxN {
		tt, vv := make([]float64, 0, n), make([]float64, 0, n)
		for i := range t {
			if keep[i] && !math.IsNaN(v[i]) {
				tt = append(tt, t[i])
				vv = append(vv, v[i])
			}
		}
		return tt, vv
	}
	t0, t1 := t[first], t[last]
	w := (t1 - t0) / float64(maxN)
	bt, bv := make([]float64, 0, maxN), make([]float64, 0, maxN)
	sumT, sumV, c, bin := 0.0, 0.0, 0, 0
	for i := first; i <= last; i++ {
		if !keep[i] || math.IsNaN(v[i]) {
			continue
		}
		b := min(int((t[i]-t0)/w), maxN-1)
		if b != bin && c > 0 {
			bt = append(bt, sumT/float64(c))
			bv = append(bv, sumV/float64(c))
			sumT, sumV, c = 0, 0, 0
		}
		bin = b
		sumT += t[i]
		sumV += v[i]
		c++
	}
	if c > 0 {
		bt = append(bt, sumT/float64(c))
		bv = append(bv, sumV/float64(c))
	}
	return bt, bv
}

func countTrue(b []bool) int {
	c := 0
	for _, v := range b {
		if v {
			c++
		}
	}
	return c
}

func nanSlice(n int) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = math.NaN()
	}
	return s
}

func maskNaN(v []float64, keep []bool) []float64 {
	out := make([]float64, len(v))
	for i := range v {
		out[i] = math.NaN()
		if keep[i] {
			out[i] = v[i]
		}
	}
	return out
}

// checkRemovals warns when a declared removal has no drop on the balance to
// match it: grams or a time typed wrong, or a piece noted that was not taken
// off. The removal is applied all the same (the note is the record).
func (r *Result) checkRemovals(t, m []float64, keep []bool) {
	for _, rm := range r.Removed {
		var before, after []float64
		for i := len(t) - 1; i >= 0 && len(before) < 5; i-- {
			if keep[i] && t[i] < rm.ElapsedH {
				before = append(before, m[i])
			}
		}
		for i := range t {
			if keep[i] && t[i] > rm.ElapsedH {
				after = append(after, m[i])
				if len(after) == 5 {
					break
				}
			}
		}
		if len(before) < 3 || len(after) < 3 {
			continue // at an end of the run: nothing to compare
		}
		if drop := median(before) - median(after); drop < 0.5*rm.MassG {
			r.warn("removal of %.2f g at %.2f h: the balance shows a drop of %.2f g there; check the grams and the time of the note", rm.MassG, rm.ElapsedH, drop)
		}
	}
}
