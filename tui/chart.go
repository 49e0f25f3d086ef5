package tui

import (
	"fmt"
	"math"
	"strings"

	"github.com/charmbracelet/lipgloss"
	"github.com/guptarohit/asciigraph"
	"github.com/muesli/termenv"

	"parch/internal/kinetics"
)

// Curve views of the moisture chart.
var moistViews = []struct{ name, unit string }{
	{"mass", "g"},
	{"moisture, wet basis", "%"},
	{"moisture, dry basis", "kg/kg"},
	{"moisture ratio", ""},
}

// kept reports whether reading i is used (the analysis's verdict where it
// has one, the balance's flag for newer readings).
func (m *Model) kept(i int) bool {
	if m.res != nil && i < m.resN && i < len(m.res.Points.Reject) {
		return m.res.Points.Reject[i] == kinetics.KeepOK
	}
	return m.stable[i] >= 0
}

// solidsAt is the dry solids at reading i, NaN when unknown.
func (m *Model) solidsAt(i int) float64 {
	if m.res == nil || math.IsNaN(m.res.DryMassG) {
		return math.NaN()
	}
	if i < m.resN && !math.IsNaN(m.res.Points.X(i)) && m.res.Points.NetG[i] > 0 {
		return m.res.Points.NetG[i] / (1 + m.res.Points.X(i))
	}
	return m.res.DryMassG
}

// inView converts a net mass on solids s to the current view's unit.
func (m *Model) inView(net, s float64) float64 {
	switch m.moistView {
	case 0:
		return net
	case 1:
		x := net/s - 1
		return 100 * x / (1 + x)
	case 2:
		return net/s - 1
	default:
		x := net/s - 1
		x0, xe := m.res.InitialMoistureDB, m.setup.EquilibriumDB
		return (x - xe) / (x0 - xe)
	}
}

// viewValue is reading i in the current view (NaN when unknown).
func (m *Model) viewValue(i int) float64 {
	net := m.raw[i] - m.setup.TareG
	if m.moistView == 0 {
		return net
	}
	s := m.solidsAt(i)
	if math.IsNaN(s) || (m.moistView == 3 && (m.res == nil || math.IsNaN(m.res.InitialMoistureDB))) {
		return math.NaN()
	}
	return m.inView(net, s)
}

// columns averages the kept readings into n columns over [t0, t1]. A long
// run is averaged over at most chartSample evenly spaced readings, the
// newest always among them: a chart is a few hundred cells, and the
// dashboard draws it at every reading (all of a million readings, ten
// times a second, kept a core half busy).
func columns(n int, t0, t1 float64, count int, at func(i int) (float64, float64, bool)) []float64 {
	sum := make([]float64, n)
	cnt := make([]int, n)
	step := max(1, count/chartSample)
	for i := (count - 1) % step; i < count; i += step {
		t, v, ok := at(i)
		if !ok || math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		c := int(float64(n-1) * (t - t0) / (t1 - t0))
		if c < 0 || c >= n {
			continue
		}
		sum[c] += v
		cnt[c]++
	}
	out := make([]float64, n)
	for c := range out {
		out[c] = math.NaN()
		if cnt[c] > 0 {
			out[c] = sum[c] / float64(cnt[c])
		}
	}
	return out
}

// chartSample bounds the readings a chart averages.
const chartSample = 5000

func finiteCount(v []float64) int {
	n := 0
	for _, x := range v {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			n++
		}
	}
	return n
}

// plot draws series (all of one length) with asciigraph in a box of w×h
// cells, y labels included. Fewer than two finite points draw nothing:
// asciigraph needs two.
func plot(series [][]float64, w, h int, chars []asciigraph.CharSet, colors []asciigraph.AnsiColor, yfmt string) []string {
	n := 0
	for _, s := range series {
		n += finiteCount(s)
	}
	if n < 2 || h < 2 {
		return nil
	}
	// asciigraph puts a value on row round(v·r) − round(min·r), rounding
	// each term apart, so a line can land a row away from the label nearest
	// its value. Plotted as v − min, every value goes to its nearest row;
	// the labels add min back.
	lo, _ := seriesRange(series)
	shifted := make([][]float64, len(series))
	for i, sr := range series {
		shifted[i] = make([]float64, len(sr))
		for j, v := range sr {
			shifted[i][j] = v - lo
		}
	}
	opts := []asciigraph.Option{
		asciigraph.Height(h - 1), asciigraph.Width(len(series[0])), asciigraph.Offset(2), // the label sits in cell 0, the axis in cell 1
		asciigraph.YAxisValueFormatter(func(v float64) string { return fmt.Sprintf(yfmt, v+lo) }),
		asciigraph.SeriesChars(chars...), asciigraph.SeriesColors(colors...),
	}
	out := asciigraph.PlotMany(shifted, opts...)
	lines := strings.Split(out, "\n")
	for i, l := range lines {
		if lipgloss.Width(l) > w {
			lines[i] = truncate(l, w)
		}
	}
	return lines
}

