// Package study puts several runs side by side: replicates, temperatures,
// pretreatments. It takes each run's own analysis (package report) and adds
// what only several runs show: replicate means and scatter, and how the
// diffusivity and the drying constant depend on temperature (Arrhenius).
package study

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"parch/internal/kinetics"
	"parch/internal/report"
)

// Run is one analysed run of the study.
type Run struct {
	File     string
	Label    string
	AirTempC float64 // NaN when not known
	TempFrom string  // where the temperature came from
	Sum      report.Summary
	Setup    map[string]any // the setup used, by the session log's keys
	Res      *kinetics.Result
	TimeH    []float64
}

// Study is the comparison (its JSON keys are a contract).
type Study struct {
	Runs      []RunOut        `json:"runs"`
	Groups    []GroupOut      `json:"groups"`
	Arrhenius *ArrheniusOut   `json:"arrhenius"`
	ArrK      *ArrheniusOut   `json:"arrhenius_k"`
	ByLabel   []*ArrheniusOut `json:"arrhenius_by_label,omitempty"`
	Warnings  []string        `json:"warnings"`
}

// RunOut is one run's line of the study.
type RunOut struct {
	File              string              `json:"file"`
	Label             string              `json:"label"`
	AirTempC          report.Num          `json:"air_temp_c"`
	AirTempFrom       string              `json:"air_temp_from"`
	InitialMoistureDB report.Num          `json:"initial_moisture_db"`
	TimeToTargetH     report.Num          `json:"time_to_target_h"`
	DeffM2PerS        report.Num          `json:"deff_m2_per_s"`
	DeffSE            report.Num          `json:"deff_std_err_m2_per_s"`
	LewisK            report.Num          `json:"lewis_k_per_h"`
	PageK             report.Num          `json:"page_k"`
	PageN             report.Num          `json:"page_n"`
	BestModel         *string             `json:"best_model"`
	Models            []report.ModelOut   `json:"models"`
	ConstantRate      *report.ConstantOut `json:"constant_rate"`
	Setup             map[string]any      `json:"setup"`
	Excluded          string              `json:"excluded_from_fits,omitempty"`
}

// Stat is a mean with its sample standard deviation and count.
type Stat struct {
	Mean report.Num `json:"mean"`
	SD   report.Num `json:"sd"`
	N    int        `json:"n"`
}

// GroupOut is a set of replicates: one label, one temperature.
type GroupOut struct {
	AirTempC      report.Num `json:"air_temp_c"`
	Label         string     `json:"label"`
	Runs          []string   `json:"runs"`
	TimeToTargetH Stat       `json:"time_to_target_h"`
	DeffM2PerS    Stat       `json:"deff_m2_per_s"`
	PageK         Stat       `json:"page_k"`
	PageN         Stat       `json:"page_n"`
}

// ArrheniusOut is an Arrhenius fit as the study reports it.
type ArrheniusOut struct {
	Label     string     `json:"label,omitempty"`
	Parameter string     `json:"parameter"`
	EaKJ      report.Num `json:"ea_kj_per_mol"`
	EaSEKJ    report.Num `json:"ea_se_kj_per_mol"`
	D0        report.Num `json:"d0_m2_per_s,omitempty"`
	P0        report.Num `json:"p0"`
	R2        report.Num `json:"r2"`
	Weighted  bool       `json:"weighted"`
	Points    []PointOut `json:"points"`
	fit       *Arrhenius
}

// PointOut is one run in a fit.
type PointOut struct {
	Label    string     `json:"label"`
	AirTempC report.Num `json:"air_temp_c"`
	Value    report.Num `json:"value"`
}

// Fit is the fit behind the output (nil when none was made).
func (a *ArrheniusOut) Fit() *Arrhenius { return a.fit }

// ReplicateTolC is how close two runs' air temperatures must be to count
// as replicates (a dryer holds its setpoint to about ±1 °C: common practice).
const ReplicateTolC = 1.5

// Prefix is the product part of a label: "blanched-2" and "blanched 3" are
// both "blanched". Runs of different prefixes are not pooled.
func Prefix(label string) string {
	return strings.TrimRight(label, "0123456789-_ .#")
}

