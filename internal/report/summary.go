package report

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"parch/internal/kinetics"

	"parch/internal/safetext"
)

// Num is a number that is written as null when it is NaN or infinite.
type Num float64

// MarshalJSON writes null for values that cannot be computed.
func (n Num) MarshalJSON() ([]byte, error) {
	f := float64(n)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, f, 'g', 10, 64), nil
}

// Summary is the object `parch report --format json` prints. The keys are a
// contract other programs rely on: add, never rename.
type Summary struct {
	Readings            int            `json:"readings"`
	Rejected            int            `json:"rejected"`
	RejectedBy          map[string]int `json:"rejected_by"`
	DurationH           Num            `json:"duration_h"`
	InitialMassG        Num            `json:"initial_mass_g"`
	DryMassG            Num            `json:"dry_mass_g"`
	FinalMassG          Num            `json:"final_mass_g"`
	FinalMoistureWBPct  Num            `json:"final_moisture_wb_pct"`
	FinalMoistureDB     Num            `json:"final_moisture_db"`
	TargetMoistureWBPct Num            `json:"target_moisture_wb_pct"`
	TargetMassG         Num            `json:"target_mass_g"`
	TargetReachedH      Num            `json:"target_reached_h"`
	Projection          *ProjectionOut `json:"projection"`
	ConstantRate        *ConstantOut   `json:"constant_rate"`
	Models              []ModelOut     `json:"models"`
	BestModel           *string        `json:"best_model"`
	RMSEDefinition      string         `json:"rmse_definition"`
	DiffusivityM2PerS   Num            `json:"diffusivity_m2_per_s"`
	Diffusivity         *DiffusionOut  `json:"diffusivity"`
	EndOfRunH           Num            `json:"end_of_run_h"`
	Removed             []MassAt       `json:"removed"`
	SuspectedRemovals   []MassAt       `json:"suspected_removals"`
	Notes               []NoteOut      `json:"notes"`
	Warnings            []string       `json:"warnings"`
	History             []HistoryOut   `json:"projection_history"`

	// Extra context, beyond the contract.
	Input         string   `json:"input"`
	Invented      bool     `json:"invented_data"` // a run parch made up (demo, simulate), not a measurement
	Cautions      []string `json:"cautions"`
	Start         *string  `json:"start"`
	InitialDryG   Num      `json:"initial_dry_mass_g"`
	InitialMoistD Num      `json:"initial_moisture_db"`
	NoiseSDG      Num      `json:"noise_sd_g"`
	UntilH        Num      `json:"until_h"`
	AfterCut      int      `json:"readings_after_cut"` // readings later than until_h, not analysed
}

// ProjectionOut is the projected time to the target.
type ProjectionOut struct {
	TargetH    Num           `json:"target_h"`
	LowH       Num           `json:"low_h"`
	HighH      Num           `json:"high_h"`
	Level      Num           `json:"level"` // the share of outcomes the range is meant to hold
	Method     string        `json:"method"`
	Why        string        `json:"why,omitempty"`
	AsymptoteG Num           `json:"asymptote_g"`
	FromH      Num           `json:"window_from_h"`
	Checks     int           `json:"backtest_checks"`
	Methods    []MethodOut   `json:"methods"`
	Reference  *ReferenceOut `json:"reference,omitempty"`
	// MoreReferences are the further reference runs (--reference repeated).
	MoreReferences []ReferenceOut `json:"more_references,omitempty"`
}

// MethodOut is one projection method: what it says and how far the
// back-test trusts it.
type MethodOut struct {
	Name          string `json:"name"`
	Title         string `json:"title"`
	TargetH       Num    `json:"target_h"` // null when it made no projection or says never
	Never         bool   `json:"never,omitempty"`
	Weight        Num    `json:"weight"`
	BacktestError Num    `json:"backtest_error"` // median |relative error| of the time left
	Checks        int    `json:"backtest_checks"`
	Why           string `json:"why,omitempty"`
}

// ReferenceOut is the reference run's part in the projection.
type ReferenceOut struct {
	File          string `json:"file"`
	TargetH       Num    `json:"target_h"`
	Weight        Num    `json:"weight"`
	BacktestError Num    `json:"backtest_error"`
	LowestMR      Num    `json:"lowest_mr"`
	Note          string `json:"note,omitempty"`
}

