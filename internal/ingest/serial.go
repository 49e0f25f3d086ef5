package ingest

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"math/bits"
	"parch/internal/safetext"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"time"

	"go.bug.st/serial"
)

// Serial reads a balance on a serial line (RS-232, or a USB adapter).
type Serial struct {
	Path string
	Mode serial.Mode
	// Ask is sent every Every for balances that send only when asked.
	Ask   []byte
	Every time.Duration
	// NoUnit is the unit of lines that carry none (default grams).
	NoUnit Unit
	// Now is the clock (default time.Now).
	Now func() time.Time
	// Retry bounds the reconnect backoff (defaults 250 ms to 5 s).
	RetryMin, RetryMax time.Duration
}

// fragmentWindow: a first line that starts arriving this soon after the
// port opens may be the tail of a line already under way, and is dropped.
const fragmentWindow = 50 * time.Millisecond

// unparseableHint: after this many lines, all unparseable, say so once.
const unparseableHint = 10

// Run reads until ctx is done. A port that cannot be opened at the start is
// an error explaining what to do; a port that goes away later gives a "lost"
// event, is retried with backoff, and gives "back" when it returns.
func (s *Serial) Run(ctx context.Context, out chan<- []Event) error {
	now := s.Now
	if now == nil {
		now = time.Now
	}
	rmin, rmax := s.RetryMin, s.RetryMax
	if rmin <= 0 {
		rmin = 250 * time.Millisecond
	}
	if rmax <= 0 {
		rmax = 5 * time.Second
	}
	port, err := serial.Open(s.Path, &s.Mode)
	if err != nil {
		return OpenError(s.Path, err)
	}
	send := func(b []Event) bool {
		select {
		case out <- b:
			return true
		case <-ctx.Done():
			return false
		}
	}
	if !send([]Event{{T: now(), Kind: KindStarted, Detail: fmt.Sprintf("serial %s at %d baud", s.Path, s.Mode.BaudRate)}}) {
		port.Close()
		return nil
	}
	st := &lineState{noUnit: s.NoUnit, baud: s.Mode.BaudRate}
	for {
		reason := s.readPort(ctx, port, st, now, send)
		if ctx.Err() != nil {
			return nil
		}
		lostAt := now()
		if !send([]Event{{T: lostAt, Kind: KindLost, Detail: fmt.Sprintf("serial %s: %s; retrying", s.Path, reason)}}) {
			return nil
		}
		wait := rmin
		for {
			select {
			case <-ctx.Done():
				return nil
			case <-time.After(wait):
			}
			port, err = serial.Open(s.Path, &s.Mode)
			if err == nil {
				break
			}
			wait = min(wait*2, rmax)
		}
		if !send([]Event{{T: now(), Kind: KindBack, Detail: fmt.Sprintf("serial %s back after %s", s.Path, now().Sub(lostAt).Round(time.Second))}}) {
			port.Close()
			return nil
		}
	}
}

// lineState carries what must survive a reconnect.
type lineState struct {
	noUnit      Unit
	baud        int
	lines       int // non-blank lines seen
	unparseable int
	hinted      bool
	recent      uint32 // the last 32 lines: bit set for a line that was noise
}

// noisy is true when at least half of the last 32 lines were noise: a
// number that turns up amid noise is more likely noise than a mass.
func (st *lineState) noisy() bool { return bits.OnesCount32(st.recent) >= 16 }

// readPort reads one opened port until it fails or ctx ends; it returns why
// it stopped.
func (s *Serial) readPort(ctx context.Context, port serial.Port, st *lineState, now func() time.Time, send func([]Event) bool) string {
	var closing sync.Once
	closeIt := func() { closing.Do(func() { port.Close() }) }
	defer closeIt()
	stop := make(chan struct{})
	defer close(stop)
	go func() {
		select {
		case <-ctx.Done():
			closeIt()
		case <-stop:
		}
	}()
	port.ResetInputBuffer()
	opened := now()
	if len(s.Ask) > 0 && s.Every > 0 {
		go func() {
			tick := time.NewTicker(s.Every)
			defer tick.Stop()
			for {
				if _, err := port.Write(s.Ask); err != nil {
					return
				}
				select {
				case <-stop:
					return
				case <-tick.C:
				}
			}
		}()
	}
	var sp Splitter
	first := true
	firstByteAt := time.Time{}
	buf := make([]byte, 4096)
	for {
		n, err := port.Read(buf)
		if n > 0 {
			if firstByteAt.IsZero() {
				firstByteAt = now()
			}
			t := now()
			var batch []Event
			sp.Feed(buf[:n], func(line []byte, cut bool) {
				if first {
					first = false
					if len(s.Ask) == 0 && firstByteAt.Sub(opened) < fragmentWindow {
						return
					}
				}
				batch = st.add(batch, t, string(line), cut)
			})
			if len(batch) > 0 && !send(batch) {
				return "stopped"
			}
		}
		if err != nil {
			var pe *serial.PortError
			if errors.As(err, &pe) && pe.Code() == serial.PortClosed {
				return "device closed or unplugged"
			}
			return err.Error()
		}
		if n == 0 {
			return "device hung up (unplugged?)"
		}
	}
}

