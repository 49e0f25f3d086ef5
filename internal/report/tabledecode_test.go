package report

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"parch/internal/ingest"
	"parch/internal/kinetics"
	"parch/internal/textline"
)

// A table read in batches on every core is the table read row by row:
// the same readings in the same order, the same warnings naming the same
// lines, whatever the batch size. The file mixes what a logger's file can
// hold: clock times with milliseconds, a row that is not a
// number, a line with NUL bytes, blank lines, CRLF, quoted fields, two
// columns of one name, a line over the length limit.
func TestParallelLoadIsSequentialLoad(t *testing.T) {
	var b strings.Builder
	b.WriteString("time,mass_g,stable,air_temp_c,air_temp_c,note\r\n")
	for i := 0; i < 500; i++ {
		ts := fmt.Sprintf("2026-12-02T08:%02d:%02d.%03dZ", i/60, i%60, i%7)
		switch {
		case i == 17:
			b.WriteString(ts + ",heavy,1,60.1,61,\r\n")
		case i == 99:
			b.WriteString("\x00\x00\x00\n")
		case i == 123:
			b.WriteString("\r\n\n")
		case i == 200:
			b.WriteString(ts + ",12," + strings.Repeat("9", MaxLineBytes+10) + "\n")
		case i%50 == 0:
			b.WriteString(fmt.Sprintf("%s,\"%.2f\",0,,59.9,\"a, b\"\n", ts, 200-0.1*float64(i)))
		default:
			b.WriteString(fmt.Sprintf("%s,%.2f,1,%.1f,60,x\n", ts, 200-0.1*float64(i), 60+float64(i%3)/10))
		}
	}
	for i := 0; i < 12; i++ { // more than ten lines not read: the summary line
		b.WriteString("2026-12-02T09:00:00Z,x\n")
	}
	path := filepath.Join(t.TempDir(), "mixed.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	load := func(rows int64, batch int) string { return loadWith(path, rows, batch) }
	want := rowByRow(t, path)
	if !strings.Contains(want, "line 19 skipped") || !strings.Contains(want, "NUL") || !strings.Contains(want, "lines skipped in all") {
		t.Fatalf("the row-by-row load does not name the lines not read:\n%s", want[strings.LastIndex(want, "|"):])
	}
	for _, c := range []struct {
		rows  int64
		batch int
	}{{1 << 40, 1 << 20}, {0, 1}, {0, 7}, {0, 64}} {
		if got := load(c.rows, c.batch); got != want {
			t.Errorf("batches of %d rows (parallel from %d lines) differ from row by row:\n%s\n%s", c.batch, c.rows, got, want)
		}
	}
}

// FuzzParallelLoad: any file loads the same in batches on every core as row
// by row (or fails the same way).
func FuzzParallelLoad(f *testing.F) {
	f.Add([]byte("elapsed_s,mass_g\n0,10\n1,9.5\n2,x\n3,9\n"))
	f.Add([]byte("time,mass_g,t_air\n2026-12-02T08:00:00Z,5,60\n2026-12-02T08:00:01Z,4,\n\x00\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) == 0 || data[0] == '{' {
			return // nothing, or a session log: not the table loader
		}
		path := filepath.Join(t.TempDir(), "f.csv")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		load := func(rows int64, batch int) string { return loadWith(path, rows, batch) }
		want := rowByRow(t, path)
		if a, b := load(1<<40, 1<<20), load(0, 2); a != want || b != want {
			t.Errorf("row by row:\n%s\none batch:\n%s\nin batches:\n%s", want, a, b)
		}
	})
}

// loadWith loads path with Load, decoding on every core from rows lines
// in batches of batch rows, formatted as the tests compare.
func loadWith(path string, rows int64, batch int) string {
	oldRows, oldBatch := parallelRows, batchRows
	parallelRows, batchRows = rows, batch
	defer func() { parallelRows, batchRows = oldRows, oldBatch }()
	run, err := Load(path, TableOptionsNone)
	if err != nil {
		return "error: " + err.Error()
	}
	return formatRun(run)
}

func formatRun(run *Run) string {
	return fmt.Sprintf("%v|%v|%v|%v|%v|%v|%q", run.Start, run.Series.TimeH, run.Series.Value, run.Series.Stable, run.TimesMs, run.Channels, run.Warnings)
}

// rowByRow loads a table with loadRowByRow, formatted as the tests compare.
func rowByRow(t testing.TB, path string) string {
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	lr := textline.NewReader(f, MaxLineBytes)
	if len(lr.Peek(1)) == 0 {
		return "error: empty"
	}
	run, err := loadRowByRow(path, lr, ingest.TableOptions{AllowMoisture: true})
	if err != nil {
		return "error: " + err.Error()
	}
	return formatRun(run)
}

