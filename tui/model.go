package tui

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/charmbracelet/bubbles/cursor"
	"github.com/charmbracelet/bubbles/help"
	"github.com/charmbracelet/bubbles/key"
	"github.com/charmbracelet/bubbles/textinput"
	tea "github.com/charmbracelet/bubbletea"

	"parch/internal/ingest"
	"parch/internal/kinetics"
	"parch/internal/report"
	"parch/internal/session"
)

// NoteSink stores notes and setup changes in the session log.
type NoteSink interface {
	Append(e *session.Event) error
}

// Options configure the dashboard.
type Options struct {
	Title     string // shown in the header: the session file
	Recording bool   // this process records: quitting stops the recording, so ask first
	Events    <-chan []ingest.Event
	Notes     NoteSink
	Setup     kinetics.Setup
	Stall     time.Duration
	AirLow    float64 // alert when the air temperature leaves [AirLow, AirHigh]; NaN: no band
	AirHigh   float64
	Now       func() time.Time
	Bell      func() // rings the terminal bell (nil: none)
	// AnalyzeEvery is the least time between background analyses (default 3 s).
	AnalyzeEvery time.Duration
	// TickEvery drives the clock and the stall check (default 1 s; negative:
	// no clock, for tests that drive time themselves).
	TickEvery time.Duration
	// Reference is an earlier run of the same product for the projection
	// (nil: none); its course is drawn dimmed on the moisture chart.
	Reference *kinetics.Reference
	// MoreReferences are further earlier runs, drawn dimmed too.
	MoreReferences []*kinetics.Reference
	// Notice is shown on the message line at the start (a warning about
	// the setup, say).
	Notice string
}

type mode int

const (
	modeNormal mode = iota
	modeNote        // free text
	modeNumber      // grams removed, new setpoint
	modeMenu        // the tag menu
	modeSetup       // the setup form
	modeQuit        // confirm quitting while recording
	modeHelp
)

// Source states shown in the header.
const (
	stateWaiting = "waiting"
	stateLive    = "live"
	stateStalled = "stalled"
	stateLost    = "lost"
	stateEnded   = "ended"
	stateStopped = "stopped" // the recording stopped
)

type noteItem struct {
	elapsedH float64
	at       time.Time
	kind     string
	text     string
	value    float64
}

// Model is the dashboard's root model.
type Model struct {
	opt    Options
	keys   keyMap
	help   help.Model
	styles Styles
	width  int
	height int

	// readings
	start  time.Time // first reading
	th     []float64 // hours from the first reading
	raw    []float64 // grams as read
	stable []int8
	air    []float64 // air temperature channel (NaN where absent)
	lastT  time.Time // newest reading's own time
	seen   time.Time // wall clock when it came

	live     *kinetics.Live
	livePt   kinetics.LivePoint
	lastGood kinetics.LivePoint // newest kept reading's figures

	setup     kinetics.Setup
	res       *kinetics.Result
	resN      int
	analysing bool
	dirty     bool // something changed since the last analysis
	lastRun   time.Time

	notes []noteItem

	state       string
	stateSince  time.Time
	stateDetail string
	stopped     bool // the recording stopped on an error: said in the alerts
	warnAt      int  // readings when the last source warning came (-1: none)
	problems    int

	moistView int // 0 mass, 1 wet basis, 2 dry basis, 3 moisture ratio
	rateView  int // 0 against time, 1 against moisture

	mode    mode
	input   textinput.Model
	pending *session.Event // the note being typed or written
	retry   string         // text of a note whose write failed, offered again by n
	// suspectAt is the time of the suspected drop being confirmed (a), NaN
	// otherwise.
	suspectAt float64
	// pendingRemovals are removals noted for after the newest reading, in
	// time order: the live figures take them when a later reading comes.
	pendingRemovals []removalAt
	noteSeen        map[string]bool // notes on the timeline, by time, kind, text and value
	setupGen        int             // counts setup changes: figures from an older one are stale
	resGen          int             // the setup generation of res
	menuPos         int
	form            setupForm
	flash           string
	errMsg          string
	rang            bool // the target bell has rung
	accepted        map[float64]bool
}

// New makes the dashboard.
func New(opt Options) Model {
	if opt.Now == nil {
		opt.Now = time.Now
	}
	if opt.Stall <= 0 {
		opt.Stall = 30 * time.Second
	}
	if opt.AnalyzeEvery <= 0 {
		opt.AnalyzeEvery = 3 * time.Second
	}
	if opt.TickEvery == 0 {
		opt.TickEvery = time.Second
	}
	ti := textinput.New()
	ti.CharLimit = 500
	// A steady cursor: a blinking one repaints twice a second for nothing.
	ti.Cursor.SetMode(cursor.CursorStatic)
	m := Model{
		opt: opt, keys: newKeyMap(), help: help.New(), styles: NewStyles(),
		setup: opt.Setup, live: kinetics.NewLive(opt.Setup), state: stateWaiting,
		stateSince: opt.Now(), input: ti, accepted: map[float64]bool{},
		livePt: kinetics.LivePoint{RateGPH: math.NaN(), X: math.NaN()},
	}
	m.lastGood = m.livePt
	m.flash = opt.Notice
	m.suspectAt = math.NaN()
	m.warnAt = -1
	return m
}

