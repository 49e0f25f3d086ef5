package tui

// Events from the source and the log: readings, state, notes and setup
// written by other processes.

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"
	"time"

	tea "github.com/charmbracelet/bubbletea"

	"parch/internal/ingest"
	"parch/internal/report"
	"parch/internal/session"
)

// removalAt is a piece removed: when, and how many grams.
type removalAt struct{ h, g float64 }

// addEvents stores readings and follows the source's state.
func (m *Model) addEvents(b []ingest.Event) {
	now := m.opt.Now()
	// A long backlog (a log opened after hours of recording) is caught up
	// without working out live figures for readings no one will see: only
	// the newest liveTail get them; the full analysis covers the rest.
	readings := 0
	for i := range b {
		if b[i].Kind == ingest.KindReading {
			readings++
		}
	}
	quiet := max(0, readings-liveTail)
	m.grow(readings)
	for i := range b {
		e := &b[i]
		switch e.Kind {
		case ingest.KindReading:
			if m.start.IsZero() {
				m.start = e.T
			}
			m.addReading(e.T, e.T.Sub(m.start).Hours(), e.MassG, e.Stable.Int8(), airOf(e.Channels), quiet > 0, now)
			quiet = max(quiet-1, 0)
		case ingest.KindLost:
			m.state, m.stateSince, m.stateDetail = stateLost, now, e.Detail
		case ingest.KindBack:
			m.state, m.stateSince, m.stateDetail = stateLive, now, e.Detail
		case ingest.KindStopped:
			m.state, m.stateSince, m.stateDetail = stateStopped, now, e.Detail
			// a recorder that failed says why in the alerts
			m.stopped = !strings.HasPrefix(e.Detail, "the recording stopped")
		case ingest.KindReopened:
			if m.state == stateStopped || m.state == stateWaiting {
				m.state, m.stateSince, m.stateDetail, m.stopped = stateWaiting, now, "", false
			}
		case ingest.KindSetup:
			if e.Note != nil {
				m.applySetup(e.Note.Params)
			}
		case ingest.KindWarning, ingest.KindDeviceError, ingest.KindOverload, ingest.KindUnderload:
			// Said in the alerts until the next reading.
			m.stateDetail, m.warnAt = e.Detail, len(m.th)
		case ingest.KindUnparseable, ingest.KindLineCut:
			m.problems++
		case ingest.KindNote:
			if e.Note != nil {
				m.addNote(*e.Note)
			}
		}
	}
}

// addReading stores one reading; quiet: a reading of a backlog no one
// will see the live figures of (the analysis covers it).
func (m *Model) addReading(t time.Time, h, mass float64, st int8, air float64, quiet bool, now time.Time) {
	m.th = append(m.th, h)
	m.raw = append(m.raw, mass)
	m.stable = append(m.stable, st)
	m.airNow = air
	m.lastT, m.seen = t, now
	for len(m.pendingRemovals) > 0 && m.pendingRemovals[0].h <= h {
		m.live.Remove(m.pendingRemovals[0].g)
		m.pendingRemovals = m.pendingRemovals[1:]
	}
	if quiet {
		m.live.CatchUp(h, mass, st)
	} else {
		m.livePt = m.live.Add(h, mass, st)
		if m.livePt.Kept {
			m.lastGood = m.livePt
		}
	}
	if m.state != stateLive && m.state != stateEnded && m.state != stateStopped {
		m.state, m.stateSince, m.stateDetail = stateLive, now, ""
	}
	m.dirty = true
}

