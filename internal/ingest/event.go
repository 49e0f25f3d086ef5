package ingest

import (
	"time"

	"parch/internal/session"
)

// Event kinds other than KindReading name what happened to the source. They
// are the words the session log uses for its "source" events.
const (
	KindReading     = "reading"
	KindStarted     = "started"
	KindLost        = "lost"
	KindBack        = "back"
	KindOverload    = "overload"
	KindUnderload   = "underload"
	KindDeviceError = "device_error"
	KindUnparseable = "unparseable"
	KindLineCut     = "line_cut"
	KindWarning     = "warning"
	KindNote        = "note"     // a note in a followed session log (Note is set)
	KindPosition    = "position" // how far a followed file has been read (Pos is set)
	KindStopped     = "stopped"  // the recording stopped (a full disk...): Detail says why
	KindSetup       = "setup"    // run parameters in a followed session log (Note holds the setup event)
	// KindReopened: a followed session log's recording started again after
	// it had stopped.
	KindReopened = "reopened"
)

// Position is how far a followed file has been read, for resuming after a
// restart without recording its rows twice: the byte offset of the next
// line, the bytes just before it (to tell the same file from a rotated or
// rewritten one), and the clock time of elapsed zero for tables of elapsed
// time (zero for clock-time tables).
type Position struct {
	File   string
	Offset int64
	Tail   []byte
	Base   time.Time
}

// Event is what a source hands on: a reading, or something that happened to
// the source. Sources send them in batches ([]Event) so a consumer does its
// work once per batch.
type Event struct {
	T        time.Time
	Kind     string
	MassG    float64            // KindReading
	Stable   Stability          // KindReading
	Raw      string             // the text as received, when there was one
	Channels map[string]float64 // other measured values (air_temp_c, rh_pct...)
	Detail   string             // for non-readings: what happened, in words
	Note     *session.Event     // KindNote, KindSetup: the event as the followed log has it
	Pos      *Position          // KindPosition
}

// FromLine turns a parsed balance line into an event.
func FromLine(t time.Time, raw string, l Line) Event {
	e := Event{T: t, Raw: raw}
	switch l.Kind {
	case LineReading:
		e.Kind, e.MassG, e.Stable = KindReading, l.MassG, l.Stable
	case LineOverload:
		e.Kind, e.Detail = KindOverload, "the balance reports overload (load above its range)"
	case LineUnderload:
		e.Kind, e.Detail = KindUnderload, "the balance reports underload (pan or rack off the balance?)"
	case LineError:
		e.Kind, e.Detail = KindDeviceError, "the balance reports an error: "+l.Reason
	default:
		e.Kind, e.Detail = KindUnparseable, l.Reason
	}
	return e
}
