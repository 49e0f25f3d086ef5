package tui

import (
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"time"

	"github.com/charmbracelet/lipgloss"

	"parch/internal/kinetics"

	"parch/internal/safetext"
)

// Minimum terminal size for the full layout.
const (
	minWidth  = 80
	minHeight = 24
)

// View draws the dashboard.
func (m Model) View() string {
	w, h := m.width, m.height
	if w == 0 || h == 0 {
		w, h = minWidth, minHeight // no size yet (no terminal): draw the smallest layout
	}
	if m.mode == modeHelp {
		return m.fullHelp(w, h)
	}
	if w < minWidth || h < minHeight {
		return m.tooSmall(w, h)
	}
	header := m.header(w)
	alerts := m.alerts(w)
	bottom := m.bottomLines(w)
	body := h - 2 - len(bottom)
	rightW := 30
	if w >= 140 {
		rightW = 44
	}
	leftW := w - rightW - 1
	topH := body * 3 / 5
	lowH := body - topH

	var top, low string
	switch m.mode {
	case modeMenu:
		top = m.menuView(w, topH)
		low = joinCols(m.rateChart(leftW, lowH), m.notesPane(rightW, lowH), leftW, rightW, lowH)
	case modeSetup:
		top = m.setupView(w, topH+lowH)
		low = ""
	default:
		top = joinCols(m.moistureChart(leftW, topH), m.figures(rightW, topH), leftW, rightW, topH)
		low = joinCols(m.rateChart(leftW, lowH), m.notesPane(rightW, lowH), leftW, rightW, lowH)
	}
	parts := []string{header, alerts, top}
	if low != "" {
		parts = append(parts, low)
	}
	parts = append(parts, bottom...)
	return fitHeight(strings.Join(parts, "\n"), h)
}

// joinCols puts two panes side by side, each cut or padded to its size.
func joinCols(left, right []string, lw, rw, h int) string {
	rows := make([]string, h)
	for i := 0; i < h; i++ {
		l, r := "", ""
		if i < len(left) {
			l = left[i]
		}
		if i < len(right) {
			r = right[i]
		}
		rows[i] = pad(truncate(l, lw), lw) + " " + truncate(r, rw)
	}
	return strings.Join(rows, "\n")
}

func pad(s string, w int) string {
	if d := w - lipgloss.Width(s); d > 0 {
		return s + strings.Repeat(" ", d)
	}
	return s
}

func fitHeight(s string, h int) string {
	lines := strings.Split(s, "\n")
	if len(lines) > h {
		lines = lines[:h]
	}
	for len(lines) < h {
		lines = append(lines, "")
	}
	return strings.Join(lines, "\n")
}

func (m *Model) header(w int) string {
	state := m.state
	marker := map[string]string{stateWaiting: "…", stateLive: "●", stateStalled: "!", stateLost: "!", stateEnded: "■", stateStopped: "■"}[state]
	src := marker + " " + state
	if state == stateLost || state == stateStalled {
		src += " since " + m.stateSince.Local().Format("15:04:05")
	}
	rej := 0
	if m.res != nil {
		rej = m.res.Rejected
	}
	left := m.styles.Title.Render("parch") + "  " + safetext.Terminal(m.opt.Title)
	right := fmt.Sprintf("%s  %d readings  %d rejected", src, len(m.th), rej)
	if m.problems > 0 {
		right += fmt.Sprintf("  %d lines not read", m.problems)
	}
	gap := w - lipgloss.Width(left) - lipgloss.Width(right)
	if gap < 1 {
		// The state and counts stay whole; the title gives way.
		room := w - lipgloss.Width(right) - 1
		title := safetext.Terminal(m.opt.Title)
		if room > 8 {
			r := []rune(title)
			for len(r) > 0 && lipgloss.Width("parch  "+string(r)+"…") > room {
				r = r[:len(r)-1]
			}
			left = m.styles.Title.Render("parch") + "  " + string(r) + "…"
			return left + strings.Repeat(" ", max(1, w-lipgloss.Width(left)-lipgloss.Width(right))) + right
		}
		return truncate(right, w)
	}
	return left + strings.Repeat(" ", gap) + right
}

