package ingest

import (
	"fmt"
	"strings"
	"unicode/utf8"
)

// Stability is what a balance said about a reading: settled, still moving, or
// nothing at all (many balances send no flag).
type Stability int8

const (
	StabilityUnknown Stability = iota
	Stable
	Unstable
)

func (s Stability) String() string {
	switch s {
	case Stable:
		return "stable"
	case Unstable:
		return "unstable"
	}
	return "unknown"
}

// Int8 is the stability as the analysis stores it: 1 stable, −1 unstable,
// 0 not said.
func (s Stability) Int8() int8 {
	switch s {
	case Stable:
		return 1
	case Unstable:
		return -1
	}
	return 0
}

// StabilityOf is the inverse of Int8.
func StabilityOf(v int8) Stability {
	switch {
	case v > 0:
		return Stable
	case v < 0:
		return Unstable
	}
	return StabilityUnknown
}

// LineKind says what a balance line turned out to be.
type LineKind uint8

const (
	LineReading     LineKind = iota // a mass
	LineBlank                       // empty or only padding
	LineOverload                    // the balance reports more than its range
	LineUnderload                   // the balance reports less than its range (pan off, negative overload)
	LineError                       // the balance reports an error of its own
	LineUnparseable                 // not understood; Reason says why
)

func (k LineKind) String() string {
	switch k {
	case LineReading:
		return "reading"
	case LineBlank:
		return "blank"
	case LineOverload:
		return "overload"
	case LineUnderload:
		return "underload"
	case LineError:
		return "error"
	}
	return "unparseable"
}

// Line is one parsed balance line.
type Line struct {
	Kind   LineKind
	MassG  float64   // grams, for LineReading
	Stable Stability // for LineReading
	Reason string    // why a line is unparseable; empty otherwise
}

// Unit is a mass unit expressed in grams per unit.
type Unit float64

// Gram is the unit assumed when a line carries none.
const Gram Unit = 1

// unitGrams maps a unit word, lower case, to grams. Avoirdupois ounce and
// pound, troy ounce, metric carat and grain: exact by definition (NIST
// Handbook 44, appendix C).
var unitGrams = map[string]Unit{
	"mg": 0.001, "g": 1, "gr": 1, "kg": 1000,
	"oz": 28.349523125, "ozt": 31.1034768, "lb": 453.59237, "lbs": 453.59237,
	"ct": 0.2, "gn": 0.06479891,
}

// ParseUnit returns the unit for a name such as "g", "kg" or "lb".
func ParseUnit(name string) (Unit, error) {
	u, ok := lookupUnit(name)
	if !ok {
		return 0, fmt.Errorf("unknown mass unit %q: expected one of mg, g, kg, oz, ozt, lb, ct, gn", name)
	}
	return u, nil
}

func lookupUnit(word string) (Unit, bool) {
	if len(word) > 3 {
		return 0, false
	}
	var b [3]byte
	for i := 0; i < len(word); i++ {
		b[i] = lower(word[i])
	}
	u, ok := unitGrams[string(b[:len(word)])]
	return u, ok
}

