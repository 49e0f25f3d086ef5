package export_test

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"encoding/xml"
	"errors"
	"flag"
	"fmt"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"parch/internal/export"
	"parch/internal/kinetics"
	"parch/internal/report"
	"parch/internal/session"
	"parch/internal/simulate"
)

var update = flag.Bool("update", false, "rewrite the golden files")

// smallLog writes a short invented run (the demo scenario, one reading a
// minute for 10 h) with two notes, at fixed times, so the outputs are the
// same on every machine.
func smallLog(t *testing.T) string {
	t.Helper()
	sc := simulate.AppleRings()
	sc.IntervalS, sc.DurationH = 60, 10
	m, err := simulate.NewModel(sc)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "small.jsonl")
	t0 := time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC)
	w, err := session.Create(path, "parch test", t0)
	if err != nil {
		t.Fatal(err)
	}
	w.Append(&session.Event{Type: session.TypeSetup, T: t0, Params: map[string]any{"initial_moisture_wb_pct": 86.5, "target_moisture_wb_pct": 18.0, "thickness_mm": 6.0, "faces": 2.0, "equilibrium_db": 0.05, "area_m2": 0.05}})
	m.Run(1, func(s simulate.Sample) bool {
		w.Append(&session.Event{Type: session.TypeReading, T: t0.Add(time.Duration(s.ElapsedS) * time.Second), MassG: s.MassG,
			Stable: session.Bool(s.Stable), Raw: s.Raw, Channels: map[string]float64{"air_temp_c": s.AirTempC}})
		return true
	})
	w.Append(&session.Event{Type: session.TypeNote, T: t0.Add(3 * time.Hour), ReadingT: t0.Add(3 * time.Hour), Kind: "bend_test_failed", Text: "still soft, \"wet\" centre"})
	w.Append(&session.Event{Type: session.TypeNote, T: t0.Add(8 * time.Hour), ReadingT: t0.Add(8 * time.Hour), Kind: "bend_test_passed"})
	w.Close()
	return path
}

func bundle(t *testing.T, path string, edit func(*kinetics.Setup)) *export.Bundle {
	t.Helper()
	run, err := report.Load(path, report.TableOptionsNone)
	if err != nil {
		t.Fatal(err)
	}
	setup := kinetics.NewSetup()
	report.ApplyParams(&setup, run.Params)
	if edit != nil {
		edit(&setup)
	}
	res, err := kinetics.Analyze(run.Series, setup, kinetics.Options{})
	if err != nil {
		t.Fatal(err)
	}
	sum := report.Build(run, res, setup, math.NaN())
	sum.Input = filepath.Base(sum.Input)
	return &export.Bundle{Run: run, Res: res, Setup: setup, Summary: sum, Version: "test"}
}

func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if *update {
		os.WriteFile(path, got, 0o644)
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (go test ./internal/export -update)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the golden file:\n%s", name, got)
	}
}

func TestWriteFolder(t *testing.T) {
	log := smallLog(t)
	b := bundle(t, log, nil)
	dir := filepath.Join(t.TempDir(), "out")
	if err := export.Write(dir, false, b, nil); err != nil {
		t.Fatal(err)
	}
	// Headers and the small report, as golden files.
	readings, _ := os.ReadFile(filepath.Join(dir, export.FileReadings))
	golden(t, "readings_header.golden", []byte(strings.SplitN(string(readings), "\n", 2)[0]+"\n"))
	notes, _ := os.ReadFile(filepath.Join(dir, export.FileNotes))
	golden(t, "notes.csv.golden", notes)
	md, _ := os.ReadFile(filepath.Join(dir, export.FileReport))
	golden(t, "report.md.golden", md)
	for _, want := range []string{"## Cautions", "water activity", "## Thin-layer models", "Crank", "What the projection said", "range held"} {
		if !bytes.Contains(md, []byte(want)) {
			t.Errorf("report.md lacks %q", want)
		}
	}
	// Plots: PNGs decode at the stated size; SVGs are XML.
	for _, name := range []string{export.PlotMoisture, export.PlotRate, export.PlotLnMR, export.PlotModel} {
		f, err := os.Open(filepath.Join(dir, name+".png"))
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil {
			t.Fatalf("%s.png: %v", name, err)
		}
		if sz := img.Bounds().Size(); sz.X != export.PNGWidth || sz.Y != export.PNGHeight {
			t.Errorf("%s.png is %v, want %dx%d", name, sz, export.PNGWidth, export.PNGHeight)
		}
		svg, _ := os.ReadFile(filepath.Join(dir, name+".svg"))
		dec := xml.NewDecoder(bytes.NewReader(svg))
		for {
			_, err := dec.Token()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				t.Fatalf("%s.svg is not XML: %v", name, err)
			}
		}
	}
	// summary.json: the report object plus setup and version.
	var sum map[string]any
	raw, _ := os.ReadFile(filepath.Join(dir, export.FileSummary))
	if err := json.Unmarshal(raw, &sum); err != nil {
		t.Fatal(err)
	}
	if sum["parch_version"] != "test" || sum["setup"] == nil || sum["readings"] == nil {
		t.Errorf("summary.json lacks setup, version or figures")
	}
	// A folder that exists is refused without force, and left alone.
	if err := export.Write(dir, false, b, nil); !errors.Is(err, export.ErrExists) {
		t.Errorf("second write: %v", err)
	}
	if err := export.Write(dir, true, b, nil); err != nil {
		t.Errorf("with force: %v", err)
	}
}