// Build compares runs (at least 2).
func Build(runs []Run) (*Study, error) {
	if len(runs) < 2 {
		return nil, fmt.Errorf("a study needs 2 or more runs, got %d", len(runs))
	}
	st := &Study{Warnings: []string{}}
	// Two files with the same readings are one run given twice.
	for i := range runs {
		for j := i + 1; j < len(runs); j++ {
			if sameReadings(runs[i], runs[j]) {
				st.Warnings = append(st.Warnings, fmt.Sprintf("%s and %s hold the same readings: one run given twice? Both are kept; the replicate figures count it twice", runs[i].File, runs[j].File))
			}
		}
	}
	for _, r := range runs {
		st.Runs = append(st.Runs, runOut(r))
	}
	st.Groups = groups(runs, st.Runs)
	for _, g := range st.Groups {
		if w := scatterWarning(g, st.Runs); w != "" {
			st.Warnings = append(st.Warnings, w)
		}
	}
	// Temperature dependence, per product.
	byLabel := map[string][]RunOut{}
	var labels []string
	for _, o := range st.Runs {
		if o.Excluded != "" {
			continue
		}
		p := Prefix(o.Label)
		if _, ok := byLabel[p]; !ok {
			labels = append(labels, p)
		}
		byLabel[p] = append(byLabel[p], o)
	}
	fitOf := func(label string, rs []RunOut, k bool) *ArrheniusOut {
		var pts []Point
		param := "deff_m2_per_s"
		if k {
			param = "lewis_k_per_h"
		}
		for _, o := range rs {
			if k {
				pts = append(pts, Point{Label: o.Label, AirTempC: float64(o.AirTempC), Value: float64(o.LewisK), StdErr: math.NaN()})
			} else {
				pts = append(pts, Point{Label: o.Label, AirTempC: float64(o.AirTempC), Value: float64(o.DeffM2PerS), StdErr: float64(o.DeffSE)})
			}
		}
		f, err := FitArrhenius(param, pts)
		if err != nil {
			what := "diffusivity"
			if k {
				what = "drying constant"
			}
			st.Warnings = append(st.Warnings, fmt.Sprintf("no Arrhenius fit of the %s%s: %v", what, labelled(label), err))
			return nil
		}
		return arrOut(label, f)
	}
	if len(labels) == 1 {
		st.Arrhenius = fitOf("", byLabel[labels[0]], false)
		st.ArrK = fitOf("", byLabel[labels[0]], true)
	} else if len(labels) > 1 {
		sort.Strings(labels)
		st.Warnings = append(st.Warnings, fmt.Sprintf("runs of %d labels (%s) are not pooled: each has its own Arrhenius fit", len(labels), strings.Join(labels, ", ")))
		for _, l := range labels {
			if a := fitOf(l, byLabel[l], false); a != nil {
				st.ByLabel = append(st.ByLabel, a)
			}
		}
	}
	return st, nil
}

func labelled(l string) string {
	if l == "" {
		return ""
	}
	return " of " + l
}

func arrOut(label string, f *Arrhenius) *ArrheniusOut {
	a := &ArrheniusOut{Label: label, Parameter: f.Parameter, EaKJ: report.Num(f.EaKJ), EaSEKJ: report.Num(f.EaSEKJ),
		P0: report.Num(f.P0), R2: report.Num(f.R2), Weighted: f.Weighted, fit: f}
	if f.Parameter == "deff_m2_per_s" {
		a.D0 = report.Num(f.P0)
	}
	for _, p := range f.Points {
		a.Points = append(a.Points, PointOut{Label: p.Label, AirTempC: report.Num(p.AirTempC), Value: report.Num(p.Value)})
	}
	return a
}

func runOut(r Run) RunOut {
	s := r.Sum
	o := RunOut{File: r.File, Label: r.Label, AirTempC: report.Num(r.AirTempC), AirTempFrom: r.TempFrom,
		InitialMoistureDB: s.InitialMoistD, TimeToTargetH: s.TargetReachedH, DeffM2PerS: s.DiffusivityM2PerS,
		DeffSE: report.Num(math.NaN()), LewisK: report.Num(math.NaN()), PageK: report.Num(math.NaN()), PageN: report.Num(math.NaN()),
		BestModel: s.BestModel, Models: s.Models, ConstantRate: s.ConstantRate, Setup: r.Setup}
	if d := s.Diffusivity; d != nil {
		o.DeffSE = d.StdErr
	}
	for _, m := range s.Models {
		if !m.Converged || m.Degenerate {
			continue
		}
		switch m.Name {
		case "lewis":
			o.LewisK = m.Params["k"]
		case "page":
			o.PageK, o.PageN = m.Params["k"], m.Params["n"]
		}
	}
	switch {
	case math.IsNaN(float64(s.InitialMoistD)):
		o.Excluded = "no dry mass or initial moisture: no moisture ratio"
	case math.IsNaN(r.AirTempC):
		o.Excluded = "no air temperature (setup air_temp_c, an air-temperature channel, or --temperature FILE=C)"
	}
	return o
}

