package main

import (
	"errors"
	"fmt"
	"io"
	"time"

	"parch/internal/ingest"
	"parch/internal/kinetics"
	"parch/internal/report"
)

func runReport(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("report", "report FILE [flags]   (FILE: a session log or a CSV/TSV)", stderr)
	var sf setupFlags
	sf.register(fs)
	format := fs.String("format", "text", "output: text or json")
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
	if *format != "text" && *format != "json" {
		return usagef("--format %q: expected text or json", *format)
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
	begin := time.Now()
	run, err := report.Load(pos[0], opt)
	if err != nil {
		return err
	}
	setup, err := sf.build(run)
	if err != nil {
		return err
	}
	res, err := kinetics.Analyze(run.Series, setup, kinetics.Options{UntilH: until})
	if errors.Is(err, kinetics.ErrNoReadings) {
		return fmt.Errorf("%s has no readings to analyse", pos[0])
	}
	if err != nil {
		return err
	}
	sum := report.Build(run, res, setup, until)
	if *format == "json" {
		return report.WriteJSON(stdout, sum)
	}
	if err := report.WriteText(stdout, sum); err != nil {
		return err
	}
	if d := time.Since(begin); d > 2*time.Second {
		fmt.Fprintf(stderr, "analysed %d readings in %s\n", res.Readings, d.Round(time.Millisecond))
	}
	return nil
}
