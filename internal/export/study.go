package export

import (
	"encoding/json"
	"fmt"
	"image/color"
	"io"
	"math"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"parch/internal/report"
	"parch/internal/safetext"
	"parch/internal/study"
)

// Study folder files.
const (
	FileStudyJSON   = "study.json"
	FileStudyReport = "study.md"
	PlotStudyMR     = "moisture_ratio_all"
	PlotStudyRate   = "rate_vs_moisture_all"
	PlotStudyArr    = "arrhenius"
	PlotStudyGroups = "replicates"
)

// palette tells runs apart in the study plots (and by dash, not colour
// alone).
var palette = []color.Color{blue, red, green, color.RGBA{R: 150, G: 90, B: 10, A: 255},
	color.RGBA{R: 120, G: 50, B: 160, A: 255}, color.RGBA{R: 20, G: 140, B: 150, A: 255}, black}

// WriteStudy writes a study folder: study.json, study.md and the plots. An
// existing folder is refused unless force.
func WriteStudy(dir string, force bool, st *study.Study, runs []study.Run) error {
	if err := makeFolder(dir, force); err != nil {
		return err
	}
	if err := writeFile(filepath.Join(dir, FileStudyJSON), func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(st)
	}); err != nil {
		return err
	}
	plots := []struct {
		name string
		make func() (*plot.Plot, error)
	}{
		{PlotStudyMR, func() (*plot.Plot, error) { return studyCurves(runs, false) }},
		{PlotStudyRate, func() (*plot.Plot, error) { return studyCurves(runs, true) }},
		{PlotStudyArr, func() (*plot.Plot, error) { return arrheniusPlot(st) }},
		{PlotStudyGroups, func() (*plot.Plot, error) { return groupsPlot(st) }},
	}
	var drawn []string
	for _, pl := range plots {
		p, err := pl.make()
		if err != nil {
			return fmt.Errorf("plot %s: %w", pl.name, err)
		}
		if p == nil {
			continue
		}
		if err := savePlot(dir, pl.name, p); err != nil {
			return err
		}
		drawn = append(drawn, pl.name)
	}
	return writeFile(filepath.Join(dir, FileStudyReport), func(w io.Writer) error { return studyMarkdown(w, st, drawn) })
}

func runName(r study.Run) string {
	name := filepath.Base(r.File)
	if r.Label != "" {
		name = r.Label
	}
	if !math.IsNaN(r.AirTempC) {
		name += fmt.Sprintf(" (%.0f °C)", r.AirTempC)
	}
	return name
}

// studyCurves is the moisture ratio against time of every run, or the
// drying rate against moisture (the characteristic curves).
func studyCurves(runs []study.Run, rate bool) (*plot.Plot, error) {
	p := newPlot("Moisture ratio of every run", "time (h)", "moisture ratio")
	if rate {
		p = newPlot("Drying rate against moisture, every run", "moisture (kg water/kg solids)", "drying rate (1/h, dry basis)")
	}
	n := 0
	for i, r := range runs {
		if r.Res == nil {
			continue
		}
		pts := r.Res.Points
		var xy plotter.XYs
		for j := range pts.Reject {
			if pts.Reject[j] != 0 || j >= len(r.TimeH) {
				continue
			}
			x, y := r.TimeH[j], pts.MR(j)
			if rate {
				x, y = pts.X(j), pts.RateDB(j)
			}
			if !math.IsNaN(x) && !math.IsNaN(y) && !math.IsInf(x, 0) && !math.IsInf(y, 0) {
				xy = append(xy, plotter.XY{X: x, Y: y})
			}
		}
		xy = thin(xy, maxPlotPoints)
		if len(xy) < 2 {
			continue
		}
		l, err := line(xy, palette[i%len(palette)], i >= len(palette)/2)
		if err != nil {
			return nil, err
		}
		p.Add(l)
		p.Legend.Add(runName(r), l)
		n++
	}
	if n == 0 {
		return nil, nil
	}
	return p, nil
}

// thin keeps at most max points, evenly spaced by index.
func thin(xy plotter.XYs, max int) plotter.XYs {
	if len(xy) <= max {
		return xy
	}
	out := make(plotter.XYs, 0, max)
	for i := 0; i < max; i++ {
		out = append(out, xy[i*len(xy)/max])
	}
	return out
}

