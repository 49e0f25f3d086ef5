package ingest

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
)

// TableOptions override what is guessed from a CSV/TSV header.
type TableOptions struct {
	TimeCol  string        // column name (or 1-based number) of the time
	MassCol  string        // column name (or 1-based number) of the mass
	TimeUnit time.Duration // unit of an elapsed-time column with none in its header
	// AllowMoisture accepts a dry-basis moisture (X_db) or moisture ratio
	// (MR) column when there is no mass column.
	AllowMoisture bool
}

// What a table's value column holds.
const (
	QuantityMass       = "mass"
	QuantityMoistureDB = "moisture_db"
	QuantityMR         = "moisture_ratio"
)

// Table reads the rows of a CSV or TSV file written by a logger or a
// spreadsheet: a header row, a time column (RFC 3339 timestamps, or elapsed
// time with its unit in the header: elapsed_s, time (min), t [h]), a mass
// column with its unit (mass_g, weight (kg)), and other numeric columns kept
// as named channels.
type Table struct {
	Header    []string
	Delim     byte
	TimeIdx   int
	MassIdx   int
	Elapsed   bool          // the time column is elapsed time, not clock time
	TimeUnit  time.Duration // for elapsed time
	MassUnit  Unit
	StableIdx int // a column saying whether the balance had settled; -1 if none
	// Quantity is what the value column holds: QuantityMass (grams after
	// the unit), QuantityMoistureDB or QuantityMR (taken as they are).
	Quantity string
	// DateIdx is a separate date column whose time-of-day partner is the
	// time column ("Date,Time,Weight"); -1 if none.
	DateIdx  int
	wetBasis bool // the value column is wet-basis moisture, converted to dry basis
	wbPct    bool // ... given in percent
	Channels []Channel
	comma    bool     // decimal comma allowed in numbers (; or tab delimited)
	fields   []string // reused between rows
	// ChannelValues, when set, receives each row's channel values (in the
	// order of Channels, NaN where a cell is empty) instead of Row.Channels:
	// a long table then costs no map per row.
	ChannelValues []float64
}

// Channel is a numeric column kept beside the mass.
type Channel struct {
	Idx  int
	Name string // cleaned: "air temp (°C)" -> "air_temp_c"
}

// Row is one decoded data row.
type Row struct {
	Time     time.Time // clock time, when the column holds one
	Elapsed  time.Duration
	MassG    float64
	Stable   Stability
	Channels map[string]float64
}

// Clone is a table of the same header for another goroutine: its own
// scratch space and channel values, the rest shared (never written after
// NewTable).
func (tb *Table) Clone() *Table {
	c := *tb
	c.fields = nil
	if tb.ChannelValues != nil {
		c.ChannelValues = make([]float64, len(tb.ChannelValues))
	}
	return &c
}

