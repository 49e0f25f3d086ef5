package tui

// Notes: the keys that make them, the menu, writing them, and placing
// them on the timeline.

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/charmbracelet/bubbles/key"
	tea "github.com/charmbracelet/bubbletea"

	"parch/internal/session"
)

// Note kinds of the trade (the session log's words).
const (
	kindNote     = "note"
	kindBendPass = "bend_test_passed"
	kindBendFail = "bend_test_failed"
	kindCaseHard = "case_hardening"
	kindRemoved  = "piece_removed"
	kindDoor     = "door_opened"
	kindSetpoint = "setpoint_changed"
)

// tags is the tag menu, in order.
var tags = []struct {
	kind, label string
	asks        string // what number to ask for, "" for none
}{
	{kindBendPass, "bend test passed", ""},
	{kindBendFail, "bend test not yet", ""},
	{kindCaseHard, "case hardening seen", ""},
	{kindRemoved, "piece removed", "grams removed"},
	{kindDoor, "door opened", ""},
	{kindSetpoint, "setpoint changed", "new setpoint °C"},
	{kindNote, "free note", "text"},
}

func (m Model) key(k tea.KeyMsg) (tea.Model, tea.Cmd) {
	switch m.mode {
	case modeNote, modeNumber:
		return m.typing(k)
	case modeMenu:
		return m.menuKey(k)
	case modeSetup:
		return m.setupKey(k)
	case modeQuit:
		switch k.String() {
		case "y", "Y", "q", "enter":
			return m, tea.Quit
		default:
			m.mode = modeNormal
			return m, nil
		}
	case modeHelp:
		m.mode = modeNormal
		return m, nil
	}
	m.flash = ""
	switch {
	case key.Matches(k, m.keys.Quit):
		if m.opt.Recording && k.String() != "ctrl+c" {
			m.mode = modeQuit
			return m, nil
		}
		return m, tea.Quit
	case key.Matches(k, m.keys.Help):
		m.mode = modeHelp
	case key.Matches(k, m.keys.Note):
		return m.startNote(kindNote, "note: ", false)
	case key.Matches(k, m.keys.BendPass):
		return m.saveNote(m.newNote(kindBendPass, "", math.NaN()))
	case key.Matches(k, m.keys.BendFail):
		return m.saveNote(m.newNote(kindBendFail, "", math.NaN()))
	case key.Matches(k, m.keys.CaseHard):
		return m.saveNote(m.newNote(kindCaseHard, "", math.NaN()))
	case key.Matches(k, m.keys.Door):
		return m.saveNote(m.newNote(kindDoor, "", math.NaN()))
	case key.Matches(k, m.keys.Removed):
		return m.startNote(kindRemoved, "grams removed: ", true)
	case key.Matches(k, m.keys.Setpoint):
		return m.startNote(kindSetpoint, "new setpoint °C: ", true)
	case key.Matches(k, m.keys.Menu):
		m.mode, m.menuPos = modeMenu, 0
	case key.Matches(k, m.keys.Setup):
		m.form = newSetupForm(m.setup)
		m.mode = modeSetup
		return m, m.form.focus()
	case key.Matches(k, m.keys.Accept):
		return m.acceptSuspected()
	case key.Matches(k, m.keys.Moisture):
		m.moistView = (m.moistView + 1) % 4
	case key.Matches(k, m.keys.RateView):
		m.rateView = (m.rateView + 1) % 2
	}
	return m, nil
}

func (m Model) startNote(kind, prompt string, number bool) (tea.Model, tea.Cmd) {
	m.errMsg = ""
	m.pending = &session.Event{Type: session.TypeNote, Kind: kind}
	m.input.Reset()
	if kind == kindNote && m.retry != "" {
		m.input.SetValue(m.retry) // the note that could not be saved, for another try
		m.retry = ""
	}
	m.input.Prompt = prompt
	m.input.Placeholder = ""
	m.mode = modeNote
	if number {
		m.mode = modeNumber
	}
	return m, m.input.Focus()
}

// newNote stamps a note with the wall clock and the newest reading's time.
func (m *Model) newNote(kind, text string, value float64) *session.Event {
	e := &session.Event{Type: session.TypeNote, T: m.opt.Now(), Kind: kind, Text: text, ReadingT: m.lastT}
	if !math.IsNaN(value) {
		e.Value = session.Float(value)
	}
	return e
}

func (m Model) typing(k tea.KeyMsg) (tea.Model, tea.Cmd) {
	switch k.Type {
	case tea.KeyEsc:
		m.mode, m.pending, m.suspectAt = modeNormal, nil, math.NaN()
		m.input.Blur()
		return m, nil
	case tea.KeyEnter:
		text := strings.TrimSpace(m.input.Value())
		kind := m.pending.Kind
		if m.mode == modeNumber {
			v, err := strconv.ParseFloat(strings.ReplaceAll(text, ",", "."), 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) || (kind == kindRemoved && !(v > 0)) {
				m.errMsg = fmt.Sprintf("%q is not a number; %s", text, strings.TrimSuffix(m.input.Prompt, ": "))
				return m, nil
			}
			m.mode = modeNormal
			m.input.Blur()
			e := m.newNote(kind, "", v)
			if at := m.suspectAt; !math.IsNaN(at) && kind == kindRemoved {
				// a suspected drop confirmed: the removal is at the drop
				m.accepted[at] = true
				e.Text = "confirmed from a suspected drop"
				e.ReadingT = m.start.Add(time.Duration(at * float64(time.Hour)))
			}
			m.suspectAt = math.NaN()
			return m.saveNote(e)
		}
		if text == "" {
			m.mode, m.pending = modeNormal, nil
			m.input.Blur()
			return m, nil
		}
		m.mode = modeNormal
		m.input.Blur()
		return m.saveNote(m.newNote(kind, text, math.NaN()))
	}
	var cmd tea.Cmd
	m.input, cmd = m.input.Update(k)
	return m, cmd
}

