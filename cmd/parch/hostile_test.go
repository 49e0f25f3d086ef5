package main

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"parch/internal/session"
)

// runMeasured runs parch and returns its peak memory (resident set, MB).
func runMeasured(t *testing.T, dir string, timeout time.Duration, args ...string) (stderr string, code int, peakMB float64) {
	t.Helper()
	cmd := exec.Command(binary, args...)
	cmd.Dir = dir
	var e bytes.Buffer
	cmd.Stderr = &e
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	timer := time.AfterFunc(timeout, func() { cmd.Process.Kill() })
	defer timer.Stop()
	err := cmd.Wait()
	if ee, ok := err.(*exec.ExitError); ok {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
		peakMB = float64(ru.Maxrss) / 1024 // Linux reports kB
	}
	return e.String(), code, peakMB
}

// Issue 9, cases 5 and 6: hostile report input is bounded in time and
// memory and named in the message.
func TestReportHostileInput(t *testing.T) {
	dir := t.TempDir()
	write := func(name string, parts ...string) {
		f, err := os.Create(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range parts {
			f.WriteString(p)
		}
		f.Close()
	}
	var rows strings.Builder
	for i := 0; i < 50; i++ {
		rows.WriteString(strings.Join([]string{itoa(i * 60), itoa(200 - i)}, ",") + "\n")
	}
	// A 200 MB line in the middle of a table.
	f, _ := os.Create(filepath.Join(dir, "longline.csv"))
	f.WriteString("elapsed_s,mass_g\n" + rows.String())
	chunk := bytes.Repeat([]byte("9"), 1<<20)
	for i := 0; i < 200; i++ {
		f.Write(chunk)
	}
	f.WriteString("\n" + rows.String())
	f.Close()
	stderr, code, peak := runMeasured(t, dir, time.Minute, "report", "--format", "json", "longline.csv")
	t.Logf("a 200 MB line: exit %d, peak memory %.0f MB", code, peak)
	if code != 0 || peak > 300 {
		t.Errorf("a 200 MB line: exit %d (%s), peak memory %.0f MB (want under 300)", code, stderr, peak)
	}
	out, _, _ := parch(t, dir, "report", "longline.csv")
	if !strings.Contains(out, "line 52 skipped") {
		t.Errorf("the long line is not named:\n%s", out)
	}

	// A 10 MB header is not echoed whole.
	write("bighead.csv", strings.Repeat("x", 10<<20), "\n1,2\n")
	stderr, code, _ = runMeasured(t, dir, time.Minute, "report", "bighead.csv")
	if code != 1 || len(stderr) > 2000 {
		t.Errorf("a 10 MB header: exit %d, %d bytes of message", code, len(stderr))
	}

	// A device with no end is refused at once; binary content too.
	stderr, code, _ = runMeasured(t, dir, 30*time.Second, "report", "/dev/zero")
	if code != 1 || !strings.Contains(stderr, "not a file") {
		t.Errorf("report /dev/zero: exit %d, %q", code, stderr)
	}
	write("binary.csv", "\x00\x01\x02\x89PNG\n")
	if stderr, code, _ = runMeasured(t, dir, 30*time.Second, "report", "binary.csv"); code != 1 || !strings.Contains(stderr, "binary") {
		t.Errorf("binary input: exit %d, %q", code, stderr)
	}
	// The zero-filled tail a crash can leave: that line is skipped and
	// named, the readings before it count.
	write("zerotail.csv", "elapsed_s,mass_g\n", rows.String(), strings.Repeat("\x00", 5000))
	if m := reportJSON(t, dir, "zerotail.csv"); num(t, m, "readings") != 50 || !strings.Contains(strings.Join(toStrings(m["warnings"]), "|"), "line 52 holds NUL bytes") {
		t.Errorf("zero-filled tail: %v readings, warnings %v", m["readings"], m["warnings"])
	}

	// A session log with readings dated year 0 and year 9999: the rest is
	// analysed, quickly, and the jumps are named.
	log := `{"type":"session","t":"2026-12-02T08:00:00.000Z","format":"parch-session","version":1}` + "\n" +
		`{"type":"reading","t":"0000-01-01T00:00:00.000Z","mass_g":150}` + "\n"
	for i := 0; i < 200; i++ {
		log += `{"type":"reading","t":"` + time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC).Add(time.Duration(i)*time.Minute).Format("2006-01-02T15:04:05.000Z") + `","mass_g":` + itoa(200-i/4) + "}\n"
	}
	log += `{"type":"reading","t":"9999-12-31T23:59:59.000Z","mass_g":20}` + "\n"
	write("years.jsonl", log)
	start := time.Now()
	stderr, code, peak = runMeasured(t, dir, time.Minute, "report", "--format", "json", "years.jsonl")
	took := time.Since(start)
	t.Logf("years 0 and 9999 in a log: exit %d in %s, peak %.0f MB", code, took.Round(time.Millisecond), peak)
	if code != 0 || peak > 300 {
		t.Errorf("years 0 and 9999: exit %d (%s), %.0f MB", code, stderr, peak)
	}
	m := reportJSON(t, dir, "years.jsonl")
	if by, _ := m["rejected_by"].(map[string]any); by["time_jump"] != 2.0 || num(t, m, "duration_h") > 4 {
		t.Errorf("time jumps: rejected %v, duration %v h", m["rejected_by"], m["duration_h"])
	}

	// Elapsed times past any run are rejected per line, not wrapped round.
	write("huge.csv", "elapsed_s,mass_g\n", rows.String(), "1e20,100\n1e+301,99\n")
	m = reportJSON(t, dir, "huge.csv")
	if num(t, m, "duration_h") < 0 || num(t, m, "duration_h") > 1 || !strings.Contains(strings.Join(toStrings(m["warnings"]), "|"), "beyond 10 years") {
		t.Errorf("elapsed 1e20 s: duration %v, warnings %v", m["duration_h"], m["warnings"])
	}
}

