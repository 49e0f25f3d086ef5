// Package export writes the record of a run that another person can audit
// and re-analyse without parch: readings with derived values (CSV), notes
// (CSV), the summary (JSON), a readable report (Markdown) and plots (SVG and
// PNG). Everything is made from the session log and the setup; the log is
// only read, so a corrected setup (the oven-dry mass the next day) gives a
// new, consistent record.
package export

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"

	"parch/internal/kinetics"
	"parch/internal/report"
)

// Bundle is what an export is made from.
type Bundle struct {
	Run     *report.Run
	Res     *kinetics.Result
	Setup   kinetics.Setup
	Summary report.Summary
	Version string // parch's version
}

// Files written into the folder.
const (
	FileReadings = "readings.csv"
	FileNotes    = "notes.csv"
	FileSummary  = "summary.json"
	FileReport   = "report.md"
)

// ErrExists is returned for a folder that exists when force is not given.
var ErrExists = errors.New("folder exists")

// Write makes dir and writes the record into it. An existing folder is
// refused unless force; progress (may be nil) hears each step.
func Write(dir string, force bool, b *Bundle, progress func(string)) error {
	if progress == nil {
		progress = func(string) {}
	}
	if err := makeFolder(dir, force); err != nil {
		return err
	}
	steps := []struct {
		name string
		fn   func(io.Writer) error
	}{
		{FileReadings, func(w io.Writer) error { return Readings(w, b) }},
		{FileNotes, func(w io.Writer) error { return Notes(w, b) }},
		{FileSummary, func(w io.Writer) error { return SummaryJSON(w, b) }},
		{FileReport, func(w io.Writer) error { return Markdown(w, b) }},
	}
	for _, s := range steps {
		progress("writing " + s.name)
		if err := writeFile(filepath.Join(dir, s.name), s.fn); err != nil {
			return err
		}
	}
	progress("drawing plots")
	return Plots(dir, b)
}

// makeFolder makes an output folder; one that exists is refused unless
// force.
func makeFolder(dir string, force bool) error {
	if _, err := os.Stat(dir); err == nil && !force {
		return fmt.Errorf("%s: %w; parch does not overwrite it (use --force, or another --out)", dir, ErrExists)
	} else if err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	return os.MkdirAll(dir, 0o755)
}

// writeFile writes a new file in its folder and renames it into place, so
// that a link planted at path is replaced, never written through (with
// --force a file outside the folder would otherwise be overwritten).
func writeFile(path string, fn func(io.Writer) error) error {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+"-*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	err = fn(f)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tmp, 0o644)
	}
	if err == nil {
		err = os.Rename(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}

// SummaryJSON is summary.json: the `parch report --format json` object plus
// the setup used and parch's version.
func SummaryJSON(w io.Writer, b *Bundle) error {
	out := struct {
		report.Summary
		Setup   map[string]any `json:"setup"`
		Version string         `json:"parch_version"`
	}{b.Summary, SetupMap(b.Setup), b.Version}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}

// SetupMap lists the setup with the session log's keys (null when unknown).
func SetupMap(s kinetics.Setup) map[string]any {
	n := func(v float64) report.Num { return report.Num(v) }
	var removed []map[string]report.Num
	for _, r := range s.Removals {
		removed = append(removed, map[string]report.Num{"elapsed_h": n(r.ElapsedH), "mass_g": n(r.MassG)})
	}
	faces := any(nil)
	if s.Faces != 0 {
		faces = s.Faces
	}
	return map[string]any{
		report.KeyTare: n(s.TareG), report.KeyInitialMass: n(s.InitialMassG), report.KeyInitialMoistureWB: n(s.InitialMoistureWB),
		report.KeyDryMass: n(s.DryMassG), report.KeyTargetWB: n(s.TargetWBPct), report.KeyTargetDB: n(s.TargetDB),
		report.KeyEquilibriumDB: n(s.EquilibriumDB), report.KeyArea: n(s.AreaM2), report.KeyThickness: n(s.ThicknessMM),
		report.KeyFaces: faces, report.KeySteadyPct: n(s.SteadyPct), report.KeySteadyWindowH: n(s.SteadyWindowH), report.KeyAirTemp: n(s.AirTempC),
		"removed": removed,
	}
}
