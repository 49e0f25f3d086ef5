package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
)

// The keys `parch report --format json` promises (issue contract).
var contractKeys = []string{
	"readings", "rejected", "duration_h", "initial_mass_g", "dry_mass_g", "final_mass_g",
	"final_moisture_wb_pct", "final_moisture_db", "target_moisture_wb_pct", "target_mass_g",
	"target_reached_h", "projection", "constant_rate", "models", "best_model",
	"diffusivity_m2_per_s", "end_of_run_h", "removed", "suspected_removals", "notes", "warnings",
}

func reportJSON(t *testing.T, dir string, args ...string) map[string]any {
	t.Helper()
	out, stderr, code := parch(t, dir, append([]string{"report", "--format", "json"}, args...)...)
	if code != 0 {
		t.Fatalf("report %v: exit %d: %s", args, code, stderr)
	}
	if strings.Contains(out, "NaN") || strings.Contains(out, "Inf") {
		t.Fatalf("NaN or Inf in the JSON: %s", out)
	}
	var m map[string]any
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatalf("not JSON: %v\n%s", err, out)
	}
	for _, k := range contractKeys {
		if _, ok := m[k]; !ok {
			t.Errorf("key %q missing", k)
		}
	}
	return m
}

func num(t *testing.T, m map[string]any, key string) float64 {
	t.Helper()
	v, ok := m[key].(float64)
	if !ok {
		t.Fatalf("%s = %v, want a number", key, m[key])
	}
	return v
}

// parch simulate, then parch report on its CSV: the simulator's invented
// constants come back (dry mass 27 g, D 5e-10 m²/s, constant rate ends near
// 0.71 h); the models carry their published parameter names.
func TestReportOnSimulatedRun(t *testing.T) {
	dir := t.TempDir()
	if _, stderr, code := parch(t, dir, "simulate", "--out", "run.csv"); code != 0 {
		t.Fatal(stderr)
	}
	m := reportJSON(t, dir, "run.csv", "--initial-moisture", "86.5", "--target", "18", "--thickness", "6", "--faces", "2", "--equilibrium", "0.05")
	if d := num(t, m, "dry_mass_g"); math.Abs(d-27) > 0.05 {
		t.Errorf("dry mass %v", d)
	}
	if d := num(t, m, "diffusivity_m2_per_s"); math.Abs(d-5e-10)/5e-10 > 0.03 {
		t.Errorf("diffusivity %v", d)
	}
	cr, _ := m["constant_rate"].(map[string]any)
	if cr == nil || math.Abs(num(t, cr, "ends_h")-0.71) > 0.1 {
		t.Errorf("constant rate %v", m["constant_rate"])
	}
	names := map[string][]string{}
	for _, x := range m["models"].([]any) {
		mo := x.(map[string]any)
		var ps []string
		for k := range mo["params"].(map[string]any) {
			ps = append(ps, k)
		}
		sort.Strings(ps)
		names[mo["name"].(string)] = ps
		for _, k := range []string{"r2", "rmse", "chi2", "aic", "converged"} {
			if _, ok := mo[k]; !ok {
				t.Errorf("model %s lacks %s", mo["name"], k)
			}
		}
	}
	want := map[string]string{"lewis": "k", "page": "k,n", "henderson_pabis": "a,k", "logarithmic": "a,c,k", "two_term": "a,b,k0,k1", "midilli": "a,b,k,n"}
	for name, ps := range want {
		if strings.Join(names[name], ",") != ps {
			t.Errorf("model %s params %v, want %s", name, names[name], ps)
		}
	}
	// What was known at hour 3: the projection looks ahead from there.
	m3 := reportJSON(t, dir, "run.csv", "--initial-moisture", "86.5", "--target", "18", "--equilibrium", "0.05", "--until", "3h")
	p, _ := m3["projection"].(map[string]any)
	if p == nil || p["method"] != "combined" || math.Abs(num(t, p, "target_h")-7.27) > 0.5 {
		t.Errorf("projection at 3 h: %v (the run reaches 18 %% at 7.27 h)", m3["projection"])
	} else {
		if lo, hi := num(t, p, "low_h"), num(t, p, "high_h"); lo > 7.27 || hi < 7.27 || num(t, p, "level") != 0.8 {
			t.Errorf("80 %% range %v to %v misses 7.27 h (level %v)", lo, hi, p["level"])
		}
		if ms, _ := p["methods"].([]any); len(ms) < 3 {
			t.Errorf("projection lists %d methods, want the back-tested set", len(ms))
		}
	}
	if num(t, m3, "duration_h") > 3.0001 || m3["target_reached_h"] != nil {
		t.Errorf("--until 3h analysed %v h, target reached %v", m3["duration_h"], m3["target_reached_h"])
	}
}

