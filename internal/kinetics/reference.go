package kinetics

import (
	"errors"
	"fmt"
	"math"
)

// Reference is an earlier run of the same product, kept as its
// characteristic drying curve: the moisture ratio against time, made
// monotone. Runs of one product at other air conditions follow about the
// same curve with time stretched (van Meel 1958; Keey, Drying of Loose and
// Particulate Materials, 1992): the projection scales it to this run's
// measured pace.
type Reference struct {
	Name  string
	TimeH []float64 // hours from the reference's first reading
	MR    []float64 // free moisture ratio (X − X_e)/(X0 − X_e), non-increasing
	// X0, XEnd: its dry-basis moisture at the start and the lowest it
	// reached (NaN when only its moisture ratio is known).
	X0, XEnd float64
	xt, x    []float64 // its dry-basis moisture against time (binned), when known
	// tail: beyond its last reading the curve goes on as its own final
	// exponential decay, MR_end·e^(−tailK·(t − t_end)); 0 when it had
	// levelled off.
	tailK float64
}

// ErrReferenceUnusable is returned for a reference run without the moisture
// ratio (no dry solids) or with too little drying.
var ErrReferenceUnusable = errors.New("reference run has no usable moisture ratio")

// NewReference takes the characteristic curve of an analysed run.
func NewReference(name string, s Series, r *Result) (*Reference, error) {
	if r == nil || r.Points.Len() == 0 {
		return nil, fmt.Errorf("%s: %w (give its initial moisture or dry mass)", name, ErrReferenceUnusable)
	}
	keep := make([]bool, r.Points.Len())
	any := false
	for i := range keep {
		keep[i] = r.Points.Reject[i] == KeepOK && !math.IsNaN(r.Points.MR(i))
		any = any || keep[i]
	}
	if !any {
		return nil, fmt.Errorf("%s: %w (give its initial moisture or dry mass)", name, ErrReferenceUnusable)
	}
	t, mr := binnedBy(s.TimeH[:len(keep)], keep, maxBins, r.Points.MR)
	ref, err := ReferenceFromCurve(name, t, mr)
	if err != nil {
		return nil, err
	}
	if s.Kind != SeriesMR || !math.IsNaN(r.InitialMoistureDB) {
		ref.X0 = r.InitialMoistureDB
		ref.XEnd = math.Inf(1)
		for i := range keep {
			if x := r.Points.X(i); keep[i] && x < ref.XEnd {
				ref.XEnd = x
			}
		}
		ref.xt, ref.x = binnedBy(s.TimeH[:len(keep)], keep, maxBins, r.Points.X)
	}
	return ref, nil
}

// ForEquilibrium is the reference's curve as a free moisture ratio with
// this run's equilibrium moisture xe: both runs then measure their way down
// to the same floor (a reference recorded without an equilibrium moisture
// would otherwise be read as drying more slowly near the end). A reference
// known only as a moisture ratio is returned as it is.
func (ref *Reference) ForEquilibrium(xe float64) *Reference {
	if len(ref.x) < 4 || !(ref.X0 > xe) {
		return ref
	}
	mr := make([]float64, len(ref.x))
	for i, x := range ref.x {
		mr[i] = (x - xe) / (ref.X0 - xe)
	}
	out, err := ReferenceFromCurve(ref.Name, ref.xt, mr)
	if err != nil {
		return ref
	}
	out.X0, out.XEnd, out.xt, out.x = ref.X0, ref.XEnd, ref.xt, ref.x
	return out
}

// Overlaps reports whether the reference's moisture range (dry basis)
// meets this run's, from x0 down to the target xt, and starts within a
// factor of 3 of it (fresh fruit and vegetables start between about 3 and
// 12 kg/kg: common practice). A reference known only as a moisture ratio
// always does. One that does not is another product or another unit (wet
// basis fractions or percent read as dry basis), and is not used.
func (ref *Reference) Overlaps(x0, xt float64) bool {
	if math.IsNaN(ref.X0) || math.IsNaN(ref.XEnd) || math.IsNaN(x0) {
		return true
	}
	if r := ref.X0 / x0; !(r >= 1.0/3 && r <= 3) {
		return false
	}
	lo, hi := math.Max(ref.XEnd, xt), math.Min(ref.X0, x0)
	return hi > lo
}

