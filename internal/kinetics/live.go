package kinetics

import (
	"math"
)

// Period is the drying period the run is in now, as the live view sees it.
type Period string

const (
	PeriodStarting Period = "starting"      // too few readings to say
	PeriodConstant Period = "constant rate" // the rate holds near its peak
	PeriodFalling  Period = "falling rate"  // the rate has fallen from its peak
	PeriodSteady   Period = "steady weight" // the weight no longer changes (end of run)
)

// LivePoint is what one new reading changes.
type LivePoint struct {
	Kept     bool
	Reject   uint8 // reason when not kept
	SmoothG  float64
	RateGPH  float64 // −dm/dt, g/h
	X        float64 // dry basis, NaN without dry solids
	WBPct    float64
	MR       float64
	Period   Period
	NoiseSDG float64
}

// liveWindow caps the readings a live estimate looks at, so the cost of a
// reading does not grow with the run.
const liveWindow = 2000

// Live updates moisture, rate and period reading by reading, in time that
// does not grow with the length of the run: each reading looks back over at
// most liveWindow kept readings. The full analysis (model fits, diffusivity,
// projection) is Analyze, run on a schedule by the caller.
type Live struct {
	setup  Setup
	tare   float64
	s0     float64 // dry solids at the start, NaN when unknown
	factor float64 // solids factor from removals applied so far
	x0     float64

	ring        [liveWindow]float64 // kept times and masses, circular
	ringM       [liveWindow]float64
	n           int                 // kept so far
	d2          [liveWindow]float64 // recent |second differences|
	nd2         int
	peak        float64 // running level of the highest recent rate (median-filtered)
	state       Period  // periods only move forward, except steady back to falling
	rates       [9]float64
	nr          int
	steadySince float64
	m0          float64   // first kept net mass
	bt, bm, bw  []float64 // scratch for fits
	noiseSD     float64
	noiseAt     int
	lastRate    float64
	plateauFrom float64 // net mass when the rate came within tolerance of its peak
	seg         int     // kept readings before the current segment (a step starts one)
	pendT       []float64
	pendM       []float64 // readings off the trend in a row: a step if they agree
}

// stepConfirm is how many readings in a row, off the trend but agreeing
// with each other, make a step (a piece removed, the rack moved): the
// readings after a step are data, not spikes.
const stepConfirm = 6

// NewLive starts a live estimate with a setup (dry solids from the initial
// moisture or dry mass as in Analyze; removals can be added with Remove).
func NewLive(setup Setup) *Live {
	return &Live{setup: setup, tare: setup.TareG, s0: math.NaN(), factor: 1, x0: math.NaN(), steadySince: math.NaN(), plateauFrom: math.NaN(), lastRate: math.NaN()}
}

func (l *Live) at(k int) (float64, float64) {
	i := (l.n - 1 - k) % liveWindow // k back from the newest
	return l.ring[i], l.ringM[i]
}

// Remove applies a piece taken out now (grams): the solids left shrink in
// proportion (DOMAIN.md).
func (l *Live) Remove(grams float64) {
	if l.n == 0 {
		return
	}
	_, m := l.at(0)
	if grams > 0 && grams < m {
		l.factor *= 1 - grams/m
	}
}

// Add takes one reading (hours from the first reading, grams as read, the
// balance's stability flag) and returns the live figures.
func (l *Live) Add(tH, massG float64, stable int8) LivePoint {
	p := LivePoint{SmoothG: math.NaN(), RateGPH: math.NaN(), X: math.NaN(), WBPct: math.NaN(), MR: math.NaN(), Period: PeriodStarting, NoiseSDG: l.noise()}
	net := massG - l.tare
	switch {
	case stable < 0:
		p.Reject = RejUnstable
		return p
	case !(net > 0):
		p.Reject = RejNotPositive
		return p
	case l.n > 0 && !(tH > l.lastT()):
		p.Reject = RejOrder
		if tH == l.lastT() {
			p.Reject = RejDuplicate
		}
		return p
	}
	// A spike: far from where the recent readings, carried on at their
	// rate, put this one.
	if l.n-l.seg >= 10 {
		pred, _, ok := l.fit(tH, min(l.n-l.seg, 30), 1)
		if ok && math.Abs(net-pred) > math.Max(8*l.noise(), 0.05*math.Max(net, 1)) {
			l.pendT, l.pendM = append(l.pendT, tH), append(l.pendM, net)
			if !l.stepped(net) {
				p.Reject = RejSpike
				return p
			}
		} else {
			l.pendT, l.pendM = l.pendT[:0], l.pendM[:0]
		}
	}
	if l.n-l.seg >= 2 {
		_, m1 := l.at(0)
		_, m2 := l.at(1)
		l.d2[l.nd2%liveWindow] = math.Abs(net - 2*m1 + m2)
		l.nd2++
	}
	l.keep(tH, net)
	p.Kept = true
	p.NoiseSDG = l.noise()
	l.estimate(&p, tH, net)
	return p
}

