package report

import (
	"bufio"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"parch/internal/kinetics"
	"parch/internal/session"
	"parch/internal/simulate"
)

// demoModel is the invented demo run read n times over its 16 h.
func demoModel(tb testing.TB, n int) *simulate.Model {
	sc := simulate.AppleRings()
	sc.IntervalS = sc.DurationH * 3600 / float64(n-1)
	m, err := simulate.NewModel(sc)
	if err != nil {
		tb.Fatal(err)
	}
	return m
}

// writeLog writes a session log of n readings of the invented demo run,
// read every 16 h/n.
func writeLog(tb testing.TB, n int) string {
	tb.Helper()
	m := demoModel(tb, n)
	path := filepath.Join(tb.TempDir(), "big.jsonl")
	f, _ := os.Create(path)
	w := bufio.NewWriterSize(f, 1<<20)
	t0 := time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC)
	b, _ := session.AppendJSON(nil, &session.Event{Type: session.TypeSession, T: t0, Params: map[string]any{"format": session.FormatName, "version": 1}})
	w.Write(b)
	m.Run(1, func(s simulate.Sample) bool {
		b, _ = session.AppendJSON(b[:0], &session.Event{Type: session.TypeReading, T: t0.Add(time.Duration(s.ElapsedS * 1e9)),
			MassG: s.MassG, Stable: session.Bool(s.Stable), Raw: s.Raw, Channels: map[string]float64{"air_temp_c": s.AirTempC}})
		w.Write(b)
		return true
	})
	w.Flush()
	f.Close()
	return path
}

func TestLoadAndAnalyzeSmallLog(t *testing.T) {
	path := writeLog(t, 5000)
	run, err := Load(path, TableOptionsNone)
	if err != nil {
		t.Fatal(err)
	}
	setup := kinetics.NewSetup()
	setup.InitialMoistureWB = 86.5
	res, err := kinetics.Analyze(run.Series, setup, kinetics.Options{})
	if err != nil || res.Readings != 5000 {
		t.Fatalf("%v %d", err, res.Readings)
	}
}

// BenchmarkReport1M: the whole of `parch report` on a 1,000,000-reading log
// (load, analyse, summarise); heap in use after reports the memory.
var benchN = 1_000_000

func BenchmarkReport1M(b *testing.B) {
	path := writeLog(b, benchN)
	setup := kinetics.NewSetup()
	setup.InitialMoistureWB = 86.5
	setup.TargetWBPct = 18
	setup.ThicknessMM = 6
	var peak uint64
	for b.Loop() {
		run, err := Load(path, TableOptionsNone)
		if err != nil {
			b.Fatal(err)
		}
		res, err := kinetics.Analyze(run.Series, setup, kinetics.Options{})
		if err != nil {
			b.Fatal(err)
		}
		Build(run, res, setup, 0)
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		peak = max(peak, ms.HeapInuse)
	}
	b.ReportMetric(float64(peak)/1e6, "heapMB")
}

// writeTable writes the invented demo run as a CSV of n rows (elapsed
// seconds, grams, stability, air temperature), read every 16 h/n.
func writeTable(tb testing.TB, n int) string {
	tb.Helper()
	m := demoModel(tb, n)
	path := filepath.Join(tb.TempDir(), "big.csv")
	f, _ := os.Create(path)
	w := bufio.NewWriterSize(f, 1<<20)
	w.WriteString("elapsed_s,mass_g,stable,air_temp_c\n")
	m.Run(1, func(s simulate.Sample) bool {
		st := 0
		if s.Stable {
			st = 1
		}
		fmt.Fprintf(w, "%.1f,%.2f,%d,%.1f\n", s.ElapsedS, s.MassG, st, s.AirTempC)
		return true
	})
	w.Flush()
	f.Close()
	return path
}

// BenchmarkLoadTable1M: reading a 1,000,000-row CSV into a run (the load
// stage of `parch report` on a table).
func BenchmarkLoadTable1M(b *testing.B) {
	path := writeTable(b, benchN)
	for b.Loop() {
		run, err := Load(path, TableOptionsNone)
		if err != nil || len(run.Series.TimeH) != benchN {
			b.Fatal(err)
		}
	}
}