// groups gathers replicates: one label prefix, air temperatures within
// ReplicateTolC of the group's first.
func groups(runs []Run, outs []RunOut) []GroupOut {
	idx := make([]int, len(runs))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool {
		ra, rb := runs[idx[a]], runs[idx[b]]
		if pa, pb := Prefix(ra.Label), Prefix(rb.Label); pa != pb {
			return pa < pb
		}
		return ra.AirTempC < rb.AirTempC
	})
	var out []GroupOut
	var cur []int
	flush := func() {
		if len(cur) == 0 {
			return
		}
		g := GroupOut{Label: Prefix(runs[cur[0]].Label)}
		var temps, ttt, deff, pk, pn []float64
		for _, i := range cur {
			o := outs[i]
			g.Runs = append(g.Runs, runs[i].File)
			temps = append(temps, runs[i].AirTempC)
			ttt = append(ttt, float64(o.TimeToTargetH))
			deff = append(deff, float64(o.DeffM2PerS))
			pk = append(pk, float64(o.PageK))
			pn = append(pn, float64(o.PageN))
		}
		g.AirTempC = report.Num(meanSD(temps).Mean)
		g.TimeToTargetH, g.DeffM2PerS, g.PageK, g.PageN = meanSD(ttt), meanSD(deff), meanSD(pk), meanSD(pn)
		out = append(out, g)
		cur = nil
	}
	for _, i := range idx {
		r := runs[i]
		if len(cur) > 0 {
			first := runs[cur[0]]
			same := Prefix(first.Label) == Prefix(r.Label) &&
				(math.IsNaN(first.AirTempC) && math.IsNaN(r.AirTempC) || math.Abs(first.AirTempC-r.AirTempC) <= ReplicateTolC)
			if !same {
				flush()
			}
		}
		cur = append(cur, i)
	}
	flush()
	return out
}

func meanSD(v []float64) Stat {
	var s, n float64
	for _, x := range v {
		if !math.IsNaN(x) {
			s += x
			n++
		}
	}
	st := Stat{Mean: report.Num(math.NaN()), SD: report.Num(math.NaN()), N: int(n)}
	if n == 0 {
		return st
	}
	m := s / n
	st.Mean = report.Num(m)
	if n > 1 {
		var ss float64
		for _, x := range v {
			if !math.IsNaN(x) {
				ss += (x - m) * (x - m)
			}
		}
		st.SD = report.Num(math.Sqrt(ss / (n - 1)))
	}
	return st
}

// scatterWarning says when replicates' diffusivities differ by more than
// their own standard errors explain: a reduced chi-square above 3 (about
// the 95th percentile for 2 to 4 replicates; common practice).
func scatterWarning(g GroupOut, outs []RunOut) string {
	if g.DeffM2PerS.N < 2 {
		return ""
	}
	in := map[string]bool{}
	for _, f := range g.Runs {
		in[f] = true
	}
	m := float64(g.DeffM2PerS.Mean)
	var chi2 float64
	n := 0
	for _, o := range outs {
		d, se := float64(o.DeffM2PerS), float64(o.DeffSE)
		if !in[o.File] || math.IsNaN(d) {
			continue // not in the group, or not fitted
		}
		if !(se > 0) {
			return ""
		}
		chi2 += (d - m) * (d - m) / (se * se)
		n++
	}
	if n < 2 || chi2/float64(n-1) <= 3 {
		return ""
	}
	return fmt.Sprintf("replicates%s at %.1f °C differ in Deff by more than their own standard errors explain (reduced χ² %.1f): check slice thickness, loading and air flow",
		labelled(g.Label), float64(g.AirTempC), chi2/float64(n-1))
}

func sameReadings(a, b Run) bool {
	if a.Res == nil || b.Res == nil || len(a.TimeH) != len(b.TimeH) || len(a.Res.Points.NetG) == 0 || len(a.Res.Points.NetG) != len(b.Res.Points.NetG) {
		return false
	}
	for i := range a.TimeH {
		if a.TimeH[i] != b.TimeH[i] {
			return false
		}
	}
	for i := range a.Res.Points.NetG {
		x, y := a.Res.Points.NetG[i], b.Res.Points.NetG[i]
		if x != y && !(math.IsNaN(x) && math.IsNaN(y)) {
			return false
		}
	}
	return true
}

// AirTempFromChannel is the median of an air-temperature channel after
// the first tenth of the run (the dryer coming up to its setpoint), NaN
// when there is none.
func AirTempFromChannel(timeH []float64, channels map[string][]float32) float64 {
	for _, name := range []string{"air_temp_c", "air_c", "t_air_c", "air_temperature_c", "temp_c", "air_temp"} {
		col, ok := channels[name]
		if !ok || len(col) != len(timeH) || len(timeH) == 0 {
			continue
		}
		t0, t1 := timeH[0], timeH[len(timeH)-1]
		var v []float64
		for i, x := range col {
			if timeH[i] >= t0+0.1*(t1-t0) && !math.IsNaN(float64(x)) {
				v = append(v, float64(x))
			}
		}
		if len(v) > 0 {
			sort.Float64s(v)
			return v[len(v)/2]
		}
	}
	return math.NaN()
}
