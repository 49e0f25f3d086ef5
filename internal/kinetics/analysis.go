package kinetics

import (
	"errors"
	"fmt"
	"math"
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

// Points are the figures at every reading (NaN where not known). The
// moisture figures are worked out when asked for, from the net mass, the
// time and the dry solids: stored, they were five more columns the size of
// the run (40 MB at a million readings).
type Points struct {
	Reject []uint8   // 0 kept, else a RejectReason code
	NetG   []float64 // value after tare
	smooth *smoothing
	conv   *moistureOf
}

// Len is the number of readings.
func (p *Points) Len() int { return len(p.NetG) }

// SmoothG is the smoothed mass at reading i.
func (p *Points) SmoothG(i int) float64 { return p.smooth.smooth(i) }

// RateG is the drying rate −dm/dt at reading i, g/h.
func (p *Points) RateG(i int) float64 { return p.smooth.rate(i) }

// X is the dry-basis moisture at reading i.
func (p *Points) X(i int) float64 { return p.conv.x(i) }

// WBPct is the wet-basis moisture at reading i, %.
func (p *Points) WBPct(i int) float64 { return 100 * DryToWet(p.conv.x(i)) }

// MR is the moisture ratio at reading i.
func (p *Points) MR(i int) float64 { return p.conv.mr(i) }

// RateDB is the drying rate −dX/dt at reading i, 1/h (dry basis).
func (p *Points) RateDB(i int) float64 { return p.conv.rateDB(i) }

// Flux is the drying flux at reading i, kg/(m²·h), with the tray area.
func (p *Points) Flux(i int) float64 { return p.conv.flux(i) }

// moistureOf turns a reading's net mass into moisture: X = m/S(t) − 1 with
// the dry solids S at its time (less each removal before it).
type moistureOf struct {
	t, net []float64
	rate   func(int) float64
	reject []uint8
	solids *solids // nil: no moisture figures
	x0, xe float64
	area   float64
}

func (c *moistureOf) x(i int) float64 {
	if c == nil || c.solids == nil || c.reject[i] == RejOrder || !(c.net[i] > 0) {
		return math.NaN()
	}
	return c.net[i]/c.solids.at(c.t[i]) - 1
}

func (c *moistureOf) mr(i int) float64 {
	if c == nil || !(c.x0 > c.xe) {
		return math.NaN()
	}
	return (c.x(i) - c.xe) / (c.x0 - c.xe)
}

func (c *moistureOf) rateDB(i int) float64 {
	if math.IsNaN(c.x(i)) {
		return math.NaN()
	}
	return c.rate(i) / c.solids.at(c.t[i]) // NaN where there is no rate
}

func (c *moistureOf) flux(i int) float64 {
	if math.IsNaN(c.x(i)) || !(c.area > 0) {
		return math.NaN()
	}
	return c.rate(i) / 1000 / c.area
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
	if allInOrder(s.TimeH, opt.UntilH) { // the usual log: nothing to pick
		return analyzeInOrder(s, setup, opt)
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
	r.spread(s.TimeH, pick, why)
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
func (r *Result) spread(t []float64, pick []int, why []uint8) {
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
	p.NetG = widen(p.NetG)
	rej := append([]uint8(nil), why...)
	for j, i := range pick {
		if j < len(p.Reject) {
			rej[i] = p.Reject[j]
		}
	}
	p.Reject = rej
	if p.smooth != nil {
		sm := *p.smooth
		sm.index = make([]int32, n)
		for i := range sm.index {
			sm.index[i] = -1
		}
		for j, i := range pick {
			sm.index[i] = int32(j)
		}
		p.smooth = &sm
	}
	if p.conv != nil {
		c := *p.conv
		c.t, c.net, c.rate, c.reject = t, p.NetG, p.smooth.rate, p.Reject
		p.conv = &c
	}
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

// smoothSegments fits each stretch between steps. The times increase, so
// a stretch is a run of readings.
func smoothSegments(t, m []float64, keep []bool, breaks []float64, sd float64) *smoothing {
	n := len(t)
	sm := &smoothing{t: t, keep: keep}
	lo := 0
	for b := 0; b <= len(breaks); b++ {
		hi := n
		if b < len(breaks) {
			hi = lo
			for hi < n && t[hi] < breaks[b] {
				hi++
			}
		}
		sm.segs = append(sm.segs, fitSegment(t, m, keep, lo, hi, sd))
		lo = hi
	}
	return sm
}

// binned averages kept, finite values into at most maxN equal time bins.
func binned(t, v []float64, keep []bool, maxN int) ([]float64, []float64) {
	return binnedBy(t, keep, maxN, func(i int) float64 { return v[i] })
}

// binnedBy is binned with the values given by v.
func binnedBy(t []float64, keep []bool, maxN int, v func(int) float64) ([]float64, []float64) {
	// One pass to count and find the span, one to bin: nothing the size of
	// the run is copied when it is binned.
	n, first, last := 0, -1, -1
	for i := range t {
		if keep[i] && !math.IsNaN(v(i)) {
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
			if keep[i] {
				if x := v(i); !math.IsNaN(x) {
					tt = append(tt, t[i])
					vv = append(vv, x)
				}
			}
		}
		return tt, vv
	}
	t0, t1 := t[first], t[last]
	w := (t1 - t0) / float64(maxN)
	bt, bv := make([]float64, 0, maxN), make([]float64, 0, maxN)
	sumT, sumV, c, bin := 0.0, 0.0, 0, 0
	for i := first; i <= last; i++ {
		if !keep[i] {
			continue
		}
		x := v(i)
		if math.IsNaN(x) {
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
		sumV += x
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

// checkRemovals warns when a declared removal has no drop on the balance to
// match it: grams or a time typed wrong, or a piece noted that was not taken
// off. The removal is applied all the same (the note is the record).
func checkRemovals(warn func(string, ...any), removed []Removal, t, m []float64, keep []bool) {
	for _, rm := range removed {
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
			warn("removal of %.2f g at %.2f h: the balance shows a drop of %.2f g there; check the grams and the time of the note", rm.MassG, rm.ElapsedH, drop)
		}
	}
}