// alerts is one line of alerts, each with a word and a marker, so none rests
// on colour alone.
func (m *Model) alerts(w int) string {
	var a []string
	if m.res != nil && !math.IsNaN(m.res.TargetReachedH) {
		a = append(a, fmt.Sprintf("* TARGET REACHED at %s", fmtHM(m.res.TargetReachedH)))
	}
	switch m.state {
	case stateLost:
		a = append(a, "! SOURCE LOST since "+m.stateSince.Local().Format("15:04")+": "+safetext.Terminal(m.stateDetail))
	case stateStalled:
		a = append(a, "! STALLED: "+safetext.Terminal(m.stateDetail))
	case stateWaiting:
		if m.stateDetail != "" {
			a = append(a, "… "+safetext.Terminal(m.stateDetail))
		}
	case stateLive:
		if m.warnAt == len(m.th) && m.stateDetail != "" {
			a = append(a, "! "+safetext.Terminal(m.stateDetail))
		}
	case stateStopped:
		if m.stopped {
			a = append(a, "! RECORDING STOPPED: "+safetext.Terminal(strings.TrimPrefix(m.stateDetail, "recording stopped: ")))
		}
	}
	if m.livePt.Period == kinetics.PeriodSteady || m.lastGood.Period == kinetics.PeriodSteady {
		a = append(a, "= STEADY WEIGHT: end of run?")
	}
	if len(m.th) > 0 && !math.IsNaN(m.opt.AirLow) && !math.IsNaN(m.airNow) {
		if v := m.airNow; v < m.opt.AirLow || v > m.opt.AirHigh {
			a = append(a, fmt.Sprintf("! AIR %.1f °C outside %g–%g", v, m.opt.AirLow, m.opt.AirHigh))
		}
	}
	if m.res != nil {
		for _, s := range m.res.SuspectedRemovals {
			if !m.accepted[s.ElapsedH] {
				a = append(a, fmt.Sprintf("? DROP of %.2f g at %s: a piece removed? (a: accept)", s.MassG, fmtHM(s.ElapsedH)))
				break
			}
		}
	}
	if len(a) == 0 {
		return ""
	}
	return truncate(m.styles.Alert.Render(strings.Join(a, "  ")), w)
}

