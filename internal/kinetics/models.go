package kinetics

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Model is a thin-layer drying model MR(t) (DOMAIN.md table, names and
// parameter names as published).
type Model struct {
	Name   string   // lewis, page, henderson_pabis, logarithmic, two_term, midilli
	Title  string   // as published
	Source string   // the publication
	Params []string // parameter names, in order
	f      func(t float64, p []float64) float64
	grad   func(t float64, p, g []float64) float64 // fills ∂f/∂p, returns f
	start  func(t, mr []float64) [][]float64       // candidate starting values
}

// Eval returns MR at t for parameters p.
func (m *Model) Eval(t float64, p []float64) float64 { return m.f(t, p) }

// Models are the six thin-layer models, in order of parameter count.
var Models = []*Model{
	{
		Name: "lewis", Title: "Lewis (Newton)", Source: "Lewis 1921", Params: []string{"k"},
		f: func(t float64, p []float64) float64 { return math.Exp(-p[0] * t) },
		grad: func(t float64, p, g []float64) float64 {
			e := math.Exp(-p[0] * t)
			g[0] = -t * e
			return e
		},
		start: func(t, mr []float64) [][]float64 {
			_, k := logLinear(t, mr, 0, true)
			return [][]float64{{k}}
		},
	},
	{
		Name: "page", Title: "Page", Source: "Page 1949", Params: []string{"k", "n"},
		f: func(t float64, p []float64) float64 { return math.Exp(-p[0] * pow(t, p[1])) },
		grad: func(t float64, p, g []float64) float64 {
			tn := pow(t, p[1])
			e := math.Exp(-p[0] * tn)
			g[0] = -tn * e
			g[1] = 0
			if t > 0 {
				g[1] = -p[0] * tn * math.Log(t) * e
			}
			return e
		},
		start: func(t, mr []float64) [][]float64 {
			k, n := pageLinear(t, mr)
			_, kl := logLinear(t, mr, 0, true)
			return [][]float64{{k, n}, {kl, 1}}
		},
	},
	{
		Name: "henderson_pabis", Title: "Henderson and Pabis", Source: "Henderson and Pabis 1961", Params: []string{"a", "k"},
		f: func(t float64, p []float64) float64 { return p[0] * math.Exp(-p[1]*t) },
		grad: func(t float64, p, g []float64) float64 {
			e := math.Exp(-p[1] * t)
			g[0] = e
			g[1] = -p[0] * t * e
			return p[0] * e
		},
		start: func(t, mr []float64) [][]float64 {
			a, k := logLinear(t, mr, 0, false)
			return [][]float64{{a, k}}
		},
	},
	{
		Name: "logarithmic", Title: "Logarithmic", Source: "Yagcioglu et al. 1999", Params: []string{"a", "k", "c"},
		f: func(t float64, p []float64) float64 { return p[0]*math.Exp(-p[1]*t) + p[2] },
		grad: func(t float64, p, g []float64) float64 {
			e := math.Exp(-p[1] * t)
			g[0] = e
			g[1] = -p[0] * t * e
			g[2] = 1
			return p[0]*e + p[2]
		},
		start: func(t, mr []float64) [][]float64 {
			lo := minOf(mr)
			var out [][]float64
			for _, frac := range []float64{0, 0.5, 0.9} {
				c := lo * frac
				a, k := logLinear(t, mr, c, false)
				out = append(out, []float64{a, k, c})
			}
			return out
		},
	},
	{
		Name: "two_term", Title: "Two-term", Source: "Henderson 1974", Params: []string{"a", "k0", "b", "k1"},
		f: func(t float64, p []float64) float64 { return p[0]*math.Exp(-p[1]*t) + p[2]*math.Exp(-p[3]*t) },
		grad: func(t float64, p, g []float64) float64 {
			e0, e1 := math.Exp(-p[1]*t), math.Exp(-p[3]*t)
			g[0] = e0
			g[1] = -p[0] * t * e0
			g[2] = e1
			g[3] = -p[2] * t * e1
			return p[0]*e0 + p[2]*e1
		},
		start: twoTermStarts,
	},
	{
		Name: "midilli", Title: "Midilli et al.", Source: "Midilli, Kucuk and Yapar 2002", Params: []string{"a", "k", "n", "b"},
		f: func(t float64, p []float64) float64 { return p[0]*math.Exp(-p[1]*pow(t, p[2])) + p[3]*t },
		grad: func(t float64, p, g []float64) float64 {
			tn := pow(t, p[2])
			e := math.Exp(-p[1] * tn)
			g[0] = e
			g[1] = -p[0] * tn * e
			g[2] = 0
			if t > 0 {
				g[2] = -p[0] * p[1] * tn * math.Log(t) * e
			}
			g[3] = t
			return p[0]*e + p[3]*t
		},
		start: func(t, mr []float64) [][]float64 {
			k, n := pageLinear(t, mr)
			_, kl := logLinear(t, mr, 0, true)
			return [][]float64{{1, k, n, 0}, {1, kl, 1, 0}}
		},
	},
}

// twoTermStarts finds Two-term's starting values by separable least
// squares (Golub and Pereyra 1973): for fixed k0 and k1 the amplitudes a
// and b are linear, so each pair on a log grid around the single-term k
// costs two dot products, and the sum of squares over the whole grid shows
// its valleys. The best few, the fast term first, are where the full fit
// starts. Heuristic splits of one k missed the valley of a run with
// unannounced drops, and tried to the iteration limit where they wandered.
func twoTermStarts(t, mr []float64) [][]float64 {
	_, kl := logLinear(t, mr, 0, false)
	const nk = 25
	ks := make([]float64, nk)
	e := make([][]float64, nk)
	for i := range ks {
		ks[i] = kl * math.Pow(10, -2+4*float64(i)/(nk-1)) // kl/100 to 100·kl
		e[i] = make([]float64, len(t))
		for j, tj := range t {
			e[i][j] = math.Exp(-ks[i] * tj)
		}
	}
	dot := func(a, b []float64) float64 {
		s := 0.0
		for j := range a {
			s += a[j] * b[j]
		}
		return s
	}
	yy := dot(mr, mr)
	ey := make([]float64, nk)
	ee := make([][]float64, nk)
	for i := range ks {
		ey[i] = dot(e[i], mr)
		ee[i] = make([]float64, nk)
		for j := 0; j <= i; j++ {
			ee[i][j] = dot(e[i], e[j])
			ee[j][i] = ee[i][j]
		}
	}
	type cand struct {
		i, j      int // slow, fast
		a, b, sse float64
	}
	var cs []cand
	for i := 0; i < nk; i++ {
		for j := i + 1; j < nk; j++ {
			// slow term i (a), fast term j (b): normal equations, 2×2.
			det := ee[i][i]*ee[j][j] - ee[i][j]*ee[i][j]
			if !(det > 1e-12*ee[i][i]*ee[j][j]) {
				continue
			}
			a := (ey[i]*ee[j][j] - ey[j]*ee[i][j]) / det
			b := (ey[j]*ee[i][i] - ey[i]*ee[i][j]) / det
			sse := yy - a*ey[i] - b*ey[j] // at the least-squares solution
			cs = append(cs, cand{i, j, a, b, sse})
		}
	}
	sort.Slice(cs, func(x, y int) bool { return cs[x].sse < cs[y].sse })
	var out [][]float64
	var took []cand
	for _, c := range cs {
		near := false
		for _, d := range took {
			if abs(c.i-d.i) <= 2 && abs(c.j-d.j) <= 2 {
				near = true
			}
		}
		if near {
			continue
		}
		took = append(took, c)
		out = append(out, []float64{c.b, ks[c.j], c.a, ks[c.i]})
		if len(out) == 3 {
			break
		}
	}
	if len(out) == 0 {
		a, k := logLinear(t, mr, 0, false)
		out = append(out, []float64{0.5 * a, 3 * k, 0.5 * a, k / 3})
	}
	return out
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

// ModelByName finds a model.
func ModelByName(name string) *Model {
	for _, m := range Models {
		if m.Name == name {
			return m
		}
	}
	return nil
}

func pow(t, n float64) float64 {
	if t <= 0 {
		return 0
	}
	return math.Pow(t, n)
}

// Fit is a fitted model with the statistics the drying literature reports.
type Fit struct {
	Model      *Model
	Params     map[string]float64
	StdErr     map[string]float64 // NaN where not estimable
	P          []float64          // parameters in Model.Params order
	N          int
	SSE        float64
	R2         float64 // 1 − SSE/SST
	RMSE       float64 // sqrt(SSE/N); papers differ, some divide by N − p
	Chi2       float64 // reduced χ² = SSE/(N − p)
	AIC        float64 // N·ln(SSE/N) + 2p
	Converged  bool
	Iter       int
	Note       string // why it did not converge, or that it is degenerate
	Degenerate bool
}

// FitModel fits m to moisture-ratio data by Levenberg–Marquardt from
// starting values found by linearised fits (ln MR against t, and
// ln(−ln MR) against ln t for Page), keeping the best of its candidates.
// Time may be in any unit; the rate constants come out in its inverse.
func FitModel(m *Model, t, mr []float64) (*Fit, error) {
	if len(t) != len(mr) {
		return nil, fmt.Errorf("kinetics: %d times and %d moisture ratios", len(t), len(mr))
	}
	np := len(m.Params)
	if len(t) < np+1 {
		return nil, fmt.Errorf("kinetics: %s needs at least %d points, has %d: %w", m.Name, np+1, len(t), ErrTooFewPoints)
	}
	starts := m.start(t, mr)
	// Many points: try the starts on an even subsample, then carry only the
	// best on to all the points (the multistart is what costs).
	if len(t) > 4*subsampleFit && len(starts) > 1 {
		st, sm := subsample(t, mr, subsampleFit)
		type tried struct {
			p0  []float64
			sse float64
		}
		var ok []tried
		for _, p0 := range starts {
			if !finite(p0...) {
				continue
			}
			r := levenbergMarquardt(lmProblem{f: m.f, grad: m.grad}, st, sm, p0, startIter)
			if !math.IsNaN(r.SSE) {
				ok = append(ok, tried{r.P, r.SSE})
			}
		}
		// The few best go on: a subsample can rank two valleys close
		// together the wrong way round.
		sort.SliceStable(ok, func(i, j int) bool { return ok[i].sse < ok[j].sse })
		if len(ok) > 0 {
			starts = starts[:0:0]
			for _, c := range ok[:min(len(ok), refineStarts)] {
				starts = append(starts, c.p0)
			}
		}
	}
	var best *lmResult
	for _, p0 := range starts {
		if !finite(p0...) {
			continue
		}
		r := levenbergMarquardt(lmProblem{f: m.f, grad: m.grad}, t, mr, p0, 500)
		if math.IsNaN(r.SSE) {
			continue
		}
		if best == nil || r.SSE < best.SSE*(1-1e-12) || (!best.Converged && r.Converged && r.SSE <= best.SSE*(1+1e-9)) {
			rr := r
			best = &rr
		}
	}
	if best == nil {
		return nil, fmt.Errorf("kinetics: %s: no usable starting values (moisture ratios outside (0, 1]?)", m.Name)
	}
	if m.Name == "two_term" && best.P[1] < best.P[3] {
		// One order for one curve: the fast term first (k0 > k1).
		p := best.P
		p[0], p[1], p[2], p[3] = p[2], p[3], p[0], p[1]
		if best.Cov != nil {
			perm := []int{2, 3, 0, 1}
			c := mat.NewSymDense(4, nil)
			for i := 0; i < 4; i++ {
				for j := i; j < 4; j++ {
					c.SetSym(i, j, best.Cov.At(perm[i], perm[j]))
				}
			}
			best.Cov = c
		}
	}
	f := &Fit{Model: m, P: best.P, N: len(t), SSE: best.SSE, Converged: best.Converged, Iter: best.Iter, Note: best.Reason,
		Params: map[string]float64{}, StdErr: map[string]float64{}}
	for i, name := range m.Params {
		f.Params[name] = best.P[i]
		f.StdErr[name] = math.NaN()
		if best.Cov != nil {
			if v := best.Cov.At(i, i); v >= 0 {
				f.StdErr[name] = math.Sqrt(v)
			}
		}
	}
	mean := 0.0
	for _, v := range mr {
		mean += v
	}
	mean /= float64(len(mr))
	sst := 0.0
	for _, v := range mr {
		sst += (v - mean) * (v - mean)
	}
	n := float64(len(t))
	f.R2 = 1 - f.SSE/sst
	f.RMSE = math.Sqrt(f.SSE / n)
	f.Chi2 = f.SSE / (n - float64(np))
	f.AIC = n*math.Log(math.Max(f.SSE, 1e-300)/n) + 2*float64(np)
	for i, name := range m.Params {
		if strings.HasPrefix(name, "k") && f.P[i] < 0 {
			f.Degenerate = true
			f.Note = fmt.Sprintf("not physical: rate constant %s is negative", name)
		}
	}
	if m.Name == "two_term" && !f.Degenerate {
		a, k0, b, k1 := f.P[0], f.P[1], f.P[2], f.P[3]
		if math.Abs(k0-k1) <= 1e-3*math.Max(math.Abs(k0), math.Abs(k1)) || math.Abs(a) < 1e-6 || math.Abs(b) < 1e-6 {
			f.Degenerate = true
			f.Note = "degenerate: k0 ≈ k1 or one term vanishes, so it collapses to Henderson and Pabis"
		} else if best.Cov == nil || math.IsNaN(f.StdErr["k0"]) || math.IsNaN(f.StdErr["k1"]) {
			f.Degenerate = true
			f.Note = "degenerate: the two terms cannot be told apart by these data (singular fit)"
		}
	}
	return f, nil
}

// subsampleFit is the size of the subsample the starting values are tried
// on.
const subsampleFit = 1000

// startIter bounds each start's iterations on the subsample; the best are
// then carried on, on every point, to 500.
const startIter = 150

// refineStarts is how many of the best starts are carried on to all points.
const refineStarts = 2

func subsample(t, v []float64, n int) ([]float64, []float64) {
	step := float64(len(t)-1) / float64(n-1)
	st, sv := make([]float64, n), make([]float64, n)
	for i := 0; i < n; i++ {
		j := int(math.Round(float64(i) * step))
		st[i], sv[i] = t[j], v[j]
	}
	return st, sv
}

// FitAll fits the six models; models that cannot be fitted are left out
// with the reason in the returned map.
func FitAll(t, mr []float64) ([]*Fit, map[string]string) {
	// The models are independent: fitted side by side, kept in their order.
	res := make([]*Fit, len(Models))
	errs := make([]error, len(Models))
	fns := make([]func(), len(Models))
	for i, m := range Models {
		fns[i] = func() { res[i], errs[i] = FitModel(m, t, mr) }
	}
	parallel(fns...)
	var fits []*Fit
	failed := map[string]string{}
	for i, m := range Models {
		if errs[i] != nil {
			failed[m.Name] = errs[i].Error()
			continue
		}
		fits = append(fits, res[i])
	}
	return fits, failed
}

// Best returns the converged, non-degenerate fit with the lowest AIC.
func Best(fits []*Fit) *Fit {
	var ok []*Fit
	for _, f := range fits {
		if f.Converged && !f.Degenerate && finite(f.AIC) {
			ok = append(ok, f)
		}
	}
	if len(ok) == 0 {
		return nil
	}
	sort.SliceStable(ok, func(i, j int) bool { return ok[i].AIC < ok[j].AIC })
	return ok[0]
}

// logLinear fits ln(MR − c) = ln a − k t over points with MR − c in (0, 1.5);
// with origin, a is fixed at 1 (ln a = 0).
func logLinear(t, mr []float64, c float64, origin bool) (a, k float64) {
	var st, sy, stt, sty, n float64
	for i := range t {
		v := mr[i] - c
		if !(v > 0) || v > 1.5 {
			continue
		}
		y := math.Log(v)
		st += t[i]
		sy += y
		stt += t[i] * t[i]
		sty += t[i] * y
		n++
	}
	if origin {
		if stt == 0 {
			return 1, 1
		}
		return 1, math.Max(-sty/stt, 1e-9)
	}
	den := n*stt - st*st
	if n < 2 || den == 0 {
		return 1, 1
	}
	slope := (n*sty - st*sy) / den
	icpt := (sy - slope*st) / n
	return math.Exp(icpt), math.Max(-slope, 1e-9)
}

// pageLinear fits ln(−ln MR) = ln k + n ln t over 0 < MR < 1, t > 0.
func pageLinear(t, mr []float64) (k, n float64) {
	var sx, sy, sxx, sxy, c float64
	for i := range t {
		if !(t[i] > 0 && mr[i] > 0 && mr[i] < 1) {
			continue
		}
		x, y := math.Log(t[i]), math.Log(-math.Log(mr[i]))
		sx += x
		sy += y
		sxx += x * x
		sxy += x * y
		c++
	}
	den := c*sxx - sx*sx
	if c < 2 || den == 0 {
		return 1, 1
	}
	n = (c*sxy - sx*sy) / den
	return math.Exp((sy - n*sx) / c), n
}

func minOf(v []float64) float64 {
	m := math.Inf(1)
	for _, x := range v {
		m = math.Min(m, x)
	}
	return m
}

func finite(v ...float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}
