package tui

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/charmbracelet/bubbles/cursor"
	"github.com/charmbracelet/bubbles/key"
	"github.com/charmbracelet/bubbles/textinput"
	tea "github.com/charmbracelet/bubbletea"

	"parch/internal/kinetics"
	"parch/internal/session"
)

// setupField is one line of the setup form: a session-log setup key and
// where its value lives in kinetics.Setup.
type setupField struct {
	label string
	key   string // setup key in the session log
	get   func(*kinetics.Setup) float64
	set   func(*kinetics.Setup, float64)
	check func(float64) error
}

var setupFields = []setupField{
	{"initial moisture, % wet basis", "initial_moisture_wb_pct",
		func(s *kinetics.Setup) float64 { return s.InitialMoistureWB }, func(s *kinetics.Setup, v float64) { s.InitialMoistureWB = v },
		between(0, 100)},
	{"dry mass at the end, g", "dry_mass_g",
		func(s *kinetics.Setup) float64 { return s.DryMassG }, func(s *kinetics.Setup, v float64) { s.DryMassG = v },
		positive},
	{"target, % wet basis", "target_moisture_wb_pct",
		func(s *kinetics.Setup) float64 { return s.TargetWBPct }, func(s *kinetics.Setup, v float64) { s.TargetWBPct = v },
		between(0, 100)},
	{"tare, g", "tare_g",
		func(s *kinetics.Setup) float64 { return s.TareG }, func(s *kinetics.Setup, v float64) { s.TareG = v },
		func(float64) error { return nil }},
	{"tray area, m²", "area_m2",
		func(s *kinetics.Setup) float64 { return s.AreaM2 }, func(s *kinetics.Setup, v float64) { s.AreaM2 = v },
		positive},
	{"slice thickness, mm", "thickness_mm",
		func(s *kinetics.Setup) float64 { return s.ThicknessMM }, func(s *kinetics.Setup, v float64) { s.ThicknessMM = v },
		positive},
	{"air temperature setpoint, °C", "air_temp_c",
		func(s *kinetics.Setup) float64 { return s.AirTempC }, func(s *kinetics.Setup, v float64) { s.AirTempC = v },
		between(-40, 400)},
	{"drying faces (1 solid tray, 2 mesh)", "faces",
		func(s *kinetics.Setup) float64 {
			if s.Faces == 0 {
				return math.NaN()
			}
			return float64(s.Faces)
		},
		func(s *kinetics.Setup, v float64) { s.Faces = int(v) },
		func(v float64) error {
			if v != 1 && v != 2 {
				return fmt.Errorf("expected 1 or 2")
			}
			return nil
		}},
}

func between(lo, hi float64) func(float64) error {
	return func(v float64) error {
		if !(v > lo && v < hi) {
			return fmt.Errorf("expected a number between %g and %g", lo, hi)
		}
		return nil
	}
}

func positive(v float64) error {
	if !(v > 0) {
		return fmt.Errorf("expected a positive number")
	}
	return nil
}

// setupForm edits the run's setup.
type setupForm struct {
	inputs []textinput.Model
	pos    int
	err    string
	fresh  bool // the focused field shows its old value: typing replaces it
}

func newSetupForm(s kinetics.Setup) setupForm {
	f := setupForm{}
	for _, fd := range setupFields {
		ti := textinput.New()
		ti.Prompt = ""
		ti.CharLimit = 20
		ti.Width = 12
		ti.Cursor.SetMode(cursor.CursorStatic)
		if v := fd.get(&s); !math.IsNaN(v) {
			ti.SetValue(strconv.FormatFloat(v, 'g', -1, 64))
		}
		f.inputs = append(f.inputs, ti)
	}
	return f
}

func (f *setupForm) focus() tea.Cmd {
	for i := range f.inputs {
		f.inputs[i].Blur()
	}
	f.fresh = true
	return f.inputs[f.pos].Focus()
}

