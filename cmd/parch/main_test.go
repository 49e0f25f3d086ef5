package main

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/creack/pty"
	"golang.org/x/term"

	"parch/internal/session"
)

var binary string

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "parch-bin")
	if err != nil {
		panic(err)
	}
	binary = filepath.Join(dir, "parch")
	if out, err := exec.Command("go", "build", "-o", binary, ".").CombinedOutput(); err != nil {
		os.Stderr.Write(out)
		panic(err)
	}
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

func parch(t *testing.T, dir string, args ...string) (stdout, stderr string, code int) {
	t.Helper()
	cmd := exec.Command(binary, args...)
	cmd.Dir = dir
	var o, e bytes.Buffer
	cmd.Stdout, cmd.Stderr = &o, &e
	err := cmd.Run()
	code = 0
	if ee, ok := err.(*exec.ExitError); ok {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	return o.String(), e.String(), code
}

// Crash safety: a recorder killed with SIGKILL loses nothing that was
// written more than a second before, and the log reads back; a note added
// from another process while it records is there too.
func TestRecordSurvivesSIGKILL(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "run.jsonl")
	cmd := exec.Command(binary, "record", "--demo", "--speed", "3000", "--session", log, "--status", "0")
	cmd.Dir = dir
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer cmd.Process.Kill()
	time.Sleep(1500 * time.Millisecond)
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--kind", "bend_test_failed", "still", "pliable"); code != 0 {
		t.Fatalf("parch note: exit %d: %s", code, stderr)
	}
	time.Sleep(500 * time.Millisecond)
	before, err := session.Load(log)
	if err != nil {
		t.Fatal(err)
	}
	time.Sleep(1100 * time.Millisecond)
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	cmd.Wait()
	after, err := session.Load(log)
	if err != nil {
		t.Fatalf("log after SIGKILL does not read back: %v", err)
	}
	n := before.Readings.Len()
	if n < 100 {
		t.Fatalf("only %d readings after 2 s of demo at speed 3000", n)
	}
	if after.Readings.Len() < n {
		t.Fatalf("%d readings before the kill, %d after", n, after.Readings.Len())
	}
	for i := 0; i < n; i++ {
		if after.Readings.TimeMs[i] != before.Readings.TimeMs[i] || after.Readings.MassG[i] != before.Readings.MassG[i] {
			t.Fatalf("reading %d changed after the kill", i)
		}
	}
	if len(after.Notes) != 1 || after.Notes[0].Kind != "bend_test_failed" || after.Notes[0].Text != "still pliable" || after.Notes[0].ReadingT.IsZero() {
		t.Fatalf("notes after the kill: %+v", after.Notes)
	}
	// Reopening the killed session appends, marking the gap.
	out, stderr, code := parch(t, dir, "record", "--demo", "--speed", "0", "--session", log, "--status", "0")
	if code != 0 || !strings.Contains(out, "appending to existing session log") {
		t.Fatalf("reopen: exit %d\n%s\n%s", code, out, stderr)
	}
	again, err := session.Load(log)
	if err != nil {
		t.Fatal(err)
	}
	reopened := false
	for _, s := range again.Sources {
		reopened = reopened || s.Event == session.SourceReopened
	}
	if !reopened || again.Readings.Len() <= after.Readings.Len() {
		t.Fatalf("after reopening: %d readings, reopened event %v", again.Readings.Len(), reopened)
	}
}

// `parch simulate` then `parch record --follow`: the whole run arrives.
func TestSimulateThenFollow(t *testing.T) {
	dir := t.TempDir()
	if _, stderr, code := parch(t, dir, "simulate", "--out", "run.csv"); code != 0 {
		t.Fatalf("simulate: %d %s", code, stderr)
	}
	data, _ := os.ReadFile(filepath.Join(dir, "run.csv"))
	rows := strings.Count(string(data), "\n") - 1
	cmd := exec.Command(binary, "record", "--follow", "run.csv", "--session", "s.jsonl", "--status", "0")
	cmd.Dir = dir
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(10 * time.Second)
	for {
		l, err := session.Load(filepath.Join(dir, "s.jsonl"))
		if err == nil && l.Readings.Len() == rows {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("follow: readings never reached %d", rows)
		}
		time.Sleep(100 * time.Millisecond)
	}
	cmd.Process.Signal(os.Interrupt)
	if err := cmd.Wait(); err != nil {
		t.Fatalf("record after SIGINT: %v", err)
	}
	l, _ := session.Load(filepath.Join(dir, "s.jsonl"))
	if last := l.Sources[len(l.Sources)-1]; last.Event != session.SourceStopped {
		t.Fatalf("last source event %q, want stopped (clean close on SIGINT)", last.Event)
	}
	// simulate never overwrites
	if _, stderr, code := parch(t, dir, "simulate", "--out", "run.csv"); code != 1 || !strings.Contains(stderr, "already exists") {
		t.Fatalf("simulate over an existing file: %d %s", code, stderr)
	}
}

