package recorder

import (
	"testing"
	"time"

	"parch/internal/ingest"
)

// Put never blocks, however slow the reader; Take hands over everything in
// order, in steps of at most MaxTake.
func TestMailbox(t *testing.T) {
	mb := NewMailbox()
	done := make(chan struct{})
	go func() {
		for i := 0; i < 20000; i++ {
			mb.Put([]ingest.Event{{MassG: float64(i)}})
		}
		mb.Close()
		close(done)
	}()
	select {
	case <-done:
	case <-time.After(5 * time.Second):
		t.Fatal("Put blocked with nobody reading")
	}
	next := 0.0
	takes := 0
	for {
		b, ok := mb.Take()
		if !ok {
			break
		}
		takes++
		if len(b) > MaxTake {
			t.Fatalf("Take returned %d events", len(b))
		}
		for _, e := range b {
			if e.MassG != next {
				t.Fatalf("event %v out of order, want %v", e.MassG, next)
			}
			next++
		}
	}
	if next != 20000 || takes < 3 {
		t.Fatalf("got %v events in %d takes", next, takes)
	}
}