// ReferenceFromCurve makes a reference from a moisture-ratio curve (times
// in hours, oldest first). The curve is made non-increasing by a running
// minimum: a drying run does not regain water, and a noisy rise would make
// its inverse ambiguous.
func ReferenceFromCurve(name string, t, mr []float64) (*Reference, error) {
	if len(t) != len(mr) || len(t) < 4 {
		return nil, fmt.Errorf("%s: %w (fewer than 4 readings)", name, ErrReferenceUnusable)
	}
	ref := &Reference{Name: name, X0: math.NaN(), XEnd: math.NaN()}
	low := math.Inf(1)
	for i := range t {
		if !finite(t[i], mr[i]) {
			continue
		}
		low = math.Min(low, mr[i])
		ref.TimeH = append(ref.TimeH, t[i]-t[0])
		ref.MR = append(ref.MR, low)
	}
	n := len(ref.MR)
	if n < 4 || !(ref.MR[0]-ref.MR[n-1] > 0.1) {
		return nil, fmt.Errorf("%s: %w (its moisture ratio falls by less than 0.1)", name, ErrReferenceUnusable)
	}
	// The tail: a straight line in ln MR over the last quarter of the run.
	end := ref.TimeH[n-1]
	var st, sy, stt, sty, c float64
	for i := range ref.TimeH {
		if ref.TimeH[i] >= 0.75*end && ref.MR[i] > 0 {
			l := math.Log(ref.MR[i])
			st += ref.TimeH[i]
			sy += l
			stt += ref.TimeH[i] * ref.TimeH[i]
			sty += ref.TimeH[i] * l
			c++
		}
	}
	if den := c*stt - st*st; c >= 3 && den > 0 {
		ref.tailK = math.Max(0, -(c*sty-st*sy)/den)
	}
	return ref, nil
}

// LowestMR is the lowest moisture ratio the reference reached.
func (ref *Reference) LowestMR() float64 { return ref.MR[len(ref.MR)-1] }

// mrAt is the reference's moisture ratio at its time tau, with the tail
// beyond its end.
func (ref *Reference) mrAt(tau float64) float64 {
	n := len(ref.TimeH)
	if tau <= ref.TimeH[0] {
		return ref.MR[0]
	}
	if tau >= ref.TimeH[n-1] {
		return ref.MR[n-1] * math.Exp(-ref.tailK*(tau-ref.TimeH[n-1]))
	}
	i := searchAbove(ref.TimeH, tau)
	a, b := ref.TimeH[i-1], ref.TimeH[i]
	return ref.MR[i-1] + (ref.MR[i]-ref.MR[i-1])*(tau-a)/(b-a)
}

// timeAt is when the reference first got down to mr (NaN above its start
// or below its end).
func (ref *Reference) timeAt(mr float64) float64 {
	n := len(ref.MR)
	if mr > ref.MR[0] || mr < ref.MR[n-1] {
		return math.NaN()
	}
	for i := 1; i < n; i++ {
		if ref.MR[i] <= mr {
			d := ref.MR[i-1] - ref.MR[i]
			if d <= 0 {
				return ref.TimeH[i]
			}
			return ref.TimeH[i-1] + (ref.TimeH[i]-ref.TimeH[i-1])*(ref.MR[i-1]-mr)/d
		}
	}
	return ref.TimeH[n-1]
}

