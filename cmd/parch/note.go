package main

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"parch/internal/kinetics"
	"parch/internal/report"
	"parch/internal/session"
)

// noteKinds are the kinds a note can have: the checks of the trade, and
// free text.
var noteKinds = []struct{ kind, help string }{
	{"note", "free text"},
	{"bend_test_passed", "a piece bends without breaking and shows no free moisture"},
	{"bend_test_failed", "not dry yet"},
	{"case_hardening", "a hard, dry shell over a moist inside"},
	{"piece_removed", "a piece taken out (give its grams with --value)"},
	{"door_opened", "the dryer door was opened"},
	{"setpoint_changed", "the air temperature setpoint changed (new value with --value, °C)"},
}

// setupKeys are the run parameters a session log's setup lines carry.
var setupKeys = []string{report.KeyInitialMoistureWB, report.KeyDryMass, report.KeyTare, report.KeyInitialMass,
	report.KeyTargetWB, report.KeyTargetDB, report.KeyEquilibriumDB, report.KeyArea, report.KeyThickness,
	report.KeyFaces, report.KeySteadyPct, report.KeySteadyWindowH, report.KeyAirTemp}

// setValues collects --set KEY=VALUE.
type setValues map[string]float64

func (s *setValues) String() string { return fmt.Sprint(map[string]float64(*s)) }

func (s *setValues) Set(v string) error {
	k, val, ok := strings.Cut(v, "=")
	if !ok {
		return fmt.Errorf("expected KEY=VALUE like dry_mass_g=27.1")
	}
	k = strings.TrimSpace(k)
	known := false
	for _, sk := range setupKeys {
		known = known || sk == k
	}
	if !known {
		return fmt.Errorf("unknown key %q; keys: %s", k, strings.Join(setupKeys, ", "))
	}
	f, err := strconv.ParseFloat(strings.TrimSpace(val), 64)
	if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
		return fmt.Errorf("%s=%q: expected a number", k, val)
	}
	if k == report.KeyAirTemp && !(f > -40 && f < 400) {
		return fmt.Errorf("%s=%q: expected an air temperature in °C, between -40 and 400", k, val)
	}
	if *s == nil {
		*s = setValues{}
	}
	(*s)[k] = f
	return nil
}

func runNote(args []string, stdout, stderr io.Writer) error {
	var kinds strings.Builder
	for _, k := range noteKinds {
		fmt.Fprintf(&kinds, "\n    %-17s %s", k.kind, k.help)
	}
	fs := newFlagSet("note", "note --session FILE [--kind KIND] [--value N] TEXT...\n   or: parch note --session FILE --set KEY=VALUE ...\n\nKinds:"+kinds.String(), stderr)
	path := fs.String("session", "", "session log `FILE` to add the note to (required)")
	kind := fs.String("kind", "note", "what kind of note (see the list above)")
	value := fs.String("value", "", "a number that goes with the note: grams removed, new setpoint °C...")
	var unset unsetKeys
	fs.Var(&unset, "unset", "remove a run parameter recorded earlier, `KEY` (repeatable): the analysis goes back to the default or the flags")
	var sets setValues
	fs.Var(&sets, "set", "record a run parameter instead, `KEY=VALUE` (repeatable), e.g. dry_mass_g=27.1 the day after; keys: "+strings.Join(setupKeys, ", "))
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if *path == "" {
		return usagef("--session FILE is required: the session log being recorded")
	}
	if len(sets) > 0 || len(unset) > 0 {
		if len(pos) > 0 || *value != "" {
			return usagef("--set and --unset record run parameters; give a note without them")
		}
		log, err := session.Load(*path)
		if err != nil {
			return err
		}
		// The values as they will stand, checked before anything is written.
		merged := log.SetupParams()
		e := session.Event{Type: session.TypeSetup, T: time.Now(), Params: map[string]any{}}
		for _, k := range unset {
			delete(merged, k)
			e.Params[k] = nil
		}
		for k, v := range sets {
			merged[k] = v
			e.Params[k] = v
		}
		setup := kinetics.NewSetup()
		report.ApplyParams(&setup, merged)
		if err := setup.Validate(); err != nil {
			return usagef("%v (nothing recorded)", err)
		}
		if err := session.AppendOnce(*path, &e); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "recorded %d setup value(s) in %s\n", len(e.Params), *path)
		return nil
	}
	if !knownKind(*kind) {
		var names []string
		for _, k := range noteKinds {
			names = append(names, k.kind)
		}
		return usagef("--kind %q: expected one of %s", *kind, strings.Join(names, ", "))
	}
	text := strings.TrimSpace(strings.Join(pos, " "))
	e := session.Event{Type: session.TypeNote, T: time.Now(), Kind: *kind, Text: text}
	if *value != "" {
		v, err := strconv.ParseFloat(strings.TrimSpace(*value), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > 1e9 {
			return usagef("--value %q: expected a number, like 4.2", *value)
		}
		if *kind == "piece_removed" && !(v > 0) {
			return usagef("--value %q: the grams removed must be above 0", *value)
		}
		e.Value = &v
	}
	if *kind == "piece_removed" && e.Value == nil {
		return usagef("--kind piece_removed needs --value GRAMS: the mass of the piece taken out")
	}
	if text == "" && e.Value == nil && *kind == "note" {
		return usagef("nothing to note: give the text, e.g. parch note --session %s 'skins wrinkling'", *path)
	}
	if t, ok := session.LastReadingTime(*path); ok {
		e.ReadingT = t
	}
	if err := session.AppendOnce(*path, &e); err != nil {
		return err
	}
	when := "no reading yet"
	if !e.ReadingT.IsZero() {
		when = "latest reading " + e.ReadingT.Local().Format("15:04:05")
	}
	fmt.Fprintf(stdout, "noted %s in %s (%s)\n", *kind, *path, when)
	return nil
}

func knownKind(k string) bool {
	for _, nk := range noteKinds {
		if nk.kind == k {
			return true
		}
	}
	return false
}

// unsetKeys collects --unset KEY.
type unsetKeys []string

func (u *unsetKeys) String() string { return strings.Join(*u, ",") }

func (u *unsetKeys) Set(k string) error {
	k = strings.TrimSpace(k)
	for _, sk := range setupKeys {
		if sk == k {
			*u = append(*u, k)
			return nil
		}
	}
	return fmt.Errorf("unknown key %q; keys: %s", k, strings.Join(setupKeys, ", "))
}
