package session

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"parch/internal/textline"
	"strconv"
	"time"
)

// Readings holds the readings of a log in columns, a few bytes each: the
// raw text stays on disk, where the record is.
type Readings struct {
	TimeMs   []int64   // Unix milliseconds
	MassG    []float64 // grams as received (before tare)
	Stable   []int8    // 1 stable, -1 unstable, 0 not said
	Channels map[string][]float32
	hint     int // readings expected (the file's lines), for sizing the columns
}

// Len is the number of readings.
func (r *Readings) Len() int { return len(r.TimeMs) }

func (r *Readings) add(ms int64, mass float64, stable int8) {
	if r.TimeMs == nil && r.hint > 0 { // sized once from the file's lines
		r.TimeMs = make([]int64, 0, r.hint)
		r.MassG = make([]float64, 0, r.hint)
		r.Stable = make([]int8, 0, r.hint)
	}
	r.TimeMs = append(r.TimeMs, ms)
	r.MassG = append(r.MassG, mass)
	r.Stable = append(r.Stable, stable)
}

// setChannel stores v for the reading just added, padding with NaN.
func (r *Readings) setChannel(name string, v float64) {
	if r.Channels == nil {
		r.Channels = map[string][]float32{}
	}
	col, ok := r.Channels[name]
	n := len(r.TimeMs)
	if !ok {
		col = make([]float32, 0, cap(r.TimeMs))
	}
	for len(col) < n-1 {
		col = append(col, float32(math.NaN()))
	}
	if len(col) == n {
		col[n-1] = float32(v)
	} else {
		col = append(col, float32(v))
	}
	r.Channels[name] = col
}

// padChannels makes every channel column as long as the readings.
func (r *Readings) padChannels() {
	n := len(r.TimeMs)
	for name, col := range r.Channels {
		for len(col) < n {
			col = append(col, float32(math.NaN()))
		}
		r.Channels[name] = col
	}
}

// Log is a session log read back.
type Log struct {
	Path     string
	Start    time.Time // the header's time
	Readings Readings
	Notes    []Event
	Setups   []Event
	Sources  []Event
	// Warnings: lines skipped and why. At most MaxWarnings are kept; Skipped
	// counts all.
	Warnings []string
	Skipped  int
	// End is the byte offset just past the last whole line read: a
	// follower of the log goes on from there.
	End int64
}

// SetupParams merges the numeric setup values of the log, later ones
// overriding earlier ones.
func (l *Log) SetupParams() map[string]float64 {
	out := map[string]float64{}
	for _, s := range l.Setups {
		for k, v := range s.Params {
			switch f := v.(type) {
			case float64:
				out[k] = f
			case nil: // unset (parch note --unset KEY)
				delete(out, k)
			}
		}
	}
	return out
}

// SetupText is the latest text value of a setup key (like
// "reference_file"), "" when none.
func (l *Log) SetupText(key string) string {
	out := ""
	for _, s := range l.Setups {
		if v, ok := s.Params[key].(string); ok {
			out = v
		}
	}
	return out
}

// MaxWarnings caps the per-line warnings kept.
const MaxWarnings = 20

func (l *Log) warn(format string, a ...any) {
	l.Skipped++
	if len(l.Warnings) < MaxWarnings {
		l.Warnings = append(l.Warnings, fmt.Sprintf(format, a...))
	} else if len(l.Warnings) == MaxWarnings {
		l.Warnings = append(l.Warnings, "further skipped lines not listed")
	}
}

// Load reads a whole session log.
func Load(path string) (*Log, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("open session log: %w", err)
	}
	defer f.Close()
	lr := textline.NewReader(f, MaxLineBytes)
	l, err := readLines(lr, path, CountLines(f))
	if err != nil {
		return nil, err
	}
	return l, nil
}

// Read reads a session log from r; name is used in messages.
func Read(r io.Reader, name string) (*Log, error) {
	return ReadLines(textline.NewReader(r, MaxLineBytes), name)
}

// MaxLineBytes bounds a log line: longer ones are skipped with a warning
// (a parch line is well under 1 KB; a file with a 1 GB line must not take
// gigabytes to read).
const MaxLineBytes = 1 << 20

// ReadLines is Read from a bounded line reader.
func ReadLines(lr *textline.Reader, name string) (*Log, error) {
	return readLines(lr, name, 0)
}

// ReadLinesSized is ReadLines with the number of lines expected (the
// readings' columns are sized once); CountLines gives it for a file.
func ReadLinesSized(lr *textline.Reader, name string, lines int) (*Log, error) {
	return readLines(lr, name, lines)
}