// add parses one line and appends its event (if any) to batch.
func (st *lineState) add(batch []Event, t time.Time, raw string, cut bool) []Event {
	if cut {
		st.recent = st.recent<<1 | 1
		batch = append(batch, Event{T: t, Kind: KindLineCut, Raw: clipRaw(raw),
			Detail: fmt.Sprintf("line longer than %d bytes cut (no line ends: wrong baud rate or data bits?)", MaxLineBytes)})
		return batch
	}
	l := ParseLine(raw, st.noUnit)
	if l.Kind == LineBlank {
		return batch
	}
	st.lines++
	if l.Kind == LineReading && st.noisy() {
		l = Line{Kind: LineUnparseable, Reason: "a number amid noise: not taken as a reading"}
	}
	st.recent <<= 1
	if l.Kind == LineUnparseable {
		st.unparseable++
		st.recent |= 1
	}
	batch = append(batch, FromLine(t, raw, l))
	if !st.hinted && st.lines >= unparseableHint && st.unparseable == st.lines {
		st.hinted = true
		batch = append(batch, Event{T: t, Kind: KindWarning, Detail: fmt.Sprintf(
			"every line so far (%d) is unparseable: check the baud rate (now %d), data bits, parity and the balance's output settings", st.lines, st.baud)})
	}
	return batch
}

func clipRaw(s string) string { return safetext.Clip(s, 200) }

// OpenError explains a failure to open a serial port in terms of what to do.
func OpenError(path string, err error) error {
	var pe *serial.PortError
	if errors.As(err, &pe) {
		switch pe.Code() {
		case serial.PermissionDenied:
			return fmt.Errorf("serial port %s: permission denied: add your user to the dialout group (sudo usermod -aG dialout $USER, then log out and back in) or check the device's permissions (ls -l %s)", path, path)
		case serial.PortBusy:
			return fmt.Errorf("serial port %s is in use by another program (another parch record? a terminal program?)", path)
		case serial.InvalidSerialPort:
			return fmt.Errorf("%s is not a serial port (%v)", path, err)
		}
	}
	if errors.Is(err, fs.ErrNotExist) {
		return fmt.Errorf("serial port %s does not exist; %s", path, PortsHint())
	}
	if errors.Is(err, fs.ErrPermission) {
		return fmt.Errorf("serial port %s: permission denied: add your user to the dialout group (sudo usermod -aG dialout $USER, then log out and back in)", path)
	}
	return fmt.Errorf("serial port %s: %w", path, err)
}

// PortsHint lists the serial ports that exist, preferring the stable
// /dev/serial/by-id names that survive unplugging.
func PortsHint() string {
	var ports []string
	if list, err := serial.GetPortsList(); err == nil {
		ports = append(ports, list...)
	}
	byID, _ := filepath.Glob("/dev/serial/by-id/*")
	for _, p := range byID {
		if target, err := filepath.EvalSymlinks(p); err == nil {
			p += " -> " + target
		}
		ports = append(ports, p)
	}
	sort.Strings(ports)
	if len(ports) == 0 {
		return "no serial ports found (is the balance's USB adapter plugged in? `dmesg | tail` shows new devices)"
	}
	return "serial ports here: " + strings.Join(ports, ", ") + " (prefer a /dev/serial/by-id name: it stays the same after replugging)"
}

// ParseEscapes turns `\r`, `\n`, `\t`, `\\` and `\xHH` in a command-line
// string into bytes, for --ask.
func ParseEscapes(s string) ([]byte, error) {
	var b []byte
	for i := 0; i < len(s); i++ {
		if s[i] != '\\' {
			b = append(b, s[i])
			continue
		}
		if i+1 >= len(s) {
			return nil, fmt.Errorf("%q ends with a lone backslash", s)
		}
		i++
		switch s[i] {
		case 'r':
			b = append(b, '\r')
		case 'n':
			b = append(b, '\n')
		case 't':
			b = append(b, '\t')
		case '\\':
			b = append(b, '\\')
		case 'x':
			var v byte
			if i+2 >= len(s) || !isHex(s[i+1]) || !isHex(s[i+2]) {
				return nil, fmt.Errorf("%q: \\x needs two hex digits", s)
			}
			fmt.Sscanf(s[i+1:i+3], "%02x", &v)
			b = append(b, v)
			i += 2
		default:
			return nil, fmt.Errorf("%q: unknown escape \\%c (use \\r, \\n, \\t, \\\\ or \\xHH)", s, s[i])
		}
	}
	return b, nil
}

func isHex(c byte) bool {
	return isDigit(c) || (c|0x20) >= 'a' && (c|0x20) <= 'f'
}
