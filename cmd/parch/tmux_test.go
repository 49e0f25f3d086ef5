package main

import (
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"parch/internal/session"
)

// The dashboard in a real terminal: tmux runs `parch demo` at 80x24, keys
// are typed with send-keys, the screen is read with capture-pane.
func TestDashboardInTmux(t *testing.T) {
	if _, err := exec.LookPath("tmux"); err != nil {
		t.Skip("tmux is not installed (.ci/run installs it)")
	}
	dir := t.TempDir()
	log := filepath.Join(dir, "e2e.jsonl")
	sock := fmt.Sprintf("parch-test-%d", os.Getpid())
	tmux := func(args ...string) (string, error) {
		out, err := exec.Command("tmux", append([]string{"-L", sock}, args...)...).CombinedOutput()
		return string(out), err
	}
	defer tmux("kill-server")
	cmdline := fmt.Sprintf("cd %s && %s demo --session %s --speed 400; echo PARCH-EXITED $?; sleep 30", dir, binary, log)
	if out, err := tmux("new-session", "-d", "-x", "80", "-y", "24", "-s", "e2e", cmdline); err != nil {
		t.Fatalf("tmux: %v %s", err, out)
	}
	screen := func() string {
		out, _ := tmux("capture-pane", "-p", "-t", "e2e")
		return strings.ReplaceAll(out, "\u00a0", " ") // the screen keeps a number and its unit together
	}
	waitScreen := func(what string, ok func(string) bool) string {
		t.Helper()
		deadline := time.Now().Add(20 * time.Second)
		for {
			s := screen()
			if ok(s) {
				return s
			}
			if time.Now().After(deadline) {
				t.Fatalf("timed out waiting for %s; screen:\n%s", what, s)
			}
			time.Sleep(200 * time.Millisecond)
		}
	}
	has := func(words ...string) func(string) bool {
		return func(s string) bool {
			for _, w := range words {
				if !strings.Contains(s, w) {
					return false
				}
			}
			return true
		}
	}
	s := waitScreen("the figures", has("elapsed", "mass", "g/h", "moisture", "projected", "● live"))
	for i, line := range strings.Split(strings.TrimRight(s, "\n"), "\n") {
		if len([]rune(line)) > 80 {
			t.Errorf("screen line %d is wider than 80: %q", i, line)
		}
	}
	tmux("send-keys", "-t", "e2e", "b")
	waitScreen("the bend test note", has("bend test passed"))
	tmux("send-keys", "-t", "e2e", "r")
	waitScreen("the grams prompt", has("grams removed:"))
	tmux("send-keys", "-t", "e2e", "2.5", "Enter")
	waitScreen("the removal note", has("piece removed 2.50 g"))
	tmux("send-keys", "-t", "e2e", "q")
	waitScreen("the quit question", has("Quit?"))
	tmux("send-keys", "-t", "e2e", "y")
	s = waitScreen("parch to exit", has("PARCH-EXITED"))
	if !strings.Contains(s, "PARCH-EXITED 0") || !strings.Contains(s, "session log") {
		t.Fatalf("exit:\n%s", s)
	}

	l, err := session.Load(log)
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[string]float64{}
	for _, n := range l.Notes {
		v := 0.0
		if n.Value != nil {
			v = *n.Value
		}
		kinds[n.Kind] = v
	}
	if _, ok := kinds["bend_test_passed"]; !ok || kinds["piece_removed"] != 2.5 || l.Readings.Len() == 0 {
		t.Fatalf("log: %d readings, notes %v", l.Readings.Len(), kinds)
	}
	// parch report on the same log agrees: the removal is applied.
	out, stderr, code := parch(t, dir, "report", "--format", "json", log)
	if code != 0 {
		t.Fatal(stderr)
	}
	var rep struct {
		Removed []struct {
			MassG float64 `json:"mass_g"`
		} `json:"removed"`
		Notes []any `json:"notes"`
	}
	json.Unmarshal([]byte(out), &rep)
	if len(rep.Removed) != 1 || rep.Removed[0].MassG != 2.5 || len(rep.Notes) != 2 {
		t.Fatalf("report: removed %v, %d notes", rep.Removed, len(rep.Notes))
	}
}

// Watching a log that `parch record` writes: notes go into it, and quitting
// the watcher leaves the recording running.
func TestWatchAttachedInTmux(t *testing.T) {
	if _, err := exec.LookPath("tmux"); err != nil {
		t.Skip("tmux is not installed (.ci/run installs it)")
	}
	dir := t.TempDir()
	log := filepath.Join(dir, "rec.jsonl")
	rec := exec.Command(binary, "record", "--demo", "--speed", "100", "--session", log, "--status", "0")
	if err := rec.Start(); err != nil {
		t.Fatal(err)
	}
	defer rec.Process.Kill()
	time.Sleep(time.Second)
	sock := fmt.Sprintf("parch-test-attach-%d", os.Getpid())
	tmux := func(args ...string) string {
		out, _ := exec.Command("tmux", append([]string{"-L", sock}, args...)...).CombinedOutput()
		return string(out)
	}
	defer tmux("kill-server")
	tmux("new-session", "-d", "-x", "80", "-y", "24", "-s", "w", fmt.Sprintf("%s watch --session %s; echo WATCH-EXITED $?; sleep 30", binary, log))
	wait := func(what string) {
		t.Helper()
		deadline := time.Now().Add(20 * time.Second)
		for !strings.Contains(tmux("capture-pane", "-p", "-t", "w"), what) {
			if time.Now().After(deadline) {
				t.Fatalf("timed out waiting for %q:\n%s", what, tmux("capture-pane", "-p", "-t", "w"))
			}
			time.Sleep(200 * time.Millisecond)
		}
	}
	wait("watching")
	wait("● live")
	tmux("send-keys", "-t", "w", "c")
	wait("case hardening seen")
	tmux("send-keys", "-t", "w", "q") // not recording here: no question
	wait("WATCH-EXITED 0")
	before, _ := session.Load(log)
	time.Sleep(1500 * time.Millisecond)
	after, err := session.Load(log)
	if err != nil {
		t.Fatal(err)
	}
	if after.Readings.Len() <= before.Readings.Len() {
		t.Fatal("the recording stopped with the watcher")
	}
	if len(after.Notes) != 1 || after.Notes[0].Kind != "case_hardening" {
		t.Fatalf("notes %+v", after.Notes)
	}
	rec.Process.Signal(os.Interrupt)
	if err := rec.Wait(); err != nil {
		t.Fatalf("recorder: %v", err)
	}
}
