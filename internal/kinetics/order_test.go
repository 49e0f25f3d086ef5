package kinetics

import (
	"math"
	"reflect"
	"strings"
	"testing"
)

func TestInOrder(t *testing.T) {
	nan := math.NaN()
	const (
		ok   = KeepOK
		ord  = RejOrder
		dup  = RejDuplicate
		cut  = RejAfterCut
		bad  = RejNotPositive
		jump = RejTimeJump
	)
	for _, tc := range []struct {
		name string
		t    []float64
		cut  float64
		pick []int
		why  []uint8
	}{
		{"in order", []float64{0, 1, 2, 3}, nan, []int{0, 1, 2, 3}, []uint8{ok, ok, ok, ok}},
		{"cut in order", []float64{0, 1, 2, 3}, 1.5, []int{0, 1}, []uint8{ok, ok, cut, cut}},
		{"cut on a reading keeps it", []float64{0, 1, 2, 3}, 2, []int{0, 1, 2}, []uint8{ok, ok, ok, cut}},
		// A late first row (a clock or an export glitch) costs that row,
		// not the run.
		{"late first row", []float64{500, 0, 10, 20, 30}, nan, []int{1, 2, 3, 4}, []uint8{ord, ok, ok, ok, ok}},
		{"one row swapped", []float64{0, 1, 3, 2, 4, 5}, nan, []int{0, 1, 3, 4, 5}, []uint8{ok, ok, ord, ok, ok, ok}},
		{"duplicated last row", []float64{0, 1, 2, 2}, nan, []int{0, 1, 2}, []uint8{ok, ok, ok, dup}},
		// Cut whatever the order: a late row after the cut is cut, not
		// allowed to end the series early.
		{"cut with a row out of order", []float64{0, 1, 5, 2, 3}, 2.5, []int{0, 1, 3}, []uint8{ok, ok, cut, ok, cut}},
		{"no time", []float64{0, nan, 1}, nan, []int{0, 2}, []uint8{ok, bad, ok}},
		{"all after the cut", []float64{3, 4}, 1, nil, []uint8{cut, cut}},
		// Issue 9, case 5: a reading dated thousands of years off.
		{"time jump at the end", []float64{0, 1, 2, 7e7}, nan, []int{0, 1, 2}, []uint8{ok, ok, ok, jump}},
		{"time jump at the start", []float64{-7e7, 0, 1, 2}, nan, []int{1, 2, 3}, []uint8{jump, ok, ok, ok}},
		{"a day's pause is one run", []float64{0, 1, 24.5, 25}, nan, []int{0, 1, 2, 3}, []uint8{ok, ok, ok, ok}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			pick, why := inOrder(tc.t, tc.cut)
			if !reflect.DeepEqual(pick, tc.pick) || !reflect.DeepEqual(why, tc.why) {
				t.Errorf("inOrder(%v, %v) = %v %v, want %v %v", tc.t, tc.cut, pick, why, tc.pick, tc.why)
			}
		})
	}
}

