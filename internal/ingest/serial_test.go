package ingest

import (
	"context"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/creack/pty"
	"go.bug.st/serial"
	"golang.org/x/term"
)

// fakeBalance is a real pseudo-terminal whose master side plays a balance
// sending a line every few milliseconds.
type fakeBalance struct {
	master, slave *os.File
	stop          chan struct{}
	wg            sync.WaitGroup
}

func newFakeBalance(t *testing.T, line func(i int) string, every time.Duration) *fakeBalance {
	t.Helper()
	master, slave, err := pty.Open()
	if err != nil {
		t.Skipf("no pseudo-terminal here: %v", err)
	}
	// Raw mode at once, or the line discipline turns \r\n into \n\n and echoes.
	if _, err := term.MakeRaw(int(slave.Fd())); err != nil {
		t.Fatal(err)
	}
	b := &fakeBalance{master: master, slave: slave, stop: make(chan struct{})}
	b.wg.Add(1)
	go func() {
		defer b.wg.Done()
		for i := 0; ; i++ {
			select {
			case <-b.stop:
				return
			case <-time.After(every):
			}
			if _, err := master.WriteString(line(i)); err != nil {
				return
			}
		}
	}()
	return b
}

// unplug closes the master side, as pulling a USB adapter does.
func (b *fakeBalance) unplug() {
	close(b.stop)
	b.master.Close()
	b.wg.Wait()
	b.slave.Close()
}

func waitFor(t *testing.T, out <-chan []Event, what string, ok func(Event) bool) []Event {
	t.Helper()
	var seen []Event
	deadline := time.After(10 * time.Second)
	for {
		select {
		case batch := <-out:
			for _, e := range batch {
				seen = append(seen, e)
				if ok(e) {
					return seen
				}
			}
		case <-deadline:
			t.Fatalf("timed out waiting for %s; saw %d events: %+v", what, len(seen), seen)
		}
	}
}

func TestSerialUnplugAndReplug(t *testing.T) {
	dir := t.TempDir()
	link := filepath.Join(dir, "balance") // a stable name, as /dev/serial/by-id gives
	lines := func(i int) string { return "S S   " + strings.Repeat(" ", i%3) + "123.45 g\r\n" }
	b1 := newFakeBalance(t, lines, 10*time.Millisecond)
	if err := os.Symlink(b1.slave.Name(), link); err != nil {
		t.Fatal(err)
	}
	src := &Serial{Path: link, Mode: serial.Mode{BaudRate: 9600, DataBits: 8}, RetryMin: 20 * time.Millisecond, RetryMax: 100 * time.Millisecond}
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan []Event, 16)
	done := make(chan error, 1)
	go func() { done <- src.Run(ctx, out) }()

	readings := 0
	waitFor(t, out, "5 readings", func(e Event) bool {
		if e.Kind == KindReading {
			if e.MassG != 123.45 || e.Stable != Stable {
				t.Errorf("reading %+v", e)
			}
			readings++
		}
		return readings >= 5
	})

	b1.unplug()
	waitFor(t, out, "a lost event", func(e Event) bool { return e.Kind == KindLost })

	b2 := newFakeBalance(t, func(int) string { return "ST,+0099.50g\r\n" }, 10*time.Millisecond)
	defer b2.unplug()
	os.Remove(link)
	if err := os.Symlink(b2.slave.Name(), link); err != nil {
		t.Fatal(err)
	}
	waitFor(t, out, "a back event", func(e Event) bool { return e.Kind == KindBack })
	waitFor(t, out, "a reading from the replugged balance", func(e Event) bool { return e.Kind == KindReading && e.MassG == 99.5 })

	cancel()
	select {
	case err := <-done:
		if err != nil {
			t.Fatalf("Run after cancel: %v", err)
		}
	case <-time.After(5 * time.Second):
		t.Fatal("Run did not stop after cancel")
	}
}

// A balance that sends only when asked: the command goes out on the line and
// the answers come back as readings.
func TestSerialAsk(t *testing.T) {
	master, slave, err := pty.Open()
	if err != nil {
		t.Skipf("no pseudo-terminal here: %v", err)
	}
	defer master.Close()
	defer slave.Close()
	term.MakeRaw(int(slave.Fd()))
	ask, err := ParseEscapes(`SI\r\n`)
	if err != nil {
		t.Fatal(err)
	}
	go func() {
		buf := make([]byte, 64)
		var got []byte
		for {
			n, err := master.Read(buf)
			if err != nil {
				return
			}
			got = append(got, buf[:n]...)
			for strings.Contains(string(got), "SI\r\n") {
				got = []byte(strings.Replace(string(got), "SI\r\n", "", 1))
				master.WriteString("S S      42.00 g\r\n")
			}
		}
	}()
	src := &Serial{Path: slave.Name(), Mode: serial.Mode{BaudRate: 9600}, Ask: ask, Every: 30 * time.Millisecond}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan []Event, 16)
	go src.Run(ctx, out)
	n := 0
	waitFor(t, out, "3 answers", func(e Event) bool {
		if e.Kind == KindReading && e.MassG == 42 {
			n++
		}
		return n >= 3
	})
}