// removalAt is a piece removed: when, and how many grams.
type removalAt struct{ h, g float64 }

// Init starts reading the source and the clock.
func (m Model) Init() tea.Cmd {
	return tea.Batch(waitForEvents(m.opt.Events), m.tick())
}

func waitForEvents(ch <-chan []ingest.Event) tea.Cmd {
	if ch == nil {
		return nil
	}
	return func() tea.Msg {
		b, ok := <-ch
		if !ok {
			return eventsClosedMsg{}
		}
		return eventsMsg(b)
	}
}

func (m *Model) tick() tea.Cmd {
	if m.opt.TickEvery < 0 {
		return nil
	}
	return tea.Tick(m.opt.TickEvery, func(t time.Time) tea.Msg { return tickMsg(t) })
}

// Update handles messages.
func (m Model) Update(msg tea.Msg) (tea.Model, tea.Cmd) {
	switch msg := msg.(type) {
	case tea.WindowSizeMsg:
		m.width, m.height = msg.Width, msg.Height
		m.help.Width = msg.Width
		return m, nil
	case eventsMsg:
		m.addEvents(msg)
		cmds := []tea.Cmd{waitForEvents(m.opt.Events), m.maybeAnalyze()}
		cmds = append(cmds, m.checkBell())
		return m, tea.Batch(cmds...)
	case eventsClosedMsg:
		if m.state != stateEnded && m.state != stateStopped {
			m.state, m.stateSince = stateEnded, m.opt.Now()
			m.stateDetail = "the source has ended"
		}
		m.dirty = true
		return m, m.maybeAnalyze()
	case analysisMsg:
		m.analysing = false
		if msg.err == nil && msg.res != nil {
			m.res, m.resN, m.resGen = msg.res, msg.n, msg.gen
		} else if msg.err != nil {
			m.errMsg = "analysis: " + msg.err.Error()
		}
		return m, tea.Batch(m.maybeAnalyze(), m.checkBell())
	case noteSavedMsg:
		return m.noteSaved(msg)
	case tickMsg:
		m.checkStall(time.Time(msg))
		return m, tea.Batch(m.tick(), m.maybeAnalyze())
	case tea.KeyMsg:
		if m.mode == modeNormal && msg.Type == tea.KeyRunes && len(msg.Runes) > 1 && !msg.Paste {
			// Keys typed together arrive as one message ("bd"): each is a
			// key of its own, or one is lost.
			var cmds []tea.Cmd
			var next tea.Model = m
			for _, r := range msg.Runes {
				var cmd tea.Cmd
				next, cmd = next.Update(tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune{r}})
				cmds = append(cmds, cmd)
			}
			return next, tea.Batch(cmds...)
		}
		return m.key(msg)
	}
	return m, nil
}

// addEvents stores readings and follows the source's state.
func (m *Model) addEvents(b []ingest.Event) {
	now := m.opt.Now()
	// A long backlog (a log opened after hours of recording) is caught up
	// without working out live figures for readings no one will see: only
	// the newest liveTail get them; the full analysis covers the rest.
	readings := 0
	for i := range b {
		if b[i].Kind == ingest.KindReading {
			readings++
		}
	}
	quiet := max(0, readings-liveTail)
	m.grow(readings)
	for i := range b {
		e := &b[i]
		switch e.Kind {
		case ingest.KindReading:
			if m.start.IsZero() {
				m.start = e.T
			}
			h := e.T.Sub(m.start).Hours()
			st := e.Stable.Int8()
			m.th = append(m.th, h)
			m.raw = append(m.raw, e.MassG)
			m.stable = append(m.stable, st)
			m.air = append(m.air, airOf(e.Channels))
			m.lastT, m.seen = e.T, now
			for len(m.pendingRemovals) > 0 && m.pendingRemovals[0].h <= h {
				m.live.Remove(m.pendingRemovals[0].g)
				m.pendingRemovals = m.pendingRemovals[1:]
			}
			if quiet > 0 {
				quiet--
				m.live.CatchUp(h, e.MassG, st)
			} else {
				m.livePt = m.live.Add(h, e.MassG, st)
				if m.livePt.Kept {
					m.lastGood = m.livePt
				}
			}
			if m.state != stateLive && m.state != stateEnded && m.state != stateStopped {
				m.state, m.stateSince, m.stateDetail = stateLive, now, ""
			}
			m.dirty = true
		case ingest.KindLost:
			m.state, m.stateSince, m.stateDetail = stateLost, now, e.Detail
		case ingest.KindBack:
			m.state, m.stateSince, m.stateDetail = stateLive, now, e.Detail
		case ingest.KindStopped:
			m.state, m.stateSince, m.stateDetail = stateStopped, now, e.Detail
			// a recorder that failed says why in the alerts
			m.stopped = !strings.HasPrefix(e.Detail, "the recording stopped")
		case ingest.KindStarted:
			if m.state == stateStopped || m.state == stateWaiting {
				m.state, m.stateSince, m.stateDetail, m.stopped = stateWaiting, now, "", false
			}
		case ingest.KindSetup:
			if e.Note != nil {
				m.applySetup(e.Note.Params)
			}
		case ingest.KindWarning, ingest.KindDeviceError, ingest.KindOverload, ingest.KindUnderload:
			// Said in the alerts until the next reading.
			m.stateDetail, m.warnAt = e.Detail, len(m.th)
		case ingest.KindUnparseable, ingest.KindLineCut:
			m.problems++
		case ingest.KindNote:
			if e.Note != nil {
				m.addNote(*e.Note)
			}
		}
	}
}