// Catch up takes a reading of a backlog (a long log opened at once) with
// the checks that need no fit: order, stability, sign. Its figures are not
// worked out; the caller goes on with Add for the newest readings, whose
// figures are shown, and the full analysis judges the rest.
func (l *Live) CatchUp(tH, massG float64, stable int8) bool {
	net := massG - l.tare
	if stable < 0 || !(net > 0) || (l.n > 0 && !(tH > l.lastT())) {
		return false
	}
	if l.n-l.seg >= 2 {
		_, m1 := l.at(0)
		_, m2 := l.at(1)
		l.d2[l.nd2%liveWindow] = math.Abs(net - 2*m1 + m2)
		l.nd2++
	}
	first := l.n == 0
	l.keep(tH, net)
	if first {
		p := LivePoint{}
		l.estimate(&p, tH, net) // the solids and the start
	}
	return true
}

// stepped reports whether the readings held off the trend are a step: six
// in a row that agree with each other. Then a new segment starts with them:
// fits look only after the step, and the moisture follows the new level
// (the removal question stays with the caller).
func (l *Live) stepped(net float64) bool {
	n := len(l.pendM)
	if n < stepConfirm {
		return false
	}
	lo, hi := l.pendM[0], l.pendM[0]
	for _, m := range l.pendM {
		lo, hi = math.Min(lo, m), math.Max(hi, m)
	}
	if hi-lo > math.Max(16*l.noise(), 0.02*math.Max(net, 1)) {
		// scattered, not a new level: keep only the newest few
		copy(l.pendT, l.pendT[1:])
		copy(l.pendM, l.pendM[1:])
		l.pendT, l.pendM = l.pendT[:n-1], l.pendM[:n-1]
		return false
	}
	l.seg = l.n
	for j := 0; j < n-1; j++ { // the newest is kept by the caller
		l.keep(l.pendT[j], l.pendM[j])
	}
	l.pendT, l.pendM = l.pendT[:0], l.pendM[:0]
	l.lastRate = math.NaN()
	return true
}

// keep adds a kept reading to the window.
func (l *Live) keep(tH, net float64) {
	i := l.n % liveWindow
	l.ring[i], l.ringM[i] = tH, net
	if l.n == 0 {
		l.m0 = net
	}
	l.n++
}

// estimate fills in the live figures for the newest kept reading.
func (l *Live) estimate(p *LivePoint, tH, net float64) {
	if math.IsNaN(l.s0) {
		switch {
		case !math.IsNaN(l.setup.DryMassG):
			l.s0 = l.setup.DryMassG // removals during the run are not known yet
		case !math.IsNaN(l.setup.InitialMoistureWB):
			m0 := net
			if !math.IsNaN(l.setup.InitialMassG) {
				m0 = l.setup.InitialMassG
			}
			l.s0 = m0 * (1 - l.setup.InitialMoistureWB/100)
		}
		if !math.IsNaN(l.s0) {
			l.x0 = net/l.s0 - 1
		}
	}

	// Rate: a one-sided quadratic over the recent window, sized as in
	// fitSegment from the noise and the current rate.
	seg := min(l.n-l.seg, liveWindow) // readings since the last step
	if seg >= 5 {
		tFirst, _ := l.at(seg - 1)
		span := tH - tFirst
		dt := span / float64(seg-1)
		// The window follows the rate: the previous live rate guides it
		// (at first, the mean rate so far).
		guess := l.lastRate
		if math.IsNaN(guess) {
			if _, s, ok := l.fit(tH, seg, 1); ok {
				guess = -s
			}
		}
		// One-sided: the slope at the end of a quadratic has about 16 times
		// the variance of the slope in the middle of a window of the same
		// length, so the window is about 2.5 times longer (5h, not 2h).
		h := RateWindow(guess, math.Max(l.noise(), 1e-4), dt, 3*dt, math.Max(span, 3*dt))
		k := 0
		for k < seg {
			tk, _ := l.at(k)
			if tH-tk > 5*h {
				break
			}
			k++
		}
		k = max(k, 5)
		if v, s, ok := l.fit(tH, min(k, seg), 2); ok {
			p.SmoothG, p.RateGPH = v, -s
			l.lastRate = -s
		}
	}
	if !math.IsNaN(l.s0) {
		sol := l.s0 * l.factor
		x := net/sol - 1
		p.X, p.WBPct = x, 100*DryToWet(x)
		if l.x0 > l.setup.EquilibriumDB {
			p.MR = (x - l.setup.EquilibriumDB) / (l.x0 - l.setup.EquilibriumDB)
		}
	}
	p.Period = l.advance(l.period(tH, p.RateGPH, net))
}

