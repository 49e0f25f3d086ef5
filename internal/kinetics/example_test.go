package kinetics_test

import (
	"fmt"

	"parch/internal/kinetics"
)

// Apple slices at 86.67 % water (USDA SR Legacy, raw, without skin): a
// 243.7 g tray load dried to 18 % wet basis weighs 39.62 g.
func ExampleMassAtMoisture() {
	solids := 243.7 * (1 - 0.8667)
	fmt.Printf("%.2f g\n", kinetics.MassAtMoisture(solids, 0.18))
	// Output: 39.62 g
}

// Crank's plane sheet: the mean moisture ratio at Fo = D t / L² = 0.5.
func ExamplePlaneSheetMR() {
	fmt.Printf("%.6f\n", kinetics.PlaneSheetMR(0.5))
	// Output: 0.236050
}

// Fitting Page's model to a short moisture-ratio curve (t in hours).
func ExampleFitModel() {
	t := []float64{0, 1, 2, 3, 4, 5, 6}
	mr := []float64{1, 0.62, 0.39, 0.25, 0.16, 0.1, 0.065}
	f, err := kinetics.FitModel(kinetics.ModelByName("page"), t, mr)
	if err != nil {
		panic(err)
	}
	fmt.Printf("k = %.3f, n = %.3f, converged %v\n", f.Params["k"], f.Params["n"], f.Converged)
	// Output: k = 0.478, n = 0.972, converged true
}