// readings.csv agrees with the kinetics package and the JSON summary.
func TestReadingsAgree(t *testing.T) {
	b := bundle(t, smallLog(t), nil)
	var buf bytes.Buffer
	if err := export.Readings(&buf, b); err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	if len(rows)-1 != b.Res.Readings {
		t.Fatalf("%d rows for %d readings", len(rows)-1, b.Res.Readings)
	}
	dry := float64(b.Summary.DryMassG)
	for i, row := range rows[1:] {
		x, _ := strconv.ParseFloat(row[col["moisture_db"]], 64)
		if math.Abs(x-b.Res.Points.X(i)) > 1e-6 {
			t.Fatalf("row %d: moisture_db %v, kinetics %v", i, x, b.Res.Points.X(i))
		}
		m, _ := strconv.ParseFloat(row[col["mass_g"]], 64)
		if math.Abs(m/(1+x)-dry) > 1e-3 {
			t.Fatalf("row %d: mass/(1+X) = %v, summary dry mass %v", i, m/(1+x), dry)
		}
		if row[col["rejected"]] != kinetics.RejectReason(b.Res.Points.Reject[i]) {
			t.Fatalf("row %d: rejected %q", i, row[col["rejected"]])
		}
		if f := row[col["flux_kg_m2_h"]]; f != "" {
			v, _ := strconv.ParseFloat(f, 64)
			r, _ := strconv.ParseFloat(row[col["rate_g_per_h"]], 64)
			if math.Abs(v-r/1000/0.05) > 1e-5 {
				t.Fatalf("row %d: flux %v for rate %v on 0.05 m²", i, v, r)
			}
		}
	}
}

// A new dry mass (the oven result the next day) changes the derived columns
// and nothing else.
func TestNewDryMassChangesOnlyDerived(t *testing.T) {
	log := smallLog(t)
	var a, b bytes.Buffer
	export.Readings(&a, bundle(t, log, nil))
	export.Readings(&b, bundle(t, log, func(s *kinetics.Setup) { s.DryMassG = 26.2 }))
	ra, _ := csv.NewReader(&a).ReadAll()
	rb, _ := csv.NewReader(&b).ReadAll()
	derived := map[string]bool{"moisture_wb_pct": true, "moisture_db": true, "moisture_ratio": true, "rate_per_h_db": true}
	changed := map[string]bool{}
	for i := range ra {
		for j := range ra[i] {
			if ra[i][j] != rb[i][j] {
				changed[ra[0][j]] = true
			}
		}
	}
	for c := range changed {
		if !derived[c] {
			t.Errorf("column %s changed with the dry mass", c)
		}
	}
	if !changed["moisture_db"] || !changed["moisture_wb_pct"] {
		t.Errorf("moisture did not change with the dry mass: %v", changed)
	}
}

// Issue 9, case 7 and 12: escape sequences in a note reach no report file
// raw, and a note that looks like a formula stays text in notes.csv.
func TestNotesAreMadeSafe(t *testing.T) {
	log := smallLog(t)
	f, err := os.OpenFile(log, os.O_WRONLY|os.O_APPEND, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, text := range []string{"\x1b]0;title\x07", "\x1b[2J", "\x1b]8;;http://x\x1b\\\\link\x1b]8;;\x1b\\\\", "=HYPERLINK(\\\"http://x\\\")"} {
		fmt.Fprintf(f, `{"type":"note","t":"2026-12-02T12:00:00.000Z","kind":"note","text":"%s"}`+"\n", strings.ReplaceAll(text, "\x1b", `\u001b`))
	}
	f.Close()
	b := bundle(t, log, nil)
	dir := filepath.Join(t.TempDir(), "out")
	if err := export.Write(dir, false, b, nil); err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{export.FileNotes, export.FileReport} {
		data, _ := os.ReadFile(filepath.Join(dir, name))
		if bytes.ContainsAny(data, "\x1b\x07") {
			t.Errorf("%s holds a raw escape byte", name)
		}
		if !bytes.Contains(data, []byte(`\x1b[2J`)) {
			t.Errorf("%s does not show the escape as text", name)
		}
	}
	notes, _ := os.ReadFile(filepath.Join(dir, export.FileNotes))
	if !bytes.Contains(notes, []byte(`'=HYPERLINK`)) {
		t.Errorf("a formula in notes.csv is not quoted:\n%s", notes)
	}
}

// Issue 9, case 8: --force replaces links planted in the folder; it never
// writes through them to a file outside, and a dangling link creates
// nothing outside.
func TestForceReplacesLinks(t *testing.T) {
	b := bundle(t, smallLog(t), nil)
	root := t.TempDir()
	dir := filepath.Join(root, "out")
	os.MkdirAll(dir, 0o755)
	victim := filepath.Join(root, "precious.txt")
	os.WriteFile(victim, []byte("keep me"), 0o644)
	os.Symlink(victim, filepath.Join(dir, export.FileReadings))
	os.Symlink(victim, filepath.Join(dir, export.PlotMoisture+".png"))
	dangling := filepath.Join(root, "created-outside")
	os.Symlink(dangling, filepath.Join(dir, export.FileNotes))
	if err := export.Write(dir, true, b, nil); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(victim); string(got) != "keep me" {
		t.Errorf("a file outside the folder was overwritten through a link: %q", got)
	}
	if _, err := os.Lstat(dangling); err == nil {
		t.Errorf("a dangling link created a file outside the folder")
	}
	for _, name := range []string{export.FileReadings, export.FileNotes, export.PlotMoisture + ".png"} {
		if st, err := os.Lstat(filepath.Join(dir, name)); err != nil || !st.Mode().IsRegular() {
			t.Errorf("%s is not a plain file now: %v", name, err)
		}
	}
	if left, _ := filepath.Glob(filepath.Join(dir, ".*")); len(left) > 0 {
		t.Errorf("temporary files left: %v", left)
	}
}
