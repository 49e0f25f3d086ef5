package main

import (
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"parch/internal/session"
	"parch/internal/simulate"
)

// The dashboard in a real terminal: tmux runs `parch demo` at 80x24, keys
// are typed with send-keys, the screen is read with capture-pane.
func TestDashboardInTmux(t *testing.T) {
	dir := t.TempDir()
	tmux, screenOf := tmuxServer(t)
	log := filepath.Join(dir, "e2e.jsonl")
	tmux("new-session", "-d", "-x", "80", "-y", "24", "-s", "e2e", fmt.Sprintf("cd %s && %s demo --session %s --speed 400; echo PARCH-EXITED $?; sleep 30", dir, binary, log))
	screen := func() string { return screenOf("e2e") }
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
	dir := t.TempDir()
	tmux, screen := tmuxServer(t)
	log := filepath.Join(dir, "rec.jsonl")
	rec := exec.Command(binary, "record", "--demo", "--speed", "100", "--session", log, "--status", "0")
	if err := rec.Start(); err != nil {
		t.Fatal(err)
	}
	defer rec.Process.Kill()
	time.Sleep(time.Second)
	tmux("new-session", "-d", "-x", "80", "-y", "24", "-s", "w", fmt.Sprintf("%s watch --session %s; echo WATCH-EXITED $?; sleep 30", binary, log))
	wait := func(what string) {
		t.Helper()
		deadline := time.Now().Add(20 * time.Second)
		for !strings.Contains(screen("w"), what) {
			if time.Now().After(deadline) {
				t.Fatalf("timed out waiting for %q:\n%s", what, screen("w"))
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

// Issue 10, done when: a logger file created after parch starts, two
// unannounced drops, a note from `parch note` in another shell, a second
// dashboard on the log, the recorder quitting. Both screens agree with
// `parch report` of the log (mass, moisture, target reached or not), the
// note shows on both, the second says the recording stopped, and no value
// is cut at 80x24.
func TestTwoDashboardsAgreeWithReport(t *testing.T) {
	dir := t.TempDir()
	tmux, screen := tmuxServer(t)
	logger := filepath.Join(dir, "logger.csv")
	log := filepath.Join(dir, "s.jsonl")
	wait := func(s, what string, limit time.Duration) time.Duration {
		t.Helper()
		begin := time.Now()
		for !strings.Contains(screen(s), what) {
			if time.Since(begin) > limit {
				t.Fatalf("%s: timed out waiting for %q:\n%s", s, what, screen(s))
			}
			time.Sleep(100 * time.Millisecond)
		}
		return time.Since(begin)
	}
	tmux("new-session", "-d", "-x", "80", "-y", "24", "-s", "rec", fmt.Sprintf("cd %s && %s watch --follow %s --session %s --initial-moisture 86.5 --target 18; echo REC-EXITED $?; sleep 60", dir, binary, logger, log))
	wait("rec", "waiting for", 15*time.Second)

	// The logger starts: an invented run with two pieces taken out unsaid.
	sc := simulate.AppleRings()
	sc.InitialMassG, sc.Doors, sc.DurationH = 60, nil, 7
	sc.Removals = []simulate.Removal{{AtH: 3, MassG: 4.2}, {AtH: 5, MassG: 3.0}}
	mod, err := simulate.NewModel(sc)
	if err != nil {
		t.Fatal(err)
	}
	t0 := time.Now().Add(-7 * time.Hour).UTC().Truncate(time.Second)
	var rows []string
	mod.Run(1, func(s simulate.Sample) bool {
		rows = append(rows, fmt.Sprintf("%s,%.2f\n", t0.Add(time.Duration(s.ElapsedS)*time.Second).Format(time.RFC3339), s.MassG))
		return true
	})
	f, _ := os.Create(logger)
	f.WriteString("time,mass_g\n" + strings.Join(rows[:len(rows)*6/7], ""))
	f.Close()
	wait("rec", "● live", 20*time.Second)

	tmux("new-session", "-d", "-x", "80", "-y", "24", "-s", "watch", fmt.Sprintf("%s watch --session %s; echo WATCH-EXITED $?; sleep 60", binary, log))
	wait("watch", "watching", 15*time.Second)
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--kind", "case_hardening", "from the other shell"); code != 0 {
		t.Fatal(stderr)
	}
	t.Logf("the note reached the recording dashboard in %s, the watching one in %s",
		wait("rec", "case hardening", 5*time.Second), wait("watch", "case hardening", 5*time.Second))

	f, _ = os.OpenFile(logger, os.O_WRONLY|os.O_APPEND, 0)
	f.WriteString(strings.Join(rows[len(rows)*6/7:], ""))
	f.Close()
	all := fmt.Sprintf("%d readings", len(rows))
	wait("rec", all, 20*time.Second)
	wait("watch", all, 20*time.Second)

	out, stderr, code := parch(t, dir, "report", "--format", "json", log)
	if code != 0 {
		t.Fatal(stderr)
	}
	var rep struct {
		Readings      int      `json:"readings"`
		FinalMassG    float64  `json:"final_mass_g"`
		FinalWB       float64  `json:"final_moisture_wb_pct"`
		TargetReached *float64 `json:"target_reached_h"`
	}
	json.Unmarshal([]byte(out), &rep)
	for _, s := range []string{"rec", "watch"} {
		// Between analyses the screen shows a live estimate; once the
		// readings pause, an analysis of all of them follows within a few
		// seconds (more on a loaded machine) and its figures are the report's.
		wants := []string{fmt.Sprintf("mass      %.2f g", rep.FinalMassG), fmt.Sprintf("moisture  %.1f %% wb", rep.FinalWB)}
		var sc string
		for begin := time.Now(); ; time.Sleep(200 * time.Millisecond) {
			sc = screen(s)
			if strings.Contains(sc, wants[0]) && strings.Contains(sc, wants[1]) || time.Since(begin) > 30*time.Second {
				break
			}
		}
		for i, line := range strings.Split(strings.TrimRight(sc, "\n"), "\n") {
			if len([]rune(line)) > 80 {
				t.Errorf("%s line %d is wider than 80: %q", s, i, line)
			}
		}
		for _, want := range wants {
			if !strings.Contains(sc, want) {
				t.Errorf("%s does not say %q as parch report does:\n%s", s, want, sc)
			}
		}
		if reached := strings.Contains(sc, "TARGET REACHED"); reached != (rep.TargetReached != nil) {
			t.Errorf("%s: target reached on screen %v, in the report %v", s, reached, rep.TargetReached)
		}
		if !strings.Contains(sc, "DROP") {
			t.Errorf("%s does not ask about the drop:\n%s", s, sc)
		}
	}

	tmux("send-keys", "-t", "rec", "q")
	wait("rec", "Quit?", 5*time.Second)
	tmux("send-keys", "-t", "rec", "y")
	wait("rec", "REC-EXITED 0", 20*time.Second)
	wait("watch", "■ stopped", 5*time.Second)
}

// Issue 11, case 7 (and issue 8): reference runs on the dashboard, in a
// real terminal: `parch demo --reference A --reference B` draws them dimmed
// and names them; `parch report` lists both.
func TestReferenceRunsInTmux(t *testing.T) {
	dir := t.TempDir()
	tmux, screen := tmuxServer(t)
	for _, name := range []string{"earlier.jsonl", "older.jsonl"} {
		if _, stderr, code := parch(t, dir, "record", "--demo", "--speed", "0", "--session", name, "--status", "0", "--initial-moisture", "86.5"); code != 0 {
			t.Fatal(stderr)
		}
	}
	tmux("new-session", "-d", "-x", "120", "-y", "40", "-s", "r", fmt.Sprintf("cd %s && %s demo --session now.jsonl --speed 400 --reference earlier.jsonl --reference older.jsonl; sleep 30", dir, binary))
	deadline := time.Now().Add(30 * time.Second)
	for {
		s := screen("r")
		if strings.Count(s, "∘") >= 2 && strings.Contains(s, "reference earlier.jsonl") && strings.Contains(s, "reference older.jsonl") {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("no reference runs on the dashboard:\n%s", s)
		}
		time.Sleep(300 * time.Millisecond)
	}
	tmux("send-keys", "-t", "r", "q")
	tmux("send-keys", "-t", "r", "y")
	out, stderr, code := parch(t, dir, "report", "--format", "json", "--until", "2h", "--reference", "earlier.jsonl", "--reference", "older.jsonl", "now.jsonl")
	if code != 0 || !strings.Contains(out, `"more_references"`) || !strings.Contains(out, "older.jsonl") {
		t.Errorf("report with two references: %d %s\n%s", code, stderr, out)
	}
}

// tmuxTests numbers the tmux servers of this test binary.
var tmuxTests atomic.Int64

// tmuxServer skips the test when tmux is missing, and otherwise gives it a
// tmux server of its own (a socket no other test, nor a repeat of this one
// under -count, shares: a server being killed at the end of one must not
// be the one the next starts in), killed when the test ends (ask for it
// after t.TempDir: cleanups run last first, so the programs in it stop
// before their folder is removed); and the screen
// of a session, the non-breaking spaces that keep a number and its unit
// together read as spaces.
func tmuxServer(t *testing.T) (tmux func(args ...string) string, screen func(session string) string) {
	t.Helper()
	if _, err := exec.LookPath("tmux"); err != nil {
		t.Skip("tmux is not installed (.ci/run installs it)")
	}
	sock := fmt.Sprintf("parch-test-%d-%d", os.Getpid(), tmuxTests.Add(1))
	tmux = func(args ...string) string {
		out, err := exec.Command("tmux", append([]string{"-L", sock}, args...)...).CombinedOutput()
		if err != nil && args[0] == "new-session" {
			t.Fatalf("tmux %s: %v %s", strings.Join(args, " "), err, out)
		}
		return string(out)
	}
	t.Cleanup(func() { tmux("kill-server") })
	screen = func(session string) string {
		return strings.ReplaceAll(tmux("capture-pane", "-p", "-t", session), "\u00a0", " ")
	}
	return tmux, screen
}
