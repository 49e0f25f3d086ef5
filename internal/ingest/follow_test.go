package ingest

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func TestTableHeaders(t *testing.T) {
	tests := []struct {
		header   string
		timeCol  string
		massCol  string
		tunit    time.Duration
		massUnit Unit
		channels string
	}{
		{"elapsed_s,mass_g,air_temp_c", "elapsed_s", "mass_g", time.Second, 1, "air_temp_c"},
		{"time (min),weight (kg),RH (%)", "time (min)", "weight (kg)", time.Minute, 1000, "rh_pct"},
		{"t [h]\tmass [g]\tAir temp [°C]", "t [h]", "mass [g]", time.Hour, 1, "air_temp_c"},
		{"timestamp;mass;T_air", "timestamp", "mass", 0, 1, "t_air"},
		{"\ufeffTime/min,Weight/g", "Time/min", "Weight/g", time.Minute, 1, ""},
		{`"sample","elapsed_h","net weight (g)"`, "elapsed_h", "net weight (g)", time.Hour, 1, "sample"},
	}
	for _, tc := range tests {
		t.Run(tc.header, func(t *testing.T) {
			tb, err := NewTable(tc.header, TableOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if tb.Header[tb.TimeIdx] != tc.timeCol || tb.Header[tb.MassIdx] != tc.massCol {
				t.Errorf("time %q mass %q", tb.Header[tb.TimeIdx], tb.Header[tb.MassIdx])
			}
			if tb.TimeUnit != tc.tunit || tb.MassUnit != tc.massUnit {
				t.Errorf("time unit %v mass unit %v", tb.TimeUnit, tb.MassUnit)
			}
			var names []string
			for _, c := range tb.Channels {
				names = append(names, c.Name)
			}
			if strings.Join(names, ",") != tc.channels {
				t.Errorf("channels %v, want %s", names, tc.channels)
			}
		})
	}
}

// Headers other loggers and spreadsheets write: a date and a time column,
// names in other languages, wet-basis moisture instead of mass.
func TestTableOtherShapes(t *testing.T) {
	tb, err := NewTable("Date;Time;Gewicht (g);Temp (°C)", TableOptions{})
	if err != nil {
		t.Fatal(err)
	}
	r, err := tb.Decode("2026-12-02;23:59:50;123,4;60,1")
	want := time.Date(2026, 12, 2, 23, 59, 50, 0, time.Local)
	if err != nil || !r.Time.Equal(want) || r.MassG != 123.4 || r.Channels["temp_c"] != 60.1 {
		t.Fatalf("date and time columns: %+v %v", r, err)
	}
	if _, ok := r.Channels["date"]; ok {
		t.Error("the date column became a channel")
	}
	tb, err = NewTable("t (min),moisture (% wb)", TableOptions{AllowMoisture: true})
	if err != nil {
		t.Fatal(err)
	}
	r, err = tb.Decode("30,80")
	if err != nil || math.Abs(r.MassG-4) > 1e-12 || tb.Quantity != QuantityMoistureDB {
		t.Fatalf("wet basis 80 %% is X = 4: %+v %v", r, err)
	}
	if _, err := tb.Decode("30,120"); err == nil {
		t.Error("120 %% wet basis accepted")
	}
	// A logger that writes the balance's own text into the cell.
	tb, _ = NewTable("timestamp,weight", TableOptions{})
	r, err = tb.Decode("2026-12-02T08:00:00Z,US   0.1234 kg")
	if err != nil || math.Abs(r.MassG-123.4) > 1e-9 || r.Stable != Unstable {
		t.Fatalf("balance text in a cell: %+v %v", r, err)
	}
	if _, err := NewTable("t (min),moisture (% wb)", TableOptions{}); err == nil {
		t.Error("a moisture table must be refused where a mass is needed (the file source)")
	}
}

func TestTableHeaderErrors(t *testing.T) {
	tests := []struct {
		header string
		opt    TableOptions
		want   string
	}{
		{"a,b,c", TableOptions{}, "no time column found"},
		{"time_s,b", TableOptions{}, "no mass column found"},
		{"onlyone", TableOptions{}, "at least a time and a mass column"},
		{"time_s,mass_g", TableOptions{MassCol: "weight"}, `no mass column "weight"`},
		{"time (fortnights),mass_g", TableOptions{}, `unit "fortnights"`},
		{"time_s,mass (stone)", TableOptions{}, `unit "stone"`},
	}
	for _, tc := range tests {
		_, err := NewTable(tc.header, tc.opt)
		if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.Contains(err.Error(), "header") {
			t.Errorf("NewTable(%q): err = %v, want it to name the header and say %q", tc.header, err, tc.want)
		}
	}
	// Overrides by name and by number.
	tb, err := NewTable("a,b,c", TableOptions{TimeCol: "c", MassCol: "1", TimeUnit: time.Minute})
	if err != nil || tb.TimeIdx != 2 || tb.MassIdx != 0 {
		t.Fatalf("overrides: %+v %v", tb, err)
	}
}

func TestTableRows(t *testing.T) {
	tb, _ := NewTable("time (min);weight (kg);air (°C)", TableOptions{})
	r, err := tb.Decode("90;0,1234;60,5")
	if err != nil || r.Elapsed != 90*time.Minute || math.Abs(r.MassG-123.4) > 1e-9 || r.Channels["air_c"] != 60.5 {
		t.Fatalf("decimal-comma row: %+v %v", r, err)
	}
	tb, _ = NewTable("timestamp,mass_g", TableOptions{})
	r, err = tb.Decode("2026-12-02T08:00:05.5Z,99.5")
	if err != nil || !r.Time.Equal(time.Date(2026, 12, 2, 8, 0, 5, 5e8, time.UTC)) {
		t.Fatalf("RFC 3339 row: %+v %v", r, err)
	}
	tb, _ = NewTable("time,mass_g", TableOptions{})
	if r, err = tb.Decode("1:02:03,5"); err != nil || r.Elapsed != time.Hour+2*time.Minute+3*time.Second {
		t.Fatalf("h:mm:ss row: %+v %v", r, err)
	}
	if _, err = tb.Decode("12,5"); err == nil || !strings.Contains(err.Error(), "--time-unit") {
		t.Fatalf("elapsed number with no unit: %v", err)
	}
	for _, bad := range []string{"x,1", "1:00:00,abc", "1:00:00", "1:00:00,NaN"} {
		if _, err := tb.Decode(bad); err == nil {
			t.Errorf("Decode(%q): want an error", bad)
		}
	}
}

// collect gathers readings until n have arrived.
func collect(t *testing.T, out <-chan []Event, n int, what string) []Event {
	t.Helper()
	var got []Event
	deadline := time.After(10 * time.Second)
	for len(got) < n {
		select {
		case b := <-out:
			for _, e := range b {
				if e.Kind == KindReading {
					got = append(got, e)
				}
			}
		case <-deadline:
			t.Fatalf("%s: timed out with %d of %d readings", what, len(got), n)
		}
	}
	return got
}

func appendTo(t *testing.T, path, s string) {
	t.Helper()
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_APPEND|os.O_CREATE, 0o644)
	if err != nil {
		t.Fatal(err)
	}
	f.WriteString(s)
	f.Close()
}

