package tui

import (
	"bytes"
	"path/filepath"
	"testing"
	"time"

	tea "github.com/charmbracelet/bubbletea"
	"github.com/charmbracelet/x/exp/teatest"

	"parch/internal/ingest"
	"parch/internal/session"
)

// A whole flow through the real program loop: readings arrive on the
// channel, a note is typed (with a degree sign, sent as runes), the user
// quits, and the note is in the session log on disk.
func TestFlowNoteReachesTheLog(t *testing.T) {
	path := filepath.Join(t.TempDir(), "flow.jsonl")
	w, err := session.Create(path, "test", start)
	if err != nil {
		t.Fatal(err)
	}
	events := make(chan []ingest.Event, 4)
	m := New(Options{Title: "flow.jsonl", Recording: true, Events: events, Notes: w, Setup: demoSetup()})
	tm := teatest.NewTestModel(t, m, teatest.WithInitialTermSize(80, 24))
	events <- simEvents(t, 1)
	teatest.WaitFor(t, tm.Output(), func(b []byte) bool { return bytes.Contains(b, []byte("elapsed")) },
		teatest.WithDuration(10*time.Second))
	tm.Send(tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune("n")})
	tm.Send(tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune("rings pliable at 60 °C")})
	tm.Send(tea.KeyMsg{Type: tea.KeyEnter})
	teatest.WaitFor(t, tm.Output(), func(b []byte) bool { return bytes.Contains(b, []byte("saved")) },
		teatest.WithDuration(10*time.Second))
	tm.Send(tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune("q")})
	tm.Send(tea.KeyMsg{Type: tea.KeyRunes, Runes: []rune("y")})
	tm.WaitFinished(t, teatest.WithFinalTimeout(10*time.Second))
	w.Close()
	l, err := session.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(l.Notes) != 1 || l.Notes[0].Text != "rings pliable at 60 °C" || !l.Notes[0].ReadingT.Equal(start.Add(time.Hour)) {
		t.Fatalf("notes in the log: %+v", l.Notes)
	}
}
