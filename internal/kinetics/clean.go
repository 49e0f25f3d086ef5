package kinetics

import (
	"math"
	"sort"
)

// Why a reading is left out of the analysis (it stays in the record).
const (
	KeepOK         uint8 = iota
	RejUnstable          // the balance said it had not settled
	RejNotPositive       // zero or negative after tare
	RejSpike             // far off the local trend (a hand, a door, a gust)
	RejOrder             // out of time order
	RejDuplicate         // the same time as an earlier reading
	RejAfterCut          // after the --until cut: not analysed, not counted as rejected
	RejTimeJump          // more than MaxGapH from the rest of the run
	RejImplausible       // above MaxValue: not a mass on a balance
)

// RejectReason names a rejection code.
func RejectReason(code uint8) string {
	switch code {
	case RejUnstable:
		return "unstable"
	case RejNotPositive:
		return "not_positive"
	case RejSpike:
		return "spike"
	case RejOrder:
		return "out_of_order"
	case RejDuplicate:
		return "duplicate_time"
	case RejAfterCut:
		return "after_cut"
	case RejTimeJump:
		return "time_jump"
	case RejImplausible:
		return "implausible"
	}
	return ""
}

// NoiseSD estimates the balance noise (g) from second differences of
// consecutive readings, robustly: 1.4826·MAD/√6 (for white noise the second
// difference has variance 6σ²). A drying curve is smooth enough that its own
// second differences vanish next to the noise at balance reading intervals.
func NoiseSD(m []float64) float64 {
	if len(m) < 5 {
		return math.NaN()
	}
	// At most noiseSample second differences, evenly spaced over the run:
	// the MAD of 10^5 of them is within about 0.5 % of its value, and a
	// week at 10 Hz would otherwise sort six million.
	step := max(1, (len(m)-2+noiseSample-1)/noiseSample)
	d := make([]float64, 0, (len(m)-2)/step+1)
	for i := 1; i+1 < len(m); i += step {
		d = append(d, m[i+1]-2*m[i]+m[i-1])
	}
	med := medianInPlace(d)
	for i := range d {
		d[i] = math.Abs(d[i] - med)
	}
	return 1.4826 * medianInPlace(d) / math.Sqrt(6)
}

// noiseSample bounds the second differences NoiseSD takes.
const noiseSample = 1 << 17

// Resolution guesses the balance resolution: the smallest non-zero step
// between readings, on a decimal grid.
func Resolution(m []float64) float64 {
	best := math.Inf(1)
	for i := 1; i < len(m) && i < 5000; i++ {
		if d := math.Abs(m[i] - m[i-1]); d > 1e-9 && d < best {
			best = d
		}
	}
	if math.IsInf(best, 1) {
		return 0
	}
	return math.Pow(10, math.Round(math.Log10(best)))
}

// trend is a robust piecewise-linear trend through block medians, broken
// at steps (removals) so that a step is not smoothed over.
type trend struct {
	kt, km []float64 // knots: median time and median mass per block
	seg    []int     // segment of each knot
	breaks []float64 // segment boundaries (times)
}

// cursor evaluates a trend at times that do not decrease, in constant time
// each: it walks the segments and knots forward instead of searching them.
// Within a segment (the breaks at or before t) it interpolates linearly
// between knots, and holds the end knots' line beyond them.
type cursor struct {
	tr        *trend
	s         int // segment: the number of breaks at or before t
	lo, hi, j int // knots of segment s are [lo, hi); j the knot searched to
}

func (tr *trend) cursor() *cursor {
	c := &cursor{tr: tr, s: -1}
	return c
}

func (c *cursor) at(t float64) float64 {
	tr := c.tr
	s := max(c.s, 0)
	for s < len(tr.breaks) && tr.breaks[s] <= t {
		s++
	}
	if s != c.s {
		c.s = s
		c.lo = c.hi
		if s == 0 || c.lo > len(tr.seg) {
			c.lo = 0
		}
		for c.lo < len(tr.seg) && tr.seg[c.lo] < s {
			c.lo++
		}
		c.hi = c.lo
		for c.hi < len(tr.seg) && tr.seg[c.hi] <= s {
			c.hi++
		}
		c.j = c.lo
	}
	lo, hi := c.lo, c.hi
	if lo >= hi {
		return math.NaN()
	}
	if hi-lo == 1 {
		return tr.km[lo]
	}
	for c.j < hi && tr.kt[c.j] < t {
		c.j++
	}
	j := c.j
	switch {
	case j <= lo:
		j = lo + 1
	case j >= hi:
		j = hi - 1
	}
	f := (t - tr.kt[j-1]) / (tr.kt[j] - tr.kt[j-1])
	return tr.km[j-1] + f*(tr.km[j]-tr.km[j-1])
}

