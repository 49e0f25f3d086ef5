package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Savitzky and Golay 1964 (Anal. Chem. 36:1627), first-derivative tables as
// corrected by Steinier, Termonia and Deltour 1972: with evenly spaced
// points the local-polynomial slope at the middle point is a fixed weighted
// sum of the values.
func TestLocalPolyIsSavitzkyGolay(t *testing.T) {
	tests := []struct {
		name    string
		degree  int
		weights []float64
		norm    float64
	}{
		{"5-point quadratic", 2, []float64{-2, -1, 0, 1, 2}, 10},
		{"7-point cubic", 3, []float64{22, -67, -58, 0, 58, 67, -22}, 252},
		{"7-point quadratic", 2, []float64{-3, -2, -1, 0, 1, 2, 3}, 28},
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			for trial := 0; trial < 20; trial++ {
				n := len(tc.weights)
				tt := make([]float64, n)
				y := make([]float64, n)
				want := 0.0
				for i := range tt {
					tt[i] = float64(i - n/2)
					y[i] = rng.NormFloat64() * 10
					want += tc.weights[i] * y[i] / tc.norm
				}
				_, got, err := LocalPoly(tt, y, 0, tc.degree)
				if err != nil {
					t.Fatal(err)
				}
				if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
					t.Fatalf("slope %.12f, Savitzky–Golay %.12f", got, want)
				}
			}
		})
	}
}

// Uneven spacing and a one-sided window: a quadratic is differentiated
// exactly wherever the point lies.
func TestLocalPolyUnevenOneSided(t *testing.T) {
	tt := []float64{0, 0.1, 0.35, 0.4, 0.9, 1.3, 2}
	y := make([]float64, len(tt))
	for i, x := range tt {
		y[i] = 5 - 3*x + 0.7*x*x
	}
	for _, at := range []float64{2, 0, 1} {
		v, s, err := LocalPoly(tt, y, at, 2)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(s-(-3+1.4*at)) > 1e-9 || math.Abs(v-(5-3*at+0.7*at*at)) > 1e-9 {
			t.Errorf("at %v: value %v slope %v", at, v, s)
		}
	}
}

// Crank 1975, ch. 4: synthetic moisture ratios from the plane-sheet series
// give back the diffusivity they were made with.
func TestFitDiffusivityRecoversD(t *testing.T) {
	const d = 7.3e-10 // m²/s, a typical fruit value (memory; 1e-10..1e-9 per DOMAIN.md)
	const l = 0.0025  // half of a 5 mm slice drying from both faces
	var tt, mr []float64
	for i := 1; i <= 60; i++ {
		h := float64(i) * 0.2
		tt = append(tt, h)
		mr = append(mr, PlaneSheetMR(d*h*3600/(l*l)))
	}
	fit, err := FitDiffusivity(tt, mr, l, false)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(fit.DM2PerS-d)/d > 1e-6 || !fit.Converged {
		t.Fatalf("D = %g (converged %v), want %g", fit.DM2PerS, fit.Converged, d)
	}
	// With a lag (a constant-rate period before), the lag comes back too.
	for i := range tt {
		mr[i] = PlaneSheetMR(d * math.Max(tt[i]-0.8, 0) * 3600 / (l * l))
	}
	fit, err = FitDiffusivity(tt[5:], mr[5:], l, true)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(fit.DM2PerS-d)/d > 1e-5 || math.Abs(fit.LagH-0.8) > 1e-4 {
		t.Fatalf("with lag: D = %g lag %v", fit.DM2PerS, fit.LagH)
	}
}

func TestRateWindowGrowsAsRateFalls(t *testing.T) {
	fast := RateWindow(50, 0.02, 10.0/3600, 0.001, 2)
	slow := RateWindow(0.5, 0.02, 10.0/3600, 0.001, 2)
	if !(slow > fast) {
		t.Errorf("window at 0.5 g/h (%v h) should be wider than at 50 g/h (%v h)", slow, fast)
	}
	// The rate noise at the chosen window is 5 % of the rate.
	h := RateWindow(2, 0.02, 10.0/3600, 0, 100)
	if sd := math.Sqrt(1.5 * 0.02 * 0.02 * (10.0 / 3600) / (h * h * h)); math.Abs(sd-0.1) > 1e-9 {
		t.Errorf("rate sd at the chosen window %v, want 0.1 g/h", sd)
	}
}

func TestMedian(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for n := 1; n < 60; n++ {
		v := make([]float64, n)
		for i := range v {
			v[i] = float64(rng.IntN(10)) // many ties
		}
		s := append([]float64(nil), v...)
		sortFloats(s)
		want := s[n/2]
		if n%2 == 0 {
			want = (s[n/2-1] + s[n/2]) / 2
		}
		if got := median(v); got != want {
			t.Fatalf("median(%v) = %v, want %v", v, got, want)
		}
	}
}

func sortFloats(s []float64) {
	for i := 1; i < len(s); i++ {
		for j := i; j > 0 && s[j] < s[j-1]; j-- {
			s[j], s[j-1] = s[j-1], s[j]
		}
	}
}
