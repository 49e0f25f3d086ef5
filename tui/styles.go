package tui

import "github.com/charmbracelet/lipgloss"

// Styles are built once and kept on the model. Meaning never rests on
// colour alone: alerts carry words and a marker, so NO_COLOR and
// monochrome terminals lose nothing.
type Styles struct {
	Title   lipgloss.Style
	Dim     lipgloss.Style
	Label   lipgloss.Style
	Value   lipgloss.Style
	Alert   lipgloss.Style
	Good    lipgloss.Style
	Pane    lipgloss.Style
	Heading lipgloss.Style
	Input   lipgloss.Style
	Error   lipgloss.Style
}

// NewStyles makes the dashboard's styles; lipgloss drops the colours on
// terminals that cannot show them or when NO_COLOR is set.
func NewStyles() Styles {
	return Styles{
		Title:   lipgloss.NewStyle().Bold(true),
		Dim:     lipgloss.NewStyle().Faint(true),
		Label:   lipgloss.NewStyle().Foreground(lipgloss.AdaptiveColor{Light: "240", Dark: "248"}),
		Value:   lipgloss.NewStyle().Bold(true),
		Alert:   lipgloss.NewStyle().Bold(true).Reverse(true),
		Good:    lipgloss.NewStyle().Bold(true).Foreground(lipgloss.AdaptiveColor{Light: "28", Dark: "114"}),
		Pane:    lipgloss.NewStyle(),
		Heading: lipgloss.NewStyle().Bold(true).Underline(true),
		Input:   lipgloss.NewStyle().Bold(true),
		Error:   lipgloss.NewStyle().Bold(true).Foreground(lipgloss.AdaptiveColor{Light: "160", Dark: "203"}),
	}
}
