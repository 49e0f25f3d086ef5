package study

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// Akoy (2014), Int. Food Res. J. 21(5):1911-1917, abstract (open access):
// mango slices, 3 mm, 0.5 m/s, Deff from 4.97e-10 m²/s at 60 °C to
// 10.83e-10 m²/s at 80 °C, Ea = 37.99 kJ/mol from the three temperatures.
// The 70 °C value is in the paper's table, which could not be read here;
// the two end values alone give Ea within 1 % of the published figure, and
// a mid value on their line changes nothing.
func TestArrheniusAkoy2014Mango(t *testing.T) {
	d60, d80 := 4.97e-10, 10.83e-10
	mid := math.Sqrt(d60 * d80) // on the line through the ends (not the paper's value)
	f, err := FitArrhenius("deff_m2_per_s", []Point{{AirTempC: 60, Value: d60}, {AirTempC: 70, Value: mid}, {AirTempC: 80, Value: d80}})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(f.EaKJ-37.99)/37.99 > 0.01 {
		t.Errorf("Ea = %.2f kJ/mol, published 37.99", f.EaKJ)
	}
}

// Against a general-purpose least-squares routine (gonum's
// stat.LinearRegression, weighted): the same slope and intercept.
func TestArrheniusAgreesWithGonum(t *testing.T) {
	pts := []Point{
		{AirTempC: 50, Value: 3.1e-10, StdErr: 0.2e-10},
		{AirTempC: 55, Value: 4.2e-10, StdErr: 0.1e-10},
		{AirTempC: 60, Value: 4.9e-10, StdErr: 0.3e-10},
		{AirTempC: 70, Value: 7.8e-10, StdErr: 0.2e-10},
	} // invented values
	f, err := FitArrhenius("deff_m2_per_s", pts)
	if err != nil {
		t.Fatal(err)
	}
	var x, y, w []float64
	for _, p := range pts {
		x = append(x, 1/(p.AirTempC+273.15))
		y = append(y, math.Log(p.Value))
		w = append(w, 1/math.Pow(p.StdErr/p.Value, 2))
	}
	alpha, beta := stat.LinearRegression(x, y, w, false)
	if ea := -beta * GasConstant / 1000; math.Abs(ea-f.EaKJ) > 1e-9*math.Abs(ea) || math.Abs(math.Exp(alpha)-f.P0) > 1e-9*f.P0 {
		t.Errorf("Ea %.6f vs gonum %.6f; P0 %g vs %g", f.EaKJ, ea, f.P0, math.Exp(alpha))
	}
	if r2 := stat.RSquared(x, y, w, alpha, beta); math.Abs(r2-f.R2) > 1e-9 {
		t.Errorf("R² %v vs gonum %v", f.R2, r2)
	}
	if !f.Weighted || !(f.EaSEKJ > 0) {
		t.Errorf("weighted %v, SE %v", f.Weighted, f.EaSEKJ)
	}
}

func TestArrheniusNeedsThreeTemperatures(t *testing.T) {
	_, err := FitArrhenius("deff_m2_per_s", []Point{{AirTempC: 60, Value: 1e-9}, {AirTempC: 60.02, Value: 1.1e-9}, {AirTempC: 70, Value: 2e-9}})
	if err == nil {
		t.Error("two temperatures fitted")
	}
}