// Binary noise, as a wrong baud rate gives: no reading, a warning that says
// to check the baud rate, and the source keeps running.
func TestSerialWrongBaudHint(t *testing.T) {
	noise := func(i int) string { return "\x8f\xf3\x1c\xe0\x9a\x81\r\n" }
	b := newFakeBalance(t, noise, 5*time.Millisecond)
	defer b.unplug()
	src := &Serial{Path: b.slave.Name(), Mode: serial.Mode{BaudRate: 9600}}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan []Event, 16)
	go src.Run(ctx, out)
	seen := waitFor(t, out, "a baud-rate warning", func(e Event) bool { return e.Kind == KindWarning })
	last := seen[len(seen)-1]
	if !strings.Contains(last.Detail, "baud rate") {
		t.Errorf("warning %q should suggest checking the baud rate", last.Detail)
	}
	for _, e := range seen {
		if e.Kind == KindReading {
			t.Errorf("noise gave a reading: %+v", e)
		}
	}
}

func TestSerialOpenErrors(t *testing.T) {
	src := &Serial{Path: "/dev/ttyNOPE99", Mode: serial.Mode{BaudRate: 9600}}
	err := src.Run(context.Background(), make(chan []Event, 1))
	if err == nil || !strings.Contains(err.Error(), "/dev/ttyNOPE99 does not exist") || !strings.Contains(err.Error(), "serial ports") {
		t.Fatalf("err = %v; want it to name the path and list the ports", err)
	}
	notTTY := filepath.Join(t.TempDir(), "plain")
	os.WriteFile(notTTY, nil, 0o644)
	src = &Serial{Path: notTTY, Mode: serial.Mode{BaudRate: 9600}}
	if err := src.Run(context.Background(), make(chan []Event, 1)); err == nil || !strings.Contains(err.Error(), notTTY) {
		t.Fatalf("plain file as port: err = %v", err)
	}
}

func TestParseEscapes(t *testing.T) {
	tests := []struct {
		in   string
		want string
		bad  bool
	}{
		{`P\r\n`, "P\r\n", false},
		{`\x1bP`, "\x1bP", false},
		{`a\\b\t`, "a\\b\t", false},
		{`oops\`, "", true},
		{`\q`, "", true},
		{`\x1`, "", true},
	}
	for _, tc := range tests {
		got, err := ParseEscapes(tc.in)
		if (err != nil) != tc.bad || string(got) != tc.want {
			t.Errorf("ParseEscapes(%q) = %q, %v", tc.in, got, err)
		}
	}
}

// Issue 9, case 9: 100 KB of random bytes on a real pseudo-terminal (a
// loose cable, another device on the port) make no reading: noise is
// counted as unparseable, never read as a mass.
func TestSerialRandomNoiseIsNoReading(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	noise := make([]byte, 100_000)
	for i := range noise {
		noise[i] = byte(rng.UintN(256))
	}
	const chunk = 1000
	b := newFakeBalance(t, func(i int) string {
		if i >= len(noise)/chunk {
			return ""
		}
		return string(noise[i*chunk : (i+1)*chunk])
	}, time.Millisecond)
	defer b.unplug()
	src := &Serial{Path: b.slave.Name(), Mode: serial.Mode{BaudRate: 9600}}
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Second)
	defer cancel()
	out := make(chan []Event, 64)
	go src.Run(ctx, out)
	readings, bad := 0, 0
	for done := false; !done; {
		select {
		case evs := <-out:
			for _, e := range evs {
				switch e.Kind {
				case KindReading:
					readings++
					t.Errorf("noise read as %v g from %q", e.MassG, e.Raw)
				case KindUnparseable, KindLineCut:
					bad++
				}
			}
		case <-ctx.Done():
			done = true
		}
	}
	if readings != 0 || bad < 100 {
		t.Errorf("100 KB of noise: %d readings, %d lines counted unparseable", readings, bad)
	}
}