// arrheniusPlot is ln Deff against 1/T with the fit.
func arrheniusPlot(st *study.Study) (*plot.Plot, error) {
	fits := []*study.ArrheniusOut{st.Arrhenius}
	if st.Arrhenius == nil {
		fits = st.ByLabel
	}
	p := newPlot("Arrhenius: ln Deff against 1/T", "1000/T (1/K)", "ln Deff (m²/s)")
	n := 0
	for i, a := range fits {
		if a == nil || a.Fit() == nil {
			continue
		}
		f := a.Fit()
		var xy, fit plotter.XYs
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, pt := range f.Points {
			x := 1000 / (pt.AirTempC + 273.15)
			xy = append(xy, plotter.XY{X: x, Y: math.Log(pt.Value)})
			lo, hi = math.Min(lo, pt.AirTempC), math.Max(hi, pt.AirTempC)
		}
		for k := 0; k <= 10; k++ {
			tc := lo + (hi-lo)*float64(k)/10
			fit = append(fit, plotter.XY{X: 1000 / (tc + 273.15), Y: math.Log(f.At(tc))})
		}
		c := palette[i%len(palette)]
		d, err := dots(xy, c, 3)
		if err != nil {
			return nil, err
		}
		l, err := line(fit, c, true)
		if err != nil {
			return nil, err
		}
		p.Add(d, l)
		name := fmt.Sprintf("Ea %.1f ± %.1f kJ/mol", f.EaKJ, f.EaSEKJ)
		if a.Label != "" {
			name = a.Label + ": " + name
		}
		p.Legend.Add(name, d, l)
		n++
	}
	if n == 0 {
		return nil, nil
	}
	return p, nil
}

// groupsPlot is each replicate group's mean time to target with its
// standard deviation.
func groupsPlot(st *study.Study) (*plot.Plot, error) {
	p := newPlot("Replicates: time to target, mean ± SD", "air temperature (°C)", "time to target (h)")
	var xy plotter.XYs
	var bars plotter.XYs
	for _, g := range st.Groups {
		m, sd := float64(g.TimeToTargetH.Mean), float64(g.TimeToTargetH.SD)
		if math.IsNaN(m) || math.IsNaN(float64(g.AirTempC)) {
			continue
		}
		xy = append(xy, plotter.XY{X: float64(g.AirTempC), Y: m})
		if !math.IsNaN(sd) {
			bars = append(bars, plotter.XY{X: float64(g.AirTempC), Y: sd})
		}
	}
	if len(xy) == 0 {
		return nil, nil
	}
	d, err := dots(xy, blue, 4)
	if err != nil {
		return nil, err
	}
	p.Add(d)
	for _, b := range bars {
		for _, g := range xy {
			if g.X == b.X {
				l, err := line(plotter.XYs{{X: b.X, Y: g.Y - b.Y}, {X: b.X, Y: g.Y + b.Y}}, blue, false)
				if err != nil {
					return nil, err
				}
				l.Width = vg.Points(1)
				p.Add(l)
			}
		}
	}
	p.Legend.Add("mean (bars: ± 1 SD of the replicates)", d)
	return p, nil
}

