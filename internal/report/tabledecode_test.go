package report

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
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
	load := func(rows int64, batch int) string {
		oldRows, oldBatch := parallelRows, batchRows
		parallelRows, batchRows = rows, batch
		defer func() { parallelRows, batchRows = oldRows, oldBatch }()
		run, err := Load(path, TableOptionsNone)
		if err != nil {
			t.Fatal(err)
		}
		return fmt.Sprintf("%v\n%v\n%v\n%v\n%v\n%v\n%q", run.Start, run.Series.TimeH, run.Series.Value, run.Series.Stable, run.TimesMs, run.Channels, run.Warnings)
	}
	want := load(1<<40, 1<<20) // one goroutine, one batch: row by row
	if !strings.Contains(want, "line 19 skipped") || !strings.Contains(want, "NUL") || !strings.Contains(want, "lines skipped in all") {
		t.Fatalf("the row-by-row load does not name the lines not read:\n%s", want[strings.LastIndex(want, "\n"):])
	}
	for _, batch := range []int{1, 7, 64} {
		if got := load(0, batch); got != want {
			t.Errorf("batches of %d rows on every core differ from row by row", batch)
		}
	}
}

// FuzzParallelLoad: any file loads the same in batches on every core as row
// by row (or fails the same way).
func FuzzParallelLoad(f *testing.F) {
	f.Add([]byte("elapsed_s,mass_g\n0,10\n1,9.5\n2,x\n3,9\n"))
	f.Add([]byte("time,mass_g,t_air\n2026-12-02T08:00:00Z,5,60\n2026-12-02T08:00:01Z,4,\n\x00\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		path := filepath.Join(t.TempDir(), "f.csv")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		load := func(rows int64, batch int) string {
			oldRows, oldBatch := parallelRows, batchRows
			parallelRows, batchRows = rows, batch
			defer func() { parallelRows, batchRows = oldRows, oldBatch }()
			run, err := Load(path, TableOptionsNone)
			if err != nil {
				return "error: " + err.Error()
			}
			return fmt.Sprintf("%v|%v|%v|%v|%v|%v|%q", run.Start, run.Series.TimeH, run.Series.Value, run.Series.Stable, run.TimesMs, run.Channels, run.Warnings)
		}
		if a, b := load(1<<40, 1<<20), load(0, 2); a != b {
			t.Errorf("row by row:\n%s\nin batches:\n%s", a, b)
		}
	})
}