// figures is the pane of numbers.
func (m *Model) figures(w, h int) []string {
	s := m.styles
	row := func(label, value string) string {
		return pad(s.Label.Render(label), 10) + s.Value.Render(value)
	}
	// rowFit keeps a value whole: the parts after the first are shown only
	// where they fit (a number is never cut).
	rowFit := func(label string, parts ...string) string {
		v := parts[0]
		for _, p := range parts[1:] {
			if p != "" && 10+lipgloss.Width(v)+2+lipgloss.Width(p) <= w {
				v += "  " + p
			}
		}
		return row(label, v)
	}
	var out []string
	out = append(out, s.Heading.Render("now"))
	now := m.elapsedNow()
	if math.IsNaN(now) {
		return append(out, s.Dim.Render("no readings yet"))
	}
	out = append(out, rowFit("elapsed", fmtHM(now), s.Dim.Render("from "+m.start.Local().Format("15:04"))))
	n := len(m.raw)
	// The analysis's figures when it has seen every reading, so the screen
	// says what parch report says of the same readings; the live estimate
	// in between.
	mass, x := m.lastGoodNet(), m.moistureNow()
	if r := m.res; r != nil && m.resN == n && !math.IsNaN(r.FinalMassG) {
		mass, x = r.FinalMassG, r.FinalMoistureDB
	}
	if math.IsNaN(mass) {
		mass = m.raw[n-1] - m.setup.TareG
	}
	out = append(out, row("mass", fmt.Sprintf("%.2f g", mass)))
	if !math.IsNaN(x) {
		out = append(out, rowFit("moisture", fmt.Sprintf("%.1f %% wb", 100*x/(1+x)), fmt.Sprintf("%.3f db", x)))
	} else {
		out = append(out, row("moisture", s.Dim.Render("— (u: setup)")))
	}
	if r := m.lastGood.RateGPH; !math.IsNaN(r) {
		flux := ""
		if m.setup.AreaM2 > 0 {
			flux = fmt.Sprintf("%.3f kg/m²h", r/1000/m.setup.AreaM2)
		}
		out = append(out, rowFit("rate", fmt.Sprintf("%.2f g/h", r), flux))
	} else {
		out = append(out, row("rate", "—"))
	}
	xc := ""
	if m.res != nil && m.res.ConstantRate != nil && !m.res.ConstantRate.Ongoing && !math.IsNaN(m.res.ConstantRate.CriticalDB) {
		xc = fmt.Sprintf("Xc %.2f", m.res.ConstantRate.CriticalDB)
	}
	out = append(out, rowFit("period", string(m.period()), xc))
	out = append(out, m.projectionLines(row, w)...)
	if m.res != nil && m.res.Best != nil {
		out = append(out, rowFit("model", m.res.Best.Model.Title, fmt.Sprintf("R² %.4f", m.res.Best.R2)))
	}
	if v := m.airNow; !math.IsNaN(v) {
		out = append(out, row("air", fmt.Sprintf("%.1f °C", v)))
	}
	// More room: the rest of the analysis.
	if r := m.res; r != nil && h-len(out) >= 6 {
		out = append(out, "", s.Heading.Render("run so far"))
		if !math.IsNaN(r.DryMassG) {
			out = append(out, row("solids", fmt.Sprintf("%.2f g dry", r.DryMassG)))
		}
		if cr := r.ConstantRate; cr != nil && !math.IsNaN(cr.RateGPerH) {
			end := "still on"
			if !cr.Ongoing {
				end = "to " + fmtHM(cr.EndH)
			}
			out = append(out, row("constant", fmt.Sprintf("%.2f g/h %s", cr.RateGPerH, end)))
		} else if len(m.th) >= 10 {
			out = append(out, row("constant", "no constant-rate period"))
		}
		if d := r.Diffusivity; d != nil {
			out = append(out, row("Deff", fmt.Sprintf("%.3g m²/s", d.DM2PerS)))
		}
		if !math.IsNaN(r.EndOfRunH) {
			out = append(out, row("steady", "since "+fmtHM(r.EndOfRunH)))
		}
		out = append(out, row("rejected", fmt.Sprintf("%d of %d readings", r.Rejected, r.Readings)))
	}
	if len(out) > h {
		out = out[:h]
	}
	return out
}

// moistureNow is the dry-basis moisture of the newest kept reading.
func (m *Model) moistureNow() float64 {
	if m.res != nil && !math.IsNaN(m.res.DryMassG) {
		return m.lastGoodNet()/m.res.DryMassG - 1
	}
	return m.lastGood.X
}