// StudyText is the study as text.
func StudyText(w io.Writer, st *study.Study) error {
	var b strings.Builder
	p := func(f string, a ...any) { fmt.Fprintf(&b, f, a...) }
	v := func(x report.Num, f string) string {
		if math.IsNaN(float64(x)) {
			return "—"
		}
		return fmt.Sprintf(f, float64(x))
	}
	p("Runs\n  %-28s %-8s %8s %10s %11s %9s  %s\n", "file", "label", "air °C", "X0 (db)", "target (h)", "Deff", "best model")
	for _, r := range st.Runs {
		best := "—"
		if r.BestModel != nil {
			best = *r.BestModel
		}
		p("  %-28s %-8s %8s %10s %11s %9s  %s", clip(filepath.Base(r.File), 28), clip(r.Label, 8), v(r.AirTempC, "%.1f"), v(r.InitialMoistureDB, "%.3f"),
			v(r.TimeToTargetH, "%.2f"), v(r.DeffM2PerS, "%.3g"), best)
		if r.Excluded != "" {
			p("  (not in the fits: %s)", r.Excluded)
		}
		p("\n")
	}
	p("\nReplicates (same label, air within %.1f °C)\n", study.ReplicateTolC)
	for _, g := range st.Groups {
		label := g.Label
		if label == "" {
			label = "(all)"
		}
		p("  %-8s %6s °C  n=%d  time to target %s ± %s h  Deff %s ± %s m²/s\n", clip(label, 8), v(g.AirTempC, "%.1f"), len(g.Runs),
			v(g.TimeToTargetH.Mean, "%.2f"), v(g.TimeToTargetH.SD, "%.2f"), v(g.DeffM2PerS.Mean, "%.3g"), v(g.DeffM2PerS.SD, "%.2g"))
	}
	arr := func(name string, a *study.ArrheniusOut) {
		if a == nil {
			return
		}
		unit := map[string]string{"deff_m2_per_s": " m²/s", "lewis_k_per_h": " 1/h"}[a.Parameter]
		p("\n%s%s: Ea = %s ± %s kJ/mol, pre-exponential %s%s, R² %s, %d runs%s\n", name, map[bool]string{true: " (" + a.Label + ")", false: ""}[a.Label != ""],
			v(a.EaKJ, "%.2f"), v(a.EaSEKJ, "%.2f"), v(a.P0, "%.3g"), unit, v(a.R2, "%.4f"), len(a.Points), map[bool]string{true: ", weighted by their standard errors", false: ""}[a.Weighted])
	}
	arr("Arrhenius, Deff", st.Arrhenius)
	arr("Arrhenius, Lewis k", st.ArrK)
	for _, a := range st.ByLabel {
		arr("Arrhenius, Deff", a)
	}
	if len(st.Warnings) > 0 {
		p("\nWarnings\n")
		for _, wn := range st.Warnings {
			p("  - %s\n", safetext.Terminal(wn))
		}
	}
	p("\nCautions\n")
	for _, c := range report.Cautions {
		p("  - %s\n", c)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func clip(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// studyMarkdown is study.md: each run's setup and figures, the replicate
// and Arrhenius tables, the plots, the cautions.
func studyMarkdown(w io.Writer, st *study.Study, plots []string) error {
	var b strings.Builder
	b.WriteString("# Study of several drying runs\n\nEach run is analysed alone with its own setup (as `parch report` does), then the runs are put side by side. Replicates are runs of one label within ")
	fmt.Fprintf(&b, "%.1f °C of air temperature. The temperature dependence is fitted as ln P = ln P0 − Ea/(R·T) (Arrhenius 1889) by least squares, weighted by each run's standard error when all have one; R = %.6f J/(mol·K).\n\n", study.ReplicateTolC, study.GasConstant)
	b.WriteString("```\n")
	if err := StudyText(&b, st); err != nil {
		return err
	}
	b.WriteString("```\n\n## Setup of each run\n\n| run | setup |\n| --- | --- |\n")
	for _, r := range st.Runs {
		var parts []string
		for _, k := range []string{report.KeyInitialMoistureWB, report.KeyDryMass, report.KeyTargetWB, report.KeyTare, report.KeyEquilibriumDB, report.KeyThickness, report.KeyFaces} {
			if v, ok := r.Setup[k]; ok && v != nil && !isNaNNum(v) {
				parts = append(parts, fmt.Sprintf("%s %v", k, v))
			}
		}
		fmt.Fprintf(&b, "| %s | %s (air %s, from %s) |\n", mdEscape(filepath.Base(r.File)), mdEscape(strings.Join(parts, ", ")),
			strings.TrimSpace(fmt.Sprintf("%.1f °C", float64(r.AirTempC))), mdEscape(r.AirTempFrom))
	}
	b.WriteString("\n## Plots\n\n")
	titles := map[string]string{PlotStudyMR: "Moisture ratio against time, every run", PlotStudyRate: "Drying rate against moisture (the characteristic curves)",
		PlotStudyArr: "ln Deff against 1/T with the Arrhenius fit", PlotStudyGroups: "Replicate means with their standard deviations"}
	for _, name := range plots {
		fmt.Fprintf(&b, "![%s](%s.png)\n\n*%s* (also as [SVG](%s.svg)).\n\n", titles[name], name, titles[name], name)
	}
	b.WriteString("## Files\n\n- `study.json`: the figures for programs (`parch compare --format json`).\n")
	_, err := io.WriteString(w, b.String())
	return err
}

func isNaNNum(v any) bool {
	n, ok := v.(report.Num)
	return ok && math.IsNaN(float64(n))
}