func startFollow(t *testing.T, f *Follow) (<-chan []Event, context.CancelFunc) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan []Event, 64)
	errc := make(chan error, 1)
	go func() { errc <- f.Run(ctx, out) }()
	t.Cleanup(func() {
		cancel()
		select {
		case err := <-errc:
			if err != nil {
				t.Errorf("Run: %v", err)
			}
		case <-time.After(5 * time.Second):
			t.Error("Run did not stop")
		}
	})
	return out, cancel
}

func TestFollowAppendPartialTruncateRotate(t *testing.T) {
	for _, mode := range []string{"notify", "poll only"} {
		t.Run(mode, func(t *testing.T) {
			dir := t.TempDir()
			path := filepath.Join(dir, "log.csv")
			appendTo(t, path, "elapsed_s,mass_g,air_temp_c\n0,200.00,60.1\n10,199.50,60.0\n")
			start := time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC)
			f := &Follow{Path: path, Start: start, Poll: 50 * time.Millisecond, noNotify: mode == "poll only"}
			out, _ := startFollow(t, f)
			got := collect(t, out, 2, "existing rows")
			if !got[1].T.Equal(start.Add(10*time.Second)) || got[1].MassG != 199.5 || got[1].Channels["air_temp_c"] != 60 {
				t.Fatalf("row 2: %+v", got[1])
			}
			// A row written in two pieces arrives once, whole.
			appendTo(t, path, "20,199.0")
			time.Sleep(150 * time.Millisecond)
			appendTo(t, path, "0,59.9\n")
			got = collect(t, out, 1, "partial row")
			if got[0].MassG != 199.0 || got[0].Channels["air_temp_c"] != 59.9 {
				t.Fatalf("joined row: %+v", got[0])
			}
			// Truncated and rewritten shorter.
			os.WriteFile(path, []byte("elapsed_s,mass_g\n30,150\n"), 0o644)
			got = collect(t, out, 1, "after truncation")
			if got[0].MassG != 150 {
				t.Fatalf("after truncation: %+v", got[0])
			}
			// Rotation: a new file renamed over the old name.
			tmp := filepath.Join(dir, "new.tmp")
			os.WriteFile(tmp, []byte("elapsed_s,mass_g\n40,140\n50,139\n"), 0o644)
			if err := os.Rename(tmp, path); err != nil {
				t.Fatal(err)
			}
			got = collect(t, out, 2, "after rotation")
			if got[0].MassG != 140 || got[1].MassG != 139 {
				t.Fatalf("after rotation: %+v", got)
			}
		})
	}
}