func readLines(lr *textline.Reader, name string, hint int) (*Log, error) {
	l := &Log{Path: name}
	l.Readings.hint = hint
	var d Decoder
	err := d.scan(lr, name, func(e *Event, fast *FastReading) {
		if fast != nil {
			l.Readings.add(fast.TimeMs, fast.MassG, fast.Stable)
			for i := 0; i < fast.NChan; i++ {
				l.Readings.setChannel(fast.ChanNames[i], fast.ChanVals[i])
			}
			return
		}
		switch e.Type {
		case TypeSession:
			if l.Start.IsZero() {
				l.Start = e.T
			}
		case TypeReading:
			var st int8
			if e.Stable != nil {
				st = -1
				if *e.Stable {
					st = 1
				}
			}
			l.Readings.add(e.T.UnixMilli(), e.MassG, st)
			for k, v := range e.Channels {
				l.Readings.setChannel(k, v)
			}
		case TypeNote:
			l.Notes = append(l.Notes, *e)
		case TypeSetup:
			l.Setups = append(l.Setups, *e)
		case TypeSource:
			l.Sources = append(l.Sources, *e)
		}
	}, l.warn, &l.End)
	l.Readings.padChannels()
	if err != nil {
		return l, err
	}
	return l, nil
}

// FastReading is a reading line decoded without encoding/json.
type FastReading struct {
	TimeMs    int64
	MassG     float64
	Stable    int8
	NChan     int
	ChanNames [8]string
	ChanVals  [8]float64
}

// Decoder reads log lines. Reading lines written by this package take a
// fast path (a 1,000,000-reading log reads in well under a second); any
// other valid line goes through encoding/json.
type Decoder struct {
	fast  FastReading
	names map[string]string // interned channel names
}

// Scan calls fn for each event in r. Reading lines that take the fast path
// come as fast (e is nil); everything else as e (fast is nil). Lines that
// are not valid events are reported to warn and skipped; a first line that
// is not a session header is an error (the file is not ours).
func (d *Decoder) Scan(r io.Reader, name string, fn func(e *Event, fast *FastReading), warn func(string, ...any)) error {
	return d.scan(textline.NewReader(r, MaxLineBytes), name, fn, warn, nil)
}

// CountLines counts the lines of a regular file without moving its read
// position (0 for anything else): the readings' columns are then sized
// once instead of grown and copied.
func CountLines(f *os.File) int {
	st, err := f.Stat()
	if err != nil || !st.Mode().IsRegular() || st.Size() > 1<<40 {
		return 0
	}
	buf := make([]byte, 1<<20)
	var n, off int64
	for {
		k, err := f.ReadAt(buf, off)
		n += int64(bytes.Count(buf[:k], []byte{'\n'}))
		off += int64(k)
		if err != nil || k == 0 {
			return int(min(n+1, 1<<28))
		}
	}
}

// end, when not nil, is kept at the byte offset past the last whole line.
func (d *Decoder) scan(lr *textline.Reader, name string, fn func(e *Event, fast *FastReading), warn func(string, ...any), end *int64) error {
	for {
		line, long, err := lr.Next()
		lineNo := lr.No
		if long > 0 {
			if lineNo == 1 {
				return fmt.Errorf("%s: %w: its first line is %d bytes long", name, ErrNotSession, long)
			}
			warn("%s: line %d: %d bytes long, over the %d-byte limit, skipped", name, lineNo, long, MaxLineBytes)
			continue
		}
		if errors.Is(err, textline.ErrBinary) {
			if lineNo == 1 {
				return fmt.Errorf("%s: %w: %v", name, ErrNotSession, err)
			}
			warn("%s: %v, skipped (a crash can leave zeros at the end of a file)", name, err)
			continue
		}
		if err != nil && err != io.EOF {
			return fmt.Errorf("read %s: %w", name, err)
		}
		if len(line) == 0 {
			if lineNo == 0 {
				return fmt.Errorf("%s: %w: the file is empty", name, ErrNotSession)
			}
			return nil
		}
		complete := line[len(line)-1] == '\n'
		if complete && end != nil {
			*end = lr.Offset
		}
		body := bytes.TrimRight(line, "\r\n")
		if lineNo == 1 {
			if err := CheckHeaderLine(name, body); err != nil {
				return err
			}
		}
		if len(bytes.TrimSpace(body)) == 0 {
			// blank line: harmless, e.g. the newline that closes a torn line
		} else if d.fastReading(body) {
			fn(nil, &d.fast)
		} else if e, perr := decodeEvent(body); perr == nil {
			fn(e, nil)
		} else if !complete {
			warn("%s: line %d: incomplete last line (a crash mid-write?), skipped: %s", name, lineNo, clip(string(body), 60))
		} else {
			warn("%s: line %d: %v, skipped", name, lineNo, perr)
		}
	}
}

