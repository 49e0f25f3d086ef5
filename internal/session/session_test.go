package session

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"testing"
	"time"
)

var t0 = time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC)

func newLog(t *testing.T) (string, *Writer) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "s.jsonl")
	w, err := Create(path, "parch test", t0)
	if err != nil {
		t.Fatal(err)
	}
	return path, w
}

func TestRoundTrip(t *testing.T) {
	path, w := newLog(t)
	events := []Event{
		{Type: TypeReading, T: t0.Add(time.Second), MassG: 200.01, Stable: Bool(true), Raw: "S S   200.01 g", Channels: map[string]float64{"air_temp_c": 60.1}},
		{Type: TypeReading, T: t0.Add(2 * time.Second), MassG: -0.5, Stable: Bool(false), Raw: `odd "quoted" \ raw`},
		{Type: TypeReading, T: t0.Add(3 * time.Second), MassG: 199.5, Channels: map[string]float64{"rh_pct": 12.5, "air_temp_c": 59.9}},
		{Type: TypeNote, T: t0.Add(4 * time.Second), Kind: "bend_test_failed", Text: "still soft — 60 °C", ReadingT: t0.Add(3 * time.Second)},
		{Type: TypeNote, T: t0.Add(5 * time.Second), Kind: "piece_removed", Value: Float(4.2)},
		{Type: TypeSetup, T: t0.Add(6 * time.Second), Params: map[string]any{"initial_moisture_wb_pct": 86.5, "product": "apple rings (invented)"}},
		{Type: TypeSource, T: t0.Add(7 * time.Second), Event: SourceUnparseable, Raw: "\x00\xff garbage"},
	}
	for i := range events {
		if err := w.Append(&events[i]); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	// Every line is valid JSON with "type" and "t" (encoding/json as the reference).
	data, _ := os.ReadFile(path)
	for i, line := range strings.Split(strings.TrimSuffix(string(data), "\n"), "\n") {
		var m map[string]any
		if err := json.Unmarshal([]byte(line), &m); err != nil {
			t.Fatalf("line %d is not JSON: %v: %s", i+1, err, line)
		}
		if m["type"] == nil || m["t"] == nil {
			t.Fatalf("line %d lacks type or t: %s", i+1, line)
		}
		if _, err := time.Parse("2006-01-02T15:04:05.000Z", m["t"].(string)); err != nil {
			t.Fatalf("line %d: t is not RFC 3339 UTC with milliseconds: %v", i+1, m["t"])
		}
	}
	l, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if l.Readings.Len() != 3 || len(l.Notes) != 2 || len(l.Setups) != 1 || len(l.Sources) != 1 || len(l.Warnings) != 0 {
		t.Fatalf("got %d readings %d notes %d setups %d sources %v", l.Readings.Len(), len(l.Notes), len(l.Setups), len(l.Sources), l.Warnings)
	}
	r := l.Readings
	if r.MassG[1] != -0.5 || r.Stable[0] != 1 || r.Stable[1] != -1 || r.Stable[2] != 0 {
		t.Errorf("readings: mass %v stable %v", r.MassG, r.Stable)
	}
	if r.TimeMs[2] != t0.Add(3*time.Second).UnixMilli() {
		t.Errorf("time = %d", r.TimeMs[2])
	}
	air := r.Channels["air_temp_c"]
	if len(air) != 3 || air[0] != float32(60.1) || !math.IsNaN(float64(air[1])) || air[2] != float32(59.9) {
		t.Errorf("air channel = %v", air)
	}
	if l.Notes[0].Text != "still soft — 60 °C" || !l.Notes[0].ReadingT.Equal(t0.Add(3*time.Second)) || *l.Notes[1].Value != 4.2 {
		t.Errorf("notes = %+v", l.Notes)
	}
	if l.Setups[0].Params["initial_moisture_wb_pct"] != 86.5 {
		t.Errorf("setup = %+v", l.Setups[0].Params)
	}
	if !l.Start.Equal(t0) {
		t.Errorf("start = %v", l.Start)
	}
}

// The fast path must agree with encoding/json on every reading line it takes.
func TestFastPathAgreesWithEncodingJSON(t *testing.T) {
	masses := []float64{0, 1e-7, 123.45, -12.5, 1e6, 99999.99}
	for i, m := range masses {
		e := Event{Type: TypeReading, T: t0.Add(time.Duration(i) * 1234567 * time.Microsecond), MassG: m, Stable: Bool(i%2 == 0), Raw: fmt.Sprintf("S %v g\t\"x\"", m), Channels: map[string]float64{"a": float64(i), "b_c": -1.5}}
		b, err := AppendJSON(nil, &e)
		if err != nil {
			t.Fatal(err)
		}
		var d Decoder
		if !d.fastReading(bytes.TrimSuffix(b, []byte("\n"))) {
			t.Fatalf("fast path refused its own line %s", b)
		}
		slow, err := decodeEvent(bytes.TrimSuffix(b, []byte("\n")))
		if err != nil {
			t.Fatal(err)
		}
		f := d.fast
		if f.TimeMs != slow.T.UnixMilli() || f.MassG != slow.MassG || (f.Stable == 1) != *slow.Stable || f.NChan != 2 || f.ChanVals[0] != slow.Channels[f.ChanNames[0]] {
			t.Errorf("fast %+v != slow %+v", f, slow)
		}
	}
}

func TestTornLastLine(t *testing.T) {
	path, w := newLog(t)
	for i := 0; i < 5; i++ {
		w.Append(&Event{Type: TypeReading, T: t0.Add(time.Duration(i) * time.Second), MassG: float64(100 - i)})
	}
	w.Close()
	f, _ := os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0)
	f.WriteString(`{"type":"reading","t":"2026-12-02T08:00:09.000Z","mass_g":9`)
	f.Close()
	l, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if l.Readings.Len() != 5 || len(l.Warnings) != 1 || !strings.Contains(l.Warnings[0], "incomplete last line") {
		t.Fatalf("readings %d warnings %q", l.Readings.Len(), l.Warnings)
	}
	// A follower goes on from the end of the last whole line: the torn one
	// is read again when it is finished.
	raw, _ := os.ReadFile(path)
	if want := int64(strings.LastIndexByte(string(raw), '\n') + 1); l.End != want {
		t.Errorf("End %d, want %d (just past the last newline)", l.End, want)
	}
	// Reopening closes the torn line and marks the gap; the torn text stays.
	w2, err := Open(path, "parch test", t0.Add(time.Minute))
	if err != nil {
		t.Fatal(err)
	}
	w2.Append(&Event{Type: TypeReading, T: t0.Add(61 * time.Second), MassG: 90})
	w2.Close()
	l, err = Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if l.Readings.Len() != 6 || l.Sources[len(l.Sources)-1].Event != SourceReopened || l.Skipped != 1 {
		t.Fatalf("after reopen: %d readings, sources %+v, skipped %d", l.Readings.Len(), l.Sources, l.Skipped)
	}
	if !strings.Contains(l.Warnings[0], "line 7") {
		t.Errorf("warning should name the line: %q", l.Warnings[0])
	}
}