// addBacklog takes a log read before the dashboard started, on an empty
// model: the readings straight from its columns (shared, not copied: at a
// million readings a copy costs more than the rest), times as parch report
// takes them (hours from the first reading's millisecond), the notes first
// so that removals apply at their own time, and the source events' states
// as the readings among them leave them.
func (m *Model) addBacklog(l *session.Log) {
	r := &l.Readings
	n := r.Len()
	now := m.opt.Now()
	if n == 0 || len(m.th) > 0 {
		for i := range l.Notes {
			m.addNote(l.Notes[i])
		}
		for i := range l.Sources {
			if e, ok := ingest.SessionEvent(&l.Sources[i]); ok {
				m.addEvents([]ingest.Event{e})
			}
		}
		return
	}
	m.start = time.UnixMilli(r.TimeMs[0]).UTC()
	t0 := r.TimeMs[0]
	for i := range l.Notes {
		m.addNote(l.Notes[i])
	}
	// Capacity ends at the length: the first live reading appends to a copy,
	// never into the log's columns.
	m.th = make([]float64, n)
	for i, ms := range r.TimeMs {
		m.th[i] = float64(ms-t0) / 3.6e6
	}
	m.raw, m.stable = r.MassG[:n:n], r.Stable[:n:n]
	if name := airName(r.Channels); name != "" {
		m.airNow = float64(r.Channels[name][n-1])
	}
	// The analysis of it all starts now, beside the live catch-up below
	// and the program's start; Init waits for it.
	job := m.analysis()
	m.first = make(chan tea.Msg, 1)
	go func() { m.first <- job() }()
	for i := range n {
		for len(m.pendingRemovals) > 0 && m.pendingRemovals[0].h <= m.th[i] {
			m.live.Remove(m.pendingRemovals[0].g)
			m.pendingRemovals = m.pendingRemovals[1:]
		}
		if i < n-liveTail {
			// The live estimate looks back over liveWindow readings at
			// most: it needs the first (the start) and the window before
			// the tail; the analysis covers everything between.
			if i == 0 || i >= n-liveTail-liveWindow {
				m.live.CatchUp(m.th[i], m.raw[i], m.stable[i])
			}
			continue
		}
		m.livePt = m.live.Add(m.th[i], m.raw[i], m.stable[i])
		if m.livePt.Kept {
			m.lastGood = m.livePt
		}
	}
	m.lastT, m.seen = time.UnixMilli(r.TimeMs[n-1]).UTC(), now // the analysis started above has them all
	m.state, m.stateSince = stateLive, now
	var sources []ingest.Event
	for i := range l.Sources {
		if e, ok := ingest.SessionEvent(&l.Sources[i]); ok {
			sources = append(sources, e)
		}
	}
	sort.SliceStable(sources, func(i, j int) bool { return sources[i].T.Before(sources[j].T) })
	for k, e := range sources {
		m.addEvents([]ingest.Event{e})
		// Readings after this event and before the next one make the
		// source live again, as they would have one by one.
		next := int64(math.MaxInt64)
		if k+1 < len(sources) {
			next = sources[k+1].T.UnixMilli()
		}
		from := sort.Search(n, func(i int) bool { return r.TimeMs[i] > e.T.UnixMilli() })
		if from < n && r.TimeMs[from] <= next && m.state != stateLive && m.state != stateEnded && m.state != stateStopped {
			m.state, m.stateSince, m.stateDetail = stateLive, now, ""
		}
	}
}

// airName picks the air temperature among a reading's channel names.
func airName[V any](ch map[string]V) string {
	for _, k := range []string{"air_temp_c", "air_c", "t_air_c", "air_temperature_c", "temp_c", "air_temp"} {
		if _, ok := ch[k]; ok {
			return k
		}
	}
	names := make([]string, 0, len(ch))
	for k := range ch {
		names = append(names, k)
	}
	sort.Strings(names) // one choice whatever the map's order
	for _, k := range names {
		if strings.Contains(k, "temp") || strings.HasPrefix(k, "t_air") {
			return k
		}
	}
	return ""
}

// airOf picks the air temperature from a reading's channels.
func airOf(ch map[string]float64) float64 {
	if k := airName(ch); k != "" {
		return ch[k]
	}
	return math.NaN()
}

func (m *Model) checkStall(now time.Time) {
	if m.state != stateLive || m.seen.IsZero() {
		return
	}
	if since := now.Sub(m.seen); since >= m.opt.Stall {
		m.state, m.stateSince = stateStalled, m.seen
		m.stateDetail = fmt.Sprintf("no reading for %s", since.Round(time.Second))
	}
}

// applySetup takes run parameters another process wrote into the log
// (parch note --set or --unset): the figures are recomputed with them. A
// set of values that does not validate is left out and said.
func (m *Model) applySetup(params map[string]any) {
	next := m.setup
	report.ApplyEvent(&next, params)
	if err := next.Validate(); err != nil {
		m.errMsg = "setup in the log not applied: " + err.Error()
		return
	}
	m.setup = next
	m.setupGen++
	m.rebuildLive()
	m.dirty, m.lastRun = true, m.lastRun.AddDate(-1, 0, 0)
}

// liveWindow is how far back the live estimate looks (kinetics' own bound).
const liveWindow = 2000

// liveTail is how many of the newest readings of a batch get live figures.
const liveTail = 2000

// grow makes room for n more readings at once (a long log arrives in one
// batch: no growing reading by reading).
func (m *Model) grow(n int) {
	if n < 1024 {
		return
	}
	m.th = slices.Grow(m.th, n)
	m.raw = slices.Grow(m.raw, n)
	m.stable = slices.Grow(m.stable, n)
}
