package main

import (
	"encoding/base64"
	"flag"
	"fmt"
	"parch/internal/session"
	"path/filepath"
	"time"

	"go.bug.st/serial"

	"parch/internal/ingest"
	"parch/internal/recorder"
	"parch/internal/simulate"
)

// sourceFlags are the flags that choose a source of readings, the same in
// every command that reads live data.
type sourceFlags struct {
	port     string
	baud     int
	dataBits int
	parity   string
	stopBits string
	ask      string
	every    time.Duration
	unit     string
	stall    time.Duration

	follow   string
	timeCol  string
	massCol  string
	timeUnit string
	start    string

	demo  bool
	seed  uint64
	speed float64

	session string
	setup   map[string]float64 // run parameters to record at the start (record's setup flags)
	// reference is the reference run to name in the log's setup (an
	// absolute path), "" for none.
	reference string
}

func (s *sourceFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&s.port, "port", "", "serial `DEVICE` of the balance (e.g. /dev/ttyUSB0; prefer /dev/serial/by-id/...)")
	fs.IntVar(&s.baud, "baud", 9600, "serial baud rate")
	fs.IntVar(&s.dataBits, "data-bits", 8, "serial data bits (5-8)")
	fs.StringVar(&s.parity, "parity", "none", "serial parity: none, odd, even, mark or space")
	fs.StringVar(&s.stopBits, "stop-bits", "1", "serial stop bits: 1, 1.5 or 2")
	fs.StringVar(&s.ask, "ask", "", "`TEXT` to send to a balance that answers only when asked (escapes \\r \\n \\t \\xHH), with --every")
	fs.DurationVar(&s.every, "every", 0, "how often to send --ask (e.g. 5s)")
	fs.StringVar(&s.unit, "unit", "g", "unit of balance lines that carry none: mg, g, kg, oz or lb")
	fs.DurationVar(&s.stall, "stall", recorder.DefaultStall, "record a stalled event after this long with no reading")

	fs.StringVar(&s.follow, "follow", "", "growing CSV/TSV `FILE` (or a parch session log) to follow")
	fs.StringVar(&s.timeCol, "time-col", "", "time column of --follow (name or 1-based number; default: guessed from the header)")
	fs.StringVar(&s.massCol, "mass-col", "", "mass column of --follow (name or 1-based number; default: guessed)")
	fs.StringVar(&s.timeUnit, "time-unit", "", "unit of an elapsed-time column whose header names none: s, min, h")
	fs.StringVar(&s.start, "start", "", "RFC 3339 clock time of elapsed zero in --follow (default: the newest row is taken as written at the file's modification time)")

	fs.BoolVar(&s.demo, "demo", false, "use the built-in invented demo run")
	fs.Uint64Var(&s.seed, "seed", 1, "demo: random seed (the same seed gives the same run)")
	fs.Float64Var(&s.speed, "speed", simulate.DefaultSpeed, "demo: simulated seconds per real second (640: 16 h in 90 s)")

	fs.StringVar(&s.session, "session", "", "session log `FILE` (JSON Lines); default: a new file here named from the start time. An existing log is appended to.")
}