// HistoryOut is what the projection said at one moment, and how it turned
// out once the target was reached.
type HistoryOut struct {
	AtH     Num    `json:"at_h"`
	TargetH Num    `json:"target_h"`
	LowH    Num    `json:"low_h"`
	HighH   Num    `json:"high_h"`
	Method  string `json:"method"`
	ActualH Num    `json:"actual_h"`
	ErrorH  Num    `json:"error_h"`   // projected − actual
	ErrorPc Num    `json:"error_pct"` // of the time that was left
	Held    *bool  `json:"held"`      // null until the target is reached
}

// ConstantOut is the constant-rate period.
type ConstantOut struct {
	RateGPerH  Num  `json:"rate_g_per_h"`
	StartsH    Num  `json:"starts_h"`
	EndsH      Num  `json:"ends_h"`
	CriticalDB Num  `json:"critical_moisture_db"`
	Ongoing    bool `json:"ongoing"`
}

// ModelOut is one fitted thin-layer model.
type ModelOut struct {
	Name       string         `json:"name"`
	Params     map[string]Num `json:"params"`
	StdErr     map[string]Num `json:"std_err"`
	R2         Num            `json:"r2"`
	RMSE       Num            `json:"rmse"`
	Chi2       Num            `json:"chi2"`
	AIC        Num            `json:"aic"`
	SSE        Num            `json:"sse"`
	N          int            `json:"n"`
	Converged  bool           `json:"converged"`
	Degenerate bool           `json:"degenerate"`
	Note       string         `json:"note,omitempty"`
}

// DiffusionOut details the diffusivity fit.
type DiffusionOut struct {
	DM2PerS   Num    `json:"d_m2_per_s"`
	StdErr    Num    `json:"std_err_m2_per_s"`
	FromH     Num    `json:"from_h"`
	ToH       Num    `json:"to_h"`
	LagH      Num    `json:"lag_h"`
	LengthM   Num    `json:"diffusion_length_m"`
	Faces     int    `json:"faces"`
	RMSE      Num    `json:"rmse_mr"`
	N         int    `json:"n"`
	Converged bool   `json:"converged"`
	Method    string `json:"method"`
}

// MassAt is a mass at a time.
type MassAt struct {
	ElapsedH Num `json:"elapsed_h"`
	MassG    Num `json:"mass_g"`
}

// NoteOut is a note on the timeline.
type NoteOut struct {
	ElapsedH Num    `json:"elapsed_h"`
	T        string `json:"t"`
	Kind     string `json:"kind"`
	Text     string `json:"text"`
	Value    Num    `json:"value"`
}

// RMSEDefinition says which RMSE parch reports; papers differ.
const RMSEDefinition = "sqrt(SSE/N); chi2 is SSE/(N-p)"

