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
	if degree < 1 || degree > 4 {
		return 0, 0, fmt.Errorf("kinetics: polynomial degree %d: expected 1 to 4", degree)
	}
	np := degree + 1
	if len(t) < np {
		return 0, 0, fmt.Errorf("kinetics: %d points for a degree-%d fit: %w", len(t), degree, ErrTooFewPoints)
	}
	// Scale time to about ±1 for conditioning.
	scale := 0.0
	for _, ti := range t {
		scale = math.Max(scale, math.Abs(ti-at))
	}
	if scale == 0 {
		return 0, 0, fmt.Errorf("kinetics: all points at one time: %w", ErrTooFewPoints)
	}
	var a [5][6]float64 // normal equations, augmented
	var pw [9]float64
	for i, ti := range t {
		u := (ti - at) / scale
		pw[0] = 1
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

// SmoothRate returns the smoothed mass and the drying rate −dm/dt (g/h) at
// each kept point, from a local quadratic in time over an adaptive window
// (RateWindow), one-sided where the data end so the newest value does not
// lag. Rejected points get NaN.
func SmoothRate(t, m []float64, keep []bool, sd float64) (smooth, rate []float64) {
	n := len(t)
	smooth = make([]float64, n)
	rate = make([]float64, n)
	var idx []int
	for i := range t {
		smooth[i], rate[i] = math.NaN(), math.NaN()
		if keep[i] {
			idx = append(idx, i)
		}
	}
	k := len(idx)
	if k < 3 {
		return
	}
	span := t[idx[k-1]] - t[idx[0]]
	dt := span / float64(k-1)
	if !(sd > 0) {
		sd = 1e-3
	}
	minH := 3 * dt
	maxH := math.Max(math.Min(span/6, 2), minH)
	// A coarse rate from wide windows guides the window at each point.
	coarse := func(j int) float64 {
		h := maxH
		lo, hi := window(t, idx, j, h)
		tt, mm := gather(t, m, idx, lo, hi)
		_, s, err := LocalPoly(tt, mm, t[idx[j]], 1)
		if err != nil {
			return math.NaN()
		}
		return -s
	}
	step := max(1, k/200)
	guide := make([]float64, 0, k/step+2)
	for j := 0; j < k; j += step {
		guide = append(guide, coarse(j))
	}
	tt := make([]float64, 0, 256)
	mm := make([]float64, 0, 256)
	for j := 0; j < k; j++ {
		g := guide[min(j/step, len(guide)-1)]
		h := RateWindow(g, sd, dt, minH, maxH)
		lo, hi := window(t, idx, j, h)
		tt, mm = tt[:0], mm[:0]
		for q := lo; q < hi; q++ {
			tt = append(tt, t[idx[q]])
			mm = append(mm, m[idx[q]])
		}
		deg := 2
		if len(tt) < 5 {
			deg = 1
		}
		v, s, err := LocalPoly(tt, mm, t[idx[j]], deg)
		if err != nil {
			continue
		}
		smooth[idx[j]], rate[idx[j]] = v, -s
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

func gather(t, m []float64, idx []int, lo, hi int) ([]float64, []float64) {
	tt := make([]float64, 0, hi-lo)
	mm := make([]float64, 0, hi-lo)
	for q := lo; q < hi; q++ {
		tt = append(tt, t[idx[q]])
		mm = append(mm, m[idx[q]])
	}
	return tt, mm
}
