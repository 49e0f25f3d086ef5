package session

import (
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"strconv"
	"time"
)

// Event types.
const (
	TypeSession = "session"
	TypeReading = "reading"
	TypeNote    = "note"
	TypeSetup   = "setup"
	TypeSource  = "source"
)

// FormatName and FormatVersion mark a file as a parch session log.
const (
	FormatName    = "parch-session"
	FormatVersion = 1
)

// Source event names. Kept as strings in the log so new ones can be added
// without breaking older readers.
const (
	SourceStarted     = "started"
	SourceStopped     = "stopped"
	SourceLost        = "lost"
	SourceBack        = "back"
	SourceStalled     = "stalled"
	SourceResumed     = "resumed"
	SourceOverload    = "overload"
	SourceUnderload   = "underload"
	SourceDeviceError = "device_error"
	SourceUnparseable = "unparseable"
	SourceLineCut     = "line_cut"
	SourceReopened    = "reopened"
	// SourcePosition records how far a followed file was read (params
	// "file", "offset", "tail", "base"), so a restart resumes there.
	SourcePosition   = "position"
	SourceSuppressed = "suppressed"
	SourceWarning    = "warning"
)

// Event is one line of the log. Which fields matter depends on Type; the
// rest stay zero and are not written.
type Event struct {
	Type string
	T    time.Time

	// reading
	MassG    float64
	Stable   *bool
	Raw      string // also on source events: the offending text
	Channels map[string]float64

	// note
	Kind     string
	Text     string
	ReadingT time.Time // latest reading's time when the note was made
	Value    *float64  // grams removed, a new setpoint...

	// source
	Event  string
	Detail string

	// setup (and extra header fields)
	Params map[string]any
}

// Bool and Float return pointers for the optional fields.
func Bool(b bool) *bool        { return &b }
func Float(f float64) *float64 { return &f }
func fmtTime(b []byte, t time.Time) []byte {
	return t.UTC().AppendFormat(b, "2006-01-02T15:04:05.000Z07:00")
}

// AppendJSON appends e as one JSON line (with its newline) to b. Keys come in
// a fixed order, "type" and "t" first, so logs diff and grep well.
func AppendJSON(b []byte, e *Event) ([]byte, error) {
	if e.Type == "" {
		return b, fmt.Errorf("session: event has no type")
	}
	b = append(b, `{"type":`...)
	b = strconv.AppendQuote(b, e.Type)
	b = append(b, `,"t":"`...)
	b = fmtTime(b, e.T)
	b = append(b, '"')
	var err error
	switch e.Type {
	case TypeReading:
		if b, err = appendNum(b, "mass_g", e.MassG); err != nil {
			return b, err
		}
		if e.Stable != nil {
			b = append(b, `,"stable":`...)
			b = strconv.AppendBool(b, *e.Stable)
		}
		if e.Raw != "" {
			b = appendStr(b, "raw", e.Raw)
		}
		if len(e.Channels) > 0 {
			b = append(b, `,"channels":{`...)
			names := make([]string, 0, len(e.Channels))
			for k := range e.Channels {
				names = append(names, k)
			}
			sort.Strings(names)
			first := true
			for _, k := range names {
				v := e.Channels[k]
				if math.IsNaN(v) || math.IsInf(v, 0) {
					continue // JSON has no NaN; a missing value is simply absent
				}
				if !first {
					b = append(b, ',')
				}
				first = false
				b = appendJSONString(b, k)
				b = append(b, ':')
				b = strconv.AppendFloat(b, v, 'f', -1, 64)
			}
			b = append(b, '}')
		}
	case TypeNote:
		b = appendStr(b, "kind", e.Kind)
		b = appendStr(b, "text", e.Text)
		if !e.ReadingT.IsZero() {
			b = append(b, `,"reading_t":"`...)
			b = fmtTime(b, e.ReadingT)
			b = append(b, '"')
		}
		if e.Value != nil {
			if b, err = appendNum(b, "value", *e.Value); err != nil {
				return b, err
			}
		}
	case TypeSource:
		b = appendStr(b, "event", e.Event)
		if e.Detail != "" {
			b = appendStr(b, "detail", e.Detail)
		}
		if e.Raw != "" {
			b = appendStr(b, "raw", e.Raw)
		}
	}
	if len(e.Params) > 0 {
		names := make([]string, 0, len(e.Params))
		for k := range e.Params {
			if k == "type" || k == "t" {
				return b, fmt.Errorf("session: %s parameter may not be named %q", e.Type, k)
			}
			names = append(names, k)
		}
		sort.Strings(names)
		for _, k := range names {
			v, err := json.Marshal(e.Params[k])
			if err != nil {
				return b, fmt.Errorf("session: %s parameter %q: %w", e.Type, k, err)
			}
			b = append(b, ',')
			b = appendJSONString(b, k)
			b = append(b, ':')
			b = append(b, v...)
		}
	}
	b = append(b, '}', '\n')
	return b, nil
}

func appendNum(b []byte, key string, v float64) ([]byte, error) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return b, fmt.Errorf("session: %s is %v; JSON has no such number", key, v)
	}
	b = append(b, ',', '"')
	b = append(b, key...)
	b = append(b, '"', ':')
	return strconv.AppendFloat(b, v, 'f', -1, 64), nil
}

func appendStr(b []byte, key, v string) []byte {
	b = append(b, ',', '"')
	b = append(b, key...)
	b = append(b, '"', ':')
	return appendJSONString(b, v)
}

// appendJSONString quotes s for JSON. Invalid UTF-8 (binary noise from a
// balance at the wrong baud rate) becomes U+FFFD, as encoding/json does, so
// every line stays valid JSON.
func appendJSONString(b []byte, s string) []byte {
	q, _ := json.Marshal(s) // never fails for a string
	return append(b, q...)
}
