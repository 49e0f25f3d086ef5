// Package report turns a recorded run (a session log or a CSV) into the
// figures parch reports: it loads the readings, notes and setup, runs the
// kinetics, and writes the summary as JSON or text. It does not change the
// record; the same inputs always give the same report.
package report

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"parch/internal/textline"
	"runtime"
	"sort"
	"strings"
	"time"

	"parch/internal/ingest"
	"parch/internal/kinetics"
	"parch/internal/session"
)

// Run is a recorded run, as read.
type Run struct {
	Path     string
	Format   string    // "session" or "csv"
	Start    time.Time // time of the first reading (zero for elapsed-only CSV)
	Series   kinetics.Series
	TimesMs  []int64 // clock time of each reading, Unix ms (0 when unknown)
	Channels map[string][]float32
	Notes    []Note
	Params   map[string]float64 // setup keys from the log, later ones winning
	// ReferenceFile is the reference run the log names (KeyReferenceFile).
	ReferenceFile string
	// Invented is true for a run parch made up (the demo, parch simulate):
	// every report of it says so.
	Invented bool
	Warnings []string // lines skipped while reading
}

// Note is an operator's note placed on the run's timeline.
type Note struct {
	ElapsedH float64
	T        time.Time
	Kind     string
	Text     string
	Value    float64 // NaN when none
}

// Setup keys understood in a session log's "setup" events and their flags.
const (
	KeyTare              = "tare_g"
	KeyInitialMass       = "initial_mass_g"
	KeyInitialMoistureWB = "initial_moisture_wb_pct"
	KeyDryMass           = "dry_mass_g"
	KeyTargetWB          = "target_moisture_wb_pct"
	KeyTargetDB          = "target_moisture_db"
	KeyEquilibriumDB     = "equilibrium_db"
	KeyArea              = "area_m2"
	KeyThickness         = "thickness_mm"
	KeyFaces             = "faces"
	KeySteadyPct         = "steady_pct"
	KeySteadyWindowH     = "steady_window_h"
	// KeyAirTemp is the dryer's air temperature setpoint, °C (for a study
	// of several runs).
	KeyAirTemp = "air_temp_c"
	// KeyReferenceFile names the reference run (a text value).
	KeyReferenceFile = "reference_file"
)

// ChannelInvented is the column `parch simulate` adds to mark its rows as
// invented.
const ChannelInvented = "invented_demo_data"

// TableOptionsNone reads a CSV with every column guessed from its header.
var TableOptionsNone = ingest.TableOptions{}

// KindPieceRemoved is the note kind whose value (grams) is a removal.
const KindPieceRemoved = "piece_removed"

// Load reads a session log, or a CSV/TSV with the file source's rules (and
// a dry-basis moisture or moisture-ratio column in place of the mass).
func Load(path string, table ingest.TableOptions) (*Run, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err // the error names the file
	}
	defer f.Close()
	if st, err := f.Stat(); err == nil && !st.Mode().IsRegular() && st.Mode()&os.ModeNamedPipe == 0 {
		return nil, fmt.Errorf("%s is not a file (a device or a folder): expected a parch session log or a CSV", path)
	}
	lr := textline.NewReader(f, MaxLineBytes)
	head := lr.Peek(1)
	if len(head) == 0 {
		return nil, fmt.Errorf("%s is empty: expected a parch session log or a CSV with a header row", path)
	}
	lines := session.CountLines(f)
	if head[0] == '{' {
		return loadSession(path, lr, lines)
	}
	table.AllowMoisture = true
	return loadTable(path, lr, table, int64(lines))
}

// MaxLineBytes bounds a line of a file read for a report; longer lines are
// skipped with a warning that names them, never held in memory.
const MaxLineBytes = 1 << 20

