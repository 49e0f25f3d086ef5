package main

import (
	"flag"
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"parch/internal/kinetics"
	"parch/internal/report"
)

// setupFlags are the run parameters a user can give on the command line;
// only the flags given override what the session log says.
type setupFlags struct {
	fs        *flag.FlagSet
	vals      map[string]*float64 // flag name -> value
	keys      map[string]string   // flag name -> the session log's setup key
	faces     int
	removed   removals
	until     string
	targetDB  float64
	reference string             // --reference FILE (the first)
	moreRefs  []string           // --reference given again
	defaults  map[string]float64 // values used when neither the log nor a flag gives one
}

type removals []kinetics.Removal

func (r *removals) String() string { return fmt.Sprint(*r) }

func (r *removals) Set(s string) error {
	at, grams, ok := strings.Cut(s, "=")
	if !ok {
		return fmt.Errorf("expected ELAPSED=GRAMS like 6h=4.2")
	}
	h, err := parseElapsed(at)
	if err != nil {
		return err
	}
	g, err := strconv.ParseFloat(strings.TrimSpace(grams), 64)
	if err != nil || !(g > 0) {
		return fmt.Errorf("grams %q: expected a positive number", grams)
	}
	*r = append(*r, kinetics.Removal{ElapsedH: h, MassG: g})
	return nil
}

// parseElapsed reads 6h, 90m, 5400s, 1h30m.
func parseElapsed(s string) (float64, error) {
	d, err := time.ParseDuration(strings.TrimSpace(s))
	if err != nil || d < 0 {
		return 0, fmt.Errorf("elapsed time %q: expected a duration like 6h, 90m or 5400s", s)
	}
	return d.Hours(), nil
}

func (sf *setupFlags) register(fs *flag.FlagSet) {
	sf.fs = fs
	sf.vals, sf.keys = map[string]*float64{}, map[string]string{}
	num := func(name, key, usage string) {
		v := new(float64)
		fs.Float64Var(v, name, 0, usage)
		sf.vals[name], sf.keys[name] = v, key
	}
	num("initial-moisture", report.KeyInitialMoistureWB, "initial moisture, `PCT` wet basis (from an oven test)")
	num("dry-mass", report.KeyDryMass, "dry solids left at the end, `G` (oven test of the sample); overrides --initial-moisture")
	num("tare", report.KeyTare, "tare, `G`, subtracted from every reading")
	num("initial-mass", report.KeyInitialMass, "initial product mass, `G` (default: the first reading)")
	num("target", report.KeyTargetWB, "target moisture, `PCT` wet basis")
	fs.Float64Var(&sf.targetDB, "target-db", 0, "target moisture, dry basis (kg water/kg solids), instead of --target")
	num("equilibrium", report.KeyEquilibriumDB, "equilibrium moisture `X`, dry basis (default 0)")
	num("area", report.KeyArea, "tray area, `M2`, for the drying flux")
	num("thickness", report.KeyThickness, "slice thickness, `MM`, for the diffusivity")
	fs.IntVar(&sf.faces, "faces", 0, "drying faces: 1 on a solid tray, 2 on a mesh (default 2)")
	num("steady-pct", report.KeySteadyPct, "end of run when the weight changes less than this `PCT` over --steady-window (default 0.5)")
	num("steady-window", report.KeySteadyWindowH, "window for the end-of-run test, `HOURS` (default 1)")
	num("air-temp", report.KeyAirTemp, "the dryer's air temperature setpoint, `°C`, for a study of several runs (parch compare)")
	fs.Var(referenceFlag{sf}, "reference", "an earlier run of the same product, `FILE` (a session log with its setup, or a table of moisture or moisture ratio): its drying curve helps the projection; repeat for several (the first is the one a recording names in its log)")
}

// referenceToRecord checks --reference and returns its absolute path, for
// the session log's setup ("" when not given).
func (sf *setupFlags) referenceToRecord() (string, error) {
	if sf.reference == "" {
		return "", nil
	}
	if _, _, err := sf.loadReference(""); err != nil {
		return "", err
	}
	abs, err := filepath.Abs(sf.reference)
	if err != nil {
		return "", usagef("--reference %s: %v", sf.reference, err)
	}
	return abs, nil
}

// loadReference reads the reference run: the --reference file, else the
// one the session log names (logRef). A --reference that cannot be used is
// an error; one named by the log that has gone is a warning.
func (sf *setupFlags) loadReference(logRef string) (*kinetics.Reference, string, error) {
	if sf.reference != "" {
		ref, err := report.LoadReference(sf.reference)
		if err != nil {
			return nil, "", usagef("--reference %s: %v", sf.reference, err)
		}
		return ref, "", nil
	}
	if logRef == "" {
		return nil, "", nil
	}
	ref, err := report.LoadReference(logRef)
	if err != nil {
		return nil, fmt.Sprintf("the reference run the log names is not used: %v", err), nil
	}
	return ref, "", nil
}