func TestCommandLineErrors(t *testing.T) {
	dir := t.TempDir()
	tests := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no source", []string{"record"}, 2, "choose one source"},
		{"two sources", []string{"record", "--demo", "--port", "/dev/null"}, 2, "choose one source"},
		{"bad parity", []string{"record", "--port", "/dev/x", "--parity", "maybe"}, 2, "--parity"},
		{"ask without every", []string{"record", "--port", "/dev/x", "--ask", "P"}, 2, "--every"},
		{"missing port", []string{"record", "--port", "/dev/ttyNOPE7", "--session", "x.jsonl"}, 1, "does not exist"},
		{"missing follow", []string{"record", "--follow", "nope.csv", "--session", "y.jsonl"}, 1, "does not exist"},
		{"unknown command", []string{"frobnicate"}, 2, "unknown command"},
		{"no command", []string{}, 2, "report"}, // issue 10, case 10: a usage error, not success
		{"note without session", []string{"note", "hello"}, 2, "--session"},
		{"note removal without grams", []string{"note", "--session", "z.jsonl", "--kind", "piece_removed"}, 2, "--value"},
		{"note bad kind", []string{"note", "--session", "z.jsonl", "--kind", "Bend Test", "x"}, 2, "--kind"},
		{"note to missing log", []string{"note", "--session", "z.jsonl", "hello"}, 1, "z.jsonl"},
		{"bad flag", []string{"demo", "--sped", "3"}, 2, "sped"},
		// Issue 9, case 11: bad setup values never enter a log.
		{"moisture over 100", []string{"record", "--demo", "--session", "w.jsonl", "--initial-moisture", "150"}, 2, "initial moisture"},
		{"target over initial", []string{"record", "--demo", "--session", "w.jsonl", "--initial-moisture", "80", "--target", "90"}, 2, "not below the initial moisture"},
		{"negative tare", []string{"record", "--demo", "--session", "w.jsonl", "--tare", "-5"}, 2, "tare"},
		{"tiny steady window", []string{"record", "--demo", "--session", "w.jsonl", "--steady-window", "1e-300"}, 2, "steady window"},
		{"unknown kind", []string{"note", "--session", "z.jsonl", "--kind", "bogus", "x"}, 2, "expected one of"},
		{"value with letters", []string{"note", "--session", "z.jsonl", "--kind", "piece_removed", "--value", "4.2abc"}, 2, "expected a number"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, stderr, code := parch(t, dir, tc.args...)
			if code != tc.code || !strings.Contains(stderr, tc.want) {
				t.Errorf("exit %d (want %d), stderr %q (want %q)", code, tc.code, stderr, tc.want)
			}
		})
	}
	// A source that never started leaves no log behind.
	for _, f := range []string{"x.jsonl", "y.jsonl", "w.jsonl"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err == nil {
			t.Errorf("%s was left behind by a source that never started", f)
		}
	}
	// A file that is not ours is refused and left as it was.
	csv := filepath.Join(dir, "data.csv")
	os.WriteFile(csv, []byte("time_s,mass_g\n0,1\n"), 0o644)
	_, stderr, code := parch(t, dir, "record", "--demo", "--session", csv)
	if code != 1 || !strings.Contains(stderr, "not a parch session log") {
		t.Errorf("record into a CSV: exit %d, %q", code, stderr)
	}
	if b, _ := os.ReadFile(csv); string(b) != "time_s,mass_g\n0,1\n" {
		t.Error("a file that is not ours was changed")
	}
}

func TestHelp(t *testing.T) {
	out, _, code := parch(t, t.TempDir(), "help")
	if code != 0 {
		t.Fatal(code)
	}
	for _, c := range []string{"demo", "record", "note", "simulate", "watch", "report", "water activity"} {
		if !strings.Contains(out, c) {
			t.Errorf("help lacks %q", c)
		}
	}
	_, stderr, code := parch(t, t.TempDir(), "record", "-h")
	if code != 0 || !strings.Contains(stderr, "-port DEVICE") || !strings.Contains(stderr, "-stall") {
		t.Errorf("record -h: %d %s", code, stderr)
	}
}