func loadSession(path string, lr *textline.Reader, lines int) (*Run, error) {
	log, err := session.ReadLinesSized(lr, path, lines)
	if err != nil {
		return nil, err
	}
	run := &Run{Path: path, Format: "session", Params: map[string]float64{}, Warnings: log.Warnings, Channels: log.Readings.Channels}
	rd := &log.Readings
	n := rd.Len()
	run.TimesMs = rd.TimeMs
	run.Series = kinetics.Series{TimeH: make([]float64, n), Value: rd.MassG, Stable: rd.Stable}
	if n > 0 {
		t0 := rd.TimeMs[0]
		run.Start = time.UnixMilli(t0).UTC()
		for i, ms := range rd.TimeMs {
			run.Series.TimeH[i] = float64(ms-t0) / 3.6e6
		}
	}
	run.Params = log.SetupParams()
	run.ReferenceFile = log.SetupText(KeyReferenceFile)
	for _, e := range log.Sources {
		if strings.Contains(e.Detail, "invented") {
			run.Invented = true
		}
	}
	for _, e := range log.Notes {
		at := e.T
		if !e.ReadingT.IsZero() {
			at = e.ReadingT
		}
		nt := Note{T: at, Kind: e.Kind, Text: e.Text, Value: math.NaN(), ElapsedH: math.NaN()}
		if !run.Start.IsZero() {
			nt.ElapsedH = at.Sub(run.Start).Hours()
		}
		if e.Value != nil {
			nt.Value = *e.Value
		}
		run.Notes = append(run.Notes, nt)
	}
	sort.SliceStable(run.Notes, func(i, j int) bool { return run.Notes[i].T.Before(run.Notes[j].T) })
	return run, nil
}

func loadTable(path string, lr *textline.Reader, opt ingest.TableOptions, lines int64) (*Run, error) {
	run := &Run{Path: path, Format: "csv", Params: map[string]float64{}, Channels: map[string][]float32{}}
	var tb *ingest.Table
	var asm *assembler
	var skips []skip // lines not read, by line number, for the warnings
	var dec *decoders
	var b *batch
	for {
		raw, long, err := lr.Next()
		lineNo := lr.No
		if errors.Is(err, textline.ErrBinary) {
			if tb == nil {
				return nil, fmt.Errorf("%s: %w: expected a CSV with a header row", path, err)
			}
			skips = append(skips, skip{lineNo, fmt.Sprintf("%s: %v, skipped", path, err)})
			continue
		}
		if err != nil && err != io.EOF {
			dec.stop()
			return nil, fmt.Errorf("%s: %w", path, err)
		}
		if long > 0 {
			if tb == nil {
				return nil, fmt.Errorf("%s: line 1 (the header) is %d bytes long: expected a CSV header row", path, long)
			}
			skips = append(skips, skip{lineNo, fmt.Sprintf("%s: line %d skipped: %d bytes long, over the %d-byte limit", path, lineNo, long, MaxLineBytes)})
			continue
		}
		raw = bytes.TrimRight(raw, "\r\n")
		switch {
		case len(raw) == 0:
		case tb == nil:
			if tb, err = ingest.NewTable(string(raw), opt); err != nil {
				return nil, fmt.Errorf("%s: %w", path, err)
			}
			// Only the channels kept are decoded: the invented-data mark is
			// the column's presence, and of two columns of one name the
			// first is kept.
			kept, seen := tb.Channels[:0:0], map[string]bool{}
			for _, c := range tb.Channels {
				switch {
				case c.Name == ChannelInvented:
					run.Invented = true
				case !seen[c.Name]:
					kept = append(kept, c)
				}
				seen[c.Name] = true
			}
			tb.Channels = kept
			tb.ChannelValues = make([]float64, len(tb.Channels)) // no map per row
			asm = newAssembler(run, tb, int(min(max(lines-1, 0), 1<<28)))
			// Long tables are decoded on every core, in batches of rows
			// put back together in order.
			workers := 1
			if lines > parallelRows {
				workers = runtime.GOMAXPROCS(0)
			}
			dec = newDecoders(tb, workers)
			b = dec.batch()
		case len(bytes.TrimSpace(raw)) == 0:
		default:
			b.add(lineNo, raw)
			if b.full() {
				for _, done := range dec.submit(b) {
					skips = asm.take(done, path, skips)
					dec.recycle(done)
				}
				b = dec.batch()
			}
		}
		if err != nil {
			if errors.Is(err, io.EOF) {
				break
			}
			dec.stop()
			return nil, fmt.Errorf("read %s: %w", path, err)
		}
	}
	if tb == nil {
		return nil, fmt.Errorf("%s: no header row: expected a CSV with a header like elapsed_s,mass_g", path)
	}
	for _, done := range dec.finish(b) {
		skips = asm.take(done, path, skips)
	}
	asm.done()
	sort.SliceStable(skips, func(i, j int) bool { return skips[i].line < skips[j].line })
	for i, sk := range skips {
		if i < 10 {
			run.Warnings = append(run.Warnings, sk.msg)
		}
	}
	if len(skips) > 10 {
		run.Warnings = append(run.Warnings, fmt.Sprintf("%s: %d lines skipped in all", path, len(skips)))
	}
	switch tb.Quantity {
	case ingest.QuantityMoistureDB:
		run.Series.Kind = kinetics.SeriesMoistureDB
	case ingest.QuantityMR:
		run.Series.Kind = kinetics.SeriesMR
	}
	return run, nil
}