func TestNeverOverwrites(t *testing.T) {
	path, w := newLog(t)
	w.Append(&Event{Type: TypeReading, T: t0, MassG: 1})
	w.Close()
	before, _ := os.ReadFile(path)
	if _, err := Create(path, "parch test", t0); err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Fatalf("Create over an existing log: err = %v", err)
	}
	after, _ := os.ReadFile(path)
	if !bytes.Equal(before, after) {
		t.Fatal("existing log changed")
	}
}

func TestNotOurs(t *testing.T) {
	dir := t.TempDir()
	cases := map[string]string{
		"csv":   "time,mass_g\n0,1\n",
		"json":  `{"hello":"world"}` + "\n",
		"empty": "",
	}
	for name, content := range cases {
		t.Run(name, func(t *testing.T) {
			path := filepath.Join(dir, name)
			os.WriteFile(path, []byte(content), 0o644)
			for what, err := range map[string]error{
				"Open":       func() error { _, err := Open(path, "x", t0); return err }(),
				"Load":       func() error { _, err := Load(path); return err }(),
				"AppendOnce": AppendOnce(path, &Event{Type: TypeNote, T: t0, Kind: "note", Text: "x"}),
			} {
				if !errors.Is(err, ErrNotSession) || !strings.Contains(err.Error(), path) {
					t.Errorf("%s: err = %v, want ErrNotSession naming the file", what, err)
				}
			}
			if got, _ := os.ReadFile(path); string(got) != content {
				t.Error("a file that is not ours was changed")
			}
		})
	}
}

// Two writers (a recorder and `parch note`) appending at once: every line
// stays whole.
func TestConcurrentAppendsDoNotInterleave(t *testing.T) {
	path, w := newLog(t)
	var wg sync.WaitGroup
	wg.Add(2)
	go func() {
		defer wg.Done()
		for i := 0; i < 2000; i++ {
			w.Append(&Event{Type: TypeReading, T: t0.Add(time.Duration(i) * time.Second), MassG: 100, Raw: strings.Repeat("r", 300)})
		}
	}()
	go func() {
		defer wg.Done()
		for i := 0; i < 200; i++ {
			if err := AppendOnce(path, &Event{Type: TypeNote, T: t0, Kind: "note", Text: strings.Repeat("n", 500)}); err != nil {
				t.Error(err)
				return
			}
		}
	}()
	wg.Wait()
	w.Close()
	l, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if l.Readings.Len() != 2000 || len(l.Notes) != 200 || l.Skipped != 0 {
		t.Fatalf("readings %d notes %d skipped %d %v", l.Readings.Len(), len(l.Notes), l.Skipped, l.Warnings)
	}
}

