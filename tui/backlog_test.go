package tui

import (
	"math"
	"testing"
	"time"

	"parch/internal/ingest"
	"parch/internal/kinetics"
	"parch/internal/session"
)

// backlogLog is an invented run of 6 h as a log read back: readings every
// 10 s, a piece of 4 g noted at 3 h, the recording stopped at the end.
func backlogLog(t testing.TB) (*session.Log, []ingest.Event) {
	evs := simEvents(t.(*testing.T), 6)
	l := &session.Log{Readings: session.Readings{Channels: map[string][]float32{"air_temp_c": nil}}}
	var replay []ingest.Event
	for _, e := range evs {
		ms := e.T.UnixMilli()
		l.Readings.TimeMs = append(l.Readings.TimeMs, ms)
		l.Readings.MassG = append(l.Readings.MassG, e.MassG)
		l.Readings.Stable = append(l.Readings.Stable, e.Stable.Int8())
		l.Readings.Channels["air_temp_c"] = append(l.Readings.Channels["air_temp_c"], float32(e.Channels["air_temp_c"]))
		e.T = time.UnixMilli(ms).UTC() // as the log holds it
		replay = append(replay, e)
	}
	g := 4.0
	note := session.Event{Type: session.TypeNote, T: start.Add(3*time.Hour + time.Minute), ReadingT: start.Add(3 * time.Hour),
		Kind: kindRemoved, Text: "piece removed", Value: &g}
	stop := session.Event{Type: session.TypeSource, T: start.Add(6*time.Hour + time.Minute), Event: session.SourceStopped, Detail: "recording stopped"}
	l.Notes, l.Sources = []session.Event{note}, []session.Event{stop}
	replay = append(replay, ingest.Event{T: note.T, Kind: ingest.KindNote, Note: &note})
	e, _ := ingest.SessionEvent(&stop)
	replay = append(replay, e)
	return l, replay
}

// A log opened at the start (its columns taken at once, the analysis
// started before the program runs) ends as the same readings, notes, state
// and figures as the same log fed to the dashboard as events; and the
// figures are Analyze's of the readings as parch report takes them
// (hours from the first reading's millisecond).
func TestBacklogAsEvents(t *testing.T) {
	l, replay := backlogLog(t)
	now := start.Add(8 * time.Hour)
	opt := Options{Title: "s.jsonl · watching", Setup: demoSetup(), AirLow: math.NaN(), AirHigh: math.NaN(),
		Now: func() time.Time { return now }, TickEvery: -1}

	withBacklog := opt
	withBacklog.Backlog = l
	a := New(withBacklog)
	for _, c := range flatten(a.Init()) {
		if am, ok := c().(analysisMsg); ok {
			next, _ := a.Update(am)
			a = next.(Model)
		}
	}
	b := step(t, New(opt), eventsMsg(replay))

	if len(a.th) != len(b.th) || a.state != stateStopped || b.state != stateStopped {
		t.Fatalf("readings %d and %d, states %q and %q; want the same count, both stopped", len(a.th), len(b.th), a.state, b.state)
	}
	for i := range a.th {
		if math.Abs(a.th[i]-b.th[i]) > 1e-12 || a.raw[i] != b.raw[i] || a.stable[i] != b.stable[i] {
			t.Fatalf("reading %d differs: %v %v %v, %v %v %v", i, a.th[i], a.raw[i], a.stable[i], b.th[i], b.raw[i], b.stable[i])
		}
	}
	if len(a.notes) != 1 || len(b.notes) != 1 || a.notes[0] != b.notes[0] {
		t.Errorf("notes %v and %v", a.notes, b.notes)
	}
	if a.res == nil || b.res == nil || a.resN != len(a.th) {
		t.Fatalf("no figures of every reading: %v %v", a.res, b.res)
	}
	// The same numbers, not near ones: the same readings and setup.
	s := kinetics.Series{TimeH: make([]float64, l.Readings.Len()), Value: l.Readings.MassG, Stable: l.Readings.Stable}
	for i, ms := range l.Readings.TimeMs {
		s.TimeH[i] = float64(ms-l.Readings.TimeMs[0]) / 3.6e6
	}
	setup := demoSetup()
	setup.Removals = []kinetics.Removal{{ElapsedH: 3, MassG: 4}}
	want, err := kinetics.Analyze(s, setup, kinetics.Options{})
	if err != nil {
		t.Fatal(err)
	}
	// The backlog's times are the report's to the bit; events carry their
	// own nanoseconds, so theirs may differ in the last digits.
	for i, r := range []*kinetics.Result{a.res, b.res} {
		tol := []float64{0, 1e-12}[i]
		near := func(x, y float64) bool { return math.Abs(x-y) <= tol*math.Abs(y) }
		if !near(r.FinalMoistureDB, want.FinalMoistureDB) || !near(r.Projection.TargetH, want.Projection.TargetH) || !near(r.DryMassG, want.DryMassG) {
			t.Errorf("figures (%s): final X %v, projected %v h, solids %v g; report's %v, %v, %v", []string{"backlog", "events"}[i],
				r.FinalMoistureDB, r.Projection.TargetH, r.DryMassG, want.FinalMoistureDB, want.Projection.TargetH, want.DryMassG)
		}
	}
	if a.lastGood.X != b.lastGood.X || math.IsNaN(a.lastGood.X) {
		t.Errorf("live moisture %v, from events %v", a.lastGood.X, b.lastGood.X)
	}
	if !(a.airNow > 50) {
		t.Errorf("air %v: the newest reading's air temperature is not shown", a.airNow)
	}
	// A reading after the backlog goes on the end, not into the log's
	// columns.
	last := l.Readings.MassG[len(l.Readings.MassG)-1]
	a = step(t, a, eventsMsg{{T: time.UnixMilli(l.Readings.TimeMs[len(l.Readings.TimeMs)-1]).Add(10 * time.Second), Kind: ingest.KindReading, MassG: last - 0.01, Stable: ingest.Stable}})
	if len(a.th) != len(b.th)+1 || len(l.Readings.MassG) != len(b.th) || cap(l.Readings.MassG) < len(b.th) {
		t.Errorf("after one more reading: %d readings (want %d), the log's column %d long", len(a.th), len(b.th)+1, len(l.Readings.MassG))
	}
}

