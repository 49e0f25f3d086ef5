package kinetics

import "math"

// HistoryPoint is what the projection said at one moment of the run.
type HistoryPoint struct {
	AtH                  float64
	TargetH, LowH, HighH float64
	Method               string
}

// ProjectionHistory replays the projection at n moments spread over the
// run, each using only the readings up to that moment, to show how the
// predicted end moved. The start of the falling-rate period is the one the
// whole run found (the live view may have placed it a little later). It
// needs the dry solids and a target; it returns nil otherwise.
func (r *Result) ProjectionHistory(s Series, setup Setup, n int) []HistoryPoint {
	if math.IsNaN(r.TargetMassG) || math.IsNaN(r.DryMassG) || n < 1 || len(r.Points.X) == 0 {
		return nil
	}
	sEnd := r.DryMassG
	var t, m []float64
	for i := range r.Points.X {
		if r.Points.Reject[i] == KeepOK && !math.IsNaN(r.Points.X[i]) {
			t = append(t, s.TimeH[i])
			m = append(m, sEnd*(1+r.Points.X[i])) // on the solids left at the end
		}
	}
	if len(t) < 2 {
		return nil
	}
	from, crEnd := t[0], math.NaN()
	if r.ConstantRate != nil && !r.ConstantRate.Ongoing {
		crEnd = r.ConstantRate.EndH
		from = crEnd
	}
	floor := sEnd * (1 + setup.EquilibriumDB)
	var out []HistoryPoint
	end := t[len(t)-1]
	if !math.IsNaN(r.TargetReachedH) {
		end = r.TargetReachedH
	}
	k := 0
	for j := 1; j <= n; j++ {
		now := t[0] + (end-t[0])*float64(j)/float64(n)
		for k+1 < len(t) && t[k+1] <= now {
			k++
		}
		if !math.IsNaN(r.TargetReachedH) && t[k] >= r.TargetReachedH {
			tr := r.TargetReachedH
			out = append(out, HistoryPoint{AtH: t[k], TargetH: tr, LowH: tr, HighH: tr, Method: ProjReached})
			continue
		}
		rate := math.NaN()
		if k >= 1 {
			lo := max(0, k-20)
			if _, sl, err := LocalPoly(t[lo:k+1], m[lo:k+1], t[k], 1); err == nil {
				rate = -sl
			}
		}
		constantNow := !math.IsNaN(crEnd) && t[k] <= crEnd
		p := Project(t[:k+1], m[:k+1], from, t[k], r.TargetMassG, floor, sEnd, rate, constantNow)
		out = append(out, HistoryPoint{AtH: t[k], TargetH: p.TargetH, LowH: p.LowH, HighH: p.HighH, Method: p.Method})
	}
	return out
}