func (m *Model) projectionLines(row func(string, string) string, w int) []string {
	s := m.styles
	if m.res == nil {
		return []string{row("target", s.Dim.Render("analysing..."))}
	}
	r := m.res
	if math.IsNaN(r.TargetMassG) {
		return []string{row("target", s.Dim.Render("none set (u: setup)"))}
	}
	if m.resGen != m.setupGen {
		// The setup changed since these figures: say so, do not show a
		// target mass of the old setup beside the new one.
		return []string{row("target", fmt.Sprintf("%.1f %%", m.setup.TargetWBPct)+s.Dim.Render(", recomputing…"))}
	}
	out := []string{row("target", fmt.Sprintf("%.1f %% = %.2f g", r.TargetMoistureWBPct, r.TargetMassG))}
	p := r.Projection
	switch {
	case p.Method == kinetics.ProjReached:
		out = append(out, row("reached", s.Good.Render(m.clockAt(p.TargetH)+" ("+fmtHM(p.TargetH)+")")))
	case !math.IsNaN(p.TargetH):
		// The estimate and its range on one line, as an operator reads it.
		est, rng := m.clockAt(p.TargetH), "("+m.clockAt(p.LowH)+" to "+m.clockAt(p.HighH)+")"
		left := "in " + fmtHM(p.TargetH-m.elapsedNow())
		if level := fmt.Sprintf(", %.0f %% range", 100*p.Level); 10+len(left)+len(level) <= w {
			left += level
		}
		if 10+len(est)+1+len(rng) <= w {
			out = append(out, row("projected", est+" "+rng), row("", s.Dim.Render(left)))
		} else { // a narrow panel: the range on its own line
			out = append(out, row("projected", est+" "+s.Dim.Render(left)), row("", rng))
		}
		for _, u := range append([]*kinetics.ReferenceUse{p.Reference}, p.MoreReferences...) {
			if u != nil {
				out = append(out, row("reference", fitWords(fmt.Sprintf("%s, weight %.2f", filepath.Base(u.Name), u.Weight), max(w-10, 8))))
			}
		}
	default:
		why := p.Why
		if why == "" {
			why = "not yet"
		}
		out = append(out, row("projected", "—"), s.Dim.Render(truncate(why, w)))
	}
	return out
}

// clockAt is the local clock time at elapsed hours h.
func (m *Model) clockAt(h float64) string {
	if math.IsNaN(h) || math.IsInf(h, 0) {
		return "—"
	}
	t := m.start.Add(time.Duration(h * float64(time.Hour))).Local()
	if h-m.elapsedNow() > 20 {
		return t.Format("Jan 2 15:04")
	}
	return t.Format("15:04")
}

// fmtHM writes hours as h:mm.
func fmtHM(h float64) string {
	if math.IsNaN(h) || math.IsInf(h, 0) {
		return "—"
	}
	neg := ""
	if h < 0 {
		neg, h = "-", -h
	}
	mins := int(math.Round(h * 60))
	return fmt.Sprintf("%s%d:%02d h", neg, mins/60, mins%60)
}

// notesPane lists the latest notes with their elapsed times.
func (m *Model) notesPane(w, h int) []string {
	out := []string{m.styles.Heading.Render("notes") + m.styles.Dim.Render(" (n, t: tag)")}
	if len(m.notes) == 0 {
		return append(out, m.styles.Dim.Render("none yet"))
	}
	from := max(0, len(m.notes)-(h-1))
	for _, n := range m.notes[from:] {
		line := fmt.Sprintf("%8s %s", fmtHM(n.elapsedH), noteLabel(n.kind, n.text, n.value))
		out = append(out, fitWords(line, w))
	}
	return out
}

// noteLabel is how a note reads on screen.
func noteLabel(kind, text string, value float64) string {
	kind, text = safetext.Terminal(kind), safetext.Terminal(text)
	label := strings.ReplaceAll(kind, "_", " ")
	for _, t := range tags {
		if t.kind == kind && kind != kindNote {
			label = t.label
		}
	}
	if kind == kindNote {
		label = ""
	}
	if !math.IsNaN(value) {
		switch kind {
		case kindRemoved: // a no-break space: the number keeps its unit when a line is shortened
			label += fmt.Sprintf(" %.2f\u00a0g", value)
		case kindSetpoint:
			label += fmt.Sprintf(" %g\u00a0°C", value)
		default:
			label += fmt.Sprintf(" %g", value)
		}
	}
	if text != "" {
		if label != "" {
			label += ": "
		}
		label += text
	}
	return strings.TrimSpace(label)
}