// NewTable interprets a header line. The error names the header and says
// what was expected.
func NewTable(header string, opt TableOptions) (*Table, error) {
	header = strings.TrimPrefix(strings.TrimRight(header, "\r\n"), "\ufeff")
	tb := &Table{Delim: sniffDelim(header), TimeIdx: -1, MassIdx: -1, StableIdx: -1, DateIdx: -1}
	tb.comma = tb.Delim != ','
	tb.Header = splitRow(header, tb.Delim)
	if len(tb.Header) < 2 {
		return nil, fmt.Errorf("header %q: expected at least a time and a mass column separated by commas, semicolons or tabs", clipRaw(header))
	}
	var err error
	if tb.TimeIdx, err = pickColumn(tb.Header, opt.TimeCol, isTimeName, "time"); err != nil {
		return nil, fmt.Errorf("header %q: %w", clipRaw(header), err)
	}
	tb.Quantity = QuantityMass
	if tb.MassIdx, err = pickColumn(tb.Header, opt.MassCol, isMassName, "mass"); err != nil {
		// No mass: a table of dry-basis moisture or moisture ratio will do
		// where the caller accepts one (parch report).
		if opt.MassCol == "" && opt.AllowMoisture {
			if i, e := pickColumn(tb.Header, "", isMoistureDBName, "moisture"); e == nil {
				tb.MassIdx, tb.Quantity, err = i, QuantityMoistureDB, nil
			} else if i, e := pickColumn(tb.Header, "", isMoistureWBName, "moisture"); e == nil {
				// wet basis in the file, dry basis in the analysis
				h := strings.ToLower(tb.Header[i])
				tb.MassIdx, tb.Quantity, err = i, QuantityMoistureDB, nil
				tb.wetBasis, tb.wbPct = true, strings.Contains(h, "%") || strings.Contains(h, "pct")
			} else if i, e := pickColumn(tb.Header, "", isMRName, "moisture ratio"); e == nil {
				tb.MassIdx, tb.Quantity, err = i, QuantityMR, nil
			}
		}
		if err != nil {
			return nil, fmt.Errorf("header %q: %w", clipRaw(header), err)
		}
	}
	if tb.TimeIdx == tb.MassIdx {
		return nil, fmt.Errorf("header %q: time and mass cannot be the same column", clipRaw(header))
	}
	_, tunit := splitUnit(tb.Header[tb.TimeIdx])
	tb.TimeUnit = opt.TimeUnit
	if tb.TimeUnit == 0 && tunit != "" {
		d, ok := timeUnits[tunit]
		if !ok {
			return nil, fmt.Errorf("header %q: time column %q has unit %q; expected s, min, h, ms or d (or --time-unit)", clipRaw(header), tb.Header[tb.TimeIdx], tunit)
		}
		tb.TimeUnit = d
	}
	_, munit := splitUnit(tb.Header[tb.MassIdx])
	tb.MassUnit = Gram
	if munit != "" && tb.Quantity == QuantityMass {
		u, ok := lookupUnit(munit)
		if !ok {
			return nil, fmt.Errorf("header %q: mass column %q has unit %q; expected mg, g, kg, oz or lb", clipRaw(header), tb.Header[tb.MassIdx], munit)
		}
		tb.MassUnit = u
	}
	for i, h := range tb.Header {
		if base, _ := splitUnit(h); (base == "date" || base == "day") && i != tb.TimeIdx {
			tb.DateIdx = i
			continue
		}
		if i == tb.TimeIdx || i == tb.MassIdx || strings.TrimSpace(h) == "" {
			continue
		}
		if base, _ := splitUnit(h); base == "stable" || base == "stability" || base == "settled" {
			tb.StableIdx = i
			continue
		}
		{
			tb.Channels = append(tb.Channels, Channel{Idx: i, Name: CleanName(h)})
		}
	}
	return tb, nil
}

// Decode reads one data row. The time column decides, on the first row,
// whether times are clock times or elapsed times.
func (tb *Table) Decode(line string) (Row, error) {
	f := tb.split(strings.TrimRight(line, "\r\n"))
	if len(f) <= max(tb.TimeIdx, tb.MassIdx) {
		return Row{}, fmt.Errorf("row has %d fields, expected at least %d as in the header", len(f), max(tb.TimeIdx, tb.MassIdx)+1)
	}
	var r Row
	ts := strings.TrimSpace(f[tb.TimeIdx])
	if tb.DateIdx >= 0 && tb.DateIdx < len(f) {
		if t, ok := parseDateAndTime(strings.TrimSpace(f[tb.DateIdx]), ts); ok {
			r.Time = t
		}
	}
	if r.Time.IsZero() {
		if err := tb.decodeTime(ts, &r); err != nil {
			return Row{}, err
		}
	}
	ms := strings.TrimSpace(f[tb.MassIdx])
	v, ok := tb.number(ms)
	switch {
	case ok:
		r.MassG = v * float64(tb.MassUnit)
	case tb.Quantity == QuantityMass:
		// A cell as a balance writes it ("ST 123.45 g"): the line parser
		// reads it, unit and stability included.
		l := ParseLine(ms, tb.MassUnit)
		if l.Kind != LineReading {
			return Row{}, fmt.Errorf("mass %q in column %q is not a number", clipRaw(ms), tb.Header[tb.MassIdx])
		}
		v, r.MassG, r.Stable = l.MassG, l.MassG, l.Stable
	default:
		return Row{}, fmt.Errorf("%s %q in column %q is not a number", tb.Quantity, clipRaw(ms), tb.Header[tb.MassIdx])
	}
	if tb.wetBasis {
		w := v
		if tb.wbPct || v > 1 {
			w = v / 100
		}
		if !(w >= 0 && w < 1) {
			return Row{}, fmt.Errorf("wet-basis moisture %q in column %q is not between 0 and 100 %%", clipRaw(ms), tb.Header[tb.MassIdx])
		}
		r.MassG = w / (1 - w)
	} else if tb.Quantity != QuantityMass {
		r.MassG = v
	}
	if tb.StableIdx >= 0 && tb.StableIdx < len(f) && r.Stable == StabilityUnknown {
		switch strings.ToLower(strings.TrimSpace(f[tb.StableIdx])) {
		case "1", "true", "yes", "y", "s", "st", "stable":
			r.Stable = Stable
		case "0", "false", "no", "n", "u", "us", "unstable":
			r.Stable = Unstable
		}
	}
	if tb.ChannelValues != nil {
		for j, c := range tb.Channels {
			tb.ChannelValues[j] = math.NaN()
			if c.Idx < len(f) {
				if v, ok := tb.number(strings.TrimSpace(f[c.Idx])); ok {
					tb.ChannelValues[j] = v
				}
			}
		}
		return r, nil
	}
	for _, c := range tb.Channels {
		if c.Idx >= len(f) {
			continue
		}
		if v, ok := tb.number(strings.TrimSpace(f[c.Idx])); ok {
			if r.Channels == nil {
				r.Channels = make(map[string]float64, len(tb.Channels))
			}
			r.Channels[c.Name] = v
		}
	}
	return r, nil
}

