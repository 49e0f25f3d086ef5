package ingest

// MaxLineBytes is the longest line kept whole; longer lines are cut to this
// length and counted, so a device spewing bytes with no terminator cannot grow
// memory without bound.
const MaxLineBytes = 4096

// Splitter joins fragments of a byte stream into lines ended by CR, LF or
// CR LF (one terminator, not two). Bytes after the last terminator are kept
// until more arrive. The zero value is ready to use.
type Splitter struct {
	buf    []byte
	cut    bool // the current line passed MaxLineBytes; drop the rest of it
	lastCR bool // the previous byte was CR, so a LF now ends nothing
	// Cut counts lines longer than MaxLineBytes.
	Cut int
}

// Feed splits p and calls emit for each complete line, without its
// terminator. cut is true when the line was longer than MaxLineBytes and only
// its first MaxLineBytes bytes are given. line is only valid during the call.
func (s *Splitter) Feed(p []byte, emit func(line []byte, cut bool)) {
	for len(p) > 0 {
		if s.lastCR && p[0] == '\n' {
			p = p[1:]
			s.lastCR = false
			continue
		}
		s.lastCR = false
		end := indexTerminator(p)
		if end < 0 {
			s.keep(p)
			return
		}
		s.keep(p[:end])
		emit(s.buf, s.cut)
		if s.cut {
			s.Cut++
		}
		s.buf = s.buf[:0]
		s.cut = false
		s.lastCR = p[end] == '\r'
		p = p[end+1:]
	}
}

// Pending reports the bytes of an unfinished line held so far.
func (s *Splitter) Pending() int { return len(s.buf) }

// Reset drops any unfinished line (after a reconnect the stream restarts).
func (s *Splitter) Reset() {
	s.buf = s.buf[:0]
	s.cut = false
	s.lastCR = false
}

func (s *Splitter) keep(p []byte) {
	room := MaxLineBytes - len(s.buf)
	if len(p) > room {
		p = p[:room]
		s.cut = true
	}
	s.buf = append(s.buf, p...)
}

func indexTerminator(p []byte) int {
	for i, c := range p {
		if c == '\n' || c == '\r' {
			return i
		}
	}
	return -1
}