// DecodeLine decodes one log line (without its newline) with encoding/json.
func DecodeLine(b []byte) (*Event, error) { return decodeEvent(b) }

// decodeEvent is the general path.
func decodeEvent(b []byte) (*Event, error) {
	var m map[string]json.RawMessage
	if err := json.Unmarshal(b, &m); err != nil {
		return nil, fmt.Errorf("not a JSON object: %s", clip(string(b), 60))
	}
	e := &Event{}
	if err := json.Unmarshal(m["type"], &e.Type); err != nil || e.Type == "" {
		return nil, fmt.Errorf(`no "type"`)
	}
	var ts string
	if err := json.Unmarshal(m["t"], &ts); err != nil {
		return nil, fmt.Errorf(`no "t"`)
	}
	t, err := time.Parse(time.RFC3339Nano, ts)
	if err != nil {
		return nil, fmt.Errorf(`"t" is %q, expected RFC 3339 time`, ts)
	}
	e.T = t
	str := func(k string) string {
		var s string
		json.Unmarshal(m[k], &s)
		return s
	}
	delete(m, "type")
	delete(m, "t")
	switch e.Type {
	case TypeReading:
		if err := json.Unmarshal(m["mass_g"], &e.MassG); err != nil {
			return nil, fmt.Errorf(`reading without a numeric "mass_g"`)
		}
		if raw, ok := m["stable"]; ok {
			var s bool
			if json.Unmarshal(raw, &s) == nil {
				e.Stable = &s
			}
		}
		e.Raw = str("raw")
		if raw, ok := m["channels"]; ok {
			json.Unmarshal(raw, &e.Channels)
		}
		return e, nil
	case TypeNote:
		e.Kind, e.Text = str("kind"), str("text")
		if s := str("reading_t"); s != "" {
			if rt, err := time.Parse(time.RFC3339Nano, s); err == nil {
				e.ReadingT = rt
			}
		}
		if raw, ok := m["value"]; ok {
			var v float64
			if json.Unmarshal(raw, &v) == nil {
				e.Value = &v
			}
		}
		return e, nil
	case TypeSource:
		e.Event, e.Detail, e.Raw = str("event"), str("detail"), str("raw")
		delete(m, "event")
		delete(m, "detail")
		delete(m, "raw")
		if len(m) == 0 {
			return e, nil
		}
	}
	// setup, session header and types added later: keep every key.
	e.Params = make(map[string]any, len(m))
	for k, raw := range m {
		var v any
		if err := json.Unmarshal(raw, &v); err == nil {
			e.Params[k] = v
		}
	}
	return e, nil
}

const fastPrefix = `{"type":"reading","t":"`

// fastReading decodes the exact shape AppendJSON writes for readings.
// It returns false (and the caller uses encoding/json) for anything else.
func (d *Decoder) fastReading(b []byte) bool {
	if !bytes.HasPrefix(b, []byte(fastPrefix)) || len(b) < len(fastPrefix)+25 {
		return false
	}
	p := b[len(fastPrefix):]
	ms, ok := parseStamp(p[:24])
	if !ok || p[24] != '"' {
		return false
	}
	p = p[25:]
	f := &d.fast
	f.TimeMs, f.Stable, f.NChan = ms, 0, 0
	const massKey = `,"mass_g":`
	if !bytes.HasPrefix(p, []byte(massKey)) {
		return false
	}
	p = p[len(massKey):]
	n := numberLen(p)
	v, err := strconv.ParseFloat(string(p[:n]), 64)
	if err != nil {
		return false
	}
	f.MassG = v
	p = p[n:]
	if bytes.HasPrefix(p, []byte(`,"stable":true`)) {
		f.Stable, p = 1, p[len(`,"stable":true`):]
	} else if bytes.HasPrefix(p, []byte(`,"stable":false`)) {
		f.Stable, p = -1, p[len(`,"stable":false`):]
	}
	if bytes.HasPrefix(p, []byte(`,"raw":"`)) {
		p = p[len(`,"raw":"`):]
		end := stringEnd(p)
		if end < 0 {
			return false
		}
		p = p[end+1:]
	}
	if bytes.HasPrefix(p, []byte(`,"channels":{`)) {
		p = p[len(`,"channels":{`):]
		for len(p) > 0 && p[0] != '}' {
			if p[0] == ',' {
				p = p[1:]
			}
			if len(p) == 0 || p[0] != '"' {
				return false
			}
			end := stringEnd(p[1:])
			if end < 0 || bytes.IndexByte(p[1:end+1], '\\') >= 0 || f.NChan == len(f.ChanNames) {
				return false
			}
			name := p[1 : end+1]
			p = p[end+2:]
			if len(p) == 0 || p[0] != ':' {
				return false
			}
			p = p[1:]
			n := numberLen(p)
			v, err := strconv.ParseFloat(string(p[:n]), 64)
			if err != nil {
				return false
			}
			f.ChanNames[f.NChan] = d.intern(name)
			f.ChanVals[f.NChan] = v
			f.NChan++
			p = p[n:]
		}
		if len(p) == 0 {
			return false
		}
		p = p[1:]
	}
	return len(p) == 1 && p[0] == '}'
}

