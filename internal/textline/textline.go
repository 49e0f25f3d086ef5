// Package textline reads lines of text with a bound on their length, so
// that a file with one enormous line (or none: /dev/zero) cannot take the
// memory of the machine recording a run.
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
	br   *bufio.Reader
	Max  int
	No   int // number of the line last returned, from 1
	long []byte
}

// ErrBinary is returned when a file holds NUL bytes: not text.
var ErrBinary = errors.New("holds NUL bytes: a binary file, not text")

// NewReader reads r with lines of at most max bytes.
func NewReader(r io.Reader, max int) *Reader {
	return &Reader{br: bufio.NewReaderSize(r, 64<<10), Max: max}
}

// Peek returns up to n bytes without consuming them.
func (r *Reader) Peek(n int) []byte {
	b, _ := r.br.Peek(n)
	return b
}

// Next returns the next line (valid until the next call) with its terminator ("\n"; the last line may
// have none). skipped is the length of a line over Max that was passed over
// (its text is not returned); err is io.EOF at the end. A line holding a
// NUL byte gives ErrBinary.
func (r *Reader) Next() (line []byte, skipped int64, err error) {
	r.long = r.long[:0]
	for {
		part, err := r.br.ReadSlice('\n')
		if bytes.IndexByte(part, 0) >= 0 {
			r.No++
			return nil, 0, fmt.Errorf("line %d %w", r.No, ErrBinary)
		}
		if err == nil && skipped == 0 && len(r.long) == 0 && len(part) <= r.Max {
			r.No++
			return part, 0, nil // the common case, without a copy: valid until the next call
		}
		if skipped > 0 || len(r.long)+len(part) > r.Max {
			skipped += int64(len(r.long) + len(part))
			r.long = r.long[:0]
		} else {
			r.long = append(r.long, part...)
		}
		if errors.Is(err, bufio.ErrBufferFull) {
			continue
		}
		if len(r.long) == 0 && skipped == 0 && err != nil {
			return nil, 0, err
		}
		r.No++
		if skipped > 0 {
			return nil, skipped, nil
		}
		return r.long, 0, nil
	}
}
