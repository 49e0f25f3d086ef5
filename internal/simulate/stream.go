package simulate

import (
	"context"
	"time"

	"parch/internal/ingest"
)

// DefaultSpeed runs the 16 h demo in about a minute and a half.
const DefaultSpeed = 640

// Source streams a simulated run as a balance would deliver it, time
// compressed by Speed. Reading times are Start plus the simulated elapsed
// time, so a 16 h run looks like 16 h in the log.
type Source struct {
	Model *Model
	Seed  uint64
	Speed float64   // simulated seconds per real second; ≤ 0 means as fast as possible
	Start time.Time // time of the first reading
	// Batch is the real-time interval between batches (default 100 ms).
	Batch time.Duration
}

// Run sends batches of events to out until the run ends or ctx is done. It
// returns nil at the end of the run.
func (s *Source) Run(ctx context.Context, out chan<- []ingest.Event) error {
	every := s.Batch
	if every <= 0 {
		every = 100 * time.Millisecond
	}
	began := time.Now()
	var batch []ingest.Event
	send := func() bool {
		if len(batch) == 0 {
			return true
		}
		select {
		case out <- batch:
			batch = nil
			return true
		case <-ctx.Done():
			return false
		}
	}
	select {
	case out <- []ingest.Event{{T: s.Start, Kind: ingest.KindStarted, Detail: "demo: " + s.Model.s.Name}}:
	case <-ctx.Done():
		return ctx.Err()
	}
	stopped := false
	s.Model.Run(s.Seed, func(smp Sample) bool {
		if s.Speed > 0 {
			due := began.Add(time.Duration(smp.ElapsedS / s.Speed * float64(time.Second)))
			if wait := time.Until(due); wait > 0 {
				if !send() {
					stopped = true
					return false
				}
				if wait < every {
					wait = every
				}
				select {
				case <-time.After(wait):
				case <-ctx.Done():
					stopped = true
					return false
				}
			}
		}
		st := ingest.Unstable
		if smp.Stable {
			st = ingest.Stable
		}
		batch = append(batch, ingest.Event{
			T:        s.Start.Add(time.Duration(smp.ElapsedS * float64(time.Second))),
			Kind:     ingest.KindReading,
			MassG:    smp.MassG,
			Stable:   st,
			Raw:      smp.Raw,
			Channels: map[string]float64{"air_temp_c": smp.AirTempC},
		})
		if len(batch) >= 4096 && !send() {
			stopped = true
			return false
		}
		return true
	})
	if stopped || !send() {
		return ctx.Err()
	}
	return nil
}
