// Package recorder moves events from a source of readings into a session
// log: it converts them, notices a source that has gone quiet (stalled),
// keeps a flood of unparseable lines from swamping the log, and keeps the
// figures a status line shows. The same loop serves `parch record` and the
// dashboard.
package recorder

import (
	"context"
	"encoding/base64"
	"errors"
	"fmt"
	"time"

	"parch/internal/ingest"
	"parch/internal/session"
)

// Source is anything that delivers batches of events until ctx ends: the
// serial, file and demo sources. It returns nil when it ends normally (a
// demo run that finished) and an error when it cannot start.
// Appender is where events go: a session log's writer.
type Appender interface {
	Append(e *session.Event) error
}

type Source interface {
	Run(ctx context.Context, out chan<- []ingest.Event) error
}

// DefaultStall is how long without a reading counts as stalled.
const DefaultStall = 30 * time.Second

// noisyPerMinute caps the unparseable and cut lines written per minute; the
// rest are counted in a "suppressed" event, so a wrong baud rate overnight
// does not fill the disk.
const noisyPerMinute = 20

// Stats are the figures of a recording so far.
type Stats struct {
	Readings    int
	LastMassG   float64
	FirstT      time.Time // the first reading's own time
	LastT       time.Time // the last reading's own time
	LastSeen    time.Time // wall-clock time it arrived
	Stalled     bool
	Lost        bool
	Unparseable int
	Suppressed  int
	LastProblem string // the latest warning or loss, in words
}

// Recorder writes events to a session log.
type Recorder struct {
	Log   Appender
	Stall time.Duration
	Now   func() time.Time
	// OnBatch, when set, gets every batch after it is written (for the
	// dashboard, through a Mailbox); it must not block.
	OnBatch func([]ingest.Event)

	stats       Stats
	started     time.Time
	noisyWindow time.Time
	noisyCount  int
	suppressed  int
	pos         *ingest.Position // newest position of a followed file not yet written
	posWritten  time.Time
}

// Stats returns the figures so far.
func (r *Recorder) Stats() Stats { return r.stats }

func (r *Recorder) now() time.Time {
	if r.Now != nil {
		return r.Now()
	}
	return time.Now()
}

// Write appends a batch to the log. A write error (a full disk) is returned
// at once; what was written before stays.
func (r *Recorder) Write(batch []ingest.Event) error {
	now := r.now()
	if r.started.IsZero() {
		r.started = now
	}
	for i := range batch {
		e := &batch[i]
		var ev session.Event
		switch e.Kind {
		case ingest.KindReading:
			ev = session.Event{Type: session.TypeReading, T: e.T, MassG: e.MassG, Raw: e.Raw, Channels: e.Channels}
			switch e.Stable {
			case ingest.Stable:
				ev.Stable = session.Bool(true)
			case ingest.Unstable:
				ev.Stable = session.Bool(false)
			}
			if r.stats.Stalled {
				r.stats.Stalled = false
				if err := r.source(now, session.SourceResumed, "readings again", ""); err != nil {
					return err
				}
			}

		case ingest.KindNote:
			continue // notes in a followed log stay in that log
		case ingest.KindPosition:
			// Kept, and written at most every positionEvery (and at the
			// end): a restart re-reads at most that much, and the follower
			// skips rows the log already holds.
			r.pos = e.Pos
			if now.Sub(r.posWritten) < positionEvery {
				continue
			}
			if err := r.writePosition(now); err != nil {
				return err
			}
			continue
		case ingest.KindUnparseable, ingest.KindLineCut:
			r.stats.Unparseable++
			if !r.allowNoisy(now) {
				continue
			}
			ev = session.Event{Type: session.TypeSource, T: e.T, Event: e.Kind, Detail: e.Detail, Raw: e.Raw}
		default:
			switch e.Kind {
			case ingest.KindLost:
				r.stats.Lost = true
				r.stats.LastProblem = e.Detail
			case ingest.KindBack:
				r.stats.Lost = false
				r.stats.LastSeen = now // the stall clock restarts
			case ingest.KindWarning, ingest.KindDeviceError, ingest.KindOverload, ingest.KindUnderload:
				r.stats.LastProblem = e.Detail
			}
			ev = session.Event{Type: session.TypeSource, T: e.T, Event: e.Kind, Detail: e.Detail, Raw: e.Raw}
		}
		if err := r.Log.Append(&ev); err != nil {
			return err
		}
		if e.Kind == ingest.KindReading {
			// Counted once on disk: a reading whose write failed (a full
			// disk) is not reported as kept.
			if r.stats.Readings == 0 {
				r.stats.FirstT = e.T
			}
			r.stats.Readings++
			r.stats.LastMassG, r.stats.LastT, r.stats.LastSeen = e.MassG, e.T, now
		}
	}
	return nil
}

