package ingest

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/fsnotify/fsnotify"

	"parch/internal/session"
)

// Follow reads a growing file written by another program, a CSV/TSV table
// (see Table) or a parch session log, and keeps reading what is appended. It
// survives truncation and replacement by rename (log rotation), and polls
// every Poll as well as listening for change events, since network shares
// and some mounts never deliver them.
type Follow struct {
	Path  string
	Table TableOptions
	// Start is the clock time of elapsed zero for tables with elapsed time.
	// Zero: the newest row seen when following starts is taken as written at
	// the file's modification time.
	Start time.Time
	Poll  time.Duration // default 1 s
	Now   func() time.Time
	// Resume continues from where an earlier recorder stopped (the last
	// position its log holds) when the file is still the same; else the
	// file is read from its start. Rows whose time is at or before After
	// (the log's newest reading) are skipped while catching up, so a
	// restart records no row twice.
	Resume *Position
	After  time.Time
	// WaitForFile: a file that does not exist yet is waited for (the
	// logger may start after parch), with a warning saying so, instead of
	// an error.
	WaitForFile bool
	// ResumeNote, when set, replaces what the started event says of a
	// Resume position that held (a log read before following it, say).
	ResumeNote string

	noNotify bool // tests: behave as on a share where no change events arrive
}

// followBatch bounds a batch during catch-up on a long file.
const followBatch = 4096

// Run follows the file until ctx is done. A file that is missing or cannot
// be understood at the start is an error; later problems become events.
func (f *Follow) Run(ctx context.Context, out chan<- []Event) error {
	if f.Now == nil {
		f.Now = time.Now
	}
	if f.Poll <= 0 {
		f.Poll = time.Second
	}
	st := &followState{f: f, ctx: ctx}
	if err := st.open(); err != nil {
		if !f.WaitForFile || !errors.Is(err, os.ErrNotExist) {
			return err
		}
		select {
		case out <- []Event{{T: f.Now(), Kind: KindWarning, Detail: "waiting for " + f.Path + " to appear (has the logger started?)"}}:
		case <-ctx.Done():
			return nil
		}
		tick := time.NewTicker(f.Poll)
		defer tick.Stop()
		for err != nil {
			select {
			case <-ctx.Done():
				return nil
			case <-tick.C:
			}
			if err = st.open(); err != nil && !errors.Is(err, os.ErrNotExist) {
				return err
			}
		}
	}
	defer st.close()
	resumed := st.resume()
	send := func(b []Event) bool {
		if len(b) == 0 {
			return true
		}
		select {
		case out <- b:
			return true
		case <-ctx.Done():
			return false
		}
	}
	started := "following " + f.Path
	switch {
	case resumed && f.ResumeNote != "":
		started += " " + f.ResumeNote
	case resumed:
		started += fmt.Sprintf(" from byte %d, where the log's last recorder stopped", f.Resume.Offset)
	case f.Resume != nil:
		started += " from its start: it is not the file the log's last recorder read (rotated or rewritten)"
	}
	if !send([]Event{{T: f.Now(), Kind: KindStarted, Detail: started}}) {
		return nil
	}
	if err := st.read(send, true); err != nil {
		return err
	}

	var events <-chan fsnotify.Event
	var errs <-chan error
	if w, err := fsnotify.NewWatcher(); err == nil && !f.noNotify {
		defer w.Close()
		if err := w.Add(filepath.Dir(f.Path)); err == nil {
			events, errs = w.Events, w.Errors
		} else {
			send([]Event{{T: f.Now(), Kind: KindWarning, Detail: "no change events for " + f.Path + " (" + err.Error() + "); polling every " + f.Poll.String()}})
		}
	}
	tick := time.NewTicker(f.Poll)
	defer tick.Stop()
	base := filepath.Base(f.Path)
	for {
		select {
		case <-ctx.Done():
			return nil
		case ev, ok := <-events:
			if !ok {
				events = nil // closed: rely on polling, do not spin
				continue
			}
			if filepath.Base(ev.Name) != base {
				continue
			}
		case _, ok := <-errs:
			if !ok {
				errs = nil
			}
			// an overflowed queue loses events; the read below catches up
		case <-tick.C:
		}
		if err := st.read(send, false); err != nil {
			if ctx.Err() != nil {
				return nil
			}
			send([]Event{{T: f.Now(), Kind: KindWarning, Detail: err.Error()}})
		}
	}
}

