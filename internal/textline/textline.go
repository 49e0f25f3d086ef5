// Package textline reads lines of text with a bound on their length, so
// that a file with one enormous line cannot take the memory of the machine
// recording a run.
package textline

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
)

// Reader reads lines of at most Max bytes; longer lines are skipped whole
// (streamed past, never held) and reported with their number.
type Reader struct {
	br  *bufio.Reader
	Max int
	No  int // number of the line last returned, from 1
	// Offset is how many bytes the lines returned so far (and the lines
	// skipped) take, terminators included.
	Offset int64
	long   []byte
}

// ErrBinary marks a line holding NUL bytes: not text (a binary file, or the
// zero-filled tail a crash can leave). The line is consumed; reading can go
// on.
var ErrBinary = errors.New("holds NUL bytes: binary, not text")

// NewReader reads r with lines of at most max bytes.
func NewReader(r io.Reader, max int) *Reader {
	return &Reader{br: bufio.NewReaderSize(r, 64<<10), Max: max}
}

// Peek returns up to n bytes without consuming them.
func (r *Reader) Peek(n int) []byte {
	b, _ := r.br.Peek(n)
	return b
}

// Next returns the next line (valid until the next call) with its
// terminator ("\n"; the last line may have none). skipped is the length of
// a line over Max that was passed over (its text is not returned); err is
// io.EOF at the end, or wraps ErrBinary for a line with NUL bytes.
func (r *Reader) Next() (line []byte, skipped int64, err error) {
	r.long = r.long[:0]
	binary := false
	var n int64
	for {
		part, rerr := r.br.ReadSlice('\n')
		n += int64(len(part))
		binary = binary || bytes.IndexByte(part, 0) >= 0
		if rerr == nil && n == int64(len(part)) && !binary && len(part) <= r.Max {
			r.No++
			r.Offset += n
			return part, 0, nil // the common case, without a copy
		}
		if !binary && skipped == 0 && len(r.long)+len(part) <= r.Max {
			r.long = append(r.long, part...)
		} else {
			skipped = n
			r.long = r.long[:0]
		}
		if errors.Is(rerr, bufio.ErrBufferFull) {
			continue
		}
		if n == 0 && rerr != nil {
			return nil, 0, rerr
		}
		r.No++
		r.Offset += n
		switch {
		case binary:
			return nil, 0, fmt.Errorf("line %d %w", r.No, ErrBinary)
		case skipped > 0:
			return nil, n, nil
		}
		return r.long, 0, nil
	}
}
