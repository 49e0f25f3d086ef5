package kinetics

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mat"
)

// ErrTooFewPoints is returned when there are fewer points than a fit or an
// estimate needs.
var ErrTooFewPoints = errors.New("too few points")

// lmProblem is a least-squares problem y ≈ f(t; p).
type lmProblem struct {
	f func(t float64, p []float64) float64
	// grad fills g with ∂f/∂p at t and returns f there (one evaluation of
	// the exponentials for both); nil for a forward-difference Jacobian.
	grad func(t float64, p, g []float64) float64
}

// maxParams is the most parameters a model here has (Two-term, Midilli).
const maxParams = 4

// lmResult is the outcome of a Levenberg–Marquardt run.
type lmResult struct {
	P         []float64
	SSE       float64
	Cov       *mat.SymDense // (JᵀJ)⁻¹ · SSE/(N−p); nil when singular
	Iter      int
	Converged bool
	Reason    string
}

// levenbergMarquardt minimises Σ (y − f(t;p))² from p0 (Levenberg 1944,
// Marquardt 1963, with Marquardt's diagonal scaling). It stops when the
// relative decrease in SSE and the relative step are both below 1e-10, or
// after maxIter iterations (not converged).
func levenbergMarquardt(pr lmProblem, t, y, p0 []float64, maxIter int) lmResult {
	n, np := len(t), len(p0)
	p := append([]float64(nil), p0...)
	res := lmResult{P: p}
	if np > maxParams {
		res.Reason = "too many parameters"
		res.SSE = math.NaN()
		return res
	}
	if n < np {
		res.Reason = "fewer points than parameters"
		res.SSE = math.NaN()
		return res
	}
	sse := func(q []float64) float64 {
		s := 0.0
		for i := range t {
			r := y[i] - pr.f(t[i], q)
			s += r * r
		}
		if math.IsNaN(s) {
			return math.Inf(1)
		}
		return s
	}
	g := make([]float64, np)
	jac := func(q []float64, ti float64) float64 {
		if pr.grad != nil {
			return pr.grad(ti, q, g)
		}
		f0 := pr.f(ti, q)
		for k := range q {
			h := 1e-7 * math.Max(math.Abs(q[k]), 1e-7)
			old := q[k]
			q[k] = old + h
			g[k] = (pr.f(ti, q) - f0) / h
			q[k] = old
		}
		return f0
	}
	jtj := mat.NewSymDense(np, nil)
	jtr := mat.NewVecDense(np, nil)
	// The normal equations are summed in plain arrays (np ≤ maxParams) and
	// copied into the matrices once: At/SetSym per point cost more than the
	// model.
	var sa [maxParams][maxParams]float64
	var sr [maxParams]float64
	build := func(q []float64) {
		sa, sr = [maxParams][maxParams]float64{}, [maxParams]float64{}
		for i := range t {
			r := y[i] - jac(q, t[i])
			for a := 0; a < np; a++ {
				ga := g[a]
				sr[a] += ga * r
				for b := a; b < np; b++ {
					sa[a][b] += ga * g[b]
				}
			}
		}
		for a := 0; a < np; a++ {
			jtr.SetVec(a, sr[a])
			for b := a; b < np; b++ {
				jtj.SetSym(a, b, sa[a][b])
			}
		}
	}
	cur := sse(p)
	if math.IsInf(cur, 1) {
		res.Reason = "model undefined at the starting values"
		res.SSE = math.NaN()
		return res
	}
	lambda := 1e-3
	trial := make([]float64, np)
	aug := mat.NewSymDense(np, nil)
	var step mat.VecDense
	var chol mat.Cholesky
	for res.Iter = 1; res.Iter <= maxIter; res.Iter++ {
		build(p)
		improved := false
		for tries := 0; tries < 30; tries++ {
			aug.CopySym(jtj)
			for a := 0; a < np; a++ {
				d := jtj.At(a, a)
				if d == 0 {
					d = 1e-12
				}
				aug.SetSym(a, a, d*(1+lambda))
			}
			if !chol.Factorize(aug) {
				lambda *= 10
				continue
			}
			if err := chol.SolveVecTo(&step, jtr); err != nil {
				lambda *= 10
				continue
			}
			for a := range p {
				trial[a] = p[a] + step.AtVec(a)
			}
			next := sse(trial)
			if next < cur {
				rel := (cur - next) / math.Max(cur, 1e-300)
				stepRel := 0.0
				for a := range p {
					stepRel = math.Max(stepRel, math.Abs(step.AtVec(a))/math.Max(math.Abs(p[a]), 1e-12))
				}
				copy(p, trial)
				cur = next
				lambda = math.Max(lambda/10, 1e-12)
				improved = true
				if rel < 1e-10 && stepRel < 1e-6 || cur < 1e-28 {
					res.Converged = true
				}
				break
			}
			lambda *= 10
			if lambda > 1e16 {
				break
			}
		}
		if res.Converged {
			break
		}
		if !improved {
			// No step lowers SSE: a minimum to machine precision, if the
			// gradient is flat there.
			gn := 0.0
			for a := 0; a < np; a++ {
				gn = math.Max(gn, math.Abs(jtr.AtVec(a))/math.Sqrt(math.Max(jtj.At(a, a), 1e-300)))
			}
			res.Converged = gn <= 1e-6*math.Sqrt(math.Max(cur, 1e-300))+1e-12
			if !res.Converged {
				res.Reason = "no step lowers the sum of squares (a ridge or a bound)"
			}
			break
		}
	}
	if res.Iter > maxIter {
		res.Iter = maxIter
		res.Reason = "iteration limit reached"
	}
	res.SSE = cur
	build(p)
	if n > np {
		var c mat.Cholesky
		if c.Factorize(jtj) {
			var inv mat.SymDense
			if c.InverseTo(&inv) == nil {
				inv.ScaleSym(cur/float64(n-np), &inv)
				res.Cov = &inv
			}
		}
	}
	return res
}
