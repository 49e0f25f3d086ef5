// Package safetext makes text from outside (notes, file contents, device
// lines) safe to show: on a terminal, in a report, in a spreadsheet. The
// record keeps the text as it came; only what is shown is changed.
package safetext

import (
	"fmt"
	"strings"
	"unicode/utf8"
)

// Terminal returns s with every control character shown as an escape
// (\x1b, \n, \u009b...) and every byte that is not UTF-8 as \xNN, so that no
// escape sequence from input can clear a screen, set a window title or
// plant a link. Tabs become spaces. Printable text is unchanged.
func Terminal(s string) string {
	if clean(s) {
		return s
	}
	var b strings.Builder
	for i := 0; i < len(s); {
		r, size := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && size <= 1:
			fmt.Fprintf(&b, `\x%02x`, s[i])
		case r == '\t':
			b.WriteByte(' ')
		case r == '\n':
			b.WriteString(`\n`)
		case r == '\r':
			b.WriteString(`\r`)
		case r < 0x20 || r == 0x7f:
			fmt.Fprintf(&b, `\x%02x`, r)
		case r >= 0x80 && r < 0xa0, isBidi(r):
			fmt.Fprintf(&b, `\u%04x`, r)
		default:
			b.WriteString(s[i : i+size])
		}
		i += size
	}
	return b.String()
}

// clean is the fast path: plain printable ASCII.
func clean(s string) bool {
	for i := 0; i < len(s); i++ {
		if c := s[i]; c < 0x20 || c >= 0x7f {
			return false
		}
	}
	return true
}

// isBidi reports the bidirectional controls that can make shown text read
// differently from what it is (Unicode TR #36, "Trojan Source").
func isBidi(r rune) bool {
	return (r >= 0x202a && r <= 0x202e) || (r >= 0x2066 && r <= 0x2069) || r == 0x200e || r == 0x200f || r == 0x061c
}

// Cell returns s made safe for a CSV cell that a spreadsheet will open:
// Terminal's escapes, and a leading ' before =, +, -, @ (and a leading tab
// or CR) so that the cell is read as text, not a formula (the OWASP advice
// on CSV injection; RFC 4180 quoting is the CSV writer's job).
func Cell(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		s = "'" + s
	}
	return Terminal(s)
}

// Clip shortens s to at most n bytes (at a rune boundary), marking the cut,
// for echoing input in a message without echoing all of it.
func Clip(s string, n int) string {
	if len(s) <= n {
		return s
	}
	cut := n
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return s[:cut] + fmt.Sprintf("... (%d bytes in all)", len(s))
}