// registerAnalysis adds the flags that only make sense when analysing a
// recorded run.
func (sf *setupFlags) registerAnalysis(fs *flag.FlagSet) {
	fs.Var(&sf.removed, "removed", "a piece removed, `ELAPSED=GRAMS` like 6h=4.2 (repeatable)")
	fs.StringVar(&sf.until, "until", "", "analyse only the data up to `ELAPSED` (like 6h): what was known then")
}

// params returns the setup keys given as flags.
func (sf *setupFlags) params() (map[string]float64, error) {
	out := map[string]float64{}
	var err error
	sf.fs.Visit(func(f *flag.Flag) {
		if key, ok := sf.keys[f.Name]; ok {
			v := *sf.vals[f.Name]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				err = usagef("--%s %v: expected a number", f.Name, v)
			}
			if key == report.KeyAirTemp && !(v > -40 && v < 400) {
				err = usagef("--%s %v: expected an air temperature in °C, between -40 and 400", f.Name, v)
			}
			out[key] = v
		}
		switch f.Name {
		case "faces":
			if sf.faces != 1 && sf.faces != 2 {
				err = usagef("--faces %d: expected 1 (solid tray) or 2 (mesh)", sf.faces)
			}
			out[report.KeyFaces] = float64(sf.faces)
		case "target-db":
			out[report.KeyTargetDB] = sf.targetDB
		}
	})
	if _, wb := out[report.KeyTargetWB]; wb {
		if _, db := out[report.KeyTargetDB]; db {
			return nil, usagef("give --target (wet basis %%) or --target-db (dry basis), not both")
		}
	}
	return out, err
}

// untilH is the --until time in hours, NaN when not given.
func (sf *setupFlags) untilH() (float64, error) {
	if sf.until == "" {
		return math.NaN(), nil
	}
	h, err := parseElapsed(sf.until)
	if err != nil {
		return 0, usagef("--until: %v", err)
	}
	if !(h > 0) {
		return 0, usagef("--until %s: expected a time after the start, like 6h", sf.until)
	}
	return h, nil
}

// build merges the log's setup, the notes' removals and the flags.
func (sf *setupFlags) build(run *report.Run) (kinetics.Setup, error) {
	setup := kinetics.NewSetup()
	report.ApplyParams(&setup, run.Params)
	if err := setup.Validate(); err != nil && run.Format == "session" {
		return setup, fmt.Errorf("the setup recorded in %s: %v; correct it with parch note --session %s --set KEY=VALUE (or --unset KEY), or override it with a flag", run.Path, err, run.Path)
	}
	p, err := sf.params()
	if err != nil {
		return setup, err
	}
	report.ApplyParams(&setup, p)
	// --removed, when given, is the whole list: the log's noted removals
	// are replaced, not added to (one piece must not count twice).
	setup.Removals = run.NoteRemovals()
	if len(sf.removed) > 0 {
		if n := len(setup.Removals); n > 0 {
			run.Warnings = append(run.Warnings, fmt.Sprintf("--removed replaced the %d removals noted in the log", n))
		}
		setup.Removals = append([]kinetics.Removal(nil), sf.removed...)
	}
	if err := setup.Validate(); err != nil {
		return setup, usagef("%v", err)
	}
	return setup, nil
}

// check validates the setup flags over the values a log already holds
// (base), before anything is recorded: a bad value never enters the log.
func (sf *setupFlags) check(base map[string]float64) error {
	p, err := sf.params()
	if err != nil {
		return err
	}
	setup := kinetics.NewSetup()
	report.ApplyParams(&setup, base)
	report.ApplyParams(&setup, p)
	if err := setup.Validate(); err != nil {
		return usagef("%v", err)
	}
	return nil
}

// referenceFlag collects --reference FILE, repeatable.
type referenceFlag struct{ sf *setupFlags }

func (r referenceFlag) String() string {
	if r.sf == nil {
		return ""
	}
	return strings.Join(append([]string{r.sf.reference}, r.sf.moreRefs...), ",")
}

func (r referenceFlag) Set(v string) error {
	if r.sf.reference == "" {
		r.sf.reference = v
	} else {
		r.sf.moreRefs = append(r.sf.moreRefs, v)
	}
	return nil
}

// moreReferences loads the reference runs after the first.
func (sf *setupFlags) moreReferences() ([]*kinetics.Reference, error) {
	var out []*kinetics.Reference
	for _, f := range sf.moreRefs {
		ref, err := report.LoadReference(f)
		if err != nil {
			return nil, usagef("--reference %s: %v", f, err)
		}
		out = append(out, ref)
	}
	return out, nil
}

// given reports whether the flag was set on the command line.
func (sf *setupFlags) given(name string) bool {
	set := false
	sf.fs.Visit(func(f *flag.Flag) { set = set || f.Name == name })
	return set
}