// parallelRows: tables with more lines than this are decoded on every core.
// A variable so that a test can send a small table through the same path.
var parallelRows int64 = 50_000

// skip is a line not read, and the warning that says so.
type skip struct {
	line int
	msg  string
}

// ApplyParams sets setup values from a log's setup keys.
func ApplyParams(s *kinetics.Setup, p map[string]float64) {
	set := func(key string, dst *float64) {
		if v, ok := p[key]; ok {
			*dst = v
		}
	}
	set(KeyTare, &s.TareG)
	set(KeyInitialMass, &s.InitialMassG)
	set(KeyInitialMoistureWB, &s.InitialMoistureWB)
	set(KeyDryMass, &s.DryMassG)
	set(KeyTargetWB, &s.TargetWBPct)
	set(KeyTargetDB, &s.TargetDB)
	set(KeyEquilibriumDB, &s.EquilibriumDB)
	set(KeyArea, &s.AreaM2)
	set(KeyThickness, &s.ThicknessMM)
	set(KeySteadyPct, &s.SteadyPct)
	set(KeySteadyWindowH, &s.SteadyWindowH)
	set(KeyAirTemp, &s.AirTempC)
	if v, ok := p[KeyFaces]; ok {
		s.Faces = int(v)
	}
	if _, ok := p[KeyTargetDB]; ok {
		if _, wb := p[KeyTargetWB]; !wb {
			s.TargetWBPct = math.NaN()
		}
	}
}

// NoteRemovals returns the removals recorded as piece_removed notes.
func (r *Run) NoteRemovals() []kinetics.Removal {
	var out []kinetics.Removal
	for _, n := range r.Notes {
		if n.Kind == KindPieceRemoved && n.Value > 0 && !math.IsNaN(n.ElapsedH) {
			out = append(out, kinetics.Removal{ElapsedH: n.ElapsedH, MassG: n.Value})
		}
	}
	return out
}

// truncateNote keeps text short enough for one line.
func truncateNote(s string, n int) string {
	s = string(bytes.TrimSpace([]byte(s)))
	if len([]rune(s)) <= n {
		return s
	}
	return string([]rune(s)[:n-1]) + "…"
}

// ApplyEvent applies one setup event's values as they stand in a log: a
// number sets a key, null (parch note --unset) puts it back to its default.
func ApplyEvent(s *kinetics.Setup, params map[string]any) {
	def := kinetics.NewSetup()
	defaults := map[string]float64{
		KeyTare: def.TareG, KeyInitialMass: def.InitialMassG, KeyInitialMoistureWB: def.InitialMoistureWB,
		KeyDryMass: def.DryMassG, KeyTargetWB: def.TargetWBPct, KeyTargetDB: def.TargetDB,
		KeyEquilibriumDB: def.EquilibriumDB, KeyArea: def.AreaM2, KeyThickness: def.ThicknessMM,
		KeySteadyPct: def.SteadyPct, KeySteadyWindowH: def.SteadyWindowH, KeyAirTemp: def.AirTempC,
	}
	for k, v := range params {
		switch x := v.(type) {
		case float64:
			ApplyParams(s, map[string]float64{k: x})
		case nil:
			if d, ok := defaults[k]; ok {
				ApplyParams(s, map[string]float64{k: d})
			} else if k == KeyFaces {
				s.Faces = 0
			}
		}
	}
}