// positionEvery is the least time between position lines in the log.
const positionEvery = 10 * time.Second

// writePosition writes the newest position of a followed file, if any is
// not yet written.
func (r *Recorder) writePosition(now time.Time) error {
	if r.pos == nil {
		return nil
	}
	p := r.pos
	r.pos, r.posWritten = nil, now
	params := map[string]any{"file": p.File, "offset": p.Offset, "tail": base64.StdEncoding.EncodeToString(p.Tail)}
	if !p.Base.IsZero() {
		params["base"] = p.Base.UTC().Format(time.RFC3339Nano)
	}
	return r.Log.Append(&session.Event{Type: session.TypeSource, T: now, Event: session.SourcePosition,
		Detail: fmt.Sprintf("read up to byte %d", p.Offset), Params: params})
}

func (r *Recorder) allowNoisy(now time.Time) bool {
	if now.Sub(r.noisyWindow) >= time.Minute {
		if r.suppressed > 0 {
			r.source(now, session.SourceSuppressed, fmt.Sprintf("%d more unparseable lines in the last minute were not written", r.suppressed), "")
			r.suppressed = 0
		}
		r.noisyWindow, r.noisyCount = now, 0
	}
	r.noisyCount++
	if r.noisyCount > noisyPerMinute {
		r.suppressed++
		r.stats.Suppressed++
		return false
	}
	return true
}

func (r *Recorder) source(t time.Time, event, detail, raw string) error {
	return r.Log.Append(&session.Event{Type: session.TypeSource, T: t, Event: event, Detail: detail, Raw: raw})
}

// Tick checks for a stall; call it about once a second.
func (r *Recorder) Tick() error {
	now := r.now()
	stall := r.Stall
	if stall <= 0 {
		stall = DefaultStall
	}
	since := r.stats.LastSeen
	if since.IsZero() {
		since = r.started
	}
	if since.IsZero() || r.stats.Stalled || r.stats.Lost || now.Sub(since) < stall {
		return nil
	}
	r.stats.Stalled = true
	r.stats.LastProblem = fmt.Sprintf("no reading for %s", now.Sub(since).Round(time.Second))
	return r.source(now, session.SourceStalled, r.stats.LastProblem+" (balance off, cable, or a balance that must be asked: --ask)", "")
}

// ErrSourceEnded is returned by Run when the source finished by itself.
var ErrSourceEnded = errors.New("source ended")

// Run feeds src into the recorder until ctx ends, the source ends, or a
// write fails. status is called every statusEvery with the figures (may be
// nil). It returns nil when ctx ended, ErrSourceEnded when the source did,
// and the source's or the log's error otherwise.
func (r *Recorder) Run(ctx context.Context, src Source, statusEvery time.Duration, status func(Stats)) error {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	r.started = r.now()
	out := make(chan []ingest.Event, 64)
	srcErr := make(chan error, 1)
	go func() { srcErr <- src.Run(ctx, out) }()
	tick := time.NewTicker(time.Second)
	defer tick.Stop()
	var statusC <-chan time.Time
	if status != nil && statusEvery > 0 {
		st := time.NewTicker(statusEvery)
		defer st.Stop()
		statusC = st.C
	}
	finish := func(err error) error {
		// drain what the source already produced
		for {
			select {
			case b := <-out:
				if werr := r.Write(b); werr != nil {
					return werr
				}
				if r.OnBatch != nil {
					r.OnBatch(b)
				}
			default:
				return err
			}
		}
	}
	for {
		select {
		case <-ctx.Done():
			cancel()
			<-srcErr
			return r.closing(finish(nil))
		case b := <-out:
			if err := r.Write(b); err != nil {
				return err
			}
			if r.OnBatch != nil {
				r.OnBatch(b)
			}
		case err := <-srcErr:
			if err != nil {
				return r.closing(finish(err))
			}
			return r.closing(finish(ErrSourceEnded))
		case <-tick.C:
			if err := r.Tick(); err != nil {
				return err
			}
		case <-statusC:
			status(r.stats)
		}
	}
}

// closing writes what is held back when recording stops: the newest
// position of a followed file and the count of suppressed noise lines.
func (r *Recorder) closing(err error) error {
	now := r.now()
	if werr := r.writePosition(now); werr != nil && err == nil {
		err = werr
	}
	if r.suppressed > 0 {
		if werr := r.source(now, session.SourceSuppressed, fmt.Sprintf("%d more unparseable lines in the last minute were not written", r.suppressed), ""); werr != nil && err == nil {
			err = werr
		}
		r.suppressed = 0
	}
	return err
}
