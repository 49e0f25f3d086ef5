package study

import (
	"math"
	"strings"
	"testing"

	"parch/internal/kinetics"
	"parch/internal/report"
)

func fakeRun(file, label string, tempC, deff, se float64) Run {
	s := report.Summary{InitialMoistD: 6.4, DiffusivityM2PerS: report.Num(deff), TargetReachedH: report.Num(7),
		Diffusivity: &report.DiffusionOut{DM2PerS: report.Num(deff), StdErr: report.Num(se)}}
	res := &kinetics.Result{}
	res.Points.NetG = []float64{100, 90, tempC + deff*1e10} // readings of its own
	return Run{File: file, Label: label, AirTempC: tempC, Sum: s, Res: res, TimeH: []float64{0, 1, 2}}
}

// Bad input of issue 11: fewer than 2 runs; a run without its solids is
// listed and left out; the same run twice is flagged; labels are not
// pooled; replicates that disagree beyond their errors are warned about.
func TestBuildBadInput(t *testing.T) {
	if _, err := Build([]Run{fakeRun("a", "", 60, 5e-10, 1e-12)}); err == nil {
		t.Error("one run made a study")
	}
	noSolids := fakeRun("b", "", 60, math.NaN(), math.NaN())
	noSolids.Sum.InitialMoistD = report.Num(math.NaN())
	same := fakeRun("c", "", 60, 5e-10, 1e-12) // the same readings as a
	st, err := Build([]Run{fakeRun("a", "", 60, 5e-10, 1e-12), noSolids, same, fakeRun("d", "", 60.5, 9e-10, 1e-12)})
	if err != nil {
		t.Fatal(err)
	}
	w := strings.Join(st.Warnings, "|")
	if !strings.Contains(st.Runs[1].Excluded, "no dry mass") {
		t.Errorf("run without solids: %q", st.Runs[1].Excluded)
	}
	if !strings.Contains(w, "same readings") || !strings.Contains(w, "more than their own standard errors") {
		t.Errorf("warnings %q", w)
	}
	st, _ = Build([]Run{fakeRun("a", "fresh-1", 50, 3e-10, 0), fakeRun("b", "blanched-1", 60, 5e-10, 0), fakeRun("c", "fresh-2", 70, 7e-10, 0)})
	if st.Arrhenius != nil || !strings.Contains(strings.Join(st.Warnings, "|"), "not pooled") {
		t.Errorf("labels pooled: %+v %q", st.Arrhenius, st.Warnings)
	}
}
