package session

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"sync"
	"syscall"
	"time"
)

// SyncEvery is the longest time written lines wait for fsync.
const SyncEvery = time.Second

// ErrNotSession is returned for a file that is not a parch session log.
var ErrNotSession = errors.New("not a parch session log")

// ErrDiskFull is wrapped in write errors caused by a full disk or quota.
var ErrDiskFull = errors.New("disk full")

// Writer appends events to a session log. Each event is one write(2) on a
// file opened with O_APPEND, so other processes can append notes to the same
// file without interleaving. Safe for concurrent use.
type Writer struct {
	path string
	mu   sync.Mutex
	f    *os.File
	buf  []byte
	err  error // sticky: after a failed write nothing more is written
	// written counts lines written by this Writer.
	written int
	end     int64 // the file's size after this Writer's last write
	dirty   bool
	done    chan struct{}
	wg      sync.WaitGroup
}

// Create makes a new session log at path and writes its header. It never
// overwrites: an existing file is an error (use Open to append to it).
func Create(path, program string, now time.Time) (*Writer, error) {
	f, err := os.OpenFile(path, os.O_RDWR|os.O_APPEND|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		if errors.Is(err, fs.ErrExist) {
			return nil, fmt.Errorf("session log %s already exists; parch never overwrites a log (give another --session, or open it to append)", path)
		}
		return nil, fmt.Errorf("create session log: %w", err)
	}
	w := newWriter(path, f)
	hdr := Event{Type: TypeSession, T: now, Params: map[string]any{
		"format": FormatName, "version": FormatVersion, "program": program,
	}}
	if err := w.Append(&hdr); err != nil {
		w.Close()
		return nil, err
	}
	if err := w.Sync(); err != nil {
		w.Close()
		return nil, err
	}
	return w, nil
}

// Open appends to an existing session log after checking that it is ours.
// A torn last line (a crash mid-write) is closed with a newline so the next
// event starts on a line of its own; the torn text stays, and readers skip it
// with a warning. A "reopened" source event marks the gap.
func Open(path, program string, now time.Time) (*Writer, error) {
	if err := CheckHeader(path); err != nil {
		return nil, err
	}
	f, err := os.OpenFile(path, os.O_RDWR|os.O_APPEND, 0)
	if err != nil {
		return nil, fmt.Errorf("open session log: %w", err)
	}
	w := newWriter(path, f)
	ev := Event{Type: TypeSource, T: now, Event: SourceReopened,
		Detail: "log reopened by " + program + "; readings between the last line above and this one were not recorded"}
	if err := w.Append(&ev); err != nil {
		w.Close()
		return nil, err
	}
	return w, nil
}

// CreateOrOpen creates path, or appends to it when it exists and is ours.
func CreateOrOpen(path, program string, now time.Time) (w *Writer, reopened bool, err error) {
	if _, err := os.Stat(path); err == nil {
		w, err := Open(path, program, now)
		return w, true, err
	}
	w, err = Create(path, program, now)
	return w, false, err
}

func newWriter(path string, f *os.File) *Writer {
	w := &Writer{path: path, f: f, done: make(chan struct{})}
	w.wg.Add(1)
	go w.syncLoop()
	return w
}

// Path is the log's file name.
func (w *Writer) Path() string { return w.path }

// Written is the number of lines this Writer has written.
func (w *Writer) Written() int {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.written
}

// Append writes one event. After a write error (a full disk, say) every
// later call returns that error: what was written stays as written.
func (w *Writer) Append(e *Event) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	if w.err != nil {
		return w.err
	}
	if w.f == nil {
		return fmt.Errorf("session log %s: closed", w.path)
	}
	// A line left torn by another writer (a crash, a full disk) is closed
	// first, so this event is not glued to it and lost.
	size, torn := tail(w.f, w.end)
	w.buf = append(w.buf[:0], '\n')
	b, err := AppendJSON(w.buf, e)
	if err != nil {
		return err
	}
	w.buf = b
	if !torn {
		b = b[1:]
	}
	if _, err := w.f.Write(b); err != nil {
		w.err = w.wrap(err)
		return w.err
	}
	w.end = size + int64(len(b))
	w.written++
	w.dirty = true
	return nil
}

func (w *Writer) wrap(err error) error {
	if errors.Is(err, syscall.ENOSPC) || errors.Is(err, syscall.EDQUOT) {
		return fmt.Errorf("session log %s: %w: stopped writing; the %d lines written before are kept: %v", w.path, ErrDiskFull, w.written, err)
	}
	return fmt.Errorf("session log %s: write failed after %d lines: %w", w.path, w.written, err)
}