// Salehi and Inanloodoghouz (2023), Ultrasonics Sonochemistry 100:106633,
// Table 1, as a CSV of moisture ratio against minutes: Page comes back with
// k = 0.0530 min^-n (scipy's least-squares value; the paper prints 0.0504)
// and n = 0.750 (paper 0.761).
func TestReportOnPublishedMR(t *testing.T) {
	wd, _ := os.Getwd()
	csv := filepath.Join(wd, "../../testdata/published/salehi2023_guar_sour_cherry.csv")
	m := reportJSON(t, t.TempDir(), csv)
	for _, x := range m["models"].([]any) {
		mo := x.(map[string]any)
		if mo["name"] != "page" {
			continue
		}
		ps := mo["params"].(map[string]any)
		n := ps["n"].(float64)
		kMin := ps["k"].(float64) / math.Pow(60, n) // hours to minutes
		if math.Abs(kMin-0.0530)/0.0530 > 0.01 || math.Abs(n-0.750) > 0.005 {
			t.Errorf("Page k %.4f 1/min^n, n %.4f", kMin, n)
		}
	}
	if m["dry_mass_g"] != nil || m["final_moisture_wb_pct"] != nil {
		t.Error("a moisture-ratio input must not invent masses or moisture contents")
	}
}

// Bad input: a clear message or nulls with reasons, never a panic or NaN.
func TestReportBadInputs(t *testing.T) {
	dir := t.TempDir()
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(content), 0o644)
		return p
	}
	var equal, neg strings.Builder
	equal.WriteString("elapsed_s,mass_g\n")
	neg.WriteString("elapsed_s,mass_g\n")
	for i := 0; i < 100; i++ {
		equal.WriteString(strings.Join([]string{strconv.Itoa(i * 10), "100.00"}, ",") + "\n")
		neg.WriteString(strings.Join([]string{strconv.Itoa(i * 10), "-5"}, ",") + "\n")
	}
	write("equal.csv", equal.String())
	write("neg.csv", neg.String())
	write("one.csv", "elapsed_s,mass_g\n0,100\n")
	write("empty.csv", "")
	write("header.csv", "elapsed_s,mass_g\n")
	write("nocols.csv", "a,b\n1,2\n")

	for _, tc := range []struct {
		args []string
		warn string
	}{
		{[]string{"equal.csv", "--initial-moisture", "80", "--target", "18"}, ""},
		{[]string{"one.csv", "--initial-moisture", "80"}, "too few"},
		{[]string{"equal.csv", "--dry-mass", "150", "--target", "18"}, "not less than the initial mass"},
	} {
		m := reportJSON(t, dir, tc.args...)
		if tc.warn != "" {
			w, _ := json.Marshal(m["warnings"])
			if !strings.Contains(string(w), tc.warn) {
				t.Errorf("%v: warnings %s lack %q", tc.args, w, tc.warn)
			}
		}
	}
	for _, tc := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"report", "empty.csv"}, 1, "empty"},
		{[]string{"report", "header.csv"}, 1, "no readings"},
		{[]string{"report", "nocols.csv"}, 1, "no time column"},
		{[]string{"report", "missing.csv"}, 1, "missing.csv"},
		{[]string{"report", "equal.csv", "--faces", "3"}, 2, "--faces"},
		{[]string{"report", "equal.csv", "--initial-moisture", "120"}, 2, "initial moisture"},
		{[]string{"report", "equal.csv", "--removed", "6h"}, 2, "ELAPSED=GRAMS"},
		{[]string{"report", "equal.csv", "--until", "soon"}, 2, "--until"},
		{[]string{"report", "equal.csv", "--initial-moisture", "80", "--target", "90"}, 2, "not below the initial moisture"},
		// Issue 9, case 12: input with no usable reading is a failure.
		{[]string{"report", "neg.csv"}, 1, "none of its 100 readings is usable (not_positive 100)"},
		{[]string{"report", "equal.csv", "--target", "18", "--target-db", "0.2"}, 2, "not both"},
		{[]string{"report"}, 2, "give one"},
	} {
		_, stderr, code := parch(t, dir, tc.args...)
		if code != tc.code || !strings.Contains(stderr, tc.want) {
			t.Errorf("%v: exit %d, %q; want %d and %q", tc.args, code, stderr, tc.code, tc.want)
		}
	}
}

