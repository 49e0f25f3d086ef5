package tui

import (
	"time"

	"parch/internal/ingest"
	"parch/internal/kinetics"
	"parch/internal/session"
)

// eventsMsg is a batch from the source.
type eventsMsg []ingest.Event

// eventsClosedMsg: the source's channel closed (the source ended).
type eventsClosedMsg struct{}

// analysisMsg carries a background analysis of the first n readings.
type analysisMsg struct {
	res   *kinetics.Result
	n     int
	setup kinetics.Setup
	gen   int // the setup generation it was computed with
	err   error
	took  time.Duration
}

// noteSavedMsg: a note or setup line was written (or not).
type noteSavedMsg struct {
	ev  session.Event
	err error
}

// tickMsg drives the clock and the stall check, once a second.
type tickMsg time.Time