// decodeTime reads the time column: a clock time, h:mm:ss elapsed, or a
// number in the column's time unit.
func (tb *Table) decodeTime(ts string, r *Row) error {
	if t, ok := parseClock(ts); ok {
		r.Time = t
		return nil
	}
	if d, ok := parseHMS(ts); ok {
		if d < 0 || d > MaxElapsed {
			return fmt.Errorf("time %q in column %q is beyond %d years: not an elapsed time of a drying run", clipRaw(ts), tb.Header[tb.TimeIdx], int(MaxElapsed.Hours()/24/365))
		}
		r.Elapsed = d
		tb.Elapsed = true
		return nil
	}
	v, ok := tb.number(ts)
	if !ok {
		return fmt.Errorf("time %q in column %q is neither an RFC 3339 time nor a number", clipRaw(ts), tb.Header[tb.TimeIdx])
	}
	if tb.TimeUnit == 0 {
		return fmt.Errorf("time %q has no unit: name the column like elapsed_s, time (min) or t [h], or pass --time-unit", clipRaw(ts))
	}
	ns := v * float64(tb.TimeUnit)
	if !(math.Abs(ns) <= float64(MaxElapsed)) {
		return fmt.Errorf("time %q in column %q is beyond %d years: not an elapsed time of a drying run", clipRaw(ts), tb.Header[tb.TimeIdx], int(MaxElapsed.Hours()/24/365))
	}
	r.Elapsed = time.Duration(ns)
	tb.Elapsed = true
	return nil
}

// MaxElapsed bounds an elapsed time read from a file: far beyond any run,
// and far inside what a time stamp can hold (larger values wrapped round to
// negative durations and dates before year 0).
const MaxElapsed = 10 * 365 * 24 * time.Hour

func (tb *Table) number(s string) (float64, bool) {
	if s == "" {
		return 0, false
	}
	if tb.comma && strings.IndexByte(s, ',') >= 0 && strings.IndexByte(s, '.') < 0 {
		s = strings.Replace(s, ",", ".", 1)
	}
	v, err := parseFloat(s)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}

func sniffDelim(header string) byte {
	best, n := byte(','), 0
	for _, d := range []byte{'\t', ';', ','} {
		if c := strings.Count(header, string(d)); c > n {
			best, n = d, c
		}
	}
	return best
}

// split is splitRow without an allocation per field for a row with no
// quotes (the common case), into a slice reused between rows.
func (tb *Table) split(line string) []string {
	if strings.IndexByte(line, '"') >= 0 {
		return splitRow(line, tb.Delim)
	}
	f := tb.fields[:0]
	for {
		i := strings.IndexByte(line, tb.Delim)
		if i < 0 {
			f = append(f, line)
			break
		}
		f = append(f, line[:i])
		line = line[i+1:]
	}
	tb.fields = f
	return f
}

// splitRow splits on delim, honouring double quotes (RFC 4180) within a line.
func splitRow(line string, delim byte) []string {
	var out []string
	var b strings.Builder
	inQ := false
	for i := 0; i < len(line); i++ {
		c := line[i]
		switch {
		case c == '"' && inQ && i+1 < len(line) && line[i+1] == '"':
			b.WriteByte('"')
			i++
		case c == '"':
			inQ = !inQ
		case c == delim && !inQ:
			out = append(out, b.String())
			b.Reset()
		default:
			b.WriteByte(c)
		}
	}
	return append(out, b.String())
}