func (m Model) menuKey(k tea.KeyMsg) (tea.Model, tea.Cmd) {
	switch {
	case key.Matches(k, m.keys.Cancel), key.Matches(k, m.keys.Quit):
		m.mode = modeNormal
	case key.Matches(k, m.keys.Next):
		m.menuPos = (m.menuPos + 1) % len(tags)
	case key.Matches(k, m.keys.Prev):
		m.menuPos = (m.menuPos + len(tags) - 1) % len(tags)
	case key.Matches(k, m.keys.Confirm):
		t := tags[m.menuPos]
		m.mode = modeNormal
		switch t.asks {
		case "":
			return m.saveNote(m.newNote(t.kind, "", math.NaN()))
		case "text":
			return m.startNote(t.kind, "note: ", false)
		default:
			return m.startNote(t.kind, t.asks+": ", true)
		}
	default:
		if s := k.String(); len(s) == 1 && s[0] >= '1' && s[0] <= '9' {
			if i := int(s[0] - '1'); i < len(tags) {
				m.menuPos = i
			}
		}
	}
	return m, nil
}

// saveNote writes the note in a command; the note is shown once written.
func (m Model) saveNote(e *session.Event) (tea.Model, tea.Cmd) {
	m.pending = e
	sink := m.opt.Notes
	ev := *e
	if sink == nil {
		return m, func() tea.Msg { return noteSavedMsg{ev: ev, err: fmt.Errorf("no session log to write to")} }
	}
	return m, func() tea.Msg { return noteSavedMsg{ev: ev, err: sink.Append(&ev)} }
}

func (m Model) noteSaved(msg noteSavedMsg) (tea.Model, tea.Cmd) {
	if msg.err != nil {
		// Keep the text: the user can retry with n (free notes) or the key.
		m.errMsg = "not saved: " + msg.err.Error()
		if msg.ev.Type == session.TypeNote && msg.ev.Text != "" {
			m.retry = msg.ev.Text
			m.errMsg += " (n: try again, the text is kept)"
		}
		return m, nil
	}
	m.pending = nil
	m.errMsg = ""
	switch msg.ev.Type {
	case session.TypeNote:
		m.addNote(msg.ev)
		m.flash = "saved: " + noteLabel(msg.ev.Kind, msg.ev.Text, valueOf(msg.ev.Value))
	case session.TypeSetup:
		m.flash = "setup saved"
	}
	m.dirty = true
	m.lastRun = time.Time{} // analyse again at once
	return m, m.maybeAnalyze()
}

func valueOf(v *float64) float64 {
	if v == nil {
		return math.NaN()
	}
	return *v
}

// addNote puts a note on the timeline at its reading's time.
func (m *Model) addNote(e session.Event) {
	at := e.T
	if !e.ReadingT.IsZero() {
		at = e.ReadingT
	}
	h := math.NaN()
	if !m.start.IsZero() {
		h = at.Sub(m.start).Hours()
	}
	n := noteItem{elapsedH: h, at: e.T, kind: e.Kind, text: e.Text, value: valueOf(e.Value)}
	// The same note can come twice: saved here, then read back from the log
	// (a recording dashboard follows its log for notes from other shells).
	id := fmt.Sprintf("%d|%s|%s|%v", e.T.UnixMilli(), e.Kind, e.Text, n.value)
	if m.noteSeen[id] {
		return
	}
	if m.noteSeen == nil {
		m.noteSeen = map[string]bool{}
	}
	m.noteSeen[id] = true
	m.notes = append(m.notes, n)
	if e.Kind == kindRemoved && n.value > 0 {
		// Applied at its own time, as the report does: replayed when it is
		// in the past, held for the next reading when it is not.
		if len(m.th) > 0 && h <= m.th[len(m.th)-1] {
			m.rebuildLive()
		} else {
			m.pendingRemovals = append(m.pendingRemovals, removalAt{h, n.value})
			sort.Slice(m.pendingRemovals, func(i, j int) bool { return m.pendingRemovals[i].h < m.pendingRemovals[j].h })
		}
	}
	m.dirty = true
}

// acceptSuspected records the newest unconfirmed suspected removal as a
// piece removed, at its time.
func (m Model) acceptSuspected() (tea.Model, tea.Cmd) {
	if m.res == nil {
		return m, nil
	}
	for _, s := range m.res.SuspectedRemovals {
		if m.accepted[s.ElapsedH] {
			continue
		}
		// Ask for the grams (the piece may be weighed), the estimate ready.
		next, cmd := m.startNote(kindRemoved, fmt.Sprintf("grams removed at %s (estimate; Enter to keep): ", fmtHM(s.ElapsedH)), true)
		mm := next.(Model)
		mm.input.SetValue(strconv.FormatFloat(math.Round(s.MassG*100)/100, 'f', -1, 64))
		mm.input.CursorEnd()
		mm.suspectAt = s.ElapsedH
		return mm, cmd
	}
	m.flash = "no suspected removal to confirm"
	return m, nil
}