// build returns the chosen source, or a usage error saying how to choose one.
func (s *sourceFlags) build(now time.Time) (recorder.Source, string, error) {
	n := 0
	for _, set := range []bool{s.port != "", s.follow != "", s.demo} {
		if set {
			n++
		}
	}
	if n != 1 {
		return nil, "", usagef("choose one source: --port DEVICE, --follow FILE or --demo")
	}
	if s.stall <= 0 {
		return nil, "", usagef("--stall %v: expected a positive duration like 30s", s.stall)
	}
	switch {
	case s.port != "":
		mode, err := s.serialMode()
		if err != nil {
			return nil, "", err
		}
		unit, err := ingest.ParseUnit(s.unit)
		if err != nil {
			return nil, "", usagef("--unit: %v", err)
		}
		src := &ingest.Serial{Path: s.port, Mode: mode, NoUnit: unit}
		if s.ask != "" || s.every != 0 {
			if s.ask == "" || s.every <= 0 {
				return nil, "", usagef("--ask TEXT and --every DURATION go together (e.g. --ask '<command from your balance manual>\\r\\n' --every 5s)")
			}
			ask, err := ingest.ParseEscapes(s.ask)
			if err != nil {
				return nil, "", usagef("--ask: %v", err)
			}
			src.Ask, src.Every = ask, s.every
		}
		return src, "serial " + s.port, nil
	case s.follow != "":
		f := &ingest.Follow{Path: s.follow, Table: ingest.TableOptions{TimeCol: s.timeCol, MassCol: s.massCol}}
		if s.timeUnit != "" {
			d, err := ingest.ParseTimeUnit(s.timeUnit)
			if err != nil {
				return nil, "", usagef("--time-unit: %v", err)
			}
			f.Table.TimeUnit = d
		}
		if s.start != "" {
			t, err := time.Parse(time.RFC3339Nano, s.start)
			if err != nil {
				return nil, "", usagef("--start %q: expected an RFC 3339 time like 2026-12-02T08:00:00Z", s.start)
			}
			f.Start = t
		}
		return f, "file " + s.follow, nil
	default:
		if s.speed < 0 {
			return nil, "", usagef("--speed %v: expected a positive number (0: as fast as possible)", s.speed)
		}
		m, err := simulate.NewModel(simulate.AppleRings())
		if err != nil {
			return nil, "", err
		}
		return &simulate.Source{Model: m, Seed: s.seed, Speed: s.speed, Start: now}, "demo", nil
	}
}

func (s *sourceFlags) serialMode() (serial.Mode, error) {
	m := serial.Mode{BaudRate: s.baud, DataBits: s.dataBits}
	if s.baud <= 0 {
		return m, usagef("--baud %d: expected a positive rate like 9600", s.baud)
	}
	if s.dataBits < 5 || s.dataBits > 8 {
		return m, usagef("--data-bits %d: expected 5, 6, 7 or 8", s.dataBits)
	}
	switch s.parity {
	case "none", "n", "N":
		m.Parity = serial.NoParity
	case "odd", "o", "O":
		m.Parity = serial.OddParity
	case "even", "e", "E":
		m.Parity = serial.EvenParity
	case "mark":
		m.Parity = serial.MarkParity
	case "space":
		m.Parity = serial.SpaceParity
	default:
		return m, usagef("--parity %q: expected none, odd, even, mark or space", s.parity)
	}
	switch s.stopBits {
	case "1":
		m.StopBits = serial.OneStopBit
	case "1.5":
		m.StopBits = serial.OnePointFiveStopBits
	case "2":
		m.StopBits = serial.TwoStopBits
	default:
		return m, usagef("--stop-bits %q: expected 1, 1.5 or 2", s.stopBits)
	}
	return m, nil
}

// defaultSessionPath names a new log from the start time.
func defaultSessionPath(now time.Time) string {
	return fmt.Sprintf("session-%s.jsonl", now.Format("20060102-150405"))
}

// resumeFollow points a file follower at where the log's last recorder of
// the same file stopped, and makes it skip rows the log already holds: a
// restarted `record --follow` records no row twice.
func resumeFollow(src recorder.Source, l *session.Log) {
	f, ok := src.(*ingest.Follow)
	if !ok || l == nil {
		return
	}
	abs, _ := filepath.Abs(f.Path)
	for i := len(l.Sources) - 1; i >= 0; i-- {
		e := l.Sources[i]
		if e.Event != session.SourcePosition {
			continue
		}
		file, _ := e.Params["file"].(string)
		if fa, _ := filepath.Abs(file); fa != abs {
			continue
		}
		off, _ := e.Params["offset"].(float64)
		tail, _ := base64.StdEncoding.DecodeString(fmt.Sprint(e.Params["tail"]))
		p := &ingest.Position{File: f.Path, Offset: int64(off), Tail: tail}
		if b, ok := e.Params["base"].(string); ok {
			p.Base, _ = time.Parse(time.RFC3339Nano, b)
		}
		f.Resume = p
		break
	}
	if n := l.Readings.Len(); n > 0 {
		f.After = time.UnixMilli(l.Readings.TimeMs[n-1])
	}
}