// splitUnit splits "mass_g", "weight (kg)", "t [h]", "time/min" into a base
// name and a unit, both lower case.
func splitUnit(h string) (base, unit string) {
	h = strings.ToLower(strings.TrimSpace(h))
	for _, p := range [][2]string{{"(", ")"}, {"[", "]"}} {
		if i := strings.LastIndex(h, p[0]); i > 0 && strings.HasSuffix(h, p[1]) {
			return strings.TrimSpace(h[:i]), strings.TrimSpace(h[i+1 : len(h)-1])
		}
	}
	if i := strings.LastIndex(h, "/"); i > 0 {
		return strings.TrimSpace(h[:i]), strings.TrimSpace(h[i+1:])
	}
	if i := strings.LastIndex(h, " in "); i > 0 {
		return strings.TrimSpace(h[:i]), strings.TrimSpace(h[i+4:])
	}
	if i := strings.LastIndexAny(h, "_ "); i > 0 {
		u := h[i+1:]
		if _, ok := timeUnits[u]; ok {
			return h[:i], u
		}
		if _, ok := lookupUnit(u); ok {
			return h[:i], u
		}
	}
	return h, ""
}

var timeUnits = map[string]time.Duration{
	"ms": time.Millisecond,
	"s":  time.Second, "sec": time.Second, "secs": time.Second, "second": time.Second, "seconds": time.Second,
	"min": time.Minute, "mins": time.Minute, "minute": time.Minute, "minutes": time.Minute,
	"h": time.Hour, "hr": time.Hour, "hrs": time.Hour, "hour": time.Hour, "hours": time.Hour,
	"d": 24 * time.Hour, "day": 24 * time.Hour, "days": 24 * time.Hour,
}

// ParseTimeUnit reads a --time-unit value.
func ParseTimeUnit(s string) (time.Duration, error) {
	if d, ok := timeUnits[strings.ToLower(strings.TrimSpace(s))]; ok {
		return d, nil
	}
	return 0, fmt.Errorf("time unit %q: expected s, min, h, ms or d", s)
}

func isTimeName(base string) int {
	switch base {
	case "time", "t", "elapsed", "elapsed time", "elapsed_time", "timestamp", "datetime", "date_time", "date time", "clock",
		"zeit", "tiempo", "temps", "tempo", "tijd":
		return 2
	}
	if strings.HasPrefix(base, "time") || strings.HasPrefix(base, "elapsed") {
		return 1
	}
	return 0
}

func isMoistureDBName(base string) int {
	switch base {
	case "x_db", "xdb", "x", "moisture_db", "moisture db", "mc_db", "mc db", "dry_basis", "dry basis", "moisture (db)", "x (db)", "mc":
		return 2
	}
	if strings.Contains(base, "dry basis") || strings.Contains(base, "dry_basis") || strings.HasSuffix(base, "_db") {
		return 1
	}
	return 0
}

func isMoistureWBName(base string) int {
	switch base {
	case "moisture_wb", "moisture wb", "mc_wb", "mc wb", "moisture_wb_pct", "x_wb", "wet basis", "wet_basis", "moisture (% wb)", "mc (% wb)", "moisture content":
		return 2
	}
	if strings.Contains(base, "wet basis") || strings.Contains(base, "wet_basis") || strings.HasSuffix(base, "_wb") || strings.Contains(base, "% wb") {
		return 1
	}
	return 0
}

func isMRName(base string) int {
	switch base {
	case "mr", "moisture ratio", "moisture_ratio":
		return 2
	}
	return 0
}

func isMassName(base string) int {
	switch base {
	case "mass", "weight", "m", "w", "wt", "net", "net weight", "net_weight", "net wt", "sample mass", "sample_mass", "reading",
		"masse", "gewicht", "peso", "poids", "massa", "gewicht netto":
		return 2
	}
	if strings.HasPrefix(base, "mass") || strings.HasPrefix(base, "weight") {
		return 1
	}
	return 0
}