type followState struct {
	f       *Follow
	ctx     context.Context
	skipped int // rows at or before Follow.After passed over
	file    *os.File
	info    os.FileInfo
	offset  int64
	tail    []byte // the bytes just before offset, to detect a rewrite
	sp      Splitter
	dec     lineDecoder
	header  bool // the first line has been read
}

func (st *followState) open() error {
	file, err := os.Open(st.f.Path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("file to follow %s does not exist (yet?): start the logger first or check the path: %w", st.f.Path, os.ErrNotExist)
		}
		return fmt.Errorf("follow: %w", err)
	}
	info, err := file.Stat()
	if err != nil {
		file.Close()
		return fmt.Errorf("follow %s: %w", st.f.Path, err)
	}
	if info.IsDir() {
		file.Close()
		return fmt.Errorf("follow: %s is a folder, expected a CSV/TSV file or a parch session log", st.f.Path)
	}
	if !info.Mode().IsRegular() {
		file.Close()
		return fmt.Errorf("follow: %s is not a regular file (a device or a pipe): expected a CSV/TSV file or a parch session log; for a balance use --port", st.f.Path)
	}
	st.close()
	st.file, st.info, st.offset, st.tail = file, info, 0, st.tail[:0]
	st.sp.Reset()
	st.dec, st.header = nil, false
	return nil
}

func (st *followState) close() {
	if st.file != nil {
		st.file.Close()
		st.file = nil
	}
}

// read checks for rotation and truncation, then reads what is new.
func (st *followState) read(send func([]Event) bool, first bool) error {
	now := st.f.Now()
	if info, err := os.Stat(st.f.Path); err == nil && !os.SameFile(info, st.info) {
		// Replaced (rotation by rename, or an editor's save): read out what
		// the old file still had, then start on the new one.
		st.readNew(send, now, first)
		if err := st.open(); err != nil {
			return err
		}
		send([]Event{{T: now, Kind: KindWarning, Detail: st.f.Path + " was replaced by a new file; reading it from its start"}})
	} else if err == nil && st.rewritten(info.Size()) {
		send([]Event{{T: now, Kind: KindWarning, Detail: fmt.Sprintf("%s was truncated or rewritten (now %d bytes, had read %d); reading it again from its start", st.f.Path, info.Size(), st.offset)}})
		if err := st.open(); err != nil {
			return err
		}
	}
	return st.readNew(send, now, first)
}

// rewritten reports whether the file shrank or the bytes before our read
// position changed (a truncate and rewrite that grew past it again).
func (st *followState) rewritten(size int64) bool {
	if size < st.offset {
		return true
	}
	if len(st.tail) == 0 {
		return false
	}
	buf := make([]byte, len(st.tail))
	n, err := st.file.ReadAt(buf, st.offset-int64(len(buf)))
	return err != nil && err != io.EOF || n != len(buf) || !bytes.Equal(buf, st.tail)
}

func (st *followState) readNew(send func([]Event) bool, now time.Time, first bool) error {
	buf := make([]byte, 64<<10)
	var lines []string
	var headerErr error
	advanced := false
	for {
		if st.ctx != nil && st.ctx.Err() != nil {
			return nil // stopping: a long catch-up does not hold up a SIGTERM
		}
		n, err := st.file.ReadAt(buf, st.offset)
		if n > 0 {
			advanced = true
			st.offset += int64(n)
			st.keepTail(buf[:n])
			st.sp.Feed(buf[:n], func(line []byte, cut bool) {
				if !st.header {
					st.header = true
					st.dec, headerErr = newLineDecoder(string(line), st.f)
					return
				}
				if len(bytes.TrimSpace(line)) > 0 {
					lines = append(lines, string(line))
				}
			})
			if headerErr != nil {
				break
			}
			if len(lines) >= followBatch {
				if !st.emit(lines, send) {
					return nil
				}
				lines = lines[:0]
			}
		}
		if err != nil || n == 0 {
			break
		}
	}
	if headerErr != nil {
		return fmt.Errorf("%s: %w", st.f.Path, headerErr)
	}
	if len(lines) > 0 && !st.emit(lines, send) {
		return nil
	}
	// Where the next line starts, whenever something was read: the last
	// batch of a catch-up may have gone out full inside the loop.
	if advanced {
		send([]Event{st.position(now)})
	}
	return nil
}