// ParseLine turns one balance line (without its terminator) into a Line.
// noUnit is the unit assumed when the line names none (Gram unless the user
// says otherwise). It never panics and does not keep s.
func ParseLine(s string, noUnit Unit) Line {
	if noUnit <= 0 {
		noUnit = Gram
	}
	if strings.TrimSpace(s) == "" {
		return Line{Kind: LineBlank}
	}
	if why := notBalanceText(s); why != "" {
		return Line{Kind: LineUnparseable, Reason: why}
	}
	var toks [24]token
	n := tokenize(s, toks[:])
	if n == 0 || strings.TrimSpace(s) == "" {
		return Line{Kind: LineBlank}
	}
	toks2 := toks[:n]

	// Status words first: an overload line may also carry digits.
	stab := StabilityUnknown
	sawUnstable := false
	for i := range toks2 {
		t := &toks2[i]
		if t.isNumber {
			continue
		}
		w := s[t.start:t.end]
		switch classifyWord(w) {
		case wordOverload:
			return Line{Kind: LineOverload}
		case wordUnderload:
			return Line{Kind: LineUnderload}
		case wordError:
			return Line{Kind: LineError, Reason: strings.TrimSpace(s)}
		case wordStable:
			if stab == StabilityUnknown {
				stab = Stable
			}
		case wordUnstable:
			sawUnstable = true
		}
	}

	// Pick the number that is the mass.
	pick := -1
	numbers, withUnit, decimals := 0, 0, 0
	for i := range toks2 {
		t := &toks2[i]
		if !t.isNumber {
			continue
		}
		numbers++
		if t.unit == 0 && i+1 < n && !toks2[i+1].isNumber {
			if u, ok := lookupUnit(trimQuery(s[toks2[i+1].start:toks2[i+1].end])); ok {
				t.unit = u
				if strings.HasSuffix(s[toks2[i+1].start:toks2[i+1].end], "?") {
					t.query = true
				}
			}
		}
		if t.unit != 0 {
			withUnit++
		}
		if t.decimal {
			decimals++
		}
	}
	switch {
	case numbers == 0:
		if looksLikeText(s) {
			return Line{Kind: LineUnparseable, Reason: "no number in the line"}
		}
		return Line{Kind: LineUnparseable, Reason: "no number in the line (binary noise or a wrong baud rate?)"}
	case numbers == 1:
		pick = lastNumber(toks2, func(*token) bool { return true })
	case withUnit == 1:
		pick = lastNumber(toks2, func(t *token) bool { return t.unit != 0 })
	case numbers == 2 && withUnit == 2:
		// "1 lb 2.5 oz": a larger unit then a smaller one adds up.
		var us [2]*token
		k := 0
		for i := range toks2 {
			if toks2[i].isNumber {
				us[k] = &toks2[i]
				k++
			}
		}
		if us[0].unit > us[1].unit && us[0].bad == "" && us[1].bad == "" && us[0].value >= 0 && us[1].value >= 0 {
			st := stab
			if sawUnstable || us[0].query || us[1].query {
				st = Unstable
			}
			return Line{Kind: LineReading, MassG: us[0].value*float64(us[0].unit) + us[1].value*float64(us[1].unit), Stable: st}
		}
		return Line{Kind: LineUnparseable, Reason: "two masses with units on one line"}
	case decimals <= 1:
		// Counters, IDs or clock fields are integers; the mass is the last
		// number, or the only one with a decimal part.
		pick = lastNumber(toks2, func(t *token) bool { return decimals == 0 || t.decimal })
	default:
		return Line{Kind: LineUnparseable, Reason: "several numbers and no way to tell which is the mass"}
	}
	t := toks2[pick]
	if t.bad != "" {
		return Line{Kind: LineUnparseable, Reason: t.bad}
	}
	if t.query {
		sawUnstable = true
	}
	if sawUnstable {
		stab = Unstable
	}
	u := t.unit
	if u == 0 {
		u = noUnit
	}
	return Line{Kind: LineReading, MassG: t.value * float64(u), Stable: stab}
}

func lastNumber(toks []token, ok func(*token) bool) int {
	for i := len(toks) - 1; i >= 0; i-- {
		if toks[i].isNumber && ok(&toks[i]) {
			return i
		}
	}
	return -1
}

func trimQuery(w string) string { return strings.TrimSuffix(w, "?") }

// token is a span of the line; numbers are decoded while tokenizing.
type token struct {
	start, end int
	isNumber   bool
	value      float64
	decimal    bool   // had a decimal separator
	unit       Unit   // attached unit ("12.5g"), 0 if none
	query      bool   // a trailing '?' (unsettled, in several formats)
	bad        string // why the number cannot be used
}

func isSep(c byte) bool {
	return c == ' ' || c == '\t' || c == ';' || c == ':' || c == '=' || c == '|' || c == ',' || c < 0x20 || c == 0x7f
}

// isBoundary reports whether s[i] separates tokens; a comma between digits is
// a decimal comma and does not.
func isBoundary(s string, i int) bool {
	c := s[i]
	if c == ',' && i > 0 && i+1 < len(s) && isDigit(s[i-1]) && isDigit(s[i+1]) {
		// Inside a number as a decimal comma ("123,45") or a thousands
		// comma ("1,234.5", "1,234,567"); between fields otherwise
		// ("1,12.34": a counter, then the mass).
		d := 0
		for i+1+d < len(s) && isDigit(s[i+1+d]) {
			d++
		}
		if next := i + 1 + d; next < len(s) && (s[next] == '.' || s[next] == ',') {
			return d != 3
		}
		return false
	}
	return isSep(c)
}

func isDigit(c byte) bool { return c >= '0' && c <= '9' }

func isLetter(c byte) bool { return (c|0x20) >= 'a' && (c|0x20) <= 'z' }

