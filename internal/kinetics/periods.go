package kinetics

import (
	"math"
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
	known := 0
	for i := range t {
		if !math.IsNaN(rate[i]) {
			known++
		}
	}
	if known < 10 {
		return nil
	}
	// Dense logs: every step-th reading is plenty for a rate that is
	// already smoothed over many readings.
	step := max(1, known/4000)
	idx := make([]int, 0, known/step+2)
	c, lastKnown := 0, -1
	for i := range t {
		if math.IsNaN(rate[i]) {
			continue
		}
		if c%step == 0 {
			idx = append(idx, i)
		}
		c++
		lastKnown = i
	}
	if idx[len(idx)-1] != lastKnown {
		idx = append(idx, lastKnown)
	}
	first, last := idx[0], idx[len(idx)-1]
	lost := smooth[first] - smooth[last]
	if !(lost > 0) {
		return nil
	}
	// A running median over two smoothing windows each side: the rate at
	// the ends comes from one-sided fits, noisier than inside, and one noisy
	// value must not set the peak. med[k] is at reading idx[k].
	med := make([]float64, len(idx))
	buf := make([]float64, 0, 64)
	for k, i := range idx {
		buf = buf[:0]
		for q := k; q >= 0 && t[i]-t[idx[q]] <= 2*windowH; q-- {
			buf = append(buf, rate[idx[q]])
		}
		for q := k + 1; q < len(idx) && t[idx[q]]-t[i] <= 2*windowH; q++ {
			buf = append(buf, rate[idx[q]])
		}
		med[k] = medianInPlace(buf)
	}
	// The peak, in the first half of the run (after the warm-up); from here
	// on the rate is the running median, by position in idx.
	pos := -1
	for k, i := range idx {
		if t[i]-t[first] > (t[last]-t[first])/2 {
			break
		}
		if pos < 0 || med[k] > med[pos] {
			pos = k
		}
	}
	if pos < 0 || !(med[pos] > 0) {
		return nil
	}
	peak := med[pos]
	// Level: the median rate near the peak, so one noisy maximum does not
	// set it.
	tol := plateauTol + 3*rateSD/peak
	lo, hi := pos, pos
	for lo > 0 && med[lo-1] >= (1-tol)*peak {
		lo--
	}
	for hi+1 < len(idx) && med[hi+1] >= (1-tol)*peak {
		hi++
	}
	// Where the rate starts to fall: the first point past the middle of the
	// plateau that drops below its level by more than the rate's noise.
	level := median(med[lo : hi+1])
	delta := 0.01 + 3*rateSD/level
	for q := (lo + hi) / 2; q <= hi; q++ {
		if med[q] < level*(1-delta) {
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
	nk, first, last := 0, -1, -1
	for i := range t {
		if keep[i] {
			nk++
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	if nk < 10 || t[last]-t[first] < windowH {
		return math.NaN()
	}
	// Running sums over the window as it slides forward: the straight-line
	// slope and the mean level of any window in constant time, with nothing
	// the size of the run kept (the window is a straight-line fit, as
	// LocalPoly of degree 1 gives, and the mean stands for the level: the
	// test is a relative tolerance). Times are taken from the first kept
	// one so the sums stay well scaled.
	t0 := t[first]
	var n, st, sm, stt, stm float64
	add := func(i int, sign float64) {
		d := t[i] - t0
		n += sign
		st += sign * d
		sm += sign * m[i]
		stt += sign * d * d
		stm += sign * d * m[i]
	}
	lo, hi := first, first // kept readings in [lo, hi) are summed
	// Counted steps, at most 100 000 over the run: a step too small to move
	// the end (a window of 1e-300 h) cannot make this loop for ever.
	span := t[last] - t[first]
	step := math.Max(windowH/10, span/1e5)
	for k := 0; ; k++ {
		end := t[first] + windowH + float64(k)*step
		if end > t[last]+1e-9 {
			break
		}
		for hi <= last && t[hi] <= end+1e-12 {
			if keep[hi] {
				add(hi, 1)
			}
			hi++
		}
		for lo < hi && t[lo] < end-windowH {
			if keep[lo] {
				add(lo, -1)
			}
			lo++
		}
		if n < 5 || crosses(breaks, end-windowH, end) {
			continue
		}
		den := n*stt - st*st
		if !(den > 0) {
			continue
		}
		slope, level := (n*stm-st*sm)/den, sm/n
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