// airOf picks the air temperature from a reading's channels.
func airOf(ch map[string]float64) float64 {
	for _, k := range []string{"air_temp_c", "air_c", "t_air_c", "air_temperature_c", "temp_c", "air_temp"} {
		if v, ok := ch[k]; ok {
			return v
		}
	}
	for k, v := range ch {
		if strings.Contains(k, "temp") || strings.HasPrefix(k, "t_air") {
			return v
		}
	}
	return math.NaN()
}

func (m *Model) checkStall(now time.Time) {
	if m.state != stateLive || m.seen.IsZero() {
		return
	}
	if since := now.Sub(m.seen); since >= m.opt.Stall {
		m.state, m.stateSince = stateStalled, m.seen
		m.stateDetail = fmt.Sprintf("no reading for %s", since.Round(time.Second))
	}
}

// maybeAnalyze starts a background analysis when there is something new
// and none ran recently.
func (m *Model) maybeAnalyze() tea.Cmd {
	if m.analysing || !m.dirty || len(m.th) == 0 {
		return nil
	}
	// Wait between analyses, unless the last one saw less than half of
	// what is here now (a log still loading at start).
	if m.res != nil && 2*m.resN >= len(m.th) && m.opt.Now().Sub(m.lastRun) < m.opt.AnalyzeEvery {
		return nil
	}
	m.analysing, m.dirty, m.lastRun = true, false, m.opt.Now()
	n := len(m.th)
	// Prefixes of append-only slices: later appends never touch them.
	s := kinetics.Series{TimeH: m.th[:n:n], Value: m.raw[:n:n], Stable: m.stable[:n:n]}
	setup := m.setupWithRemovals()
	ref, more, gen := m.opt.Reference, m.opt.MoreReferences, m.setupGen
	return func() (msg tea.Msg) {
		// The recording runs in this process: a fault in the analysis must
		// cost the figures, never the record.
		defer func() {
			if p := recover(); p != nil {
				msg = analysisMsg{n: n, setup: setup, gen: gen, err: fmt.Errorf("analysis failed: %v", p)}
			}
		}()
		res, err := kinetics.Analyze(s, setup, kinetics.Options{Reference: ref, MoreReferences: more})
		return analysisMsg{res: res, n: n, setup: setup, gen: gen, err: err}
	}
}

// setupWithRemovals adds the removals noted so far.
func (m *Model) setupWithRemovals() kinetics.Setup {
	s := m.setup
	s.Removals = append([]kinetics.Removal(nil), m.setup.Removals...)
	for _, n := range m.notes {
		if n.kind == kindRemoved && n.value > 0 {
			s.Removals = append(s.Removals, kinetics.Removal{ElapsedH: n.elapsedH, MassG: n.value})
		}
	}
	return s
}

// checkBell rings once when the target is first reached.
func (m *Model) checkBell() tea.Cmd {
	if m.rang || m.res == nil || math.IsNaN(m.res.TargetReachedH) {
		return nil
	}
	m.rang = true
	if m.opt.Bell == nil {
		return nil
	}
	bell := m.opt.Bell
	return func() tea.Msg { bell(); return nil }
}

// elapsedNow is the newest reading's elapsed hours (NaN before any).
func (m *Model) elapsedNow() float64 {
	if len(m.th) == 0 {
		return math.NaN()
	}
	return m.th[len(m.th)-1]
}

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

// applySetup takes run parameters another process wrote into the log
// (parch note --set or --unset): the figures are recomputed with them. A
// set of values that does not validate is left out and said.
func (m *Model) applySetup(params map[string]any) {
	next := m.setup
	report.ApplyEvent(&next, params)
	if err := next.Validate(); err != nil {
		m.errMsg = "setup in the log not applied: " + err.Error()
		return
	}
	m.setup = next
	m.setupGen++
	m.rebuildLive()
	m.dirty, m.lastRun = true, m.lastRun.AddDate(-1, 0, 0)
}

// liveTail is how many of the newest readings of a batch get live figures.
const liveTail = 2000

// grow makes room for n more readings at once (a long log arrives in one
// batch: no growing reading by reading).
func (m *Model) grow(n int) {
	if n < 1024 {
		return
	}
	m.th = slices.Grow(m.th, n)
	m.raw = slices.Grow(m.raw, n)
	m.stable = slices.Grow(m.stable, n)
	m.air = slices.Grow(m.air, n)
}