// buildTrend makes knots from blocks of width w (h) over the kept points,
// not crossing breaks. A knot sits at the block's mean time; its value is
// the median of the block's masses carried to that time along the local
// slope, so outliers bunched at one end of a block do not shift it. The
// times increase, so a block is a run of readings [lo, hi): nothing the
// size of the run is copied.
func buildTrend(t, m []float64, keep []bool, w float64, breaks []float64) *trend {
	tr := &trend{breaks: breaks}
	type block struct {
		seg, lo, hi, n int // segment; readings [lo, hi), n of them kept
	}
	var blocks []block
	seg, s := 0, 0
	start := math.NaN()
	most := 0
	for i := range t {
		if !keep[i] {
			continue
		}
		for s < len(breaks) && breaks[s] <= t[i] {
			s++
		}
		if s != seg || math.IsNaN(start) || t[i]-start >= w {
			if k := len(blocks); k > 0 {
				most = max(most, blocks[k-1].n)
			}
			blocks = append(blocks, block{seg: s, lo: i})
			seg, start = s, t[i]
		}
		b := &blocks[len(blocks)-1]
		b.hi = i + 1
		b.n++
	}
	if k := len(blocks); k > 0 {
		most = max(most, blocks[k-1].n)
	}
	buf := make([]float64, 0, min(most, medianSample))
	// The values f(i) of at most medianSample evenly spaced kept readings of
	// a block (thin's choice, taken without gathering the rest): a dense
	// log's block holds thousands, and its median moves by less than the
	// balance's noise for it.
	sample := func(b block, f func(i int) float64) []float64 {
		buf = buf[:0]
		step := max(float64(b.n)/medianSample, 1)
		q, next := 0, 0
		for i := b.lo; i < b.hi && len(buf) < medianSample; i++ {
			if !keep[i] {
				continue
			}
			if q == next {
				buf = append(buf, f(i))
				next = int(float64(len(buf)) * step)
			}
			q++
		}
		return buf
	}
	// First pass: plain medians, for the local slopes. The times of a
	// block are in order: their median is the middle one (or two).
	mt := make([]float64, len(blocks))
	mv := make([]float64, len(blocks))
	mass := func(i int) float64 { return m[i] }
	for b, bl := range blocks {
		h, q := bl.n/2, 0
		for i := bl.lo; i < bl.hi; i++ {
			if !keep[i] {
				continue
			}
			switch {
			case q == h-1 && bl.n%2 == 0:
				mt[b] = t[i]
			case q == h && bl.n%2 == 0:
				mt[b] = (mt[b] + t[i]) / 2
			case q == h:
				mt[b] = t[i]
			}
			if q == h {
				break
			}
			q++
		}
		mv[b] = medianInPlace(sample(bl, mass))
	}
	tr.kt = make([]float64, 0, len(blocks))
	tr.km = make([]float64, 0, len(blocks))
	tr.seg = make([]int, 0, len(blocks))
	for b, bl := range blocks {
		slope := 0.0
		lo, hi := b, b
		if b > 0 && blocks[b-1].seg == bl.seg {
			lo = b - 1
		}
		if b+1 < len(blocks) && blocks[b+1].seg == bl.seg {
			hi = b + 1
		}
		if hi > lo && mt[hi] > mt[lo] {
			slope = (mv[hi] - mv[lo]) / (mt[hi] - mt[lo])
		}
		tc := 0.0
		for i := bl.lo; i < bl.hi; i++ {
			if keep[i] {
				tc += t[i]
			}
		}
		tc /= float64(bl.n)
		tr.kt = append(tr.kt, tc)
		tr.km = append(tr.km, medianInPlace(sample(bl, func(i int) float64 { return m[i] - slope*(t[i]-tc) })))
		tr.seg = append(tr.seg, bl.seg)
	}
	return tr
}