// lastElapsed is the elapsed time of the last whole row of the file that
// has one, read from the file's end.
func (st *followState) lastElapsed(td *tableDecoder) (time.Duration, bool) {
	info, err := st.file.Stat()
	if err != nil {
		return 0, false
	}
	size := info.Size()
	n := min(size, 64<<10)
	buf := make([]byte, n)
	if k, _ := st.file.ReadAt(buf, size-n); int64(k) != n {
		return 0, false
	}
	end := bytes.LastIndexByte(buf, '\n') // a torn last line is not a row yet
	if end < 0 {
		return 0, false
	}
	rows := bytes.Split(buf[:end], []byte{'\n'})
	for i := len(rows) - 1; i >= 0; i-- {
		if i == 0 && n < size {
			break // cut at the start of the tail
		}
		row, err := td.tb.Decode(strings.TrimRight(string(rows[i]), "\r"))
		if err == nil && row.Time.IsZero() {
			return row.Elapsed, true
		}
	}
	return 0, false
}

// position is where the next complete line starts, with the bytes before.
func (st *followState) position(now time.Time) Event {
	off := st.offset - int64(st.sp.Pending())
	tail := make([]byte, min(off, 32))
	n, _ := st.file.ReadAt(tail, off-int64(len(tail)))
	p := &Position{File: st.f.Path, Offset: off, Tail: tail[:n]}
	if td, ok := st.dec.(*tableDecoder); ok {
		p.Base = td.base
	}
	return Event{T: now, Kind: KindPosition, Pos: p}
}

// resume moves to the Resume position when the file is still the one it
// was taken from: the bytes before the offset match. It reads the header
// line first, for the decoder.
func (st *followState) resume() bool {
	r := st.f.Resume
	if r == nil || r.Offset <= 0 || r.Offset > st.info.Size() {
		return false
	}
	got := make([]byte, len(r.Tail))
	if n, _ := st.file.ReadAt(got, r.Offset-int64(len(got))); n != len(got) || !bytes.Equal(got, r.Tail) {
		return false
	}
	buf := make([]byte, 4096)
	var sp Splitter
	for off := int64(0); off < r.Offset && !st.header; {
		n, err := st.file.ReadAt(buf[:min(int64(len(buf)), r.Offset-off)], off)
		off += int64(n)
		sp.Feed(buf[:n], func(line []byte, _ bool) {
			if !st.header {
				st.header = true
				st.dec, _ = newLineDecoder(string(line), st.f)
			}
		})
		if err != nil || n == 0 {
			break
		}
	}
	if st.dec == nil {
		st.header = false
		return false
	}
	if td, ok := st.dec.(*tableDecoder); ok && !r.Base.IsZero() {
		td.base = r.Base
	}
	st.offset = r.Offset
	st.tail = append(st.tail[:0], r.Tail...)
	return true
}

func (st *followState) emit(lines []string, send func([]Event) bool) bool {
	if len(lines) == 0 || st.dec == nil {
		return true
	}
	mtime := st.f.Now()
	if info, err := st.file.Stat(); err == nil {
		mtime = info.ModTime()
	}
	if td, ok := st.dec.(*tableDecoder); ok && td.base.IsZero() {
		// Elapsed times: the file's newest row when following starts is
		// taken as written at its modification time. That row is the
		// file's last, not this batch's (a long file comes in batches).
		if el, ok := st.lastElapsed(td); ok {
			td.base = mtime.Add(-el)
		}
	}
	evs := st.dec.decode(lines, mtime)
	if !st.f.After.IsZero() {
		// Catching up after a restart: rows the log already holds.
		kept := evs[:0]
		for _, e := range evs {
			if e.Kind == KindReading && !st.f.After.IsZero() {
				if !e.T.After(st.f.After) {
					st.skipped++
					continue
				}
				st.f.After = time.Time{}
				if st.skipped > 0 {
					kept = append(kept, Event{T: e.T, Kind: KindWarning, Detail: fmt.Sprintf("%d rows of %s already in the log were not recorded again", st.skipped, st.f.Path)})
				}
			}
			kept = append(kept, e)
		}
		evs = kept
	}
	if len(evs) == 0 {
		return true
	}
	return send(evs)
}

