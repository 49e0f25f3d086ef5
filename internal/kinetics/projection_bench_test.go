package kinetics

import (
	"fmt"
	"math"
	"testing"
)

// BenchmarkProjection is the projection's cost each time the dashboard
// recomputes it: binning the kept readings, the back-test over the run so
// far and the combined projection, at n readings of an invented run.
func BenchmarkProjection(b *testing.B) {
	for _, n := range []int{1_000, 10_000, 100_000} {
		t := make([]float64, n)
		x := make([]float64, n)
		keep := make([]bool, n)
		for i := range t {
			t[i] = 8 * float64(i) / float64(n)
			x[i] = 0.05 + 6.4*math.Exp(-0.5*math.Pow(t[i], 1.1))
			keep[i] = true
		}
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				tr := newTrack(t, keep, func(i int) float64 { return x[i] }, 0.05, 6.45, 0.22, nil)
				if p := tr.project(); math.IsNaN(p.TargetH) {
					b.Fatal(p.Why)
				}
			}
		})
	}
}
