package tui

import (
	"fmt"
	"math"
	"time"

	"github.com/charmbracelet/bubbles/cursor"
	"github.com/charmbracelet/bubbles/help"
	"github.com/charmbracelet/bubbles/textinput"
	tea "github.com/charmbracelet/bubbletea"

	"parch/internal/ingest"
	"parch/internal/kinetics"
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
	// AnalyzeEvery is the least time between background analyses (default
	// 3 s); on a long run the wait is also at least analyzeShare times the
	// last analysis, so that analysing keeps a core about 4 % busy.
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
	// Backlog is a log read before the dashboard starts (watching a long
	// recording): its readings are taken from the columns at once, and
	// Events goes on from where it ends.
	Backlog *session.Log
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
	airNow float64   // the newest reading's air temperature (NaN: none)
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
	lastTook  time.Duration // how long the last analysis took

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
	// first brings the analysis of a backlog, started before the program
	// runs so that it overlaps the rest of the start.
	first chan tea.Msg
}

// analyzeShare: the wait between analyses is at least this many times the
// last one's length (a 0.35 s analysis of a million readings: every 10 s,
// about 4 % of a core with its side-by-side stages).
const analyzeShare = 30

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
	m.airNow = math.NaN()
	m.warnAt = -1
	if opt.Backlog != nil {
		m.addBacklog(opt.Backlog)
	}
	return m
}

// Init starts reading the source and the clock; with a backlog, the
// analysis of it is already on its way (started in New).
func (m Model) Init() tea.Cmd {
	cmds := []tea.Cmd{waitForEvents(m.opt.Events), m.tick()}
	if m.first != nil {
		ch := m.first
		cmds = append(cmds, func() tea.Msg { return <-ch })
	}
	return tea.Batch(cmds...)
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
		m.analysing, m.lastTook = false, msg.took
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

// maybeAnalyze starts a background analysis when there is something new
// and none ran recently.
func (m *Model) maybeAnalyze() tea.Cmd {
	if m.analysing || !m.dirty || len(m.th) == 0 {
		return nil
	}
	// Wait between analyses, unless the last one saw less than half of
	// what is here now (a log still loading at start).
	// Once the readings pause (a file that stopped growing, a balance
	// between slow readings), the figures catch up sooner: the screen then
	// says what parch report says of the same readings. The pause must be
	// ten analyses long, so this too keeps a core under 10 % busy.
	now := m.opt.Now()
	wait := max(m.opt.AnalyzeEvery, analyzeShare*m.lastTook)
	if pause := max(m.opt.AnalyzeEvery, 10*m.lastTook); now.Sub(m.seen) >= pause {
		wait = pause
	}
	if m.res != nil && 2*m.resN >= len(m.th) && now.Sub(m.lastRun) < wait {
		return nil
	}
	return m.analysis()
}

// analysis marks an analysis of everything so far as started and returns
// the work, to run in the background.
func (m *Model) analysis() tea.Cmd {
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
		began := time.Now()
		res, err := kinetics.Analyze(s, setup, kinetics.Options{Reference: ref, MoreReferences: more})
		return analysisMsg{res: res, n: n, setup: setup, gen: gen, err: err, took: time.Since(began)}
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
