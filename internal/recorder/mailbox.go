package recorder

import (
	"sync"

	"parch/internal/ingest"
)

// Mailbox hands batches from the recorder to a slower reader (the
// dashboard) without ever blocking the recorder: batches that arrive while
// the reader is busy are merged and taken together.
type Mailbox struct {
	mu      sync.Mutex
	pending []ingest.Event
	ready   chan struct{}
	closed  bool
}

// NewMailbox makes an empty mailbox.
func NewMailbox() *Mailbox { return &Mailbox{ready: make(chan struct{}, 1)} }

// Put adds a batch; it never blocks.
func (mb *Mailbox) Put(b []ingest.Event) {
	mb.mu.Lock()
	mb.pending = append(mb.pending, b...)
	mb.mu.Unlock()
	select {
	case mb.ready <- struct{}{}:
	default:
	}
}

// Close says no more batches will come.
func (mb *Mailbox) Close() {
	mb.mu.Lock()
	mb.closed = true
	mb.mu.Unlock()
	select {
	case mb.ready <- struct{}{}:
	default:
	}
}

// MaxTake bounds what one Take returns, so a long backlog (a log replayed
// at start) reaches the reader in steps it can show progress on.
const MaxTake = 8192

// Take waits for batches and returns what is waiting, up to MaxTake events;
// ok is false when the mailbox is closed and empty.
func (mb *Mailbox) Take() (b []ingest.Event, ok bool) {
	for {
		mb.mu.Lock()
		if n := len(mb.pending); n > 0 {
			if n > MaxTake {
				b = append([]ingest.Event(nil), mb.pending[:MaxTake]...)
				mb.pending = mb.pending[MaxTake:]
			} else {
				b, mb.pending = mb.pending, nil
			}
			mb.mu.Unlock()
			return b, true
		}
		if mb.closed {
			mb.mu.Unlock()
			return nil, false
		}
		mb.mu.Unlock()
		<-mb.ready
	}
}

// Chan pumps the mailbox into a channel, closed when the mailbox is.
func (mb *Mailbox) Chan() <-chan []ingest.Event {
	out := make(chan []ingest.Event)
	go func() {
		defer close(out)
		for {
			b, ok := mb.Take()
			if !ok {
				return
			}
			out <- b
		}
	}()
	return out
}