// Build makes the summary of an analysed run.
func Build(run *Run, res *kinetics.Result, setup kinetics.Setup, untilH float64) Summary {
	s := Summary{
		Readings: res.Readings, Rejected: res.Rejected, RejectedBy: res.RejectedBy,
		DurationH: Num(res.DurationH), InitialMassG: Num(res.InitialMassG), DryMassG: Num(res.DryMassG),
		FinalMassG: Num(res.FinalMassG), FinalMoistureWBPct: Num(res.FinalMoistureWBPct), FinalMoistureDB: Num(res.FinalMoistureDB),
		TargetMoistureWBPct: Num(res.TargetMoistureWBPct), TargetMassG: Num(res.TargetMassG), TargetReachedH: Num(res.TargetReachedH),
		DiffusivityM2PerS: Num(math.NaN()), EndOfRunH: Num(res.EndOfRunH), RMSEDefinition: RMSEDefinition,
		Input: run.Path, Invented: run.Invented, Cautions: Cautions, InitialDryG: Num(res.InitialDryMassG), InitialMoistD: Num(res.InitialMoistureDB),
		NoiseSDG: Num(res.NoiseSD), UntilH: Num(untilH), AfterCut: res.AfterCut,
		Models: []ModelOut{}, Removed: []MassAt{}, SuspectedRemovals: []MassAt{}, Notes: []NoteOut{},
		Warnings: append([]string{}, run.Warnings...),
	}
	if !res.MassKnown {
		s.NoiseSDG = Num(math.NaN())
	}
	if !run.Start.IsZero() {
		st := run.Start.Format(time.RFC3339Nano)
		s.Start = &st
	}
	s.Projection = projectionOut(res.Projection, res.MassKnown)
	s.History = historyOut(res.ProjectionHistory())
	if cr := res.ConstantRate; cr != nil {
		s.ConstantRate = &ConstantOut{RateGPerH: Num(cr.RateGPerH), StartsH: Num(cr.StartH), EndsH: Num(cr.EndH), CriticalDB: Num(cr.CriticalDB), Ongoing: cr.Ongoing}
		if cr.Ongoing {
			s.ConstantRate.EndsH = Num(math.NaN())
		}
	} else if res.Readings >= 10 {
		s.Warnings = append(s.Warnings, "no constant-rate period: the drying rate did not hold steady (many fruits have none)")
	}
	for _, f := range res.Fits {
		mo := ModelOut{Name: f.Model.Name, Params: map[string]Num{}, StdErr: map[string]Num{}, R2: Num(f.R2), RMSE: Num(f.RMSE),
			Chi2: Num(f.Chi2), AIC: Num(f.AIC), SSE: Num(f.SSE), N: f.N, Converged: f.Converged, Degenerate: f.Degenerate, Note: f.Note}
		for k, v := range f.Params {
			mo.Params[k] = Num(v)
			mo.StdErr[k] = Num(f.StdErr[k])
		}
		s.Models = append(s.Models, mo)
	}
	if res.Best != nil {
		name := res.Best.Model.Name
		s.BestModel = &name
	} else if len(res.Fits) > 0 {
		s.Warnings = append(s.Warnings, "no best model: no fit both converged and was not degenerate")
	}
	if d := res.Diffusivity; d != nil {
		s.DiffusivityM2PerS = Num(d.DM2PerS)
		faces := setup.Faces
		if faces == 0 {
			faces = 2
		}
		method := "Crank plane-sheet series (all terms), least squares on the moisture ratio"
		if d.LagH != 0 {
			method += ", with a time shift for the falling-rate period after the constant-rate period"
		}
		s.Diffusivity = &DiffusionOut{DM2PerS: Num(d.DM2PerS), StdErr: Num(d.StdErr), FromH: Num(d.FromH), ToH: Num(d.ToH),
			LagH: Num(d.LagH), LengthM: Num(setup.HalfThicknessM()), Faces: faces, RMSE: Num(d.RMSE), N: d.N,
			Converged: d.Converged, Method: method}
	}
	for _, rm := range res.Removed {
		s.Removed = append(s.Removed, MassAt{Num(rm.ElapsedH), Num(rm.MassG)})
	}
	for _, st := range res.SuspectedRemovals {
		s.SuspectedRemovals = append(s.SuspectedRemovals, MassAt{Num(st.ElapsedH), Num(st.MassG)})
		s.Warnings = append(s.Warnings, fmt.Sprintf("a drop of %.2f g at %.2f h that drying does not explain: a piece removed? If so, record it (--removed %s=%.2f) and report again",
			st.MassG, st.ElapsedH, fmtElapsed(st.ElapsedH), st.MassG))
	}
	for _, n := range run.Notes {
		if !math.IsNaN(untilH) && untilH > 0 && n.ElapsedH > untilH {
			continue
		}
		s.Notes = append(s.Notes, NoteOut{ElapsedH: Num(n.ElapsedH), T: n.T.UTC().Format("2006-01-02T15:04:05.000Z07:00"), Kind: n.Kind, Text: n.Text, Value: Num(n.Value)})
	}
	s.Warnings = append(s.Warnings, res.Warnings...)
	return s
}

// projectionOut is the projection as reported; nil when none was tried.
func projectionOut(p kinetics.Projection, massKnown bool) *ProjectionOut {
	if p.Method == kinetics.ProjNone && math.IsNaN(p.TargetH) && len(p.Methods) == 0 && p.Why == "" {
		return nil
	}
	out := &ProjectionOut{TargetH: Num(p.TargetH), LowH: Num(p.LowH), HighH: Num(p.HighH), Level: Num(p.Level), Method: p.Method,
		Why: p.Why, AsymptoteG: Num(p.AsymptoteG), FromH: Num(p.WindowFromH), Checks: p.Checks, Methods: []MethodOut{}}
	if !massKnown {
		out.AsymptoteG = Num(math.NaN())
	}
	for _, m := range p.Methods {
		mo := MethodOut{Name: m.Name, Title: kinetics.MethodTitle(m.Name), TargetH: Num(m.TargetH), Weight: Num(m.Weight),
			BacktestError: Num(m.Error), Checks: m.Checks, Why: m.Disabled}
		if math.IsInf(m.TargetH, 1) {
			mo.Never = true
			mo.Why = "it says the run levels off above the target"
		}
		out.Methods = append(out.Methods, mo)
	}
	for _, r := range p.MoreReferences {
		out.MoreReferences = append(out.MoreReferences, ReferenceOut{File: r.Name, TargetH: Num(r.TargetH), Weight: Num(r.Weight), BacktestError: Num(r.Error),
			LowestMR: Num(r.LowestMR), Note: r.Note})
	}
	if r := p.Reference; r != nil {
		out.Reference = &ReferenceOut{File: r.Name, TargetH: Num(r.TargetH), Weight: Num(r.Weight), BacktestError: Num(r.Error),
			LowestMR: Num(r.LowestMR), Note: r.Note}
	}
	return out
}