// Elapsed times with no --start: the newest row at the start is taken as
// written at the file's modification time.
func TestFollowElapsedBase(t *testing.T) {
	path := filepath.Join(t.TempDir(), "log.csv")
	appendTo(t, path, "time (min),mass_g\n0,10\n30,9\n")
	mt := time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC)
	os.Chtimes(path, mt, mt)
	out, _ := startFollow(t, &Follow{Path: path, Poll: 50 * time.Millisecond})
	got := collect(t, out, 2, "rows")
	if !got[1].T.Equal(mt) || !got[0].T.Equal(mt.Add(-30*time.Minute)) {
		t.Fatalf("times %v %v", got[0].T, got[1].T)
	}
}

// A long file comes in batches: its newest row is still the one taken as
// written at the modification time (the first batch's last row was, and
// the rows after it landed up to half an hour in the future); and the
// position after the catch-up is sent even when the last batch went out
// full (it was not, and a restart then read the file from its start).
func TestFollowLongFileBaseAndPosition(t *testing.T) {
	for _, rows := range []int{followBatch, followBatch + 1, 2*followBatch + 7} {
		path := filepath.Join(t.TempDir(), "log.csv")
		var b strings.Builder
		b.WriteString("elapsed_s,mass_g\n")
		for i := 0; i < rows; i++ {
			fmt.Fprintf(&b, "%d,%.2f\n", 2*i, 200-0.01*float64(i))
		}
		appendTo(t, path, b.String())
		mt := time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC)
		os.Chtimes(path, mt, mt)
		out, _ := startFollow(t, &Follow{Path: path, Poll: 50 * time.Millisecond})
		var last Event
		var pos *Position
		deadline := time.After(10 * time.Second)
		for n := 0; n < rows || pos == nil; {
			select {
			case batch := <-out:
				for _, e := range batch {
					switch e.Kind {
					case KindReading:
						last, n = e, n+1
					case KindPosition:
						pos = e.Pos
					}
				}
			case <-deadline:
				t.Fatalf("%d rows: %d readings, position %v", rows, n, pos)
			}
		}
		if !last.T.Equal(mt) {
			t.Errorf("%d rows: the newest row at %v, want the file's time %v", rows, last.T, mt)
		}
		if info, _ := os.Stat(path); pos.Offset != info.Size() || !pos.Base.Equal(mt.Add(-time.Duration(2*(rows-1))*time.Second)) {
			t.Errorf("%d rows: position %d (file %d bytes), base %v", rows, pos.Offset, info.Size(), pos.Base)
		}
	}
}

func TestFollowBadFiles(t *testing.T) {
	dir := t.TempDir()
	for name, content := range map[string]string{
		"nocols.csv":  "a,b,c\n1,2,3\n",
		"other.jsonl": `{"hello":1}` + "\n",
	} {
		path := filepath.Join(dir, name)
		os.WriteFile(path, []byte(content), 0o644)
		err := (&Follow{Path: path}).Run(context.Background(), make(chan []Event, 8))
		if err == nil || !strings.Contains(err.Error(), path) {
			t.Errorf("%s: err = %v, want an error naming the file", name, err)
		}
	}
	err := (&Follow{Path: filepath.Join(dir, "missing.csv")}).Run(context.Background(), make(chan []Event, 8))
	if err == nil || !strings.Contains(err.Error(), "does not exist") {
		t.Errorf("missing file: %v", err)
	}
}

// A bad row in the middle is reported and the rows after it still arrive.
func TestFollowBadRowKeepsGoing(t *testing.T) {
	path := filepath.Join(t.TempDir(), "log.csv")
	appendTo(t, path, "elapsed_s,mass_g\n0,10\nnot,a row\n20,9\n")
	out, _ := startFollow(t, &Follow{Path: path, Start: time.Unix(0, 0), Poll: 50 * time.Millisecond})
	var kinds []string
	deadline := time.After(5 * time.Second)
	for len(kinds) < 4 {
		select {
		case b := <-out:
			for _, e := range b {
				kinds = append(kinds, e.Kind)
			}
		case <-deadline:
			t.Fatalf("got %v", kinds)
		}
	}
	if strings.Join(kinds, ",") != "started,reading,unparseable,reading" {
		t.Fatalf("kinds %v", kinds)
	}
}