// Setup recorded in the session log (and notes of removed pieces) is used;
// flags override it.
func TestReportUsesSessionSetupAndNotes(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "s.jsonl")
	if _, stderr, code := parch(t, dir, "record", "--demo", "--speed", "0", "--session", log, "--status", "0"); code != 0 {
		t.Fatal(stderr)
	}
	f, _ := os.OpenFile(log, os.O_WRONLY|os.O_APPEND, 0)
	f.WriteString(`{"type":"setup","t":"2030-01-01T00:00:00.000Z","initial_moisture_wb_pct":86.5,"target_moisture_wb_pct":18}` + "\n")
	f.Close()
	if _, stderr, code := parch(t, dir, "note", "--session", log, "--kind", "case_hardening", "tough skin on two rings"); code != 0 {
		t.Fatal(stderr)
	}
	m := reportJSON(t, dir, log)
	if d := num(t, m, "dry_mass_g"); math.Abs(d-27) > 0.05 {
		t.Errorf("dry mass from the log's setup: %v", d)
	}
	if w := num(t, m, "target_moisture_wb_pct"); math.Abs(w-18) > 1e-9 {
		t.Errorf("target %v", w)
	}
	notes := m["notes"].([]any)
	if len(notes) != 1 || notes[0].(map[string]any)["kind"] != "case_hardening" {
		t.Errorf("notes %v", notes)
	}
	m2 := reportJSON(t, dir, log, "--dry-mass", "26")
	if d := num(t, m2, "dry_mass_g"); math.Abs(d-26) > 1e-9 {
		t.Errorf("--dry-mass must override the log: %v", d)
	}
}

// parch report --out: the folder, refused when it exists, --force, and
// --format csv on standard output.
func TestReportOutFolder(t *testing.T) {
	dir := t.TempDir()
	if _, stderr, code := parch(t, dir, "simulate", "--out", "run.csv"); code != 0 {
		t.Fatal(stderr)
	}
	args := []string{"report", "run.csv", "--initial-moisture", "86.5", "--target", "18", "--thickness", "6", "--quiet"}
	if _, stderr, code := parch(t, dir, append(args, "--out", "rec")...); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for _, f := range []string{"readings.csv", "notes.csv", "summary.json", "report.md", "moisture.png", "moisture.svg", "best_model.png"} {
		if _, err := os.Stat(filepath.Join(dir, "rec", f)); err != nil {
			t.Errorf("missing %s", f)
		}
	}
	if _, stderr, code := parch(t, dir, append(args, "--out", "rec")...); code != 1 || !strings.Contains(stderr, "--force") {
		t.Errorf("existing folder: exit %d, %s", code, stderr)
	}
	if _, stderr, code := parch(t, dir, append(args, "--out", "rec", "--force")...); code != 0 {
		t.Errorf("--force: exit %d, %s", code, stderr)
	}
	out, _, code := parch(t, dir, append(args, "--format", "csv")...)
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if code != 0 || !strings.HasPrefix(lines[0], "elapsed_h,time,mass_g,net_mass_g,moisture_wb_pct") || len(lines) != 5762 {
		t.Errorf("--format csv: exit %d, %d lines, header %q", code, len(lines), lines[0])
	}
}

// Another invented run: no constant-rate period, a solid tray (one face),
// thinner slices, faster diffusion. The report must not invent a
// constant-rate period and must recover the diffusivity.
func TestReportOnOtherSimulatedRun(t *testing.T) {
	dir := t.TempDir()
	if _, stderr, code := parch(t, dir, "simulate", "--out", "run.csv", "--critical", "99", "--diffusivity", "8e-10",
		"--thickness", "4", "--faces", "1", "--hours", "12", "--seed", "7"); code != 0 {
		t.Fatal(stderr)
	}
	m := reportJSON(t, dir, "run.csv", "--initial-moisture", "86.5", "--thickness", "4", "--faces", "1", "--equilibrium", "0.05", "--target", "15")
	if m["constant_rate"] != nil {
		t.Errorf("constant-rate period invented: %v", m["constant_rate"])
	}
	if d := num(t, m, "diffusivity_m2_per_s"); math.Abs(d-8e-10)/8e-10 > 0.03 {
		t.Errorf("diffusivity %v, simulated 8e-10", d)
	}
	if d := num(t, m, "dry_mass_g"); math.Abs(d-27) > 0.05 {
		t.Errorf("dry mass %v", d)
	}
}

