package kinetics

import (
	"encoding/binary"
	"math"
	"testing"
)

// seriesFrom turns fuzz bytes into a series: pairs of float32 (time in
// hours, value), so times can go back, repeat, jump or be NaN, and values
// can be anything a file might hold.
func seriesFrom(data []byte) Series {
	var s Series
	for len(data) >= 8 && len(s.TimeH) < 4000 {
		t := float64(math.Float32frombits(binary.LittleEndian.Uint32(data)))
		v := float64(math.Float32frombits(binary.LittleEndian.Uint32(data[4:])))
		s.TimeH = append(s.TimeH, t)
		s.Value = append(s.Value, v)
		data = data[8:]
	}
	return s
}

func fuzzSeed(f *testing.F, t, v []float64) {
	b := make([]byte, 0, 8*len(t))
	for i := range t {
		b = binary.LittleEndian.AppendUint32(b, math.Float32bits(float32(t[i])))
		b = binary.LittleEndian.AppendUint32(b, math.Float32bits(float32(v[i])))
	}
	f.Add(b, uint8(0))
}

// FuzzAnalyze: Analyze on any series never panics, never hangs (the fuzzer
// times out a slow input), and every figure it gives is a number (NaN
// means "not given"; it must not be ±Inf, and a projection's range must
// hold its estimate).
func FuzzAnalyze(f *testing.F) {
	var t, v []float64
	for i := 0; i < 200; i++ {
		t = append(t, float64(i)/30)
		v = append(v, 27+100*math.Exp(-0.5*float64(i)/30))
	}
	fuzzSeed(f, t, v)
	fuzzSeed(f, []float64{500.0 / 3600, 0, 10.0 / 3600, 20.0 / 3600}, []float64{200, 199, 198.9, 198.8}) // issue 9, case 1
	fuzzSeed(f, []float64{0, 1, 2, 7e7}, []float64{100, 90, 80, 70})
	f.Fuzz(func(t *testing.T, data []byte, flags uint8) {
		s := seriesFrom(data)
		setup := NewSetup()
		if flags&1 != 0 {
			setup.DryMassG = 27
		} else {
			setup.InitialMoistureWB = 86.5
		}
		if flags&2 != 0 {
			setup.TargetWBPct = 18
		}
		if flags&4 != 0 {
			s.Kind = SeriesMoistureDB
		}
		r, err := Analyze(s, setup, Options{UntilH: float64(flags >> 4)})
		if err != nil {
			return
		}
		for name, v := range map[string]float64{
			"duration": r.DurationH, "initial mass": r.InitialMassG, "dry mass": r.DryMassG, "final mass": r.FinalMassG,
			"final moisture": r.FinalMoistureDB, "target reached": r.TargetReachedH, "noise": r.NoiseSD,
			"projection": r.Projection.TargetH, "low": r.Projection.LowH, "high": r.Projection.HighH,
		} {
			if math.IsInf(v, 0) {
				t.Fatalf("%s is %v", name, v)
			}
		}
		if p := r.Projection; !math.IsNaN(p.TargetH) && (p.LowH > p.TargetH || p.HighH < p.TargetH) {
			t.Fatalf("range %v to %v does not hold the estimate %v", p.LowH, p.HighH, p.TargetH)
		}
		// Every reading's figures can be asked for (they are worked out
		// then): none panics, and a reading left out has none.
		for i := range s.TimeH {
			p := &r.Points
			sm := p.SmoothG(i)
			_, _, _, _, _ = p.X(i), p.RateG(i), p.MR(i), p.RateDB(i), p.Flux(i)
			if i < len(p.Reject) && p.Reject[i] != KeepOK && !math.IsNaN(sm) {
				t.Fatalf("reading %d left out (%s) has a smoothed mass %v", i, RejectReason(p.Reject[i]), sm)
			}
		}
		if len(r.Points.Reject) != len(s.TimeH) {
			t.Fatalf("%d verdicts for %d readings", len(r.Points.Reject), len(s.TimeH))
		}
	})
}
