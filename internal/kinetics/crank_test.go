package kinetics

import (
	"math"
	"testing"
)

func TestPlaneSheetMR(t *testing.T) {
	tests := []struct {
		name string
		fo   float64
		want float64
		tol  float64
	}{
		// Reference values quoted in the issue as Crank's series evaluated to
		// convergence for a sheet of half-thickness L, Fo = D t / L².
		{"Fo 0.2", 0.2, 0.495912, 1e-6},
		{"Fo 0.5", 0.5, 0.236050, 1e-6},
		{"Fo 1.0", 1.0, 0.068740, 1e-6},
		// Crank 1975, ch. 4: half the moisture is gone at D t / l² = 0.049 for
		// the full thickness l = 2L, i.e. Fo = 4 × 0.049 = 0.196 (three figures).
		{"half time", 4 * 0.049, 0.5, 2e-3},
		{"start", 0, 1, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := PlaneSheetMR(tc.fo); math.Abs(got-tc.want) > tc.tol {
				t.Errorf("PlaneSheetMR(%v) = %.7f, want %.6f ± %g", tc.fo, got, tc.want, tc.tol)
			}
		})
	}
}

// The two series must meet where the code switches between them.
func TestPlaneSheetSeriesAgree(t *testing.T) {
	for _, fo := range []float64{0.02, 0.05, 0.09, 0.0999} {
		short := PlaneSheetMR(fo)
		long := 0.0
		for n := 0; n < 20000; n++ {
			k := float64(2*n + 1)
			long += 8 / (k * k * math.Pi * math.Pi) * math.Exp(-k*k*math.Pi*math.Pi*fo/4)
		}
		if math.Abs(short-long) > 1e-9 {
			t.Errorf("Fo %v: erfc series %.12f, exponential series %.12f", fo, short, long)
		}
	}
}

func TestPlaneSheetFo(t *testing.T) {
	for _, fo := range []float64{0.001, 0.05, 0.3, 2} {
		if got := PlaneSheetFo(PlaneSheetMR(fo)); math.Abs(got-fo) > 1e-9*math.Max(fo, 1e-3) {
			t.Errorf("PlaneSheetFo(PlaneSheetMR(%v)) = %v", fo, got)
		}
	}
}
