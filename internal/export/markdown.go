package export

import (
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"parch/internal/kinetics"
	"parch/internal/report"

	"parch/internal/safetext"
)

// Markdown writes report.md: the run in words, tables and pictures, for a
// reader who does not have parch.
func Markdown(w io.Writer, b *Bundle) error {
	var s strings.Builder
	p := func(format string, a ...any) { fmt.Fprintf(&s, format, a...) }
	sum := b.Summary
	r := b.Res
	v := func(x float64, format string) string {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return "—"
		}
		return fmt.Sprintf(format, x)
	}

	p("# Drying run: %s\n\n", filepath.Base(b.Run.Path))
	if b.Run.Invented {
		p("**Invented data:** this run was made up by parch (the demo or `parch simulate`) to show the tool; it is not a measurement of any product.\n\n")
	}
	p("Made by parch %s from `%s` (%s). Every figure below is computed from the readings in that file and the setup listed here; the readings were not changed. To re-make it, run `parch report %s --out DIR` with the same setup flags.\n\n",
		b.Version, filepath.Base(b.Run.Path), b.Run.Format, filepath.Base(b.Run.Path))

	p("## The run\n\n")
	if !b.Run.Start.IsZero() {
		p("- Started: %s (UTC)\n", b.Run.Start.UTC().Format(time.RFC3339))
	}
	p("- Analysed: %s h", v(r.DurationH, "%.2f"))
	if !math.IsNaN(float64(sum.UntilH)) {
		p(" (only up to %s h, by request)", v(float64(sum.UntilH), "%.2f"))
	}
	p("\n- Readings: %d; left out of the analysis: %d", r.Readings, r.Rejected)
	if len(r.RejectedBy) > 0 {
		var parts []string
		for k, n := range r.RejectedBy {
			parts = append(parts, fmt.Sprintf("%s %d", strings.ReplaceAll(k, "_", " "), n))
		}
		sort.Strings(parts)
		p(" (%s)", strings.Join(parts, ", "))
	}
	p(". They stay in readings.csv, marked.\n")
	if r.MassKnown {
		p("- Balance noise: %s g (standard deviation, from the readings)\n", v(r.NoiseSD, "%.3f"))
	}
	p("\n## Setup\n\n| parameter | value |\n| --- | --- |\n")
	st := b.Setup
	rows := [][2]string{
		{"initial moisture (wet basis)", v(st.InitialMoistureWB, "%.2f %%")},
		{"dry mass left at the end (oven test)", v(st.DryMassG, "%.3f g")},
		{"tare", v(st.TareG, "%.2f g")},
		{"target moisture (wet basis)", v(r.TargetMoistureWBPct, "%.2f %%")},
		{"equilibrium moisture (dry basis)", v(st.EquilibriumDB, "%.3f")},
		{"tray area", v(st.AreaM2, "%.4f m²")},
		{"slice thickness", v(st.ThicknessMM, "%.2f mm")},
		{"drying faces", faces(st.Faces)},
		{"steady weight test", fmt.Sprintf("change under %g %% of the mass over %g h", st.SteadyPct, st.SteadyWindowH)},
	}
	for _, row := range rows {
		p("| %s | %s |\n", row[0], row[1])
	}
	for _, rm := range r.Removed {
		p("| piece removed | %.2f g at %.2f h |\n", rm.MassG, rm.ElapsedH)
	}

	p("\n## Key figures\n\n| figure | value |\n| --- | --- |\n")
	fig := [][2]string{
		{"initial mass", v(r.InitialMassG, "%.2f g")},
		{"dry solids at the start / at the end", v(r.InitialDryMassG, "%.2f g") + " / " + v(r.DryMassG, "%.2f g")},
		{"initial moisture", v(100*kinetics.DryToWet(r.InitialMoistureDB), "%.1f %% wb") + ", " + v(r.InitialMoistureDB, "%.3f db")},
		{"final mass", v(r.FinalMassG, "%.2f g")},
		{"final moisture", v(r.FinalMoistureWBPct, "%.1f %% wb") + ", " + v(r.FinalMoistureDB, "%.3f db")},
		{"target mass", v(r.TargetMassG, "%.2f g")},
		{"target reached", v(r.TargetReachedH, "%.2f h")},
		{"steady weight (end of run)", v(r.EndOfRunH, "%.2f h")},
	}
	for _, row := range fig {
		p("| %s | %s |\n", row[0], row[1])
	}

	p("\n## Drying periods\n\n")
	if cr := r.ConstantRate; cr != nil {
		if cr.Ongoing {
			p("The rate was still constant at the last reading (%s g/h from %s h): the constant-rate period had not ended.\n", v(cr.RateGPerH, "%.2f"), v(cr.StartH, "%.2f"))
		} else {
			p("A constant-rate period from %s h to %s h at %s g/h", v(cr.StartH, "%.2f"), v(cr.EndH, "%.2f"), v(cr.RateGPerH, "%.2f"))
			if b.Setup.AreaM2 > 0 && !math.IsNaN(cr.RateGPerH) {
				p(" (%s kg/(m²·h))", v(cr.RateGPerH/1000/b.Setup.AreaM2, "%.4f"))
			}
			p("; the critical moisture content, where the rate began to fall, was %s kg water/kg solids. After it, the falling-rate period.\n", v(cr.CriticalDB, "%.3f"))
		}
	} else {
		p("No constant-rate period: the drying rate fell from the start (usual for many fruits). The test: the smoothed rate held within 8 %% of its peak while at least a tenth of the water went.\n")
	}

	p("\n## Thin-layer models\n\nFitted to the moisture ratio MR = (X − Xe)/(X0 − Xe) against time in hours by nonlinear least squares (Levenberg–Marquardt, starting values from linearised fits) on %d points", r.FitPoints)
	if r.FitPoints < r.Readings-r.Rejected {
		p(" (readings averaged in equal time bins)")
	}
	p(". RMSE = sqrt(SSE/N); χ² = SSE/(N − p); AIC = N·ln(SSE/N) + 2p. Best: lowest AIC among converged, physical fits.\n\n")
	if len(r.Fits) == 0 {
		p("No models were fitted (see warnings).\n")
	} else {
		p("| model | equation | parameters | R² | RMSE | χ² | AIC | converged |\n| --- | --- | --- | --- | --- | --- | --- | --- |\n")
		for _, f := range r.Fits {
			name := f.Model.Title
			if r.Best == f {
				name = "**" + name + "** (best)"
			}
			var ps []string
			for i, pn := range f.Model.Params {
				se := f.StdErr[pn]
				if math.IsNaN(se) {
					ps = append(ps, fmt.Sprintf("%s = %.5g", pn, f.P[i]))
				} else {
					ps = append(ps, fmt.Sprintf("%s = %.5g ± %.2g", pn, f.P[i], se))
				}
			}
			conv := "yes"
			if !f.Converged {
				conv = "no"
			}
			if f.Degenerate {
				conv += "; " + f.Note
			}
			p("| %s | %s | %s | %.5f | %.5f | %.3g | %.1f | %s |\n", name, equations[f.Model.Name], strings.Join(ps, ", "), f.R2, f.RMSE, f.Chi2, f.AIC, conv)
		}
		p("\nSources: Lewis 1921; Page 1949; Henderson and Pabis 1961; Yagcioglu et al. 1999; Henderson 1974; Midilli, Kucuk and Yapar 2002.\n")
	}

	p("\n## Effective moisture diffusivity\n\n")
	if d := r.Diffusivity; d != nil {
		p("Deff = %s m²/s (standard error %s), fitted with Crank's plane-sheet series (all terms; Crank, *The Mathematics of Diffusion*, 1975, ch. 4) to the moisture ratio from %s h to %s h (%d points), with diffusion length L = %s mm (%s).",
			v(d.DM2PerS, "%.3g"), v(d.StdErr, "%.2g"), v(d.FromH, "%.2f"), v(d.ToH, "%.2f"), d.N, v(1000*b.Setup.HalfThicknessM(), "%.2f"), faces(b.Setup.Faces))
		if d.LagH != 0 {
			p(" The curve is shifted by %.2f h so that it starts with the falling-rate period.", d.LagH)
		}
		p(" Assumptions: diffusion alone controls the falling rate, D is constant, the slice is a uniform plane sheet whose surface is at equilibrium, and it does not shrink. Shrinkage makes this an apparent value.\n")
	} else {
		p("Not computed (see warnings: it needs the slice thickness and the moisture).\n")
	}

	p("\n## Projected time to the target\n\n")
	writeProjection(p, sum)

	p("\n## Notes\n\n")
	if len(b.Run.Notes) == 0 {
		p("None.\n")
	} else {
		p("| elapsed (h) | time (UTC) | kind | text | value |\n| --- | --- | --- | --- | --- |\n")
		for _, n := range b.Run.Notes {
			p("| %s | %s | %s | %s | %s |\n", v(n.ElapsedH, "%.2f"), n.T.UTC().Format("2006-01-02 15:04:05"), mdEscape(strings.ReplaceAll(n.Kind, "_", " ")), mdEscape(n.Text), v(n.Value, "%g"))
		}
	}
	if len(sum.SuspectedRemovals) > 0 {
		p("\nDrops that drying does not explain (not applied; confirm with `--removed ELAPSED=GRAMS`):\n\n")
		for _, sr := range sum.SuspectedRemovals {
			p("- %.2f g at %.2f h\n", float64(sr.MassG), float64(sr.ElapsedH))
		}
	}

	p("\n## Warnings\n\n")
	if len(sum.Warnings) == 0 {
		p("None.\n")
	}
	for _, w := range sum.Warnings {
		p("- %s\n", mdEscape(w))
	}

	p("\n## Plots\n\n")
	for _, pl := range []struct{ file, what string }{
		{PlotMoisture, "Mass (or moisture) against time, with the target, the dry solids and the notes"},
		{PlotRate, "Drying rate against moisture content"},
		{PlotLnMR, "ln(moisture ratio) against time, with the diffusivity fit"},
		{PlotModel, "The best model over the data, residuals below"},
	} {
		p("![%s](%s.png)\n\n*%s* (also as [SVG](%s.svg)).\n\n", pl.what, pl.file, pl.what, pl.file)
	}

	p("## Files\n\n- `readings.csv`: every reading with elapsed time, clock time, mass as read and net of the tare, moisture (wet and dry basis), moisture ratio, drying rate, why it was left out (if it was), and the other channels.\n- `notes.csv`: the notes.\n- `summary.json`: these figures for programs (the same object as `parch report --format json`, with the setup and the parch version).\n\n")

	p("## Cautions\n\n")
	for _, c := range report.Cautions {
		p("- %s\n", c)
	}
	_, err := io.WriteString(w, s.String())
	return err
}

