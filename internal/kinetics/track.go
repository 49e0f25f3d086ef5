package kinetics

import (
	"math"
	"sort"
)

// track is a run's moisture as the projection sees it: the kept readings
// averaged into time bins, as free moisture y = X − X_e, and the level to
// reach.
type track struct {
	t, y      []float64
	y0, xe    float64      // free moisture at the start; equilibrium moisture
	level     float64      // the target as free moisture
	refs      []*Reference // reference runs, the first the main one
	bt        *backtest    // built on first use
	fullT     []float64    // the readings before binning, for a history cut at the target
	fullKeep  []bool
	fullX     func(int) float64
	reachedAt float64
}

// newTrack gathers the kept readings with a moisture (times t, kept where
// keep, moisture x(i) dry basis) for the projection to xt, with
// equilibrium xe and initial moisture x0.
func newTrack(t []float64, keep []bool, x func(int) float64, xe, x0, xt float64, refs []*Reference) *track {
	tr := &track{xe: xe, y0: x0 - xe, level: xt - xe, refs: refs, reachedAt: math.NaN(),
		fullT: t, fullKeep: keep, fullX: x}
	tr.t, tr.y = binnedBy(t, keep, maxBins, x)
	for i := range tr.y {
		tr.y[i] -= xe
	}
	return tr
}

// methods are the forecasters, and the reference run when there is one.
func (tr *track) methods() []method {
	var ms []method
	for _, f := range forecasters {
		ms = append(ms, method{forecaster: f, prior: 1})
	}
	for i, ref := range tr.refs {
		// The characteristic curve of the same product beats single-run
		// methods by a wide margin on measured runs (testdata/measured): a
		// larger prior, which the back-test then confirms or takes away.
		// Further reference runs share a like prior.
		prior := 4.0
		if i > 0 {
			prior = 2
		}
		ms = append(ms, method{forecaster: ref.forecaster(refName(i)), prior: prior})
	}
	return ms
}

func (tr *track) backtest() *backtest {
	if tr.bt == nil {
		tr.bt = newBacktest(tr.t, tr.y, tr.y0, tr.xe, tr.methods())
	}
	return tr.bt
}

// project is the projection at the newest reading.
func (tr *track) project() Projection {
	switch {
	case !(tr.y0 > 0):
		return NoProjection("the initial moisture is not above the equilibrium moisture")
	case !(tr.level > 0):
		return NoProjection("the target is at or below the equilibrium moisture: a run does not get there")
	case len(tr.t) < 4:
		return NoProjection("too few readings to project yet")
	}
	b := tr.backtest()
	if len(b.cuts) == 0 || b.cuts[len(b.cuts)-1].k != len(tr.t) {
		return NoProjection("the moisture has hardly fallen yet: too early to project")
	}
	p := b.projectionAt(len(b.cuts)-1, tr.level)
	tr.describeReference(&p)
	return p
}

// HistoryPoint is what the projection said at one moment of the run, using
// only the readings up to then, and how it turned out.
type HistoryPoint struct {
	AtH                  float64
	TargetH, LowH, HighH float64
	Method               string
	ActualH              float64 // when the target was reached; NaN if not (yet)
	Held                 bool    // the range held the actual time
}

// ProjectionHistory replays the projection at the back-test's cut points:
// what it said at each, and, once the target was reached, its error and
// whether the range held. It needs a target and the dry solids; nil
// otherwise.
func (r *Result) ProjectionHistory() []HistoryPoint {
	tr := r.track
	if tr == nil || !(tr.y0 > 0) || !(tr.level > 0) {
		return nil
	}
	actual := r.TargetReachedH
	if !math.IsNaN(actual) {
		// Replay only up to the target: what came after cannot be used
		// by a projection made before it.
		// The readings up to the first one with a moisture past the target.
		k := sort.SearchFloat64s(tr.fullT, actual+1e-9)
		for k < len(tr.fullT) && !(tr.fullKeep[k] && !math.IsNaN(tr.fullX(k))) {
			k++
		}
		k = min(k+1, len(tr.fullT))
		tr = newTrack(tr.fullT[:k], tr.fullKeep[:k], tr.fullX, tr.xe, tr.y0+tr.xe, tr.level+tr.xe, tr.refs)
	}
	if len(tr.t) < 4 {
		return nil
	}
	b := tr.backtest()
	// The actual time is known only to the time resolution of the binned
	// readings: a range that misses it by less than one bin held.
	tol := (tr.t[len(tr.t)-1] - tr.t[0]) / float64(len(tr.t))
	var out []HistoryPoint
	for ci, c := range b.cuts {
		if !math.IsNaN(actual) && c.at >= actual {
			break
		}
		p := b.projectionAt(ci, tr.level)
		hp := HistoryPoint{AtH: c.at, TargetH: p.TargetH, LowH: p.LowH, HighH: p.HighH, Method: p.Method, ActualH: actual}
		hp.Held = !math.IsNaN(actual) && p.LowH-tol <= actual && actual <= p.HighH+tol
		out = append(out, hp)
	}
	if !math.IsNaN(actual) {
		out = append(out, HistoryPoint{AtH: actual, TargetH: actual, LowH: actual, HighH: actual, Method: ProjReached, ActualH: actual, Held: true})
	}
	return out
}
