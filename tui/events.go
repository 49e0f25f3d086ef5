package tui

// Events from the source and the log: readings, state, notes and setup
// written by other processes.

import (
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"parch/internal/ingest"
	"parch/internal/report"
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
			h := e.T.Sub(m.start).Hours()
			st := e.Stable.Int8()
			m.th = append(m.th, h)
			m.raw = append(m.raw, e.MassG)
			m.stable = append(m.stable, st)
			m.air = append(m.air, airOf(e.Channels))
			m.lastT, m.seen = e.T, now
			for len(m.pendingRemovals) > 0 && m.pendingRemovals[0].h <= h {
				m.live.Remove(m.pendingRemovals[0].g)
				m.pendingRemovals = m.pendingRemovals[1:]
			}
			if quiet > 0 {
				quiet--
				m.live.CatchUp(h, e.MassG, st)
			} else {
				m.livePt = m.live.Add(h, e.MassG, st)
				if m.livePt.Kept {
					m.lastGood = m.livePt
				}
			}
			if m.state != stateLive && m.state != stateEnded && m.state != stateStopped {
				m.state, m.stateSince, m.stateDetail = stateLive, now, ""
			}
			m.dirty = true
		case ingest.KindLost:
			m.state, m.stateSince, m.stateDetail = stateLost, now, e.Detail
		case ingest.KindBack:
			m.state, m.stateSince, m.stateDetail = stateLive, now, e.Detail
		case ingest.KindStopped:
			m.state, m.stateSince, m.stateDetail = stateStopped, now, e.Detail
			// a recorder that failed says why in the alerts
			m.stopped = !strings.HasPrefix(e.Detail, "the recording stopped")
		case ingest.KindStarted:
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

// airOf picks the air temperature from a reading's channels.
func airOf(ch map[string]float64) float64 {
	for _, k := range []string{"air_temp_c", "air_c", "t_air_c", "air_temperature_c", "temp_c", "air_temp"} {
		if v, ok := ch[k]; ok {
			return v
		}
	}
	for k, v := range ch {
		if strings.Contains(k, "temp") || strings.HasPrefix(k, "t_air") {
			return v
		}
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
	m.air = slices.Grow(m.air, n)
}