// Readings that go back in time do not stop the analysis, and a cut keeps
// exactly the readings at or before it.
func TestAnalyzeOutOfOrderAndCut(t *testing.T) {
	var s Series
	for i := 0; i <= 600; i++ {
		th := float64(i) / 60
		s.TimeH = append(s.TimeH, th)
		s.Value = append(s.Value, 27+100*math.Exp(-0.5*th))
	}
	// Issue 9, case 1: a first row late in time; then a swapped pair and a
	// duplicated last row, as real exports have.
	s.TimeH = append([]float64{500.0 / 3600}, s.TimeH...)
	s.Value = append([]float64{200}, s.Value...)
	s.TimeH[100], s.TimeH[101] = s.TimeH[101], s.TimeH[100]
	s.TimeH = append(s.TimeH, s.TimeH[len(s.TimeH)-1])
	s.Value = append(s.Value, s.Value[len(s.Value)-1])
	setup := NewSetup()
	setup.DryMassG = 27
	setup.TargetWBPct = 18
	r, err := Analyze(s, setup, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if r.Readings != len(s.TimeH) || r.RejectedBy["out_of_order"] != 2 || r.RejectedBy["duplicate_time"] != 1 {
		t.Errorf("readings %d, rejected %v", r.Readings, r.RejectedBy)
	}
	if r.Points.Len() != len(s.TimeH) {
		t.Errorf("points for %d readings, want %d", r.Points.Len(), len(s.TimeH))
	}
	// Each reading's figures, worked out when asked, are those of the
	// readings in order analysed alone, put back in their rows; the
	// readings left out have none.
	pick, _ := inOrder(s.TimeH, math.NaN())
	sub := Series{TimeH: gather(s.TimeH, pick), Value: gather(s.Value, pick)}
	alone, err := Analyze(sub, setup, Options{})
	if err != nil {
		t.Fatal(err)
	}
	picked := map[int]int{}
	for j, i := range pick {
		picked[i] = j
	}
	same := func(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }
	for i := range s.TimeH {
		j, ok := picked[i]
		p, q := &r.Points, &alone.Points
		if !ok {
			if !math.IsNaN(p.SmoothG(i)) || !math.IsNaN(p.RateG(i)) || !math.IsNaN(p.X(i)) || !math.IsNaN(p.MR(i)) {
				t.Errorf("reading %d left out, yet smoothed %v, rate %v, X %v", i, p.SmoothG(i), p.RateG(i), p.X(i))
			}
			continue
		}
		if !same(p.SmoothG(i), q.SmoothG(j)) || !same(p.RateG(i), q.RateG(j)) || !same(p.X(i), q.X(j)) ||
			!same(p.MR(i), q.MR(j)) || !same(p.RateDB(i), q.RateDB(j)) || !same(p.WBPct(i), q.WBPct(j)) {
			t.Fatalf("reading %d (row %d in order): smoothed %v %v, rate %v %v, X %v %v", i, j, p.SmoothG(i), q.SmoothG(j), p.RateG(i), q.RateG(j), p.X(i), q.X(j))
		}
	}
	c, err := Analyze(s, setup, Options{UntilH: 3})
	if err != nil {
		t.Fatal(err)
	}
	if c.DurationH > 3 || c.DurationH < 2.98 || !math.IsNaN(c.TargetReachedH) {
		t.Errorf("cut at 3 h: duration %v, target reached %v", c.DurationH, c.TargetReachedH)
	}
	if want := 181 + 1; c.Readings != want || c.AfterCut != len(s.TimeH)-want {
		t.Errorf("cut at 3 h: %d readings, %d after the cut", c.Readings, c.AfterCut)
	}
	if _, err := Analyze(Series{TimeH: []float64{2, 1, 3}, Value: []float64{3, 2, 1}}, setup, Options{UntilH: 0.5}); err != ErrNothingBeforeCut {
		t.Errorf("cut before the first reading: %v", err)
	}
}

// A moisture-ratio table with the initial moisture given becomes moisture
// content, X = X_e + MR·(X0 − X_e) (the definition of MR); without it, no
// moisture target can be placed on it and the projection says so.
func TestMoistureRatioInput(t *testing.T) {
	// Salehi and Inanloodoghouz (2023), Table 1 (testdata/published).
	s := Series{Kind: SeriesMR, TimeH: []float64{0, 0.25, 0.5, 0.75, 1, 1.25, 1.5},
		Value: []float64{1, 0.646, 0.525, 0.408, 0.329, 0.258, 0.192}}
	setup := NewSetup()
	setup.TargetWBPct = 30
	r, err := Analyze(s, setup, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if r.Projection.Method != ProjNone || !strings.Contains(r.Projection.Why, "initial moisture") {
		t.Errorf("MR without X0: projection %+v", r.Projection)
	}
	setup.InitialMoistureWB = 80 // X0 = 4 (invented for the test)
	r, err = Analyze(s, setup, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if x := r.Points.X; math.Abs(x(0)-4) > 1e-9 || math.Abs(x(6)-0.192*4) > 1e-9 {
		t.Errorf("X from MR: %v, %v", x(0), x(6))
	}
	if math.IsNaN(r.Projection.TargetH) || r.Projection.TargetH < 1.5 {
		t.Errorf("projection to 30 %% wb (X 0.43) from X 0.77: %+v", r.Projection)
	}
}

// Issue 9, case 12: masses near the float limit are rejected, not turned
// into "a drop of NaN g".
func TestImplausibleValues(t *testing.T) {
	s := Series{}
	for i := 0; i < 100; i++ {
		s.TimeH = append(s.TimeH, float64(i)/60)
		s.Value = append(s.Value, 200-float64(i)*0.5)
	}
	s.Value[50] = 1e308
	s.Value[60] = -1e308
	r, err := Analyze(s, NewSetup(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if r.RejectedBy["implausible"] != 1 || r.RejectedBy["not_positive"] != 1 {
		t.Errorf("rejected %v", r.RejectedBy)
	}
	for _, st := range r.SuspectedRemovals {
		if math.IsNaN(st.MassG) || math.IsInf(st.MassG, 0) {
			t.Errorf("a drop of %v g", st.MassG)
		}
	}
	if math.IsNaN(r.FinalMassG) {
		t.Error("final mass NaN")
	}
}

// A declared removal with no drop on the balance is applied but flagged
// (grams or a time typed wrong).
func TestRemovalWithoutDrop(t *testing.T) {
	var s Series
	for i := 0; i <= 600; i++ {
		s.TimeH = append(s.TimeH, float64(i)/60)
		s.Value = append(s.Value, 27+100*math.Exp(-0.5*float64(i)/60))
	}
	setup := NewSetup()
	setup.DryMassG = 27
	setup.Removals = []Removal{{ElapsedH: 5, MassG: 2.5}}
	r, err := Analyze(s, setup, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(strings.Join(r.Warnings, "|"), "removal of 2.50 g at 5.00 h: the balance shows a drop of") {
		t.Errorf("warnings %q", r.Warnings)
	}
}