var equations = map[string]string{
	"lewis":           "exp(−k t)",
	"page":            "exp(−k tⁿ)",
	"henderson_pabis": "a exp(−k t)",
	"logarithmic":     "a exp(−k t) + c",
	"two_term":        "a exp(−k0 t) + b exp(−k1 t)",
	"midilli":         "a exp(−k tⁿ) + b t",
}

func faces(f int) string {
	switch f {
	case 1:
		return "1 face (solid tray): L is the whole thickness"
	case 2:
		return "2 faces (mesh): L is half the thickness"
	}
	return "not given: 2 assumed (mesh)"
}

func mdEscape(s string) string {
	return strings.NewReplacer("|", "\\|", `\n`, " ").Replace(safetext.Terminal(s))
}

// writeProjection writes the projection, the methods behind it and how the
// projection moved during the run.
func writeProjection(p func(string, ...any), sum report.Summary) {
	v := func(x report.Num, format string) string {
		f := float64(x)
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return "—"
		}
		return fmt.Sprintf(format, f)
	}
	pr := sum.Projection
	switch {
	case pr == nil:
		p("No projection (a target and the dry solids are needed).\n")
	case pr.Method == kinetics.ProjReached:
		p("The target was reached at %s h.\n", v(pr.TargetH, "%.2f"))
	case math.IsNaN(float64(pr.TargetH)):
		p("No projection at the last reading: %s.\n", pr.Why)
	default:
		p("At the last reading: %s h, %.0f %% range %s to %s h.", v(pr.TargetH, "%.2f"), 100*float64(pr.Level), v(pr.LowH, "%.2f"), v(pr.HighH, "%.2f"))
		if pr.Why != "" {
			p(" %s.", pr.Why)
		}
		p("\n")
	}
	if pr != nil && len(pr.Methods) > 0 {
		p("\nThe projection weighs several methods by how well each did on this run so far: the run is replayed at earlier cut points and each method's projection is checked against the moisture the run then reached (%d checks). The range is taken from the errors the combination itself made in those checks, widened while there are few; its low end is set so that the target comes earlier than it only rarely.\n\n", pr.Checks)
		p("| method | projected (h) | weight | median error of the time left | checks |\n| --- | --- | --- | --- | --- |\n")
		for _, m := range pr.Methods {
			at := v(m.TargetH, "%.2f")
			if m.Never {
				at = "not reached"
			} else if m.Why != "" {
				at = "— (" + m.Why + ")"
			}
			p("| %s | %s | %s | %s | %d |\n", m.Title, at, v(m.Weight, "%.2f"), v(m.BacktestError*100, "%.0f %%"), m.Checks)
		}
		if r := pr.Reference; r != nil {
			p("\nReference run: %s (weight %s, median back-test error %s).", mdEscape(r.File), v(r.Weight, "%.2f"), v(r.BacktestError*100, "%.0f %%"))
			if r.Note != "" {
				p(" %s.", mdEscape(r.Note))
			}
			p("\n")
		}
	}
	if len(sum.History) > 0 {
		p("\nWhat the projection said during the run (each row uses only the readings up to its time), and when the target was really reached:\n\n| at (h) | projected (h) | range (h) | reached (h) | error | range held |\n| --- | --- | --- | --- | --- | --- |\n")
		for _, hp := range sum.History {
			held := "—"
			if hp.Held != nil {
				held = map[bool]string{true: "yes", false: "no"}[*hp.Held]
			}
			if hp.Method == kinetics.ProjReached {
				p("| %s | reached | | %s | | |\n", v(hp.AtH, "%.2f"), v(hp.ActualH, "%.2f"))
				continue
			}
			p("| %s | %s | %s to %s | %s | %s | %s |\n", v(hp.AtH, "%.2f"), v(hp.TargetH, "%.2f"), v(hp.LowH, "%.2f"), v(hp.HighH, "%.2f"),
				v(hp.ActualH, "%.2f"), errText(hp), held)
		}
	}
}

// errText is a history row's error: as a share of the time that was left,
// or in hours in the last tenth of the way, where a share of almost
// nothing means nothing.
func errText(hp report.HistoryOut) string {
	left := float64(hp.ActualH) - float64(hp.AtH)
	switch {
	case math.IsNaN(float64(hp.ErrorH)):
		return "—"
	case left < 0.1*float64(hp.ActualH) || math.IsNaN(float64(hp.ErrorPc)):
		return fmt.Sprintf("%+.2f h", float64(hp.ErrorH))
	}
	return fmt.Sprintf("%+.0f %% of the time left", float64(hp.ErrorPc))
}