// fit is a local polynomial over the newest k kept readings, at t. Long
// windows are averaged into at most liveBins bins (weighted by count), so a
// fit costs about the same whatever the window.
func (l *Live) fit(t float64, k, degree int) (float64, float64, bool) {
	per := (k + liveBins - 1) / liveBins
	l.bt, l.bm, l.bw = l.bt[:0], l.bm[:0], l.bw[:0]
	for j := k - 1; j >= 0; j -= per {
		st, sm, c := 0.0, 0.0, 0
		for q := j; q > j-per && q >= 0; q-- {
			tq, mq := l.at(q)
			st += tq
			sm += mq
			c++
		}
		l.bt = append(l.bt, st/float64(c))
		l.bm = append(l.bm, sm/float64(c))
		l.bw = append(l.bw, float64(c))
	}
	var w []float64
	if per > 1 {
		w = l.bw
	}
	v, s, err := localPolyW(l.bt, l.bm, w, t, degree)
	return v, s, err == nil
}

// liveBins bounds the points of a live fit.
const liveBins = 200

// noise is the balance noise from recent second differences (NoiseSD's
// estimator on a window).
func (l *Live) noise() float64 {
	n := min(l.nd2, liveWindow)
	if n < 5 {
		return math.NaN()
	}
	// The noise changes slowly: recompute every 25 readings.
	if l.noiseAt == 0 || l.nd2-l.noiseAt >= 25 || l.nd2 < 100 {
		l.noiseSD = 1.4826 * median(l.d2[:n]) / math.Sqrt(6)
		l.noiseAt = l.nd2
	}
	return l.noiseSD
}

// advance moves the period on: starting, constant, falling, steady; a run
// that was steady may fall again (a setpoint raised), but a falling rate
// does not turn back into a constant-rate period.
func (l *Live) advance(next Period) Period {
	order := map[Period]int{PeriodStarting: 0, PeriodConstant: 1, PeriodFalling: 2, PeriodSteady: 3}
	cur := l.state
	if cur == "" {
		cur = PeriodStarting
	}
	switch {
	case next == PeriodStarting && cur != PeriodStarting && l.nr >= len(l.rates):
		// "too early to say" only applies before anything was said
	case order[next] > order[cur], cur == PeriodSteady && next == PeriodFalling:
		cur = next
	}
	l.state = cur
	return cur
}

// period tracks the peak rate (a median of the last few rates, so one noisy
// value does not set it) and calls the rate constant while it stays within
// the tolerance FindConstantRate uses.
func (l *Live) period(tH, rate, net float64) Period {
	if math.IsNaN(rate) {
		return PeriodStarting
	}
	l.rates[l.nr%len(l.rates)] = rate
	l.nr++
	if l.nr < len(l.rates) {
		return PeriodStarting
	}
	level := median(l.rates[:])
	if level > l.peak {
		if level > l.peak/(1-plateauTol) || math.IsNaN(l.plateauFrom) {
			l.plateauFrom = net // a new plateau starts here
		}
		l.peak = level
	}
	// steady: the change over the steady window is within SteadyPct
	if math.Abs(rate)*l.setup.SteadyWindowH <= l.setup.SteadyPct/100*net {
		if math.IsNaN(l.steadySince) {
			l.steadySince = tH
		}
		if tH-l.steadySince >= l.setup.SteadyWindowH {
			return PeriodSteady
		}
	} else {
		l.steadySince = math.NaN()
	}
	if level >= (1-plateauTol)*l.peak {
		// Constant only once the rate has held while a tenth of the water
		// went, as FindConstantRate asks; until then, too early to say.
		water := l.m0 * 0.8 // without the solids, assume a wet product
		if !math.IsNaN(l.s0) {
			water = l.m0 - l.s0
		}
		if l.plateauFrom-net >= plateauMinFrac*water {
			return PeriodConstant
		}
		return PeriodStarting
	}
	return PeriodFalling
}

// lastT is the time of the newest reading taken.
func (l *Live) lastT() float64 { t, _ := l.at(0); return t }
