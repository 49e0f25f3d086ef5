package tui

import "github.com/charmbracelet/bubbles/key"

// keyMap holds every key of the dashboard; the help line and the full help
// are made from it.
type keyMap struct {
	Note     key.Binding
	BendPass key.Binding
	BendFail key.Binding
	CaseHard key.Binding
	Removed  key.Binding
	Door     key.Binding
	Setpoint key.Binding
	Menu     key.Binding
	Setup    key.Binding
	Accept   key.Binding
	Moisture key.Binding
	RateView key.Binding
	Help     key.Binding
	Quit     key.Binding
	Confirm  key.Binding
	Cancel   key.Binding
	Next     key.Binding
	Prev     key.Binding
}

func newKeyMap() keyMap {
	return keyMap{
		Note:     key.NewBinding(key.WithKeys("n"), key.WithHelp("n", "note")),
		BendPass: key.NewBinding(key.WithKeys("b"), key.WithHelp("b", "bend test passed")),
		BendFail: key.NewBinding(key.WithKeys("f"), key.WithHelp("f", "bend test not yet")),
		CaseHard: key.NewBinding(key.WithKeys("c"), key.WithHelp("c", "case hardening")),
		Removed:  key.NewBinding(key.WithKeys("r"), key.WithHelp("r", "piece removed")),
		Door:     key.NewBinding(key.WithKeys("d"), key.WithHelp("d", "door opened")),
		Setpoint: key.NewBinding(key.WithKeys("p"), key.WithHelp("p", "setpoint changed")),
		Menu:     key.NewBinding(key.WithKeys("t"), key.WithHelp("t", "tag menu")),
		Setup:    key.NewBinding(key.WithKeys("u"), key.WithHelp("u", "setup")),
		Accept:   key.NewBinding(key.WithKeys("a"), key.WithHelp("a", "accept suspected removal")),
		Moisture: key.NewBinding(key.WithKeys("m"), key.WithHelp("m", "curve: mass/wet/dry/ratio")),
		RateView: key.NewBinding(key.WithKeys("v"), key.WithHelp("v", "rate vs time/moisture")),
		Help:     key.NewBinding(key.WithKeys("?"), key.WithHelp("?", "help")),
		Quit:     key.NewBinding(key.WithKeys("q", "ctrl+c"), key.WithHelp("q", "quit")),
		Confirm:  key.NewBinding(key.WithKeys("enter"), key.WithHelp("enter", "save")),
		Cancel:   key.NewBinding(key.WithKeys("esc"), key.WithHelp("esc", "cancel")),
		Next:     key.NewBinding(key.WithKeys("tab", "down"), key.WithHelp("tab", "next")),
		Prev:     key.NewBinding(key.WithKeys("shift+tab", "up"), key.WithHelp("shift+tab", "previous")),
	}
}

// ShortHelp is the one-line help.
func (k keyMap) ShortHelp() []key.Binding {
	return []key.Binding{k.Note, k.Menu, k.Removed, k.Setup, k.Moisture, k.RateView, k.Help, k.Quit}
}

// FullHelp is the ? screen.
func (k keyMap) FullHelp() [][]key.Binding {
	return [][]key.Binding{
		{k.Note, k.BendPass, k.BendFail, k.CaseHard, k.Removed, k.Door, k.Setpoint},
		{k.Menu, k.Setup, k.Accept, k.Moisture, k.RateView, k.Help, k.Quit},
	}
}
