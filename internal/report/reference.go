package report

import (
	"errors"
	"fmt"

	"parch/internal/kinetics"
)

// LoadReference reads an earlier run of the same product (--reference): a
// session log with its setup (initial moisture or dry mass), or a table of
// dry-basis moisture or moisture ratio against time. Its whole record is
// used, with its own setup; nothing of the current run goes into it.
func LoadReference(path string) (*kinetics.Reference, error) {
	run, err := Load(path, TableOptionsNone)
	if err != nil {
		return nil, fmt.Errorf("reference run: %w", err)
	}
	setup := kinetics.NewSetup()
	ApplyParams(&setup, run.Params)
	setup.Removals = run.NoteRemovals()
	res, err := kinetics.Analyze(run.Series, setup, kinetics.Options{})
	if errors.Is(err, kinetics.ErrNoReadings) {
		return nil, fmt.Errorf("reference run %s has no readings", path)
	}
	if err != nil {
		return nil, fmt.Errorf("reference run %s: %w", path, err)
	}
	return kinetics.NewReference(path, run.Series, res)
}
