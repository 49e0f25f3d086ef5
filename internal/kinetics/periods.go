package kinetics

import (
	"math"
	"sort"
)

// ConstantRate describes a constant-rate period found in the data.
type ConstantRate struct {
	StartH, EndH float64
	RateGPerH    float64 // water loss rate over the period
	CriticalDB   float64 // dry-basis moisture where it ends; NaN without dry solids
	// Ongoing: the rate is still constant at the newest reading, so the
	// period has not ended yet (EndH is the newest reading's time).
	Ongoing bool
}

// Tolerances for calling a stretch of the rate curve constant (common
// practice for reading a rate plateau, not from one source): the smoothed
// rate stays within ±8 % (plus its own noise) of its peak, the stretch
// removes at least 10 % of the water the run removed, and lasts at least
// four smoothing windows.
const (
	plateauTol     = 0.08
	plateauMinFrac = 0.10
)

// FindConstantRate looks for a constant-rate period in the smoothed rate.
// It returns nil when there is none: many fruits have none, and one is
// never invented. rateSD is the typical noise of the smoothed rate (g/h).
func FindConstantRate(t, smooth, rate []float64, rateSD, windowH float64) *ConstantRate {
	var idx []int
	for i := range t {
		if !math.IsNaN(rate[i]) {
			idx = append(idx, i)
		}
	}
	if len(idx) < 10 {
		return nil
	}
	// Dense logs: every step-th reading is plenty for a rate that is
	// already smoothed over many readings.
	if step := len(idx) / 4000; step > 1 {
		thin := idx[:0:0]
		for k := 0; k < len(idx); k += step {
			thin = append(thin, idx[k])
		}
		if thin[len(thin)-1] != idx[len(idx)-1] {
			thin = append(thin, idx[len(idx)-1])
		}
		idx = thin
	}
	first, last := idx[0], idx[len(idx)-1]
	lost := smooth[first] - smooth[last]
	if !(lost > 0) {
		return nil
	}
	// A running median over two smoothing windows each side: the rate at
	// the ends comes from one-sided fits, noisier than inside, and one noisy
	// value must not set the peak.
	med := make([]float64, len(rate))
	copy(med, rate)
	buf := make([]float64, 0, 64)
	for k, i := range idx {
		buf = buf[:0]
		for q := k; q >= 0 && t[i]-t[idx[q]] <= 2*windowH; q-- {
			buf = append(buf, rate[idx[q]])
		}
		for q := k + 1; q < len(idx) && t[idx[q]]-t[i] <= 2*windowH; q++ {
			buf = append(buf, rate[idx[q]])
		}
		med[i] = median(buf)
	}
	rate = med
	// The peak, in the first half of the run (after the warm-up).
	peak := -1
	for _, i := range idx {
		if t[i]-t[first] > (t[last]-t[first])/2 {
			break
		}
		if peak < 0 || rate[i] > rate[peak] {
			peak = i
		}
	}
	if peak < 0 || !(rate[peak] > 0) {
		return nil
	}
	// Level: the median rate near the peak, so one noisy maximum does not
	// set it.
	tol := plateauTol + 3*rateSD/rate[peak]
	pos := 0
	for k, i := range idx {
		if i == peak {
			pos = k
		}
	}
	lo, hi := pos, pos
	for lo > 0 && rate[idx[lo-1]] >= (1-tol)*rate[peak] {
		lo--
	}
	for hi+1 < len(idx) && rate[idx[hi+1]] >= (1-tol)*rate[peak] {
		hi++
	}
	// Where the rate starts to fall: the first point past the middle of the
	// plateau that drops below its level by more than the rate's noise.
	var lv []float64
	for q := lo; q <= hi; q++ {
		lv = append(lv, rate[idx[q]])
	}
	level := median(lv)
	delta := 0.01 + 3*rateSD/level
	for q := (lo + hi) / 2; q <= hi; q++ {
		if rate[idx[q]] < level*(1-delta) {
			hi = max(q-1, lo)
			break
		}
	}
	s, e := idx[lo], idx[hi]
	dur := t[e] - t[s]
	ongoing := t[last]-t[e] <= 2*windowH
	// A plateau that runs to the newest reading has no end yet: the share of
	// water it removed cannot be judged, only its length.
	if dur < 4*windowH || !ongoing && smooth[s]-smooth[e] < plateauMinFrac*lost {
		return nil
	}
	return &ConstantRate{StartH: t[s], EndH: t[e], RateGPerH: (smooth[s] - smooth[e]) / dur, CriticalDB: math.NaN(),
		Ongoing: t[last]-t[e] <= 2*windowH}
}

// steadyAt is the first time the weight has been steady: the linear change
// over the trailing window is within pct % of the mass. NaN if never.
func steadyAt(t, m []float64, keep []bool, breaks []float64, windowH, pct float64) float64 {
	nk := countTrue(keep)
	tt, mm := make([]float64, 0, nk), make([]float64, 0, nk)
	for i := range t {
		if keep[i] {
			tt = append(tt, t[i])
			mm = append(mm, m[i])
		}
	}
	if len(tt) < 10 || tt[len(tt)-1]-tt[0] < windowH {
		return math.NaN()
	}
	// Prefix sums: the straight-line slope and the mean level of any window
	// in constant time (the window is a straight-line fit, as LocalPoly of
	// degree 1 gives, and the mean stands for the level: the test is a
	// relative tolerance).
	st, sm, stt, stm := prefix(tt, mm)
	window := func(lo, hi int) (slope, level float64, ok bool) {
		n := float64(hi - lo)
		a, b := st[hi]-st[lo], sm[hi]-sm[lo]
		den := n*(stt[hi]-stt[lo]) - a*a
		if !(den > 0) {
			return 0, 0, false
		}
		return (n*(stm[hi]-stm[lo]) - a*b) / den, b / n, true
	}
	// Counted steps, at most 100 000 over the run: a step too small to move
	// the end (a window of 1e-300 h) cannot make this loop for ever.
	span := tt[len(tt)-1] - tt[0]
	step := math.Max(windowH/10, span/1e5)
	for k := 0; ; k++ {
		end := tt[0] + windowH + float64(k)*step
		if end > tt[len(tt)-1]+1e-9 {
			break
		}
		lo := sort.SearchFloat64s(tt, end-windowH)
		hi := sort.SearchFloat64s(tt, end+1e-12)
		if hi-lo < 5 || crosses(breaks, end-windowH, end) {
			continue
		}
		slope, level, ok := window(lo, hi)
		if !ok {
			continue
		}
		if math.Abs(slope)*windowH <= pct/100*level {
			return end
		}
	}
	return math.NaN()
}

func crosses(breaks []float64, from, to float64) bool {
	for _, b := range breaks {
		if b > from && b <= to {
			return true
		}
	}
	return false
}

// prefix returns running sums of t, m, t² and t·m (index i: the first i
// values), with t taken from its first value so the sums stay well scaled.
func prefix(t, m []float64) (st, sm, stt, stm []float64) {
	n := len(t)
	st, sm, stt, stm = make([]float64, n+1), make([]float64, n+1), make([]float64, n+1), make([]float64, n+1)
	t0 := t[0]
	for i := range t {
		d := t[i] - t0
		st[i+1] = st[i] + d
		sm[i+1] = sm[i] + m[i]
		stt[i+1] = stt[i] + d*d
		stm[i+1] = stm[i] + d*m[i]
	}
	return
}