// RejectSpikes marks readings far from a robust local trend. keep on entry
// says which readings are candidates (stable, positive); on return spikes
// are cleared. breaks are times of steps (removals) the trend must not
// smooth over. The limit at each reading is six robust standard deviations
// of the residuals in its neighbourhood (the median of three blocks' own
// scales), so a curve that bends hard early in a run is not mistaken for
// spikes; never below floorG. passes is how many times the trend is
// rebuilt without the spikes found. It returns the number rejected.
// The times must increase.
func RejectSpikes(t, m []float64, keep []bool, blockH float64, breaks []float64, floorG float64, passes int) int {
	rejected := 0
	var buf, own []float64
	for pass := 0; pass < passes; pass++ {
		tr := buildTrend(t, m, keep, blockH, breaks)
		// Residuals, and each block's median residual: the blocks follow
		// one another in time, so one buffer holds the block in hand.
		own = own[:0]
		t0 := math.NaN()
		cur := tr.cursor()
		flush := func() {
			own = append(own, medianInPlace(thin(buf, medianSample))) // NaN for an empty block
			buf = buf[:0]
		}
		for i := range t {
			if !keep[i] {
				continue
			}
			if math.IsNaN(t0) {
				t0 = t[i]
			}
			b := int((t[i] - t0) / blockH)
			for len(own) < b {
				flush()
			}
			buf = append(buf, math.Abs(m[i]-cur.at(t[i])))
		}
		if math.IsNaN(t0) {
			return rejected
		}
		flush()
		scale := make([]float64, len(own))
		var near []float64
		for b := range own {
			near = near[:0]
			for d := -1; d <= 1; d++ {
				if k := b + d; k >= 0 && k < len(own) && !math.IsNaN(own[k]) {
					near = append(near, own[k])
				}
			}
			scale[b] = 1.4826 * medianInPlace(near)
		}
		found := 0
		first := true
		cur = tr.cursor()
		for i := range t {
			if !keep[i] {
				continue
			}
			// The first reading above the trend is kept: drying is fastest
			// at the start, where a trend through blocks bends least well,
			// and the initial mass is the one figure everything rests on.
			// The residual again, rather than a column the size of the run.
			at := cur.at(t[i])
			if first {
				first = false
				if m[i] > at {
					continue
				}
			}
			b := int((t[i] - t0) / blockH)
			if math.Abs(m[i]-at) > math.Max(6*scale[b], floorG) {
				keep[i] = false
				found++
			}
		}
		rejected += found
		if found == 0 {
			break
		}
	}
	return rejected
}

// Step is a drop in mass that drying does not explain (a suspected removal).
type Step struct {
	ElapsedH float64
	MassG    float64 // the drop, positive
}

// FindSteps looks for sudden persistent drops: where the median of the next
// few readings lies below what the readings before, carried on at their
// own rate, predict, by more than limit grams. known are steps already
// declared (not reported again).
func FindSteps(t, m []float64, keep []bool, blockH, limit float64, known []float64) []Step {
	var tt, mm []float64
	for i := range t {
		if keep[i] {
			tt = append(tt, t[i])
			mm = append(mm, m[i])
		}
	}
	n := len(tt)
	if n < 20 {
		return nil
	}
	var steps []Step
	var scratch []float64
	med := func(v []float64) float64 { // the median of v, v left as it is
		scratch = append(scratch[:0], v...)
		return medianInPlace(scratch)
	}
	// Times in order (as a run's are) have their median in the middle.
	medT := med
	if sort.Float64sAreSorted(tt) {
		medT = func(v []float64) float64 {
			h := len(v) / 2
			if len(v)%2 == 1 {
				return v[h]
			}
			return (v[h-1] + v[h]) / 2
		}
	}
	k := 0
	for k < n && tt[k]-tt[0] < blockH {
		k++
	}
	k = max(k, 5)
	// The masses' medians over the windows of k readings and of half of
	// that, each worked out once: a window after one reading is the window
	// before another.
	medOf := func(cache []float64, w int) func(x int) float64 {
		for i := range cache {
			cache[i] = math.NaN()
		}
		return func(x int) float64 {
			if math.IsNaN(cache[x]) {
				cache[x] = med(mm[x : x+w])
			}
			return cache[x]
		}
	}
	h := k / 2
	medK, medH := medOf(make([]float64, n-k+1), k), medOf(make([]float64, n-h+1), h)
	// dropAt is the drop at i: the median after it below what the k
	// before, carried on at their own rate, predict.
	dropAt := func(i int) float64 {
		bt, at := tt[i-k:i], tt[i:i+k]
		sl := 0.0
		if dt := medT(bt[k-h:]) - medT(bt[:h]); h >= 1 && dt != 0 {
			sl = (medH(i-h) - medH(i-k)) / dt
		}
		return medK(i-k) + sl*(medT(at)-medT(bt)) - medK(i)
	}
	for i := k; i+k <= n; i++ {
		drop := dropAt(i)
		if drop <= limit {
			continue
		}
		// Refine to the local largest drop, then skip past it.
		best, bestDrop := i, drop
		for j := i + 1; j < min(i+k, n-k+1); j++ {
			if d := dropAt(j); d > bestDrop {
				best, bestDrop = j, d
			}
		}
		// The step itself: the largest drop between neighbours near there.
		for q := max(best-k/2, 1); q < min(best+k/2, n); q++ {
			if mm[q-1]-mm[q] > mm[best-1]-mm[best] {
				best = q
			}
		}
		size := bestDrop
		declared := false
		for _, kt := range known {
			if math.Abs(kt-tt[best]) <= blockH {
				declared = true
			}
		}
		if !declared {
			steps = append(steps, Step{ElapsedH: tt[best], MassG: size})
		}
		i = best + k
	}
	return steps
}