// methodMix names the methods that carry most of a combined projection.
func methodMix(pr *ProjectionOut) string {
	ms := append([]MethodOut(nil), pr.Methods...)
	sort.SliceStable(ms, func(i, j int) bool { return ms[i].Weight > ms[j].Weight })
	var parts []string
	for _, m := range ms {
		if len(parts) == 3 || !(m.Weight >= 0.1) {
			break
		}
		parts = append(parts, fmt.Sprintf("%s %.0f %%", m.Title, 100*float64(m.Weight)))
	}
	if len(parts) == 0 {
		return pr.Method
	}
	return "weighted by the back-test: " + strings.Join(parts, ", ")
}

// historyOut is the projection history with its errors.
func historyOut(h []kinetics.HistoryPoint) []HistoryOut {
	out := []HistoryOut{}
	for _, hp := range h {
		ho := HistoryOut{AtH: Num(hp.AtH), TargetH: Num(hp.TargetH), LowH: Num(hp.LowH), HighH: Num(hp.HighH), Method: hp.Method,
			ActualH: Num(hp.ActualH), ErrorH: Num(math.NaN()), ErrorPc: Num(math.NaN())}
		if !math.IsNaN(hp.ActualH) {
			held := hp.Held
			ho.Held = &held
			ho.ErrorH = Num(hp.TargetH - hp.ActualH)
			if left := hp.ActualH - hp.AtH; left > 0 {
				ho.ErrorPc = Num(100 * (hp.TargetH - hp.ActualH) / left)
			}
		}
		out = append(out, ho)
	}
	return out
}

// WriteJSON writes the summary as one indented JSON object.
func WriteJSON(w io.Writer, s Summary) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(s)
}

// fmtElapsed writes hours as a duration flag value like 6h30m.
func fmtElapsed(h float64) string {
	d := time.Duration(h * float64(time.Hour)).Round(time.Second)
	return strings.TrimSuffix(strings.TrimSuffix(d.String(), "0s"), "0m")
}

// Cautions are printed with every report (DOMAIN.md, safety).
var Cautions = []string{
	"Moisture content alone does not make a dried food safe: water activity does (below about 0.6 no microbe grows; most moulds stop near 0.7, a value to check in a food-safety text). Targets are product-specific: follow local food-safety regulation and your plant's food safety plan, and have results judged by a qualified person.",
	"Dryers run hot: hot surfaces and electrical heaters. A balance on a hot dryer drifts: check it with a reference mass.",
}