// BenchmarkOpenBacklog1M: a dashboard opened on a log of 1,000,000
// readings already read: the columns taken, the live estimate caught up
// and the first analysis of everything.
func BenchmarkOpenBacklog1M(b *testing.B) {
	const n = 1_000_000
	l := &session.Log{}
	for i := 0; i < n; i++ {
		l.Readings.TimeMs = append(l.Readings.TimeMs, start.Add(time.Duration(i)*100*time.Millisecond).UnixMilli())
		l.Readings.MassG = append(l.Readings.MassG, 27+170/(1+float64(i)/2e5))
		l.Readings.Stable = append(l.Readings.Stable, 1)
	}
	for b.Loop() {
		m := New(Options{Setup: demoSetup(), TickEvery: -1, Backlog: l, Now: func() time.Time { return start.Add(28 * time.Hour) }})
		for _, c := range flatten(m.Init()) {
			if am, ok := c().(analysisMsg); ok {
				next, _ := m.Update(am)
				m = next.(Model)
			}
		}
		if m.res == nil || len(m.th) != n {
			b.Fatal("no figures")
		}
	}
}

// A long run is analysed again only at a pace that leaves the core mostly
// free: at least analyzeShare times the last analysis's length apart (the
// issue asks under 10 % of a core; this keeps it near 4 %).
func TestAnalysisPace(t *testing.T) {
	now := start.Add(time.Hour)
	m := New(Options{Setup: demoSetup(), TickEvery: -1, Now: func() time.Time { return now }, AirLow: math.NaN(), AirHigh: math.NaN()})
	m = step(t, m, eventsMsg(simEvents(t, 1)))
	if m.res == nil {
		t.Fatal("no first analysis")
	}
	m.lastTook = time.Second // as if the run were long
	more := func(at time.Time) {
		m.addEvents([]ingest.Event{{T: at, Kind: ingest.KindReading, MassG: m.raw[len(m.raw)-1] - 0.01, Stable: ingest.Stable}})
	}
	for _, c := range []struct {
		after time.Duration
		want  bool
	}{{5 * time.Second, false}, {29 * time.Second, false}, {31 * time.Second, true}} {
		now = m.lastRun.Add(c.after)
		more(start.Add(time.Hour + c.after))
		if got := m.maybeAnalyze() != nil; got != c.want {
			t.Errorf("%v after an analysis that took 1 s: analyse again %v, want %v", c.after, got, c.want)
		}
	}
	// When the readings pause, the figures catch up after ten analyses'
	// length of quiet (the screen then agrees with parch report), not
	// the full share.
	m.analysing, m.lastRun = false, now // the analysis started above is done
	more(start.Add(2 * time.Hour))
	for _, c := range []struct {
		after time.Duration
		want  bool
	}{{9 * time.Second, false}, {11 * time.Second, true}} {
		now = m.lastRun.Add(c.after)
		if got := m.maybeAnalyze() != nil; got != c.want {
			t.Errorf("%v of quiet after an analysis that took 1 s: analyse again %v, want %v", c.after, got, c.want)
		}
	}
}