// pickColumn finds a column by the user's choice (name or 1-based number)
// or by the best-scoring name.
func pickColumn(header []string, want string, score func(string) int, what string) (int, error) {
	if want != "" {
		for i, h := range header {
			if strings.EqualFold(strings.TrimSpace(h), strings.TrimSpace(want)) {
				return i, nil
			}
		}
		if n, err := strconv.Atoi(want); err == nil && n >= 1 && n <= len(header) {
			return n - 1, nil
		}
		return -1, fmt.Errorf("no %s column %q; columns are %s", what, want, clipRaw(quoteList(header)))
	}
	best, bestScore := -1, 0
	for i, h := range header {
		base, _ := splitUnit(h)
		s := max(score(base), score(strings.ToLower(strings.TrimSpace(h))))
		if s > bestScore {
			best, bestScore = i, s
		}
	}
	if best < 0 {
		flag := "--time-col"
		example := "elapsed_s, time (min), t [h] or timestamp"
		if what == "mass" {
			flag, example = "--mass-col", "mass_g or weight (kg)"
		}
		return -1, fmt.Errorf("no %s column found among %s: expected a name like %s, or pass %s", what, clipRaw(quoteList(header)), example, flag)
	}
	return best, nil
}

func quoteList(h []string) string {
	q := make([]string, len(h))
	for i, s := range h {
		q[i] = strconv.Quote(s)
	}
	return strings.Join(q, ", ")
}

// CleanName makes a channel name from a header: lower case, words joined by
// underscores, "%" as pct, degree signs dropped: "Air temp (°C)" -> "air_temp_c".
func CleanName(h string) string {
	var b strings.Builder
	us := false
	for _, r := range strings.ToLower(strings.TrimSpace(h)) {
		switch {
		case r >= 'a' && r <= 'z' || r >= '0' && r <= '9':
			b.WriteRune(r)
			us = false
		case r == '%':
			if b.Len() > 0 && !us {
				b.WriteByte('_')
			}
			b.WriteString("pct")
			us = false
		case r == '°' || r == 'º':
		default:
			if b.Len() > 0 && !us {
				b.WriteByte('_')
				us = true
			}
		}
	}
	return strings.TrimSuffix(b.String(), "_")
}

// parseClock accepts RFC 3339, and the same with a space for the T (what
// spreadsheets write); without a zone the time is taken as local.
func parseClock(s string) (time.Time, bool) {
	if len(s) < 19 || s[4] != '-' {
		return time.Time{}, false
	}
	for _, layout := range []string{time.RFC3339Nano, "2006-01-02 15:04:05Z07:00", "2006-01-02 15:04:05.999999999Z07:00"} {
		if t, err := time.Parse(layout, s); err == nil {
			return t, true
		}
	}
	for _, layout := range []string{"2006-01-02T15:04:05.999999999", "2006-01-02 15:04:05.999999999"} {
		if t, err := time.ParseInLocation(layout, s, time.Local); err == nil {
			return t, true
		}
	}
	return time.Time{}, false
}

// parseDateAndTime joins a date column (2026-12-02, 2026/12/02 or
// 02.12.2026) and a time-of-day column (15:04:05, 15:04) into a local time.
func parseDateAndTime(date, clock string) (time.Time, bool) {
	for _, dl := range []string{"2006-01-02", "2006/01/02", "02.01.2006"} {
		d, err := time.ParseInLocation(dl, date, time.Local)
		if err != nil {
			continue
		}
		for _, tl := range []string{"15:04:05.999999999", "15:04:05", "15:04"} {
			if c, err := time.Parse(tl, clock); err == nil {
				return d.Add(time.Duration(c.Hour())*time.Hour + time.Duration(c.Minute())*time.Minute +
					time.Duration(c.Second())*time.Second + time.Duration(c.Nanosecond())), true
			}
		}
	}
	return time.Time{}, false
}

// parseHMS accepts elapsed time as h:mm:ss or h:mm:ss.s.
func parseHMS(s string) (time.Duration, bool) {
	// Cut at the two colons without a slice per row: a plain number (the
	// usual elapsed column) has none and is turned away at once.
	c1 := strings.IndexByte(s, ':')
	if c1 < 0 {
		return 0, false
	}
	c2 := strings.IndexByte(s[c1+1:], ':')
	if c2 < 0 {
		return 0, false
	}
	c2 += c1 + 1
	if strings.IndexByte(s[c2+1:], ':') >= 0 {
		return 0, false
	}
	h, e1 := strconv.Atoi(s[:c1])
	m, e2 := strconv.Atoi(s[c1+1 : c2])
	sec, e3 := strconv.ParseFloat(s[c2+1:], 64)
	if e1 != nil || e2 != nil || e3 != nil || h < 0 || h > 1_000_000 || m < 0 || m > 59 || sec < 0 || sec >= 60 {
		return 0, false
	}
	return time.Duration(h)*time.Hour + time.Duration(m)*time.Minute + time.Duration(sec*float64(time.Second)), true
}