// WriteText writes a readable summary.
func WriteText(w io.Writer, s Summary) error {
	var b strings.Builder
	p := func(format string, a ...any) { fmt.Fprintf(&b, format, a...) }
	v := func(x Num, format, unit string) string {
		if math.IsNaN(float64(x)) || math.IsInf(float64(x), 0) {
			return "—"
		}
		return fmt.Sprintf(format, float64(x)) + unit
	}
	p("parch report: %s\n", s.Input)
	if s.Invented {
		p("INVENTED DATA: a run parch made up (the demo or parch simulate), not a measurement\n")
	}
	if s.Start != nil {
		p("started %s\n", *s.Start)
	}
	p("\nReadings %d, rejected %d", s.Readings, s.Rejected)
	if len(s.RejectedBy) > 0 {
		var parts []string
		for k, n := range s.RejectedBy {
			parts = append(parts, fmt.Sprintf("%s %d", k, n))
		}
		sort.Strings(parts)
		p(" (%s)", strings.Join(parts, ", "))
	}
	p("; %s analysed", v(s.DurationH, "%.2f", " h"))
	if !math.IsNaN(float64(s.UntilH)) {
		p(" (up to %s; %d later readings left out)", v(s.UntilH, "%.2f", " h"), s.AfterCut)
	}
	p("\n\nMass          initial %s   dry solids %s   final %s\n", v(s.InitialMassG, "%.2f", " g"), v(s.DryMassG, "%.2f", " g"), v(s.FinalMassG, "%.2f", " g"))
	p("Moisture      final %s wet basis, %s dry basis\n", v(s.FinalMoistureWBPct, "%.1f", " %"), v(s.FinalMoistureDB, "%.3f", ""))
	p("Target        %s wet basis = %s; reached at %s\n", v(s.TargetMoistureWBPct, "%.1f", " %"), v(s.TargetMassG, "%.2f", " g"), v(s.TargetReachedH, "%.2f", " h"))
	if pr := s.Projection; pr != nil && pr.Method != kinetics.ProjReached {
		if math.IsNaN(float64(pr.TargetH)) {
			p("Projection    none: %s\n", pr.Why)
		} else {
			p("Projection    %s (%.0f %% range %s to %s), %s\n", v(pr.TargetH, "%.2f", " h"), 100*float64(pr.Level), v(pr.LowH, "%.2f", " h"), v(pr.HighH, "%.2f", " h"), methodMix(pr))
			if pr.Why != "" {
				p("              %s\n", pr.Why)
			}
		}
	}
	if cr := s.ConstantRate; cr != nil {
		p("Constant rate %s from %s to %s; critical moisture %s dry basis\n", v(cr.RateGPerH, "%.2f", " g/h"), v(cr.StartsH, "%.2f", " h"), v(cr.EndsH, "%.2f", " h"), v(cr.CriticalDB, "%.3f", ""))
	} else {
		p("Constant rate none found\n")
	}
	p("End of run    %s (steady weight)\n", v(s.EndOfRunH, "%.2f", " h"))
	if d := s.Diffusivity; d != nil {
		p("Diffusivity   %s m²/s ± %s, %s to %s, L = %s (%d face(s)); apparent (shrinkage not modelled)\n",
			v(d.DM2PerS, "%.3g", ""), v(d.StdErr, "%.1g", ""), v(d.FromH, "%.2f", " h"), v(d.ToH, "%.2f", " h"), v(d.LengthM*1000, "%.2f", " mm"), d.Faces)
	}
	if len(s.Models) > 0 {
		p("\nModel              R²        RMSE      χ²         AIC       parameters\n")
		for _, m := range s.Models {
			var names []string
			for k := range m.Params {
				names = append(names, k)
			}
			sort.Strings(names)
			var ps []string
			for _, k := range names {
				ps = append(ps, fmt.Sprintf("%s=%.5g", k, float64(m.Params[k])))
			}
			mark := " "
			if s.BestModel != nil && *s.BestModel == m.Name {
				mark = "*"
			}
			flag := ""
			if !m.Converged {
				flag = " (not converged)"
			} else if m.Degenerate {
				flag = " (degenerate)"
				if strings.HasPrefix(m.Note, "not physical") {
					flag = " (not physical)"
				}
			}
			p("%s%-17s %-9s %-9s %-10s %-9s %s%s\n", mark, m.Name, v(m.R2, "%.5f", ""), v(m.RMSE, "%.5f", ""), v(m.Chi2, "%.3g", ""), v(m.AIC, "%.1f", ""), strings.Join(ps, " "), flag)
		}
		p("* best by AIC; RMSE = %s; t in hours\n", s.RMSEDefinition)
	}
	if len(s.Removed) > 0 || len(s.SuspectedRemovals) > 0 {
		p("\n")
		for _, r := range s.Removed {
			p("Removed       %s at %s\n", v(r.MassG, "%.2f", " g"), v(r.ElapsedH, "%.2f", " h"))
		}
		for _, r := range s.SuspectedRemovals {
			p("Suspected     %s drop at %s (not applied)\n", v(r.MassG, "%.2f", " g"), v(r.ElapsedH, "%.2f", " h"))
		}
	}
	if len(s.Notes) > 0 {
		p("\nNotes\n")
		for _, n := range s.Notes {
			p("  %8s  %-18s %s\n", v(n.ElapsedH, "%.2f", " h"), safetext.Terminal(n.Kind), truncateNote(safetext.Terminal(n.Text), 60))
		}
	}
	if len(s.Warnings) > 0 {
		p("\nWarnings\n")
		for _, w := range s.Warnings {
			p("  - %s\n", safetext.Terminal(w))
		}
	}
	p("\nCautions\n")
	for _, c := range Cautions {
		p("  - %s\n", c)
	}
	_, err := io.WriteString(w, b.String())
	return err
}