func (st *followState) keepTail(p []byte) {
	const keep = 64
	st.tail = append(st.tail, p...)
	if len(st.tail) > keep {
		st.tail = append(st.tail[:0], st.tail[len(st.tail)-keep:]...)
	}
}

// lineDecoder turns complete lines into events.
type lineDecoder interface {
	decode(lines []string, mtime time.Time) []Event
}

func newLineDecoder(header string, f *Follow) (lineDecoder, error) {
	if len(header) > 0 && header[0] == '{' {
		if err := session.CheckHeaderLine(f.Path, []byte(header)); err != nil {
			return nil, err
		}
		return sessionDecoder{}, nil
	}
	tb, err := NewTable(header, f.Table)
	if err != nil {
		return nil, err
	}
	return &tableDecoder{tb: tb, base: f.Start}, nil
}

type tableDecoder struct {
	tb   *Table
	base time.Time
}

func (d *tableDecoder) decode(lines []string, mtime time.Time) []Event {
	rows := make([]Row, len(lines))
	errs := make([]error, len(lines))
	lastElapsed := time.Duration(-1)
	for i, l := range lines {
		rows[i], errs[i] = d.tb.Decode(l)
		if errs[i] == nil && rows[i].Time.IsZero() {
			lastElapsed = rows[i].Elapsed
		}
	}
	if d.base.IsZero() && lastElapsed >= 0 {
		d.base = mtime.Add(-lastElapsed)
	}
	evs := make([]Event, 0, len(lines))
	for i, r := range rows {
		if errs[i] != nil {
			evs = append(evs, Event{T: mtime, Kind: KindUnparseable, Raw: clipRaw(lines[i]), Detail: errs[i].Error()})
			continue
		}
		t := r.Time
		if t.IsZero() {
			t = d.base.Add(r.Elapsed)
		}
		evs = append(evs, Event{T: t, Kind: KindReading, MassG: r.MassG, Stable: r.Stable, Raw: lines[i], Channels: r.Channels})
	}
	return evs
}

// SessionEvent is what a followed session log's note, setup or source line
// says to a dashboard; false for lines that say nothing to it.
func SessionEvent(e *session.Event) (Event, bool) {
	switch e.Type {
	case session.TypeNote:
		return Event{T: e.T, Kind: KindNote, Note: e}, true
	case session.TypeSetup:
		return Event{T: e.T, Kind: KindSetup, Note: e}, true
	case session.TypeSource:
		switch e.Event {
		case session.SourceLost, session.SourceBack:
			return Event{T: e.T, Kind: e.Event, Detail: e.Detail}, true
		case session.SourceStopped:
			// The recorder of the followed log stopped: say so, do not
			// wait for readings that will not come.
			return Event{T: e.T, Kind: KindStopped, Detail: "the recording stopped: " + e.Detail}, true
		case session.SourceReopened:
			return Event{T: e.T, Kind: KindReopened, Detail: e.Detail}, true
		}
	}
	return Event{}, false
}

// sessionDecoder follows another parch session log: its readings.
type sessionDecoder struct{}

func (sessionDecoder) decode(lines []string, mtime time.Time) []Event {
	evs := make([]Event, 0, len(lines))
	for _, l := range lines {
		e, err := session.DecodeLine([]byte(l))
		if err != nil {
			evs = append(evs, Event{T: mtime, Kind: KindUnparseable, Raw: clipRaw(l), Detail: err.Error()})
			continue
		}
		switch e.Type {
		case session.TypeNote, session.TypeSetup, session.TypeSource:
			if ev, ok := SessionEvent(e); ok {
				evs = append(evs, ev)
			}
			continue
		case session.TypeReading:
		default:
			continue
		}
		st := StabilityUnknown
		if e.Stable != nil {
			st = Unstable
			if *e.Stable {
				st = Stable
			}
		}
		evs = append(evs, Event{T: e.T, Kind: KindReading, MassG: e.MassG, Stable: st, Raw: e.Raw, Channels: e.Channels})
	}
	return evs
}
