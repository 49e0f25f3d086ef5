package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
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
	write("binary.csv", "elapsed_s,mass_g\n0,1\n\x00\x01\x02")
	if stderr, code, _ = runMeasured(t, dir, 30*time.Second, "report", "binary.csv"); code != 1 || !strings.Contains(stderr, "binary") {
		t.Errorf("binary input: exit %d, %q", code, stderr)
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
