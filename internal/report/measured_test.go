package report

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"sort"
	"testing"

	"parch/internal/kinetics"
)

// measuredRun is one drying curve from outside the project
// (testdata/measured: each file's source is named in its README.md).
type measuredRun struct {
	file, source, product string
}

func measuredRuns(t *testing.T) []measuredRun {
	t.Helper()
	dir := filepath.Join("..", "..", "testdata", "measured")
	f, err := os.Open(filepath.Join(dir, "index.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out []measuredRun
	for _, r := range rows[1:] {
		out = append(out, measuredRun{file: filepath.Join(dir, r[0]), source: r[1], product: r[2]})
	}
	return out
}

// crossing is when a measured curve first got down to level (linear
// between the readings either side); NaN if it never did.
func crossing(t, x []float64, level float64) float64 {
	for i := 1; i < len(x); i++ {
		if x[i] <= level && x[i-1] > level {
			return t[i-1] + (t[i]-t[i-1])*(x[i-1]-level)/(x[i-1]-x[i])
		}
	}
	return math.NaN()
}

// lnLine is the spreadsheet habit the projection has to beat: a straight
// line through ln X against time over the readings so far, extended to the
// target.
func lnLine(t, x []float64, cut, level float64) float64 {
	var st, sy, stt, sty, n float64
	for i := range t {
		if t[i] <= cut && x[i] > 0 {
			l := math.Log(x[i])
			st, sy, stt, sty, n = st+t[i], sy+l, stt+t[i]*t[i], sty+t[i]*l, n+1
		}
	}
	b := (n*sty - st*sy) / (n*stt - st*st)
	a := (sy - b*st) / n
	if !(b < 0) {
		return math.Inf(1)
	}
	return (math.Log(level) - a) / b
}

type cutResult struct {
	run             string
	frac            float64
	err, base, refE float64 // relative errors of the total time to target
	lo, hi          float64 // the range's ends, as relative errors
	held            bool
	wrongLow        bool // the low end was later than the truth
	refHeld         bool // with the reference: the range held
	refWrongLow     bool
	refLo, refHi    float64
}

// backtestMeasured cuts every measured run at fractions of the time it took
// to reach each of a few targets and compares what parch projected then
// with when the run really got there.
func backtestMeasured(t *testing.T) []cutResult {
	runs := measuredRuns(t)
	var out []cutResult
	for _, mr := range runs {
		run, err := Load(mr.file, TableOptionsNone)
		if err != nil {
			t.Fatal(err)
		}
		ts, xs := run.Series.TimeH, run.Series.Value
		// A reference: another run of the same product from the same
		// source, when there is one.
		var ref *kinetics.Reference
		for _, other := range runs {
			if other.file != mr.file && other.product == mr.product && other.source == mr.source {
				if ref, err = LoadReference(other.file); err != nil {
					t.Fatal(err)
				}
				break
			}
		}
		// Targets: free moisture ratios a run reaches well before its
		// end (common practice for thin-layer data: MR 0.2 to 0.05).
		for _, mrT := range []float64{0.2, 0.1, 0.05} {
			level := xs[0] * mrT
			actual := crossing(ts, xs, level)
			if math.IsNaN(actual) || actual > 0.95*ts[len(ts)-1] {
				continue
			}
			for _, frac := range []float64{0.3, 0.4, 0.5, 0.6} {
				cut := frac * actual
				setup := kinetics.NewSetup()
				setup.TargetDB = level
				res, err := kinetics.Analyze(run.Series, setup, kinetics.Options{UntilH: cut})
				if err != nil {
					t.Fatal(err)
				}
				p := res.Projection
				c := cutResult{run: filepath.Base(mr.file), frac: frac,
					err:  (p.TargetH - actual) / actual,
					base: (lnLine(ts, xs, cut, level) - actual) / actual,
					refE: math.NaN()}
				c.held = p.LowH <= actual && actual <= p.HighH
				c.wrongLow = p.LowH > actual
				c.lo, c.hi = (p.LowH-actual)/actual, (p.HighH-actual)/actual
				if ref != nil {
					rres, err := kinetics.Analyze(run.Series, setup, kinetics.Options{UntilH: cut, Reference: ref})
					if err != nil {
						t.Fatal(err)
					}
					rp := rres.Projection
					c.refE = (rp.TargetH - actual) / actual
					c.refHeld, c.refWrongLow = rp.LowH <= actual && actual <= rp.HighH, rp.LowH > actual
					c.refLo, c.refHi = (rp.LowH-actual)/actual, (rp.HighH-actual)/actual
				}
				out = append(out, c)
			}
		}
	}
	return out
}

func quantileAbs(v []float64, q float64) float64 {
	var a []float64
	for _, x := range v {
		if !math.IsNaN(x) {
			a = append(a, math.Abs(x))
		}
	}
	if len(a) == 0 {
		return math.NaN()
	}
	sort.Float64s(a)
	return a[int(math.Round(q*float64(len(a)-1)))]
}

// The projection on measured curves (testdata/measured, sources in its
// README): at 40 % of the time each run took to reach its target, the
// median |error| and 90th percentile; the 80 % range's coverage at 30-60 %;
// bounds on the wrong side of the truth. Thresholds are issue 8's.
func TestProjectionOnMeasuredRuns(t *testing.T) {
	cuts := backtestMeasured(t)
	if len(cuts) == 0 {
		t.Fatal("no measured cut points")
	}
	var at40, base40, ref40 []float64
	held, wrong, refN, refHeld, refWrong := 0, 0, 0, 0, 0
	for _, c := range cuts {
		t.Logf("%-30s at %.0f %%: error %+6.1f %% (range %+6.1f to %+6.1f)  ln-line %+6.1f %%  with reference %+6.1f %%",
			c.run, 100*c.frac, 100*c.err, 100*c.lo, 100*c.hi, 100*c.base, 100*c.refE)
		if c.frac == 0.4 {
			at40, base40, ref40 = append(at40, c.err), append(base40, c.base), append(ref40, c.refE)
		}
		if c.held {
			held++
		}
		if c.wrongLow {
			wrong++
		}
		if !math.IsNaN(c.refE) {
			refN++
			if c.refHeld {
				refHeld++
			}
			if c.refWrongLow {
				refWrong++
			}
			t.Logf("%-30s    with reference: range %+6.1f to %+6.1f", "", 100*c.refLo, 100*c.refHi)
		}
	}
	med, p90 := quantileAbs(at40, 0.5), quantileAbs(at40, 0.9)
	cover := float64(held) / float64(len(cuts))
	t.Logf("at 40 %%: median |error| %.1f %% (ln-line %.1f %%), 90th percentile %.1f %%; with a reference %.1f %%",
		100*med, 100*quantileAbs(base40, 0.5), 100*p90, 100*quantileAbs(ref40, 0.5))
	t.Logf("80 %% range held %d of %d cut points (%.0f %%); %d low ends later than the truth", held, len(cuts), 100*cover, wrong)
	if refN > 0 {
		t.Logf("with a reference: the range held %d of %d (%.0f %%); %d low ends later than the truth", refHeld, refN, 100*float64(refHeld)/float64(refN), refWrong)
		if float64(refHeld) < 0.7*float64(refN) || float64(refWrong) > 2.0/52*float64(refN) {
			t.Errorf("with a reference: the range held %d of %d, %d low ends later than the truth", refHeld, refN, refWrong)
		}
	}
	if med > 0.15 || p90 > 0.35 {
		t.Errorf("at 40 %%: median |error| %.1f %%, 90th percentile %.1f %% (want <= 15 %% and <= 35 %%)", 100*med, 100*p90)
	}
	if cover < 0.7 {
		t.Errorf("the 80 %% range held the truth at %.0f %% of cut points, want >= 70 %%", 100*cover)
	}
	if float64(wrong) > 2.0/52*float64(len(cuts)) {
		t.Errorf("%d of %d low ends later than the truth (at most 2 in 52)", wrong, len(cuts))
	}
	if r := quantileAbs(ref40, 0.5); !math.IsNaN(r) && r > 0.06 {
		t.Errorf("with a reference run of the same product: median |error| %.1f %% at 40 %%, want <= 6 %%", 100*r)
	}
}