// A full disk stops writing with a clear error; /dev/full fails every write
// with ENOSPC (Linux null(4)).
func TestDiskFull(t *testing.T) {
	f, err := os.OpenFile("/dev/full", os.O_WRONLY, 0)
	if err != nil {
		t.Skip("no /dev/full here")
	}
	w := newWriter("/dev/full", f)
	defer w.Close()
	err = w.Append(&Event{Type: TypeReading, T: t0, MassG: 1})
	if !errors.Is(err, ErrDiskFull) {
		t.Fatalf("err = %v, want ErrDiskFull", err)
	}
	if err2 := w.Append(&Event{Type: TypeReading, T: t0, MassG: 1}); !errors.Is(err2, ErrDiskFull) {
		t.Fatalf("the error must stick: %v", err2)
	}
}

func TestRejectsNaN(t *testing.T) {
	_, err := AppendJSON(nil, &Event{Type: TypeReading, T: t0, MassG: math.NaN()})
	if err == nil {
		t.Fatal("NaN mass must be refused: JSON has no NaN")
	}
}

func TestParseStamp(t *testing.T) {
	// Reference: the standard library's time.Parse.
	for _, s := range []string{"1970-01-01T00:00:00.000Z", "2000-02-29T23:59:59.999Z", "2026-12-02T08:00:01.234Z", "2100-03-01T00:00:00.000Z"} {
		want, _ := time.Parse(time.RFC3339Nano, s)
		got, ok := parseStamp([]byte(s))
		if !ok || got != want.UnixMilli() {
			t.Errorf("parseStamp(%s) = %d, %v; want %d", s, got, ok, want.UnixMilli())
		}
	}
}

func writeBigLog(b *testing.B, n int) string {
	path := filepath.Join(b.TempDir(), "big.jsonl")
	var buf bytes.Buffer
	hdr, _ := AppendJSON(nil, &Event{Type: TypeSession, T: t0, Params: map[string]any{"format": FormatName, "version": 1}})
	buf.Write(hdr)
	line := []byte{}
	for i := 0; i < n; i++ {
		line, _ = AppendJSON(line[:0], &Event{Type: TypeReading, T: t0.Add(time.Duration(i) * time.Second), MassG: 200 - float64(i)*1e-4, Stable: Bool(true), Raw: "S S   123.45 g", Channels: map[string]float64{"air_temp_c": 60.1}})
		buf.Write(line)
	}
	os.WriteFile(path, buf.Bytes(), 0o644)
	return path
}

func BenchmarkLoad1M(b *testing.B) {
	path := writeBigLog(b, 1_000_000)
	b.ReportAllocs()
	var kept *Log
	for b.Loop() {
		l, err := Load(path)
		if err != nil || l.Readings.Len() != 1_000_000 {
			b.Fatal(err)
		}
		kept = l
	}
	// Memory that stays per stored reading (one channel), after GC.
	var ms runtime.MemStats
	kept = nil
	runtime.GC()
	runtime.ReadMemStats(&ms)
	base := ms.HeapAlloc
	kept, _ = Load(path)
	runtime.GC()
	runtime.ReadMemStats(&ms)
	b.ReportMetric(float64(ms.HeapAlloc-base)/float64(kept.Readings.Len()), "heapB/reading")
}

func BenchmarkAppend(b *testing.B) {
	path := filepath.Join(b.TempDir(), "a.jsonl")
	w, _ := Create(path, "bench", t0)
	defer w.Close()
	e := Event{Type: TypeReading, T: t0, MassG: 123.45, Stable: Bool(true), Raw: "S S   123.45 g"}
	for b.Loop() {
		w.Append(&e)
	}
}

// Issue 9, case 3: a note appended after a torn last line stands on its own
// line (it was glued to the fragment and lost while `parch note` said
// "noted"); and a recorder writing after another process's torn line loses
// no reading.
func TestAppendAfterTornLine(t *testing.T) {
	path, w := newLog(t)
	w.Append(&Event{Type: TypeReading, T: t0, MassG: 100})
	// Another process tears a line while the recorder runs.
	f, _ := os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0)
	f.WriteString(`{"type":"note","t":"2026-12-02T08:00:01.000Z","kind":"no`)
	f.Close()
	if err := w.Append(&Event{Type: TypeReading, T: t0.Add(2 * time.Second), MassG: 99}); err != nil {
		t.Fatal(err)
	}
	w.Append(&Event{Type: TypeReading, T: t0.Add(3 * time.Second), MassG: 98})
	w.Close()
	// A one-shot note after a torn last line.
	f, _ = os.OpenFile(path, os.O_WRONLY|os.O_APPEND, 0)
	f.WriteString(`{"type":"reading","t":"2026-12-02T08:00:04.000Z","mass_g":9`)
	f.Close()
	if err := AppendOnce(path, &Event{Type: TypeNote, T: t0.Add(5 * time.Second), Kind: "bend_test_passed"}); err != nil {
		t.Fatal(err)
	}
	l, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if l.Readings.Len() != 3 || len(l.Notes) != 1 || l.Notes[0].Kind != "bend_test_passed" || l.Skipped != 2 {
		t.Errorf("%d readings (want 3), notes %+v (want the bend test), %d torn lines skipped (want 2)", l.Readings.Len(), l.Notes, l.Skipped)
	}
}