func itoa(i int) string { return strconv.Itoa(i) }

func toStrings(v any) []string {
	var out []string
	if a, ok := v.([]any); ok {
		for _, x := range a {
			if s, ok := x.(string); ok {
				out = append(out, s)
			}
		}
	}
	return out
}

// Issue 9, case 2: restarting `record --follow` on the same file and log
// records no row twice, after a clean stop (SIGTERM) or a SIGKILL, for
// clock-time and elapsed-time files; and case 10: SIGTERM stops a follow
// promptly and writes `stopped`.
func TestFollowRestartRecordsNoRowTwice(t *testing.T) {
	for _, tc := range []struct{ name, header string }{
		{"clock times", "time,mass_g"},
		{"elapsed times", "elapsed_s,mass_g"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			csv := filepath.Join(dir, "logger.csv")
			start := time.Date(2026, 12, 2, 8, 0, 0, 0, time.UTC)
			row := func(i int) string {
				tm := start.Add(time.Duration(i) * 10 * time.Second).Format(time.RFC3339)
				if strings.HasPrefix(tc.header, "elapsed") {
					tm = strconv.Itoa(i * 10)
				}
				return fmt.Sprintf("%s,%.2f\n", tm, 200-0.1*float64(i))
			}
			var b strings.Builder
			b.WriteString(tc.header + "\n")
			for i := 0; i < 300; i++ {
				b.WriteString(row(i))
			}
			os.WriteFile(csv, []byte(b.String()), 0o644)
			logPath := filepath.Join(dir, "s.jsonl")
			want := 300
			for round, sig := range []os.Signal{syscall.SIGTERM, syscall.SIGKILL, syscall.SIGTERM} {
				cmd := exec.Command(binary, "record", "--follow", csv, "--session", logPath, "--status", "0")
				cmd.Dir = dir
				if err := cmd.Start(); err != nil {
					t.Fatal(err)
				}
				// Wait until every row is in the log (and, before a kill,
				// a little longer so its position line is on disk too).
				deadline := time.Now().Add(15 * time.Second)
				for {
					l, err := session.Load(logPath)
					if err == nil && l.Readings.Len() >= want {
						break
					}
					if time.Now().After(deadline) {
						t.Fatalf("round %d: readings never reached %d", round, want)
					}
					time.Sleep(50 * time.Millisecond)
				}
				if sig == syscall.SIGKILL {
					time.Sleep(1500 * time.Millisecond)
				}
				cmd.Process.Signal(sig)
				done := make(chan error, 1)
				go func() { done <- cmd.Wait() }()
				select {
				case <-done:
				case <-time.After(5 * time.Second):
					cmd.Process.Kill()
					t.Fatalf("round %d: record did not stop within 5 s of %v", round, sig)
				}
				// The logger writes on between runs.
				f, _ := os.OpenFile(csv, os.O_WRONLY|os.O_APPEND, 0)
				for i := want; i < want+20; i++ {
					f.WriteString(row(i))
				}
				f.Close()
				want += 20
			}
			// One last run picks up the final 20 rows.
			cmd := exec.Command(binary, "record", "--follow", csv, "--session", logPath, "--status", "0")
			cmd.Dir = dir
			cmd.Start()
			deadline := time.Now().Add(15 * time.Second)
			var l *session.Log
			for {
				l, _ = session.Load(logPath)
				if l != nil && l.Readings.Len() >= want || time.Now().After(deadline) {
					break
				}
				time.Sleep(50 * time.Millisecond)
			}
			time.Sleep(500 * time.Millisecond) // time for any duplicate to arrive
			cmd.Process.Signal(syscall.SIGTERM)
			cmd.Wait()
			l, _ = session.Load(logPath)
			if l.Readings.Len() != want {
				t.Errorf("%d readings in the log after 4 runs, want the %d rows of the file", l.Readings.Len(), want)
			}
			seen := map[int64]bool{}
			for _, ms := range l.Readings.TimeMs {
				if seen[ms] {
					t.Errorf("reading at %v recorded twice", time.UnixMilli(ms).UTC())
					break
				}
				seen[ms] = true
			}
			if last := l.Sources[len(l.Sources)-1]; last.Event != session.SourceStopped {
				t.Errorf("last source event %q after SIGTERM, want stopped", last.Event)
			}
		})
	}
}

// Issue 9, case 10: a device given to --follow is refused at once.
func TestFollowRefusesDevices(t *testing.T) {
	_, stderr, code := parch(t, t.TempDir(), "record", "--follow", "/dev/zero", "--session", "z.jsonl")
	if code != 1 || !strings.Contains(stderr, "not a regular file") {
		t.Errorf("record --follow /dev/zero: exit %d, %q", code, stderr)
	}
}

// Issue 9, case 1, as reported: a first row late in time crashed the
// spike filter (index out of range).
func TestReportFirstRowLate(t *testing.T) {
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("elapsed_s,mass_g\n500,200\n")
	for i := 0; i < 100; i++ {
		fmt.Fprintf(&b, "%d,%.2f\n", i*10, 199-0.1*float64(i))
	}
	os.WriteFile(filepath.Join(dir, "late.csv"), []byte(b.String()), 0o644)
	m := reportJSON(t, dir, "late.csv")
	if by, _ := m["rejected_by"].(map[string]any); by["out_of_order"] != 1.0 {
		t.Errorf("rejected %v, want the late first row out of order", m["rejected_by"])
	}
}