// searchAbove is the first index whose value is above v (t sorted).
func searchAbove(t []float64, v float64) int {
	lo, hi := 0, len(t)
	for lo < hi {
		mid := (lo + hi) / 2
		if t[mid] <= v {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	return lo
}

// forecaster projects a run by the reference's curve, its time stretched
// by a factor s that matches this run's pace so far: for each earlier
// reading, the time this run took from it to now against the time the
// reference took between the same moisture ratios (least squares through
// the origin, so a start-up lag in either run does not count).
func (ref *Reference) forecaster(name string) forecaster {
	return forecaster{name: name, title: MethodTitle(name), fit: func(t, y []float64, y0 float64) course {
		n := len(t)
		if n < 4 || !(y0 > 0) {
			return nil
		}
		now := t[n-1]
		k := recentFrom(t, 1.0/6, 3)
		yNow, _, err := LocalPoly(t[k:], y[k:], now, 1)
		if err != nil {
			yNow = y[n-1]
		}
		tauNow := ref.timeAt(yNow / y0)
		if math.IsNaN(tauNow) {
			if yNow/y0 > ref.MR[0] {
				tauNow = 0
			} else {
				return nil // this run is already drier than the reference got
			}
		}
		var sxy, sxx float64
		for i := 0; i < n-1; i++ {
			tau := ref.timeAt(y[i] / y0)
			if math.IsNaN(tau) {
				continue
			}
			dx, dy := tauNow-tau, now-t[i]
			if dx <= 0 || dy <= 0 {
				continue
			}
			sxy += dx * dy
			sxx += dx * dx
		}
		if !(sxx > 0) || !(sxy > 0) {
			return nil
		}
		s := sxy / sxx
		return func(tH float64) float64 { return y0 * ref.mrAt(tauNow+(tH-now)/s) }
	}}
}

// ReferenceUse says how the reference run took part in a projection.
type ReferenceUse struct {
	Name     string
	TargetH  float64 // what it projected on its own
	Weight   float64
	Error    float64     // median |relative error| in the back-test
	LowestMR float64     // how far down the reference's own data go
	Note     string      // where it could not be used
	Path     []PathPoint // its course from now to the target, scaled to this run
}

// refName is the method name of the i-th reference run.
func refName(i int) string {
	if i == 0 {
		return MethodReference
	}
	return fmt.Sprintf("%s_%d", MethodReference, i+1)
}

// describeReference fills in the reference runs' part of a projection.
func (tr *track) describeReference(p *Projection) {
	for i, ref := range tr.refs {
		u := &ReferenceUse{Name: ref.Name, TargetH: math.NaN(), Error: math.NaN(), LowestMR: ref.LowestMR()}
		for _, m := range p.Methods {
			if m.Name == refName(i) {
				u.TargetH, u.Weight, u.Error = m.TargetH, m.Weight, m.Error
				if m.Disabled != "" {
					u.Note = "not used: " + m.Disabled
				}
			}
		}
		u.Path = tr.referencePath(refName(i))
		if mrT := tr.level / tr.y0; mrT < u.LowestMR && u.Note == "" {
			u.Note = fmt.Sprintf("the reference reaches only a moisture ratio of %.3f and the target is %.3f: below it, its final decay is carried on", u.LowestMR, mrT)
		}
		if i == 0 {
			p.Reference = u
		} else {
			p.MoreReferences = append(p.MoreReferences, u)
		}
	}
}

// referencePath samples a reference run's course, as scaled at the newest
// cut, from now down to the target (nil when it does not project).
func (tr *track) referencePath(name string) []PathPoint {
	b := tr.backtest()
	if len(b.cuts) == 0 {
		return nil
	}
	c := b.cuts[len(b.cuts)-1]
	var cr course
	for m, f := range b.methods {
		if f.name == name {
			cr = c.courses[m]
		}
	}
	if cr == nil {
		return nil
	}
	end := crossing(cr, c.at, tr.level, b.horizon(c.at))
	if !finite(end) || !(end > c.at) {
		return nil
	}
	const steps = 24
	out := make([]PathPoint, 0, steps+1)
	for i := 0; i <= steps; i++ {
		at := c.at + (end-c.at)*float64(i)/steps
		out = append(out, PathPoint{TimeH: at, MoistureDB: cr(at) + tr.xe})
	}
	return out
}
