package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strconv"
	"strings"

	"parch/internal/export"
	"parch/internal/kinetics"
	"parch/internal/report"
	"parch/internal/study"
)

// fileValues collects --label FILE=NAME or --temperature FILE=C.
type fileValues map[string]string

func (f *fileValues) String() string { return fmt.Sprint(map[string]string(*f)) }

func (f *fileValues) Set(v string) error {
	file, val, ok := strings.Cut(v, "=")
	if !ok || strings.TrimSpace(file) == "" || strings.TrimSpace(val) == "" {
		return fmt.Errorf("expected FILE=VALUE")
	}
	if *f == nil {
		*f = fileValues{}
	}
	(*f)[filepath.Clean(strings.TrimSpace(file))] = strings.TrimSpace(val)
	return nil
}

func runCompare(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("compare", "compare FILE FILE... [--label FILE=NAME] [--temperature FILE=C] [--out DIR] [flags]", stderr)
	var sf setupFlags
	sf.register(fs)
	var labels, temps fileValues
	fs.Var(&labels, "label", "a run's name, `FILE=NAME` (repeatable); runs whose names differ only by a trailing number are replicates of one product")
	fs.Var(&temps, "temperature", "a run's air temperature, `FILE=C` (°C), for a run whose setup and air channel do not give it")
	format := fs.String("format", "text", "output: text or json")
	out := fs.String("out", "", "write the study into the folder `DIR`: study.json, study.md, plots")
	force := fs.Bool("force", false, "with --out: write into a folder that exists")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) < 2 {
		return usagef("give 2 or more runs (session logs or CSV files), e.g. parch compare run50.jsonl run60.jsonl run70.jsonl")
	}
	if *format != "text" && *format != "json" {
		return usagef("--format %q: expected text or json", *format)
	}
	if *force && *out == "" {
		return usagef("--force goes with --out DIR")
	}
	for f := range labels {
		if !contains(pos, f) {
			return usagef("--label %s: not one of the files compared", f)
		}
	}
	flagParams, err := sf.params()
	if err != nil {
		return err
	}
	var runs []study.Run
	var notes []string
	for _, path := range pos {
		run, err := report.Load(path, report.TableOptionsNone)
		if err != nil {
			return err
		}
		// The file's own setup wins; the flags fill what it lacks.
		setup := kinetics.NewSetup()
		report.ApplyParams(&setup, flagParams)
		report.ApplyParams(&setup, run.Params)
		setup.Removals = run.NoteRemovals()
		if err := setup.Validate(); err != nil {
			return fmt.Errorf("%s: %v", path, err)
		}
		res, err := kinetics.Analyze(run.Series, setup, kinetics.Options{})
		if errors.Is(err, kinetics.ErrNoReadings) {
			return fmt.Errorf("%s has no readings to analyse", path)
		}
		if err != nil {
			return fmt.Errorf("%s: %v", path, err)
		}
		r := study.Run{File: path, Label: labels[filepath.Clean(path)], AirTempC: math.NaN(), Sum: report.Build(run, res, setup, math.NaN()), Setup: export.SetupMap(setup), Res: res, TimeH: run.Series.TimeH}
		channel := study.AirTempFromChannel(run.Series.TimeH, run.Channels)
		switch v, ok := run.Params[report.KeyAirTemp]; {
		case ok:
			r.AirTempC, r.TempFrom = v, "setup"
		case !math.IsNaN(channel):
			r.AirTempC, r.TempFrom = channel, "air channel (median after the first 10 % of the run)"
		default:
			if v, ok := flagParams[report.KeyAirTemp]; ok {
				r.AirTempC, r.TempFrom = v, "--air-temp"
			}
		}
		if t, ok := temps[filepath.Clean(path)]; ok {
			v, err := strconv.ParseFloat(t, 64)
			if err != nil || !(v > -40 && v < 400) {
				return usagef("--temperature %s=%s: expected an air temperature in °C", path, t)
			}
			// The run's own record comes first (its setup, then its air
			// channel); --temperature is for runs that have neither.
			if math.IsNaN(r.AirTempC) || r.TempFrom == "--air-temp" {
				r.AirTempC, r.TempFrom = v, "--temperature"
			} else if math.Abs(v-r.AirTempC) > 1 {
				notes = append(notes, fmt.Sprintf("%s: --temperature %g °C not used: the run's %s says %.1f °C", path, v, r.TempFrom, r.AirTempC))
			}
		}
		runs = append(runs, r)
	}
	st, err := study.Build(runs)
	if err != nil {
		return usagef("%v", err)
	}
	st.Warnings = append(notes, st.Warnings...)
	for _, r := range runs {
		for _, w := range r.Sum.Warnings {
			st.Warnings = append(st.Warnings, filepath.Base(r.File)+": "+w)
		}
	}
	if *out != "" {
		if err := export.WriteStudy(*out, *force, st, runs); err != nil {
			return err
		}
		fmt.Fprintln(stderr, "wrote "+*out)
	}
	if *format == "json" {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		return enc.Encode(st)
	}
	return export.StudyText(stdout, st)
}

func contains(list []string, f string) bool {
	for _, p := range list {
		if filepath.Clean(p) == f {
			return true
		}
	}
	return false
}