// --until cuts whatever the order of the rows (issue 8): a row out of order
// and a duplicated last row, both common in exports, do not turn the cut off.
func TestReportUntilCutsAnyOrder(t *testing.T) {
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("elapsed_s,mass_g\n")
	for i := 0; i <= 360; i++ {
		s := i * 60
		switch i {
		case 100:
			s = 101 * 60
		case 101:
			s = 100 * 60
		}
		fmt.Fprintf(&b, "%d,%.3f\n", s, 27+100*math.Exp(-0.5*float64(s)/3600))
	}
	b.WriteString("21600,31.000\n") // the last row again
	os.WriteFile(filepath.Join(dir, "rows.csv"), []byte(b.String()), 0o644)
	m := reportJSON(t, dir, "rows.csv", "--until", "1h", "--dry-mass", "27", "--target", "18")
	if d := num(t, m, "duration_h"); d > 1 || d < 0.98 {
		t.Errorf("--until 1h analysed %v h", d)
	}
	if r := num(t, m, "readings"); r != 61 {
		t.Errorf("--until 1h: %v readings, want the 61 at or before 1 h", r)
	}
	full := reportJSON(t, dir, "rows.csv")
	by, _ := full["rejected_by"].(map[string]any)
	if by["out_of_order"] != 1.0 || by["duplicate_time"] != 1.0 {
		t.Errorf("rejected %v, want one out of order and one duplicate", full["rejected_by"])
	}
	late := reportJSON(t, dir, "rows.csv", "--until", "9h")
	if !strings.Contains(fmt.Sprint(late["warnings"]), "nothing was cut") {
		t.Errorf("--until past the end: warnings %v", late["warnings"])
	}
	for _, tc := range []struct {
		until, want string
	}{
		{"0h", "after the start"},
		{"-1h", "--until"},
	} {
		_, stderr, code := parch(t, dir, "report", "rows.csv", "--until", tc.until)
		if code != 2 || !strings.Contains(stderr, tc.want) {
			t.Errorf("--until %s: exit %d, %q", tc.until, code, stderr)
		}
	}
}

// --reference (issue 8): an earlier run of the same product takes part in
// the projection and is named in the JSON; one in another unit is not used
// and says why; a reference that cannot be read is a usage error.
func TestReportReference(t *testing.T) {
	dir := t.TempDir()
	if _, stderr, code := parch(t, dir, "record", "--demo", "--speed", "0", "--session", "ref.jsonl", "--status", "0", "--initial-moisture", "86.5"); code != 0 {
		t.Fatal(stderr)
	}
	// This run: the same invented product drying faster (another seed).
	if _, stderr, code := parch(t, dir, "simulate", "--out", "run.csv", "--seed", "2", "--diffusivity", "7e-10"); code != 0 {
		t.Fatal(stderr)
	}
	setup := []string{"run.csv", "--initial-moisture", "86.5", "--target", "18", "--equilibrium", "0.05"}
	full := reportJSON(t, dir, setup...)
	truth := num(t, full, "target_reached_h")
	m := reportJSON(t, dir, append(setup, "--until", "2h", "--reference", "ref.jsonl")...)
	p, _ := m["projection"].(map[string]any)
	ref, _ := p["reference"].(map[string]any)
	if ref == nil || ref["file"] != "ref.jsonl" || !(num(t, ref, "weight") > 0) {
		t.Fatalf("projection.reference = %v", p["reference"])
	}
	if lo, hi := num(t, p, "low_h"), num(t, p, "high_h"); lo > truth || hi < truth {
		t.Errorf("with the reference: range %v to %v misses %v h", lo, hi, truth)
	}
	// A moisture table in percent (another unit): not used, and said.
	os.WriteFile(filepath.Join(dir, "pct.csv"), []byte("time (min),X_db\n0,640\n60,420\n120,250\n180,140\n240,80\n300,45\n360,30\n"), 0o644)
	m = reportJSON(t, dir, append(setup, "--until", "2h", "--reference", "pct.csv")...)
	if p, _ := m["projection"].(map[string]any); p["reference"] != nil || !strings.Contains(fmt.Sprint(m["warnings"]), "another unit") {
		t.Errorf("a reference in percent: projection.reference %v, warnings %v", p["reference"], m["warnings"])
	}
	if _, stderr, code := parch(t, dir, append([]string{"report"}, append(setup, "--reference", "nowhere.jsonl")...)...); code != 2 || !strings.Contains(stderr, "--reference nowhere.jsonl") {
		t.Errorf("missing reference: exit %d, %q", code, stderr)
	}
	// A mass table without its dry solids cannot be a reference.
	if _, stderr, code := parch(t, dir, append([]string{"report"}, append(setup, "--reference", "run.csv")...)...); code != 2 || !strings.Contains(stderr, "initial moisture") {
		t.Errorf("reference without moisture: exit %d, %q", code, stderr)
	}
	// record --reference names it in the log; report then uses it.
	if _, stderr, code := parch(t, dir, "record", "--demo", "--speed", "0", "--session", "next.jsonl", "--status", "0", "--initial-moisture", "86.5", "--target", "18", "--reference", "ref.jsonl"); code != 0 {
		t.Fatal(stderr)
	}
	m = reportJSON(t, dir, "next.jsonl", "--until", "2h")
	if p, _ := m["projection"].(map[string]any); p["reference"] == nil {
		t.Errorf("the log's reference was not used: %v", m["projection"])
	}
}
