package kinetics

import (
	"fmt"
	"math"
)

// LocalPoly fits y = Σ_k b_k (t − at)^k, k ≤ degree, to the points by least
// squares in time (not index), and returns the value b0 and the first
// derivative b1 at `at`. With evenly spaced points and `at` on the middle
// one this is the Savitzky–Golay filter (Savitzky and Golay 1964, Anal.
// Chem. 36:1627; coefficient tables corrected by Steinier et al. 1972);
// with uneven spacing, gaps or `at` at the newest point (one-sided) it is
// the same idea done right.
func LocalPoly(t, y []float64, at float64, degree int) (value, slope float64, err error) {
	return localPolyW(t, y, nil, at, degree)
}

// localPolyW is LocalPoly with a weight per point (nil: all 1).
func localPolyW(t, y, w []float64, at float64, degree int) (value, slope float64, err error) {
	if degree < 1 || degree > 4 {
		return 0, 0, fmt.Errorf("kinetics: polynomial degree %d: expected 1 to 4", degree)
	}
	np := degree + 1
	if len(t) < np {
		return 0, 0, fmt.Errorf("kinetics: %d points for a degree-%d fit: %w", len(t), degree, ErrTooFewPoints)
	}
	// Scale time to about ±1 for conditioning.
	scale := math.Abs(t[0] - at)
	if d := math.Abs(t[len(t)-1] - at); d > scale {
		scale = d // t is in time order: the farthest point is at an end
	}
	if scale == 0 {
		return 0, 0, fmt.Errorf("kinetics: all points at one time: %w", ErrTooFewPoints)
	}
	var a [5][6]float64 // normal equations, augmented
	var pw [9]float64
	for i, ti := range t {
		u := (ti - at) / scale
		wi := 1.0
		if w != nil {
			wi = w[i]
		}
		pw[0] = wi
		for k := 1; k <= 2*degree; k++ {
			pw[k] = pw[k-1] * u
		}
		for r := 0; r < np; r++ {
			for c := 0; c < np; c++ {
				a[r][c] += pw[r+c]
			}
			a[r][np] += pw[r] * y[i]
		}
	}
	b, ok := solveSmall(&a, np)
	if !ok {
		return 0, 0, fmt.Errorf("kinetics: points do not determine a degree-%d polynomial: %w", degree, ErrTooFewPoints)
	}
	return b[0], b[1] / scale, nil
}

// solveSmall solves an n×n system by Gaussian elimination with partial pivoting.
func solveSmall(a *[5][6]float64, n int) ([5]float64, bool) {
	var x [5]float64
	for c := 0; c < n; c++ {
		p := c
		for r := c + 1; r < n; r++ {
			if math.Abs(a[r][c]) > math.Abs(a[p][c]) {
				p = r
			}
		}
		if math.Abs(a[p][c]) < 1e-13 {
			return x, false
		}
		a[c], a[p] = a[p], a[c]
		for r := c + 1; r < n; r++ {
			f := a[r][c] / a[c][c]
			for k := c; k <= n; k++ {
				a[r][k] -= f * a[c][k]
			}
		}
	}
	for r := n - 1; r >= 0; r-- {
		s := a[r][n]
		for k := r + 1; k < n; k++ {
			s -= a[r][k] * x[k]
		}
		x[r] = s / a[r][r]
	}
	return x, true
}

// RateWindow chooses the half-width h (hours) of the local fit at a point
// where the drying rate is about rate (g/h), for noise sd (g) and reading
// spacing dt (h): wide enough that the rate's own noise, about
// sqrt(1.5·sd²·dt/h³) for a fit over ±h, is under 5 % of the rate; narrow
// where the rate is high and changes fast. Clamped to [minH, maxH].
func RateWindow(rate, sd, dt, minH, maxH float64) float64 {
	const eps = 0.05
	r := math.Abs(rate)
	if !(r > 0) || !(sd > 0) || !(dt > 0) {
		return maxH
	}
	h := math.Cbrt(1.5 * sd * sd * dt / (eps * eps * r * r))
	return math.Min(math.Max(h, minH), maxH)
}