func lower(c byte) byte {
	if c >= 'A' && c <= 'Z' {
		return c + 'a' - 'A'
	}
	return c
}

// tokenize splits s on separators into at most len(out) tokens. A comma or
// point between digits is a decimal separator, not a token boundary. A lone
// sign joins the number after it ("-   12.30").
func tokenize(s string, out []token) int {
	n := 0
	sign := 0.0 // pending lone sign
	i := 0
	for i < len(s) && n < len(out) {
		if isBoundary(s, i) {
			i++
			continue
		}
		j := i + 1
		for j < len(s) && !isBoundary(s, j) {
			j++
		}
		w := s[i:j]
		if w == "+" || w == "-" {
			if w == "-" {
				sign = -1
			} else {
				sign = 1
			}
			i = j
			continue
		}
		// Letters stuck to a number ("N+123.4g", "ST+0012.34g") are a word of
		// their own, unless they make an error code ("E01", "Err4").
		if p := letterPrefix(w); p > 0 && p < len(w) && n+1 < len(out) && !isErrorCode(w, p) {
			out[n] = token{start: i, end: i + p}
			n++
			i += p
			w = s[i:j]
			if w == "-" || w == "+" {
				sign = 1
				if w == "-" {
					sign = -1
				}
				i = j
				continue
			}
		}
		t := token{start: i, end: j}
		scanNumber(w, &t)
		if t.isNumber && sign < 0 {
			t.value = -t.value
		}
		sign = 0
		out[n] = t
		n++
		i = j
	}
	return n
}

// groupsOfThree reports whether every separator in num is followed by
// exactly three digits (thousands grouping).
func groupsOfThree(num string) bool {
	seps := 0
	for i := 0; i < len(num); i++ {
		if num[i] == '.' || num[i] == ',' {
			seps++
			d := 0
			for i+1+d < len(num) && isDigit(num[i+1+d]) {
				d++
			}
			if d != 3 || i == 0 {
				return false
			}
		}
	}
	return seps > 1
}

// letterPrefix is the length of the letters at the start of w when a sign
// or a digit follows them, else 0.
func letterPrefix(w string) int {
	p := 0
	for p < len(w) && isLetter(w[p]) {
		p++
	}
	if p == 0 || p > 4 || p >= len(w) {
		return 0
	}
	if c := w[p]; c == '+' || c == '-' || isDigit(c) {
		return p
	}
	return 0
}

// isErrorCode: "E01", "Err4", "ERR12": an error letter or word and digits.
func isErrorCode(w string, p int) bool {
	rest := w[p:]
	for i := 0; i < len(rest); i++ {
		if !isDigit(rest[i]) {
			return false
		}
	}
	pre := strings.ToLower(w[:p])
	return pre == "e" || strings.HasPrefix(pre, "err")
}

// scanNumber decodes w as [sign...][digits][sep digits][unit][?] when it is
// one; anything else stays a word.
func scanNumber(w string, t *token) {
	k := 0
	neg := false
	for k < len(w) && (w[k] == '+' || w[k] == '-') {
		if w[k] == '-' {
			neg = !neg
		}
		k++
	}
	if k >= len(w) || !(isDigit(w[k]) || ((w[k] == '.' || w[k] == ',') && k+1 < len(w) && isDigit(w[k+1]))) {
		return
	}
	// digits and separators
	start := k
	dots, commas, lastSep := 0, 0, -1
	for k < len(w) && (isDigit(w[k]) || w[k] == '.' || w[k] == ',') {
		switch w[k] {
		case '.':
			dots++
			lastSep = k
		case ',':
			commas++
			lastSep = k
		}
		k++
	}
	num := w[start:k]
	rest := w[k:]
	// the suffix may only be a unit and/or a '?'
	query := false
	if strings.HasSuffix(rest, "?") {
		query = true
		rest = rest[:len(rest)-1]
	}
	for q := 0; q < len(rest); q++ {
		if !isLetter(rest[q]) {
			return // "2026-12-02", "12h30": not a mass
		}
	}
	t.isNumber = true
	t.query = query
	if rest != "" {
		u, ok := lookupUnit(rest)
		if !ok {
			t.bad = fmt.Sprintf("unknown unit %q", rest)
			return
		}
		t.unit = u
	}
	decimalAt := -1
	switch {
	case dots == 0 && commas == 0:
	case dots+commas == 1:
		decimalAt = lastSep - start
	case dots > 0 && commas > 0 && (w[lastSep] == '.' && dots == 1 || w[lastSep] == ',' && commas == 1):
		decimalAt = lastSep - start // the other kind groups thousands
	case (dots == 0 || commas == 0) && groupsOfThree(num):
		// "1,234,567" or "1.234.567": thousands only
	default:
		t.bad = fmt.Sprintf("number %q has more than one decimal separator", num)
		return
	}
	var mant uint64
	digits, frac := 0, 0
	for q := 0; q < len(num); q++ {
		c := num[q]
		if !isDigit(c) {
			continue
		}
		if digits == 0 && c == '0' && (decimalAt < 0 || q < decimalAt) {
			continue // leading zero padding
		}
		if digits >= 18 {
			t.bad = fmt.Sprintf("number %q has too many digits", num)
			return
		}
		mant = mant*10 + uint64(c-'0')
		digits++
		if decimalAt >= 0 && q > decimalAt {
			frac++
		}
	}
	t.decimal = decimalAt >= 0
	v := float64(mant)
	if frac > 0 {
		v /= pow10[frac]
	}
	if neg {
		v = -v
	}
	t.value = v
}

