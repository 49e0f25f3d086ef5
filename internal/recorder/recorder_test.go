package recorder

import (
	"path/filepath"
	"testing"
	"time"

	"parch/internal/ingest"
	"parch/internal/session"
)

type clock struct{ t time.Time }

func (c *clock) now() time.Time { return c.t }

func newRec(t *testing.T) (*Recorder, *clock, string) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "s.jsonl")
	c := &clock{t: time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC)}
	w, err := session.Create(path, "test", c.t)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { w.Close() })
	return &Recorder{Log: w, Stall: 30 * time.Second, Now: c.now}, c, path
}

func sources(t *testing.T, path string) []string {
	t.Helper()
	l, err := session.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	var ev []string
	for _, s := range l.Sources {
		ev = append(ev, s.Event)
	}
	return ev
}

func TestStallAndResume(t *testing.T) {
	r, c, path := newRec(t)
	read := func() {
		if err := r.Write([]ingest.Event{{T: c.t, Kind: ingest.KindReading, MassG: 100, Stable: ingest.Stable}}); err != nil {
			t.Fatal(err)
		}
	}
	read()
	for i := 0; i < 29; i++ {
		c.t = c.t.Add(time.Second)
		r.Tick()
	}
	if r.Stats().Stalled {
		t.Fatal("stalled before 30 s")
	}
	c.t = c.t.Add(2 * time.Second)
	r.Tick()
	r.Tick() // only one stalled event per stall
	if !r.Stats().Stalled {
		t.Fatal("not stalled after 31 s")
	}
	read()
	if r.Stats().Stalled {
		t.Fatal("still stalled after a reading")
	}
	r.Log.(*session.Writer).Sync()
	if got := sources(t, path); len(got) != 2 || got[0] != "stalled" || got[1] != "resumed" {
		t.Fatalf("source events %v, want [stalled resumed]", got)
	}
}

// A wrong baud rate all night must not fill the disk: at most 20
// unparseable lines a minute are written, the rest counted.
func TestUnparseableFloodIsLimited(t *testing.T) {
	r, c, path := newRec(t)
	for i := 0; i < 600; i++ { // 10 lines a second for a minute
		c.t = c.t.Add(100 * time.Millisecond)
		r.Write([]ingest.Event{{T: c.t, Kind: ingest.KindUnparseable, Raw: "\x8f\x13", Detail: "no number"}})
	}
	c.t = c.t.Add(time.Second)
	r.Write([]ingest.Event{{T: c.t, Kind: ingest.KindUnparseable, Raw: "x", Detail: "no number"}})
	got := sources(t, path)
	n, suppressed := 0, 0
	for _, e := range got {
		switch e {
		case "unparseable":
			n++
		case "suppressed":
			suppressed++
		}
	}
	if n > 2*noisyPerMinute || suppressed != 1 || r.Stats().Unparseable != 601 {
		t.Fatalf("%d unparseable written, %d suppressed events, %d counted", n, suppressed, r.Stats().Unparseable)
	}
}

// fullAfter is a log whose disk fills after n lines.
type fullAfter struct{ n int }

func (f *fullAfter) Append(*session.Event) error {
	if f.n == 0 {
		return session.ErrDiskFull
	}
	f.n--
	return nil
}

// Issue 9, case 12: on a full disk the count of readings kept is the
// count on disk, not one more.
func TestDiskFullCountsWhatIsKept(t *testing.T) {
	c := &clock{t: time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC)}
	r := &Recorder{Log: &fullAfter{n: 3}, Now: c.now}
	var batch []ingest.Event
	for i := 0; i < 5; i++ {
		batch = append(batch, ingest.Event{T: c.t.Add(time.Duration(i) * time.Second), Kind: ingest.KindReading, MassG: 100})
	}
	if err := r.Write(batch); err == nil {
		t.Fatal("no error from a full disk")
	}
	if got := r.Stats().Readings; got != 3 {
		t.Errorf("%d readings counted as kept, want the 3 written", got)
	}
}