// `parch record --port` on a real pseudo-terminal playing a balance.
func TestRecordSerialPort(t *testing.T) {
	master, slave, err := pty.Open()
	if err != nil {
		t.Skipf("no pseudo-terminal: %v", err)
	}
	defer master.Close()
	defer slave.Close()
	term.MakeRaw(int(slave.Fd()))
	dir := t.TempDir()
	log := filepath.Join(dir, "bal.jsonl")
	cmd := exec.Command(binary, "record", "--port", slave.Name(), "--session", log, "--status", "0")
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer cmd.Process.Kill()
	stop := make(chan struct{})
	go func() {
		for i := 0; ; i++ {
			select {
			case <-stop:
				return
			case <-time.After(20 * time.Millisecond):
			}
			fmt.Fprintf(master, "S S  %8.2f g\r\n", 150-float64(i)*0.01)
		}
	}()
	defer close(stop)
	deadline := time.Now().Add(10 * time.Second)
	for {
		l, err := session.Load(log)
		if err == nil && l.Readings.Len() >= 20 {
			if l.Readings.MassG[0] > 150 || l.Readings.MassG[0] < 140 || l.Readings.Stable[0] != 1 {
				t.Fatalf("first reading %v stable %v", l.Readings.MassG[0], l.Readings.Stable[0])
			}
			break
		}
		if time.Now().After(deadline) {
			t.Fatal("no readings recorded from the pty")
		}
		time.Sleep(50 * time.Millisecond)
	}
	cmd.Process.Signal(syscall.SIGTERM)
	if err := cmd.Wait(); err != nil {
		t.Fatalf("record after SIGTERM: %v", err)
	}
}

// Run parameters given to `parch record` and, the day after, to
// `parch note --set` land in the log as setup lines that report uses.
func TestSetupIntoTheLog(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "s.jsonl")
	if _, stderr, code := parch(t, dir, "record", "--demo", "--speed", "0", "--session", log, "--status", "0", "--initial-moisture", "86.5", "--target", "18"); code != 0 {
		t.Fatal(stderr)
	}
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--set", "dry_mass_g=26.5"); code != 0 {
		t.Fatal(stderr)
	}
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--set", "dry_mas=26.5"); code != 2 || !strings.Contains(stderr, "unknown key") {
		t.Errorf("typo in a key: exit %d %s", code, stderr)
	}
	l, err := session.Load(log)
	if err != nil {
		t.Fatal(err)
	}
	p := l.SetupParams()
	if p["initial_moisture_wb_pct"] != 86.5 || p["target_moisture_wb_pct"] != 18 || p["dry_mass_g"] != 26.5 {
		t.Fatalf("setup in the log: %v", p)
	}
}

// Issue 9, case 11: note --set is checked against what the log holds and a
// bad value is refused with nothing written; --unset takes a value back; a
// bad value already in a log is named as the log's, with the way to fix it.
func TestSetupValuesChecked(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "s.jsonl")
	if _, stderr, code := parch(t, dir, "record", "--demo", "--speed", "0", "--session", log, "--status", "0", "--initial-moisture", "86.5"); code != 0 {
		t.Fatal(stderr)
	}
	before, _ := os.ReadFile(log)
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--set", "dry_mass_g=-5"); code != 2 || !strings.Contains(stderr, "dry mass") {
		t.Errorf("--set dry_mass_g=-5: exit %d, %q", code, stderr)
	}
	if after, _ := os.ReadFile(log); len(after) != len(before) {
		t.Error("a refused value was written to the log")
	}
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--set", "target_moisture_wb_pct=95"); code != 2 || !strings.Contains(stderr, "not below") {
		t.Errorf("a target above the log's initial moisture: exit %d, %q", code, stderr)
	}
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--set", "dry_mass_g=30"); code != 0 {
		t.Fatal(stderr)
	}
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--unset", "dry_mass_g"); code != 0 {
		t.Fatal(stderr)
	}
	m := reportJSON(t, dir, log)
	if d := num(t, m, "dry_mass_g"); math.Abs(d-27) > 0.05 {
		t.Errorf("after --unset the dry mass comes from the initial moisture again: %v g", d)
	}
	// A bad value written into the log by something else.
	f, _ := os.OpenFile(log, os.O_WRONLY|os.O_APPEND, 0)
	f.WriteString(`{"type":"setup","t":"2030-01-01T00:00:00.000Z","tare_g":-5}` + "\n")
	f.Close()
	_, stderr, code := parch(t, dir, "report", log)
	if code != 1 || !strings.Contains(stderr, "setup recorded in") || !strings.Contains(stderr, "--unset") || strings.Contains(stderr, "report -h") {
		t.Errorf("a bad value in the log: exit %d, %q", code, stderr)
	}
}