func (d *Decoder) intern(b []byte) string {
	if s, ok := d.names[string(b)]; ok {
		return s
	}
	if d.names == nil {
		d.names = map[string]string{}
	}
	s := string(b)
	d.names[s] = s
	return s
}

func numberLen(p []byte) int {
	i := 0
	for i < len(p) && (p[i] == '-' || p[i] == '+' || p[i] == '.' || p[i] == 'e' || p[i] == 'E' || (p[i] >= '0' && p[i] <= '9')) {
		i++
	}
	return i
}

// stringEnd finds the closing quote of a JSON string body.
func stringEnd(p []byte) int {
	for i := 0; i < len(p); i++ {
		switch p[i] {
		case '\\':
			i++
		case '"':
			return i
		}
	}
	return -1
}

// parseStamp decodes "2006-01-02T15:04:05.000Z" to Unix milliseconds.
func parseStamp(b []byte) (int64, bool) {
	if len(b) != 24 || b[4] != '-' || b[7] != '-' || b[10] != 'T' || b[13] != ':' || b[16] != ':' || b[19] != '.' || b[23] != 'Z' {
		return 0, false
	}
	num := func(i, n int) (int, bool) {
		v := 0
		for k := i; k < i+n; k++ {
			c := b[k]
			if c < '0' || c > '9' {
				return 0, false
			}
			v = v*10 + int(c-'0')
		}
		return v, true
	}
	y, ok1 := num(0, 4)
	mo, ok2 := num(5, 2)
	dd, ok3 := num(8, 2)
	h, ok4 := num(11, 2)
	mi, ok5 := num(14, 2)
	s, ok6 := num(17, 2)
	ms, ok7 := num(20, 3)
	if !(ok1 && ok2 && ok3 && ok4 && ok5 && ok6 && ok7) || mo < 1 || mo > 12 || dd < 1 || dd > 31 || h > 23 || mi > 59 || s > 60 {
		return 0, false
	}
	days := daysFromCivil(y, mo, dd)
	return ((days*24+int64(h))*60+int64(mi))*60000 + int64(s)*1000 + int64(ms), true
}

// daysFromCivil: days since 1970-01-01 in the proleptic Gregorian calendar
// (H. Hinnant's algorithm, public domain).
func daysFromCivil(y, m, d int) int64 {
	if m <= 2 {
		y--
	}
	era := y / 400
	if y < 0 {
		era = (y - 399) / 400 // floor division
	}
	yoe := y - era*400
	mp := (m + 9) % 12
	doy := (153*mp+2)/5 + d - 1
	doe := yoe*365 + yoe/4 - yoe/100 + doy
	return int64(era)*146097 + int64(doe) - 719468
}

// LastReadingTime finds the time of the newest reading in the log by
// reading its tail, so a note from another terminal can be stamped with the
// reading it refers to without reading a long log whole.
func LastReadingTime(path string) (time.Time, bool) {
	f, err := os.Open(path)
	if err != nil {
		return time.Time{}, false
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return time.Time{}, false
	}
	const window = 256 << 10
	off := max(st.Size()-window, 0)
	buf := make([]byte, st.Size()-off)
	n, _ := f.ReadAt(buf, off)
	lines := bytes.Split(buf[:n], []byte("\n"))
	for i := len(lines) - 1; i >= 0; i-- {
		l := lines[i]
		if !bytes.HasPrefix(l, []byte(`{"type":"reading"`)) {
			continue
		}
		if e, err := decodeEvent(l); err == nil {
			return e.T, true
		}
	}
	return time.Time{}, false
}
