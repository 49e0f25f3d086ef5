package main

import (
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"parch/internal/export"
	"parch/internal/ingest"
	"parch/internal/kinetics"
	"parch/internal/report"
)

func runReport(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("report", "report FILE [--out DIR] [flags]   (FILE: a session log or a CSV/TSV)", stderr)
	var sf setupFlags
	sf.register(fs)
	sf.registerAnalysis(fs)
	format := fs.String("format", "text", "output: text, json, or csv (readings.csv to standard output)")
	out := fs.String("out", "", "write the full record into the folder `DIR`: readings.csv, notes.csv, summary.json, report.md, plots")
	force := fs.Bool("force", false, "with --out: write into a folder that exists")
	quiet := fs.Bool("quiet", false, "no progress messages")
	timeCol := fs.String("time-col", "", "CSV: time column (name or 1-based number)")
	massCol := fs.String("mass-col", "", "CSV: mass column (name or 1-based number)")
	timeUnit := fs.String("time-unit", "", "CSV: unit of an elapsed-time column whose header names none: s, min, h")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("give one session log or CSV file, e.g. parch report run.jsonl")
	}
	if *format != "text" && *format != "json" && *format != "csv" {
		return usagef("--format %q: expected text, json or csv", *format)
	}
	if *force && *out == "" {
		return usagef("--force goes with --out DIR")
	}
	opt := ingest.TableOptions{TimeCol: *timeCol, MassCol: *massCol}
	if *timeUnit != "" {
		d, err := ingest.ParseTimeUnit(*timeUnit)
		if err != nil {
			return usagef("--time-unit: %v", err)
		}
		opt.TimeUnit = d
	}
	until, err := sf.untilH()
	if err != nil {
		return err
	}
	progress := func(msg string) {
		if !*quiet {
			fmt.Fprintln(stderr, msg)
		}
	}
	b, err := analyse(pos[0], opt, &sf, until, progress)
	if err != nil {
		return err
	}
	if *out != "" {
		if err := export.Write(*out, *force, b, progress); err != nil {
			return err
		}
		progress("wrote " + *out)
	}
	switch *format {
	case "json":
		return report.WriteJSON(stdout, b.Summary)
	case "csv":
		return export.Readings(stdout, b)
	}
	if *out != "" && *format == "text" && !isTerminal(stdout) {
		return nil
	}
	return report.WriteText(stdout, b.Summary)
}

// analyse loads a run and analyses it; long logs report progress.
func analyse(path string, opt ingest.TableOptions, sf *setupFlags, until float64, progress func(string)) (*export.Bundle, error) {
	begin := time.Now()
	run, err := report.Load(path, opt)
	if err != nil {
		return nil, err
	}
	if n := len(run.Series.TimeH); n > 200_000 {
		progress(fmt.Sprintf("read %d readings in %s; analysing", n, time.Since(begin).Round(time.Millisecond)))
	}
	setup, err := sf.build(run)
	if err != nil {
		return nil, err
	}
	ref, warning, err := sf.loadReference(run.ReferenceFile)
	if err != nil {
		return nil, err
	}
	more, err := sf.moreReferences()
	if err != nil {
		return nil, err
	}
	res, err := kinetics.Analyze(run.Series, setup, kinetics.Options{UntilH: until, Reference: ref, MoreReferences: more})
	if errors.Is(err, kinetics.ErrNoReadings) {
		return nil, fmt.Errorf("%s has no readings to analyse", path)
	}
	if errors.Is(err, kinetics.ErrNothingBeforeCut) {
		return nil, usagef("--until %s: %s has no reading at or before %.4g h (its readings start at %.4g h)",
			sf.until, path, until, minTime(run.Series.TimeH))
	}
	if err != nil {
		return nil, err
	}
	if res.Readings > 0 && res.Rejected == res.Readings {
		var why []string
		for k, n := range res.RejectedBy {
			why = append(why, fmt.Sprintf("%s %d", k, n))
		}
		sort.Strings(why)
		return nil, fmt.Errorf("%s: none of its %d readings is usable (%s)", path, res.Readings, strings.Join(why, ", "))
	}
	if warning != "" {
		res.Warnings = append(res.Warnings, warning)
	}
	if _, inLog := run.Params[report.KeyEquilibriumDB]; !inLog && !sf.given("equilibrium") && res.Diffusivity != nil {
		res.Warnings = append(res.Warnings, "equilibrium moisture not given (--equilibrium X): taken as 0; the moisture ratio, the models and Deff depend on it")
	}
	if !math.IsNaN(until) && res.AfterCut == 0 {
		res.Warnings = append(res.Warnings, fmt.Sprintf("--until %s: no reading is later than that, so nothing was cut", sf.until))
	}
	if d := time.Since(begin); d > 2*time.Second {
		progress(fmt.Sprintf("analysed %d readings in %s", res.Readings, d.Round(time.Millisecond)))
	}
	sum := report.Build(run, res, setup, until)
	return &export.Bundle{Run: run, Res: res, Setup: setup, Summary: sum, Version: version}, nil
}

// isTerminal reports whether w is a terminal (text summaries go there; with
// --out and a pipe, the folder is the output).
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return true
	}
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}

// exportFolder picks a folder named after a session log that does not exist
// yet: run.jsonl -> run-report, run-report-2, ...
func exportFolder(logPath string) string {
	base := strings.TrimSuffix(logPath, filepath.Ext(logPath)) + "-report"
	dir := base
	for i := 2; ; i++ {
		if _, err := os.Stat(dir); os.IsNotExist(err) {
			return dir
		}
		dir = fmt.Sprintf("%s-%d", base, i)
	}
}

func minTime(t []float64) float64 {
	lo := math.Inf(1)
	for _, v := range t {
		lo = math.Min(lo, v)
	}
	return lo
}