// Sync forces written lines to stable storage.
func (w *Writer) Sync() error {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.syncLocked()
}

func (w *Writer) syncLocked() error {
	if w.f == nil || !w.dirty {
		return nil
	}
	if err := w.f.Sync(); err != nil {
		if w.err == nil {
			w.err = w.wrap(err)
		}
		return w.err
	}
	w.dirty = false
	return nil
}

func (w *Writer) syncLoop() {
	defer w.wg.Done()
	tick := time.NewTicker(SyncEvery / 2)
	defer tick.Stop()
	for {
		select {
		case <-w.done:
			return
		case <-tick.C:
			w.Sync()
		}
	}
}

// Err returns the first write error, if any.
func (w *Writer) Err() error {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.err
}

// Close syncs and closes the log. Safe to call twice.
func (w *Writer) Close() error {
	w.mu.Lock()
	if w.f == nil {
		w.mu.Unlock()
		return nil
	}
	close(w.done)
	serr := w.syncLocked()
	cerr := w.f.Close()
	w.f = nil
	w.mu.Unlock()
	w.wg.Wait()
	if serr != nil {
		return serr
	}
	if cerr != nil {
		return fmt.Errorf("session log %s: %w", w.path, cerr)
	}
	return nil
}

// AppendOnce opens path, appends one event with a single write and fsync,
// and closes it: for `parch note` from another terminal while a recorder
// writes the same file.
func AppendOnce(path string, e *Event) error {
	if err := CheckHeader(path); err != nil {
		return err
	}
	b, err := AppendJSON(nil, e)
	if err != nil {
		return err
	}
	f, err := os.OpenFile(path, os.O_RDWR|os.O_APPEND, 0)
	if err != nil {
		return fmt.Errorf("open session log: %w", err)
	}
	if _, torn := tail(f, -1); torn {
		b = append([]byte{'\n'}, b...) // close a torn last line: the note must stand on its own
	}
	if _, err := f.Write(b); err != nil {
		f.Close()
		return fmt.Errorf("session log %s: %w", path, err)
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return fmt.Errorf("session log %s: %w", path, err)
	}
	return f.Close()
}

// CheckHeader returns nil when path starts with a parch session header, and
// an error naming the file and what was expected otherwise.
func CheckHeader(path string) error {
	f, err := os.Open(path)
	if err != nil {
		return fmt.Errorf("open session log: %w", err)
	}
	defer f.Close()
	line, err := bufio.NewReaderSize(f, 4096).ReadSlice('\n')
	if err != nil && err != io.EOF && !errors.Is(err, bufio.ErrBufferFull) {
		return fmt.Errorf("read session log %s: %w", path, err)
	}
	return CheckHeaderLine(path, line)
}

// CheckHeaderLine checks that line is a parch session header; path names
// the file in the error.
func CheckHeaderLine(path string, line []byte) error {
	var h struct {
		Type   string `json:"type"`
		Format string `json:"format"`
		Ver    int    `json:"version"`
	}
	line = bytes.TrimSpace(line)
	if len(line) == 0 {
		return fmt.Errorf("%s: %w: the file is empty (expected a first line like {\"type\":\"session\",\"format\":%q,...})", path, ErrNotSession, FormatName)
	}
	if err := json.Unmarshal(line, &h); err != nil || h.Type != TypeSession || h.Format != FormatName {
		return fmt.Errorf("%s: %w: first line is %q, expected {\"type\":\"session\",\"format\":%q,...}", path, ErrNotSession, clip(string(line), 80), FormatName)
	}
	if h.Ver > FormatVersion {
		return fmt.Errorf("%s: session log version %d is newer than this parch understands (%d); update parch", path, h.Ver, FormatVersion)
	}
	return nil
}

// tail returns the file's size and whether its last line is torn (does not
// end with a newline). known is the size this process left it at: when the
// file is still that size nobody else wrote, and nothing is read.
func tail(f *os.File, known int64) (int64, bool) {
	st, err := f.Stat()
	if err != nil || st.Size() == 0 {
		return 0, false
	}
	if st.Size() == known {
		return known, false
	}
	var last [1]byte
	if _, err := f.ReadAt(last[:], st.Size()-1); err != nil {
		return st.Size(), false
	}
	return st.Size(), last[0] != '\n'
}

func clip(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return s[:n] + "..."
}