// loadRowByRow is the table loader as it was before batches (parch
// df2cf06): every row decoded and appended in turn. It is the reference
// the batched loader is held to.
func loadRowByRow(path string, lr *textline.Reader, opt ingest.TableOptions) (*Run, error) {
	lines := int64(0)
	run := &Run{Path: path, Format: "csv", Params: map[string]float64{}, Channels: map[string][]float32{}}
	var tb *ingest.Table
	var chans [][]float32 // by channel; nil for the second of two columns of one name
	lineNo := 0
	var t0 time.Time
	var e0 time.Duration
	first := true
	skipped := 0
	for {
		raw, long, err := lr.Next()
		lineNo = lr.No
		if errors.Is(err, textline.ErrBinary) {
			if tb == nil {
				return nil, fmt.Errorf("%s: %w: expected a CSV with a header row", path, err)
			}
			skipped++
			if skipped <= 10 {
				run.Warnings = append(run.Warnings, fmt.Sprintf("%s: %v, skipped", path, err))
			}
			continue
		}
		if err != nil && err != io.EOF {
			return nil, fmt.Errorf("%s: %w", path, err)
		}
		if long > 0 {
			if tb == nil {
				return nil, fmt.Errorf("%s: line 1 (the header) is %d bytes long: expected a CSV header row", path, long)
			}
			skipped++
			if skipped <= 10 {
				run.Warnings = append(run.Warnings, fmt.Sprintf("%s: line %d skipped: %d bytes long, over the %d-byte limit", path, lineNo, long, MaxLineBytes))
			}
			continue
		}
		raw = bytes.TrimRight(raw, "\r\n")
		if len(raw) > 0 {
			if tb == nil {
				if tb, err = ingest.NewTable(string(raw), opt); err != nil {
					return nil, fmt.Errorf("%s: %w", path, err)
				}
				tb.ChannelValues = make([]float64, len(tb.Channels))
				n := int(min(max(lines-1, 0), 1<<28)) // the rows, as counted
				run.Series.TimeH = make([]float64, 0, n)
				run.Series.Value = make([]float64, 0, n)
				run.Series.Stable = make([]int8, 0, n)
				seen := map[string]bool{}
				chans = make([][]float32, len(tb.Channels))
				for j, c := range tb.Channels {
					switch {
					case c.Name == ChannelInvented:
						run.Invented = true // the mark is the column; its values are not kept
					case !seen[c.Name]: // two columns of one name: the first is kept
						chans[j] = make([]float32, 0, n)
					}
					seen[c.Name] = true
				}
				continue
			}
			if len(bytes.TrimSpace(raw)) == 0 {
				continue
			}
			// The line is read in place: Decode keeps nothing of it once it
			// returns (its errors are formatted copies), and the reader's
			// buffer is not touched until the next line.
			row, derr := tb.Decode(string(raw))
			if derr != nil {
				skipped++
				if skipped <= 10 {
					run.Warnings = append(run.Warnings, fmt.Sprintf("%s: line %d skipped: %v", path, lineNo, derr))
				}
				continue
			}
			if first {
				first = false
				t0, e0 = row.Time, row.Elapsed
				if !t0.IsZero() {
					run.Start = t0.UTC()
				}
			}
			var h float64
			if !row.Time.IsZero() {
				h = row.Time.Sub(t0).Hours()
				if run.TimesMs == nil { // clock times: kept for the record
					run.TimesMs = make([]int64, len(run.Series.TimeH), cap(run.Series.TimeH))
				}
			} else {
				h = (row.Elapsed - e0).Hours()
			}
			if run.TimesMs != nil {
				var ms int64
				if !row.Time.IsZero() {
					ms = row.Time.UnixMilli()
				}
				run.TimesMs = append(run.TimesMs, ms)
			}
			run.Series.TimeH = append(run.Series.TimeH, h)
			run.Series.Value = append(run.Series.Value, row.MassG)
			run.Series.Stable = append(run.Series.Stable, row.Stable.Int8())
			for j, col := range chans {
				if col != nil {
					chans[j] = append(col, float32(tb.ChannelValues[j]))
				}
			}
		}
		if err != nil {
			if errors.Is(err, io.EOF) {
				break
			}
			return nil, fmt.Errorf("read %s: %w", path, err)
		}
	}
	if tb != nil {
		for j, c := range tb.Channels {
			if chans[j] != nil {
				run.Channels[c.Name] = chans[j]
			}
		}
	}
	if tb == nil {
		return nil, fmt.Errorf("%s: no header row: expected a CSV with a header like elapsed_s,mass_g", path)
	}
	if skipped > 10 {
		run.Warnings = append(run.Warnings, fmt.Sprintf("%s: %d lines skipped in all", path, skipped))
	}
	n := len(run.Series.TimeH)
	for name, col := range run.Channels {
		for len(col) < n {
			col = append(col, float32(math.NaN()))
		}
		run.Channels[name] = col
	}
	if _, ok := run.Channels[ChannelInvented]; ok {
		run.Invented = true
		delete(run.Channels, ChannelInvented)
	}
	switch tb.Quantity {
	case ingest.QuantityMoistureDB:
		run.Series.Kind = kinetics.SeriesMoistureDB
	case ingest.QuantityMR:
		run.Series.Kind = kinetics.SeriesMR
	}
	return run, nil
}
