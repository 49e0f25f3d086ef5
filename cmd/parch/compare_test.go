package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// Issue 11: invented runs of a known D(T) (the simulator, Arrhenius with
// Ea = 35 kJ/mol, an invented value) are recovered by parch compare: each
// D within 5 %, Ea within 8 %; replicates are grouped; the study folder
// holds the plots.
func TestCompareRecoversArrhenius(t *testing.T) {
	dir := t.TempDir()
	const ea, r = 35000.0, 8.314462618
	d0 := 5e-10 * math.Exp(ea/(r*333.15)) // 5e-10 m²/s at 60 °C
	dAt := func(c float64) float64 { return d0 * math.Exp(-ea/(r*(c+273.15))) }
	runs := []struct {
		file string
		temp float64
		seed string
	}{{"r50.csv", 50, "1"}, {"r60a.csv", 60, "2"}, {"r60b.csv", 60, "3"}, {"r70.csv", 70, "4"}}
	args := []string{"compare", "--format", "json", "--initial-moisture", "86.5", "--target", "18", "--thickness", "6", "--faces", "2", "--equilibrium", "0.05"}
	for _, run := range runs {
		// The air temperature comes from each run's air channel.
		if _, stderr, code := parch(t, dir, "simulate", "--out", run.file, "--seed", run.seed, "--hours", "20",
			"--air-temp", strconv.FormatFloat(run.temp, 'f', -1, 64),
			"--diffusivity", strconv.FormatFloat(dAt(run.temp), 'g', 6, 64)); code != 0 {
			t.Fatal(stderr)
		}
	}
	for _, run := range runs {
		args = append(args, run.file)
	}
	out, stderr, code := parch(t, dir, append(args, "--out", "study")...)
	if code != 0 {
		t.Fatalf("compare: %d %s", code, stderr)
	}
	var st struct {
		Runs []struct {
			File     string  `json:"file"`
			AirTempC float64 `json:"air_temp_c"`
			Deff     float64 `json:"deff_m2_per_s"`
			Target   float64 `json:"time_to_target_h"`
		} `json:"runs"`
		Groups []struct {
			AirTempC float64  `json:"air_temp_c"`
			Runs     []string `json:"runs"`
			Time     struct {
				Mean float64 `json:"mean"`
				N    int     `json:"n"`
			} `json:"time_to_target_h"`
		} `json:"groups"`
		Arrhenius *struct {
			Ea, EaSE, R2 float64
			EaKJ         float64 `json:"ea_kj_per_mol"`
			D0           float64 `json:"d0_m2_per_s"`
		} `json:"arrhenius"`
	}
	if err := json.Unmarshal([]byte(out), &st); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	for i, run := range st.Runs {
		want := dAt(runs[i].temp)
		if math.Abs(run.Deff-want)/want > 0.05 || math.Abs(run.AirTempC-runs[i].temp) > 0.3 {
			t.Errorf("%s: D %.4g, want %.4g (within 5 %%), air %v", run.File, run.Deff, want, run.AirTempC)
		}
	}
	if st.Arrhenius == nil || math.Abs(st.Arrhenius.EaKJ-35)/35 > 0.08 {
		t.Fatalf("Arrhenius %+v, want Ea 35 kJ/mol within 8 %%", st.Arrhenius)
	}
	t.Logf("Ea %.2f kJ/mol (35 invented), D0 %.3g (%.3g)", st.Arrhenius.EaKJ, st.Arrhenius.D0, d0)
	if len(st.Groups) != 3 || st.Groups[1].Time.N != 2 {
		t.Errorf("groups %+v, want 50, 60 (2 replicates), 70 °C", st.Groups)
	}
	for _, f := range []string{"study.json", "study.md", "moisture_ratio_all.png", "rate_vs_moisture_all.svg", "arrhenius.png", "replicates.png"} {
		if _, err := os.Stat(filepath.Join(dir, "study", f)); err != nil {
			t.Errorf("study folder lacks %s", f)
		}
	}
	// Text output, and the bad inputs.
	text, _, code := parch(t, dir, append(args[:1], append(args[3:], "--out", "")...)...)
	if code != 0 || !strings.Contains(text, "Arrhenius, Deff: Ea =") || !strings.Contains(text, "Cautions") {
		t.Errorf("text: %d\n%s", code, text)
	}
	for _, tc := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"compare", "r50.csv"}, 2, "2 or more runs"},
		{[]string{"compare", "r50.csv", "r60a.csv", "--label", "nope.csv=x"}, 2, "not one of the files"},
		{[]string{"compare", "r50.csv", "r60a.csv", "--out", "study", "--initial-moisture", "86.5"}, 1, "exists"},
	} {
		_, stderr, code := parch(t, dir, tc.args...)
		if code != tc.code || !strings.Contains(stderr, tc.want) {
			t.Errorf("%v: exit %d, %q", tc.args, code, stderr)
		}
	}
	// Two temperatures only: no fit, and the reason; a --temperature that
	// contradicts a run's own air channel is not used, and said.
	out, _, _ = parch(t, dir, "compare", "--format", "json", "--initial-moisture", "86.5", "--thickness", "6", "--temperature", "r50.csv=80", "r50.csv", "r60a.csv")
	if !strings.Contains(out, "3 or more distinct air temperatures") || !strings.Contains(out, "--temperature 80 °C not used") {
		t.Errorf("two temperatures: %s", out)
	}
}