func (m *Model) bottomLines(w int) []string {
	var line string
	switch {
	case m.mode == modeNote || m.mode == modeNumber:
		line = m.input.View() + m.styles.Dim.Render("  (enter: save, esc: cancel)")
		if m.errMsg != "" {
			line += "  " + m.styles.Error.Render("! "+m.errMsg)
		}
	case m.mode == modeQuit:
		line = m.styles.Alert.Render("Quit? Recording stops with the dashboard. y: quit, any other key: stay")
	case m.errMsg != "":
		line = m.styles.Error.Render("! " + m.errMsg)
	case m.flash != "":
		line = m.styles.Good.Render(safetext.Terminal(m.flash))
	case m.mode == modeSetup && m.form.err != "":
		line = m.styles.Error.Render("! " + m.form.err)
	}
	help := m.help.ShortHelpView(m.keys.ShortHelp())
	return []string{truncate(line, w), truncate(help, w)}
}

func (m *Model) menuView(w, h int) string {
	out := []string{m.styles.Heading.Render("tag an observation") + m.styles.Dim.Render("  (↑/↓ or 1-7, enter: tag, esc: back)")}
	for i, t := range tags {
		cursor := "  "
		if i == m.menuPos {
			cursor = "> "
		}
		out = append(out, fmt.Sprintf("%s%d  %s", cursor, i+1, t.label))
	}
	return fitHeight(strings.Join(out, "\n"), h)
}

func (m *Model) setupView(w, h int) string {
	out := []string{m.styles.Heading.Render("run setup") + m.styles.Dim.Render("  (tab: next field, enter: save and recompute, esc: cancel)"), ""}
	for i, fd := range setupFields {
		cursor := "  "
		if i == m.form.pos {
			cursor = "> "
		}
		out = append(out, cursor+pad(fd.label, 38)+m.form.inputs[i].View())
	}
	out = append(out, "", m.styles.Dim.Render("Everything is recomputed from the readings; the readings are never changed."))
	return fitHeight(strings.Join(out, "\n"), h)
}

func (m *Model) fullHelp(w, h int) string {
	out := []string{m.styles.Heading.Render("parch dashboard: keys"), ""}
	for _, col := range m.keys.FullHelp() {
		for _, b := range col {
			out = append(out, fitWords(fmt.Sprintf("  %-10s %s", b.Help().Key, b.Help().Desc), w))
		}
	}
	out = append(out, "")
	out = append(out, wrapWords("Notes are stamped with the newest reading's time and written to the session log at once. "+
		"Moisture alone does not make a dried food safe: water activity does. Follow local food-safety regulation. Dryers run hot.", w)...)
	out = append(out, "", m.styles.Dim.Render("any key: back"))
	return fitHeight(strings.Join(out, "\n"), h)
}

func (m *Model) tooSmall(w, h int) string {
	out := []string{truncate(m.header(w), w)}
	for _, l := range m.figures(w, h-3) {
		out = append(out, truncate(l, w))
	}
	out = append(out, truncate(m.styles.Alert.Render(fmt.Sprintf("terminal is %dx%d; the full dashboard needs %dx%d", w, h, minWidth, minHeight)), w))
	return fitHeight(strings.Join(out, "\n"), h)
}

// wrapWords breaks plain text into lines of at most w cells.
func wrapWords(s string, w int) []string {
	var out []string
	line := ""
	for _, word := range strings.Fields(s) {
		if line != "" && lipgloss.Width(line)+1+lipgloss.Width(word) > w {
			out = append(out, line)
			line = ""
		}
		if line != "" {
			line += " "
		}
		line += word
	}
	if line != "" {
		out = append(out, line)
	}
	return out
}

// period is the drying period now: the analysis's when it has seen every
// reading (as the report says it), the live estimate's in between.
func (m *Model) period() kinetics.Period {
	r := m.res
	if r == nil || m.resN != len(m.th) || len(m.th) < 10 {
		return m.lastGood.Period
	}
	switch {
	case !math.IsNaN(r.EndOfRunH):
		return kinetics.PeriodSteady
	case r.ConstantRate != nil && r.ConstantRate.Ongoing:
		return kinetics.PeriodConstant
	}
	return kinetics.PeriodFalling
}