// fitSegment fits the readings [lo, hi) (in time order) for the smoothed
// mass and the drying rate −dm/dt (g/h) at each kept reading: a local
// quadratic in time over an adaptive window (RateWindow), one-sided where
// the data end so the newest value does not lag. Dense data (more than
// maxFitBins readings) are first averaged into time bins, fitted with the
// bins' counts as weights, and the fits are carried to the readings between
// bin centres (smoothing.at): the windows then hold tens of bins, not
// thousands of readings. Fewer than three kept readings: no fit.
func fitSegment(t, m []float64, keep []bool, lo, hi int, sd float64) segFit {
	seg := segFit{lo: lo, hi: hi}
	k, first, last := 0, -1, -1
	for i := lo; i < hi; i++ {
		if keep[i] {
			k++
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	if k < 3 {
		return seg // nothing smoothed: NaN throughout
	}
	if !(sd > 0) {
		sd = 1e-3
	}
	bt, bm, bw := make([]float64, 0, min(k, maxFitBins)), make([]float64, 0, min(k, maxFitBins)), []float64(nil)
	span := t[last] - t[first]
	if k <= maxFitBins || span <= 0 {
		for i := first; i <= last; i++ {
			if keep[i] {
				bt = append(bt, t[i])
				bm = append(bm, m[i])
			}
		}
	} else {
		width := span / maxFitBins
		t0 := t[first]
		sumT, sumM, c, bin := 0.0, 0.0, 0, 0
		for i := first; i <= last; i++ {
			if !keep[i] {
				continue
			}
			b := min(int((t[i]-t0)/width), maxFitBins-1)
			if b != bin && c > 0 {
				bt, bm, bw = append(bt, sumT/float64(c)), append(bm, sumM/float64(c)), append(bw, float64(c))
				sumT, sumM, c = 0, 0, 0
			}
			bin = b
			sumT += t[i]
			sumM += m[i]
			c++
		}
		bt, bm, bw = append(bt, sumT/float64(c)), append(bm, sumM/float64(c)), append(bw, float64(c))
		sd /= math.Sqrt(float64(k) / float64(len(bt))) // the noise of a bin mean
	}
	bs, br := smoothPoints(bt, bm, bw, sd)
	seg.fitted = true
	if bw == nil {
		// Each kept reading its own fit: kept in order, ranked below.
		seg.own, seg.sm, seg.rt = true, bs, br
		seg.rank = make([]int32, 0, last-first+1)
		j := int32(0)
		for i := first; i <= last; i++ {
			seg.rank = append(seg.rank, j)
			if keep[i] {
				j++
			}
		}
		seg.first = first
		return seg
	}
	seg.bt, seg.sm, seg.rt = bt, bs, br
	return seg
}

// maxFitBins bounds the points the smoothing fits work on.
const maxFitBins = 4000

// smoothPoints is fitSegment's fit of points in time order, with optional weights.
func smoothPoints(t, m, w []float64, sd float64) (smooth, rate []float64) {
	k := len(t)
	smooth, rate = nanSlice(k), nanSlice(k)
	idx := make([]int, k)
	for i := range idx {
		idx[i] = i
	}
	span := t[k-1] - t[0]
	dt := span / float64(k-1)
	minH := 3 * dt
	maxH := math.Max(math.Min(span/6, 2), minH)
	sub := func(lo, hi int) []float64 {
		if w == nil {
			return nil
		}
		return w[lo:hi]
	}
	// A coarse rate from wide windows guides the window at each point.
	step := max(1, k/200)
	guide := make([]float64, 0, k/step+2)
	for j := 0; j < k; j += step {
		lo, hi := window(t, idx, j, maxH)
		g := math.NaN()
		if _, s, err := localPolyW(t[lo:hi], m[lo:hi], sub(lo, hi), t[j], 1); err == nil {
			g = -s
		}
		guide = append(guide, g)
	}
	for j := 0; j < k; j++ {
		g := guide[min(j/step, len(guide)-1)]
		h := RateWindow(g, sd, dt, minH, maxH)
		lo, hi := window(t, idx, j, h)
		deg := 2
		if hi-lo < 5 {
			deg = 1
		}
		v, s, err := localPolyW(t[lo:hi], m[lo:hi], sub(lo, hi), t[j], deg)
		if err != nil {
			continue
		}
		smooth[j], rate[j] = v, -s
	}
	return
}

// window returns [lo, hi) in idx of the points within ±h of point j; near
// either end the window keeps its full width on the side that has data
// (one-sided), so the estimate at the newest reading uses only the past.
func window(t []float64, idx []int, j int, h float64) (int, int) {
	k := len(idx)
	tj := t[idx[j]]
	from, to := tj-h, tj+h
	if first := t[idx[0]]; from < first {
		to = math.Min(first+2*h, t[idx[k-1]])
		from = first
	}
	if last := t[idx[k-1]]; to > last {
		from = math.Max(last-2*h, t[idx[0]])
		to = last
	}
	lo, hi := j, j+1
	for lo > 0 && t[idx[lo-1]] >= from {
		lo--
	}
	for hi < k && t[idx[hi]] <= to {
		hi++
	}
	// at least 3 points
	for hi-lo < 3 && (lo > 0 || hi < k) {
		if lo > 0 {
			lo--
		}
		if hi-lo < 3 && hi < k {
			hi++
		}
	}
	return lo, hi
}