// decimateForSteps bins long series to medians so step finding stays fast.
func decimateForSteps(t, m []float64, keep []bool, maxN int) ([]float64, []float64, []bool, float64) {
	nk := countTrue(keep)
	per := max(1, (nk+maxN-1)/maxN)
	tt, mm := make([]float64, 0, nk/per+1), make([]float64, 0, nk/per+1)
	bt, bm := make([]float64, 0, per), make([]float64, 0, per)
	flush := func() {
		if len(bt) == 0 {
			return
		}
		// Times in order: the middle one (or two) is their median.
		h := len(bt) / 2
		mt := bt[h]
		if len(bt)%2 == 0 {
			mt = (bt[h-1] + bt[h]) / 2
		}
		tt, mm = append(tt, mt), append(mm, medianInPlace(bm))
		bt, bm = bt[:0], bm[:0]
	}
	for i := range t {
		if !keep[i] {
			continue
		}
		bt, bm = append(bt, t[i]), append(bm, m[i])
		if len(bt) == per {
			flush()
		}
	}
	flush()
	k := make([]bool, len(tt))
	for i := range k {
		k[i] = true
	}
	span := 0.0
	if len(tt) > 1 {
		span = tt[len(tt)-1] - tt[0]
	}
	block := math.Max(5.0/60, 7*span/math.Max(float64(len(tt)-1), 1))
	return tt, mm, k, block
}

// refineSteps puts each step at the largest drop between consecutive kept
// readings within a block of where it was found, and merges steps closer
// than two blocks (keeping the larger).
func refineSteps(steps []Step, t, m []float64, keep []bool, blockH float64) []Step {
	var out []Step
	for _, st := range steps {
		prev, best, bestDrop := -1, -1, math.Inf(-1)
		for i := range t {
			if !keep[i] {
				continue
			}
			if prev >= 0 && math.Abs(t[i]-st.ElapsedH) <= blockH && m[prev]-m[i] > bestDrop {
				best, bestDrop = i, m[prev]-m[i]
			}
			prev = i
		}
		if best >= 0 {
			st.ElapsedH = t[best]
		}
		if n := len(out); n > 0 && st.ElapsedH-out[n-1].ElapsedH <= 2*blockH {
			if st.MassG > out[n-1].MassG {
				out[n-1] = st
			}
			continue
		}
		out = append(out, st)
	}
	return out
}

// filterSteps keeps steps above limit that were not declared.
func filterSteps(steps []Step, limit float64, declared []float64, blockH float64) []Step {
	var out []Step
	for _, s := range steps {
		if s.MassG <= limit {
			continue
		}
		dup := false
		for _, d := range declared {
			if math.Abs(d-s.ElapsedH) <= 2*blockH {
				dup = true
			}
		}
		if !dup {
			out = append(out, s)
		}
	}
	return out
}

// medianSample is the most values a block's median is taken over.
const medianSample = 255

// thin keeps at most n evenly spaced values of v, in v's own storage.
func thin(v []float64, n int) []float64 {
	if len(v) <= n {
		return v
	}
	step := float64(len(v)) / float64(n)
	for j := 0; j < n; j++ {
		v[j] = v[int(float64(j)*step)]
	}
	return v[:n]
}

// medianInPlace is the median of v, reordering v (a buffer of the
// caller's); NaN for none.
func medianInPlace(v []float64) float64 {
	n := len(v)
	if n == 0 {
		return math.NaN()
	}
	if n%2 == 1 {
		return selectK(v, n/2)
	}
	hi := selectK(v, n/2)
	lo := v[0]
	for _, x := range v[:n/2] {
		if x > lo {
			lo = x
		}
	}
	return (lo + hi) / 2
}

// median of v; v is not changed. Quickselect on a copy: linear time on
// average, which matters for the long windows of dense logs.
func median(v []float64) float64 {
	n := len(v)
	if n == 0 {
		return math.NaN()
	}
	c := make([]float64, n)
	copy(c, v)
	return medianInPlace(c)
}

// selectK puts the k-th smallest of a at a[k], smaller ones before it, and
// returns it (Hoare's selection, median-of-three pivots).
func selectK(a []float64, k int) float64 {
	lo, hi := 0, len(a)-1
	for hi > lo {
		mid := lo + (hi-lo)/2
		if a[mid] < a[lo] {
			a[mid], a[lo] = a[lo], a[mid]
		}
		if a[hi] < a[lo] {
			a[hi], a[lo] = a[lo], a[hi]
		}
		if a[hi] < a[mid] {
			a[hi], a[mid] = a[mid], a[hi]
		}
		pivot := a[mid]
		i, j := lo, hi
		for i <= j {
			for a[i] < pivot {
				i++
			}
			for a[j] > pivot {
				j--
			}
			if i <= j {
				a[i], a[j] = a[j], a[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return a[k]
		}
	}
	return a[k]
}