var pow10 = [...]float64{1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18}

type wordClass uint8

const (
	wordOther wordClass = iota
	wordStable
	wordUnstable
	wordOverload
	wordUnderload
	wordError
)

// Words balances use for status. Kept generic: letters and words that many
// makers share, none specific to one.
var statusWords = map[string]wordClass{
	"s": wordStable, "st": wordStable, "sta": wordStable, "stab": wordStable, "stable": wordStable,
	"u": wordUnstable, "us": wordUnstable, "d": wordUnstable, "dy": wordUnstable, "dyn": wordUnstable,
	"m": wordUnstable, "mot": wordUnstable, "motion": wordUnstable, "unstable": wordUnstable, "?": wordUnstable,
	"ol": wordOverload, "+ol": wordOverload, "o-l": wordOverload, "ovl": wordOverload, "over": wordOverload,
	"overload": wordOverload, "high": wordOverload,
	"ul": wordUnderload, "-ol": wordUnderload, "u-l": wordUnderload, "unl": wordUnderload, "under": wordUnderload,
	"underload": wordUnderload, "low": wordUnderload,
	"err": wordError, "error": wordError,
}

func classifyWord(w string) wordClass {
	if len(w) > 9 {
		return wordOther
	}
	var b [9]byte
	for i := 0; i < len(w); i++ {
		b[i] = lower(w[i])
	}
	lw := b[:len(w)]
	if c, ok := statusWords[string(lw)]; ok {
		return c
	}
	// "Err4", "ERR:12" were split at ':'; "E01", "E4": an error code.
	if len(lw) >= 3 && string(lw[:3]) == "err" {
		return wordError
	}
	if len(lw) >= 2 && lw[0] == 'e' && allDigits(lw[1:]) {
		return wordError
	}
	return wordOther
}

func allDigits(b []byte) bool {
	for _, c := range b {
		if !isDigit(c) {
			return false
		}
	}
	return len(b) > 0
}

// looksLikeText is true when s is mostly printable ASCII.
func looksLikeText(s string) bool {
	printable := 0
	for i := 0; i < len(s); i++ {
		if s[i] >= 0x20 && s[i] < 0x7f {
			printable++
		}
	}
	return printable*10 >= len(s)*9
}

// MaxBalanceLine is the longest line taken as a balance's output: balances
// print a number and a few words, well under this.
const MaxBalanceLine = 96

// notBalanceText says why s cannot be a balance line ("" when it can be):
// balances print text, so a control byte (other than a tab, or the STX and
// ETX some balances frame a line with), a byte that is not UTF-8, or a
// long line is noise: a wrong baud rate, a loose cable, another device.
func notBalanceText(s string) string {
	t := strings.TrimLeft(s, "\x02")
	t = strings.TrimRight(t, "\x03")
	if len(strings.TrimSpace(t)) > MaxBalanceLine {
		return fmt.Sprintf("longer than %d characters: not a balance line", MaxBalanceLine)
	}
	for i := 0; i < len(t); i++ {
		if c := t[i]; (c < 0x20 && c != '\t') || c == 0x7f {
			return "control bytes in the line (binary noise or a wrong baud rate?)"
		}
	}
	if !utf8.ValidString(t) {
		return "bytes that are not text (binary noise or a wrong baud rate?)"
	}
	return ""
}