func (m Model) setupKey(k tea.KeyMsg) (tea.Model, tea.Cmd) {
	switch {
	case key.Matches(k, m.keys.Cancel):
		m.mode = modeNormal
		return m, nil
	case k.Type == tea.KeyTab || k.Type == tea.KeyDown:
		m.form.pos = (m.form.pos + 1) % len(m.form.inputs)
		return m, m.form.focus()
	case k.Type == tea.KeyShiftTab || k.Type == tea.KeyUp:
		m.form.pos = (m.form.pos + len(m.form.inputs) - 1) % len(m.form.inputs)
		return m, m.form.focus()
	case k.Type == tea.KeyEnter:
		return m.saveSetup()
	}
	if m.form.fresh && k.Type == tea.KeyRunes {
		m.form.inputs[m.form.pos].SetValue("") // a new value replaces the old one (0 then 5 is 5, not 05)
	}
	m.form.fresh = false
	var cmd tea.Cmd
	m.form.inputs[m.form.pos], cmd = m.form.inputs[m.form.pos].Update(k)
	return m, cmd
}

// saveSetup checks the form, writes the changed values as a setup event
// and recomputes everything from the readings.
func (m Model) saveSetup() (tea.Model, tea.Cmd) {
	next := m.setup
	changed := map[string]any{}
	for i, fd := range setupFields {
		text := strings.TrimSpace(strings.ReplaceAll(m.form.inputs[i].Value(), ",", "."))
		old := fd.get(&m.setup)
		if text == "" {
			if !math.IsNaN(old) && fd.key != "tare_g" {
				m.form.err = fmt.Sprintf("%s: a recorded value cannot be cleared, only corrected", fd.label)
				m.form.pos = i
				return m, m.form.focus()
			}
			continue
		}
		v, err := strconv.ParseFloat(text, 64)
		if err == nil {
			err = fd.check(v)
		}
		if err != nil {
			m.form.err = fmt.Sprintf("%s: %q: %v", fd.label, text, err)
			m.form.pos = i
			return m, m.form.focus()
		}
		if v != old {
			fd.set(&next, v)
			changed[fd.key] = v
		}
	}
	if err := next.Validate(); err != nil {
		m.form.err = err.Error()
		return m, nil
	}
	m.mode = modeNormal
	if len(changed) == 0 {
		return m, nil
	}
	m.setup = next
	m.setupGen++
	m.rebuildLive()
	m.dirty, m.lastRun = true, m.lastRun.AddDate(-1, 0, 0)
	e := session.Event{Type: session.TypeSetup, T: m.opt.Now(), Params: changed}
	sink := m.opt.Notes
	if sink == nil {
		return m, m.maybeAnalyze()
	}
	return m, tea.Batch(m.maybeAnalyze(), func() tea.Msg { return noteSavedMsg{ev: e, err: sink.Append(&e)} })
}

// rebuildLive replays the readings through a Live with the new setup.
func (m *Model) rebuildLive() {
	m.live = kinetics.NewLive(m.setup)
	var rem []removalAt
	for _, n := range m.notes {
		if n.kind == kindRemoved && n.value > 0 {
			rem = append(rem, removalAt{n.elapsedH, n.value})
		}
	}
	sort.Slice(rem, func(i, j int) bool { return rem[i].h < rem[j].h })
	j := 0
	for i := range m.th {
		for j < len(rem) && rem[j].h <= m.th[i] {
			m.live.Remove(rem[j].g)
			j++
		}
		if i < len(m.th)-liveTail { // figures no one sees: the analysis covers them
			m.live.CatchUp(m.th[i], m.raw[i], m.stable[i])
			continue
		}
		p := m.live.Add(m.th[i], m.raw[i], m.stable[i])
		m.livePt = p
		if p.Kept {
			m.lastGood = p
		}
	}
	m.pendingRemovals = rem[j:]
}