// truncate cuts a line to w cells (ANSI-aware enough for our lines).
func truncate(s string, w int) string {
	if lipgloss.Width(s) <= w {
		return s
	}
	r := []rune(s)
	for len(r) > 0 && lipgloss.Width(string(r)) > w {
		r = r[:len(r)-1]
	}
	return string(r) + "\x1b[0m"
}

// yFormat picks a fixed-width label format for values up to max.
func yFormat(lo, hi float64) (string, int) {
	a := math.Max(math.Abs(lo), math.Abs(hi))
	switch {
	case a >= 1000:
		return "%7.0f", 7
	case a >= 100:
		return "%6.1f", 6
	case a >= 10:
		return "%6.2f", 6
	default:
		return "%6.3f", 6
	}
}

func seriesRange(series [][]float64) (float64, float64) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, s := range series {
		for _, v := range s {
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	return lo, hi
}

// timeAxis is a row of elapsed-hour labels under a chart of cols columns
// starting at column left.
func timeAxis(left, cols int, t0, t1 float64) string {
	row := []rune(strings.Repeat(" ", left+cols))
	step := niceStep((t1 - t0) / math.Max(float64(cols)/10, 1))
	for t := math.Ceil(t0/step) * step; t <= t1+1e-9; t += step {
		c := left + int(math.Round(float64(cols-1)*(t-t0)/(t1-t0)))
		label := []rune(axisLabel(t, step))
		if c+len(label) > len(row) {
			continue
		}
		copy(row[c:], label)
	}
	return strings.TrimRight(string(row), " ")
}

// markRow puts a ^ under each column where a note was made.
func markRow(left, cols int, t0, t1 float64, at []float64) string {
	row := []rune(strings.Repeat(" ", left+cols))
	any := false
	for _, t := range at {
		if math.IsNaN(t) || t < t0 || t > t1 {
			continue
		}
		c := left + int(math.Round(float64(cols-1)*(t-t0)/(t1-t0)))
		if c < len(row) {
			row[c] = '^'
			any = true
		}
	}
	if !any {
		return ""
	}
	return strings.TrimRight(string(row), " ") + "  notes"
}

func niceStep(raw float64) float64 {
	if !(raw > 0) {
		return 1
	}
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, f := range []float64{1, 2, 5, 10} {
		if f*p >= raw {
			return f * p
		}
	}
	return 10 * p
}

// axisLabel writes an axis time with the precision its step needs.
func axisLabel(h, step float64) string {
	switch {
	case step >= 1:
		return fmt.Sprintf("%.0fh", h)
	case step >= 0.1:
		return fmt.Sprintf("%.1fh", h)
	default:
		return fmt.Sprintf("%.0fmin", h*60)
	}
}

// moistureChart draws the moisture curve with its reference lines, the
// projected course and the note marks, in w×h cells.
func (m *Model) moistureChart(w, h int) []string {
	view := moistViews[m.moistView]
	legend := []string{"─ data", "╌ target", "═ dry solids", "· projected", "", "(m: switch)"}
	if m.res != nil && m.res.Projection.Reference != nil {
		legend[4] = "∘ reference"
	}
	lines := []string{m.titleLine(view.name, legend, w)}
	n := len(m.th)
	if n < 2 {
		return append(lines, m.styles.Dim.Render("waiting for readings..."))
	}
	if m.moistView != 0 && (m.res == nil || math.IsNaN(m.res.DryMassG)) {
		return append(lines, m.styles.Dim.Render("needs the initial moisture or the dry mass (u: setup)"))
	}
	now := m.th[n-1]
	t1 := now
	p := kinetics.Projection{}
	if m.res != nil {
		p = m.res.Projection
		// Show the projected course to the target, up to two days ahead.
		if p.Method != kinetics.ProjNone && p.Method != kinetics.ProjReached && p.TargetH > now && p.TargetH < now+48 {
			t1 = math.Max(t1, p.TargetH*1.05)
		}
	}
	if t1 <= 0 {
		t1 = 1e-3
	}
	_, labW := yFormat(0, 1)
	cols := w - labW - 3
	rows := h - 3 // title, axis labels, note marks
	if cols < 10 || rows < 3 {
		return lines
	}
	data := columns(cols, 0, t1, n, func(i int) (float64, float64, bool) { return m.th[i], m.viewValue(i), m.kept(i) })
	flat := func(v float64) []float64 {
		s := make([]float64, cols)
		for i := range s {
			s[i] = v
		}
		return s
	}
	nan := flat(math.NaN())
	target, solids, proj := nan, nan, nan
	if m.res != nil && !math.IsNaN(m.res.TargetMassG) {
		target = flat(m.inView(m.res.TargetMassG, m.res.DryMassG))
	}
	if m.res != nil && m.moistView == 0 && !math.IsNaN(m.res.DryMassG) {
		solids = flat(m.res.DryMassG)
	}
	ref := flat(math.NaN())
	if m.res != nil && p.TargetH > now && len(p.Path) >= 2 {
		proj = m.projected(cols, t1, p.Path)
	}
	// Reference runs share one dimmed series: where two cross, one shows.
	for _, u := range append([]*kinetics.ReferenceUse{p.Reference}, p.MoreReferences...) {
		if m.res == nil || u == nil || len(u.Path) < 2 {
			continue
		}
		for c, v := range m.projected(cols, t1, u.Path) {
			if !math.IsNaN(v) {
				ref[c] = v
			}
		}
	}
	// asciigraph draws in order and a later series covers an earlier one
	// where they share a cell: the dry solids first, the reference run
	// under the data, the projection last.
	series := [][]float64{solids, target, ref, data, proj}
	lo, hi := seriesRange(series)
	// The target and the dry solids on one row: one line, and the legend
	// says so (a line must not vanish under another).
	if !math.IsNaN(target[0]) && !math.IsNaN(solids[0]) && hi > lo {
		row := func(v float64) int { return int(math.Round((v - lo) / (hi - lo) * float64(rows-1))) }
		if row(target[0]) == row(solids[0]) {
			legend[1], legend[2] = "╌ target & dry solids", "" // one row: one line
			lines[0] = m.titleLine(view.name, legend, w)
		}
	}
	yfmt, labW2 := yFormat(lo, hi) // wider labels (≥ 1000) push the chart one cell: plot cuts it
	dotted := func(c string) asciigraph.CharSet {
		return asciigraph.CharSet{Horizontal: c, VerticalLine: ":", ArcDownRight: c, ArcDownLeft: c, ArcUpRight: c, ArcUpLeft: c}
	}
	chars := []asciigraph.CharSet{{Horizontal: "═"}, {Horizontal: "╌"}, dotted("∘"), {}, dotted("·")}
	var colors []asciigraph.AnsiColor // none on NO_COLOR or monochrome terminals
	if lipgloss.ColorProfile() != termenv.Ascii {
		colors = []asciigraph.AnsiColor{asciigraph.Blue, asciigraph.Red, asciigraph.DarkGray, asciigraph.Default, asciigraph.Green}
	}
	lines = append(lines, plot(series, w, rows, chars, colors, yfmt)...)
	left := labW2 + 2
	lines = append(lines, m.styles.Dim.Render(timeAxis(left, cols, 0, t1)))
	var marks []float64
	for _, nt := range m.notes {
		marks = append(marks, nt.elapsedH)
	}
	if row := markRow(left, cols, 0, t1, marks); row != "" {
		lines = append(lines, row)
	}
	return lines
}

// projected is a projected course (the combined one, or the reference
// run's) from now to the target, in view units.
func (m *Model) projected(cols int, t1 float64, path []kinetics.PathPoint) []float64 {
	out := make([]float64, cols)
	s := m.res.DryMassG
	for c := range out {
		out[c] = math.NaN()
		t := t1 * float64(c) / float64(cols-1)
		if t < path[0].TimeH || t > path[len(path)-1].TimeH*1.0001 {
			continue
		}
		j := 1
		for j < len(path)-1 && path[j].TimeH < t {
			j++
		}
		a, b := path[j-1], path[j]
		x := b.MoistureDB
		if b.TimeH > a.TimeH {
			x = a.MoistureDB + (b.MoistureDB-a.MoistureDB)*(t-a.TimeH)/(b.TimeH-a.TimeH)
		}
		out[c] = m.inView(s*(1+x), s)
	}
	return out
}

// lastGoodNet is the newest kept net mass (smoothed when known).
func (m *Model) lastGoodNet() float64 {
	if !math.IsNaN(m.lastGood.SmoothG) {
		return m.lastGood.SmoothG
	}
	for i := len(m.raw) - 1; i >= 0; i-- {
		if m.kept(i) {
			return m.raw[i] - m.setup.TareG
		}
	}
	return math.NaN()
}

// rateChart draws the drying rate against time, or against dry-basis
// moisture (the classic drying-rate curve), in w×h cells.
func (m *Model) rateChart(w, h int) []string {
	name := "drying rate, g/h, against time"
	if m.rateView == 1 {
		name = "drying rate, g/h, against moisture (dry basis)"
	}
	if lipgloss.Width(name) > w {
		name = strings.Replace(strings.Replace(name, ", g/h, against", " vs", 1), " (dry basis)", "", 1)
	}
	lines := []string{m.titleLine(name, []string{"(v: switch)"}, w)}
	if m.res == nil || m.resN < 10 {
		return append(lines, m.styles.Dim.Render("waiting for enough readings..."))
	}
	_, labW := yFormat(0, 100)
	cols := w - labW - 3
	rows := h - 2
	if cols < 10 || rows < 3 {
		return lines
	}
	pts := &m.res.Points
	n := m.resN
	if m.rateView == 0 {
		t1 := math.Max(m.th[n-1], 1e-3)
		data := columns(cols, 0, t1, n, func(i int) (float64, float64, bool) { return m.th[i], pts.RateG(i), m.kept(i) })
		lo, hi := seriesRange([][]float64{data})
		yfmt, lw := yFormat(lo, hi)
		lines = append(lines, plot([][]float64{data}, w, rows, nil, nil, yfmt)...)
		return append(lines, m.styles.Dim.Render(timeAxis(lw+2, cols, 0, t1)))
	}
	if math.IsNaN(m.res.DryMassG) {
		return append(lines, m.styles.Dim.Render("needs the initial moisture or the dry mass (u: setup)"))
	}
	// The moisture range of the readings columns averages (all of a short
	// run, evenly spaced ones of a long one).
	xlo, xhi := math.Inf(1), math.Inf(-1)
	step := max(1, n/chartSample)
	for i := (n - 1) % step; i < n; i += step {
		if x := pts.X(i); m.kept(i) && !math.IsNaN(x) {
			xlo, xhi = math.Min(xlo, x), math.Max(xhi, x)
		}
	}
	if !(xhi > xlo) {
		return lines
	}
	data := columns(cols, xlo, xhi, n, func(i int) (float64, float64, bool) { return pts.X(i), pts.RateG(i), m.kept(i) })
	lo, hi := seriesRange([][]float64{data})
	yfmt, lw := yFormat(lo, hi)
	lines = append(lines, plot([][]float64{data}, w, rows, nil, nil, yfmt)...)
	axis := []rune(strings.Repeat(" ", lw+2+cols))
	for _, f := range []float64{0, 0.25, 0.5, 0.75, 1} {
		x := xlo + f*(xhi-xlo)
		c := lw + 2 + int(f*float64(cols-1))
		l := []rune(fmt.Sprintf("%.2f", x))
		if c+len(l) <= len(axis) {
			copy(axis[c:], l)
		}
	}
	return append(lines, m.styles.Dim.Render(strings.TrimRight(string(axis), " ")+" X"))
}

// titleLine is a chart's name and its legend, with as many legend parts as
// fit in w cells: a part is shown whole or not at all.
func (m *Model) titleLine(name string, parts []string, w int) string {
	line := name
	for _, p := range parts {
		if p != "" && lipgloss.Width(line)+2+lipgloss.Width(p) <= w {
			line += "  " + p
		}
	}
	return m.styles.Heading.Render(name) + m.styles.Dim.Render(strings.TrimPrefix(line, name))
}

// fitWords shortens plain text to w cells at a word boundary, with "…":
// a number is shown whole or not at all.
func fitWords(s string, w int) string {
	if lipgloss.Width(s) <= w || w < 2 {
		return s
	}
	r := []rune(s)
	cut := 0
	for i := range r {
		if lipgloss.Width(string(r[:i])) > w-1 {
			break
		}
		if r[i] == ' ' {
			cut = i
		}
	}
	return strings.TrimRight(string(r[:cut]), " ,:") + "…"
}
