package ingest

import (
	"bytes"
	"io"
	"math"
	"strings"
	"testing"
	"testing/iotest"
)

// Line shapes below are written from the general patterns balances use
// (stability letter or word, sign, padding, unit, decimal comma); none is
// copied from a maker's manual. Unit factors: NIST Handbook 44, appendix C
// (1 oz = 28.349523125 g, 1 lb = 453.59237 g, exact by definition).
func TestParseLine(t *testing.T) {
	tests := []struct {
		name   string
		line   string
		kind   LineKind
		massG  float64
		stable Stability
	}{
		{"bare number", "123.45", LineReading, 123.45, StabilityUnknown},
		{"bare with unit", "123.45 g", LineReading, 123.45, StabilityUnknown},
		{"attached unit", "123.45g", LineReading, 123.45, StabilityUnknown},
		{"leading spaces", "      12.30 g", LineReading, 12.30, StabilityUnknown},
		{"zero padding and sign", "+0012.34 g", LineReading, 12.34, StabilityUnknown},
		{"negative detached sign", "-    12.34 g", LineReading, -12.34, StabilityUnknown},
		{"negative attached", "-12.34 g", LineReading, -12.34, StabilityUnknown},
		{"stable letter before", "S S     123.45 g", LineReading, 123.45, Stable},
		{"dynamic letter", "S D     123.45 g", LineReading, 123.45, Unstable},
		{"comma fields", "ST,GS,+0012.34g", LineReading, 12.34, Stable},
		{"unstable word", "US,NT,+0012.34 g", LineReading, 12.34, Unstable},
		{"question mark after", "   123.45 g ?", LineReading, 123.45, Unstable},
		{"question mark on unit", "123.45 g?", LineReading, 123.45, Unstable},
		{"question mark on number", "123.45?", LineReading, 123.45, Unstable},
		{"stable word after", "123.45 g stable", LineReading, 123.45, Stable},
		{"decimal comma", "   123,45 g", LineReading, 123.45, StabilityUnknown},
		{"thousands and point", "1,234.56 g", LineReading, 1234.56, StabilityUnknown},
		{"thousands and comma", "1.234,56 g", LineReading, 1234.56, StabilityUnknown},
		{"kilograms", "0.12345 kg", LineReading, 123.45, StabilityUnknown},
		{"milligrams", "12345 mg", LineReading, 12.345, StabilityUnknown},
		{"ounces", "1.000 oz", LineReading, 28.349523125, StabilityUnknown},
		{"pounds", "2 lb", LineReading, 907.18474, StabilityUnknown},
		{"upper case unit", "0.5 KG", LineReading, 500, StabilityUnknown},
		{"label and colon", "Net: 99.99 g", LineReading, 99.99, StabilityUnknown},
		{"counter before mass", "0042   99.99 g", LineReading, 99.99, StabilityUnknown},
		{"date and time before", "2026-12-02 10:15:00  99.99 g", LineReading, 99.99, StabilityUnknown},
		{"tab separated", "S\t99.99\tg", LineReading, 99.99, Stable},
		{"leading point", ".50 g", LineReading, 0.5, StabilityUnknown},
		{"zero", "0.00 g", LineReading, 0, StabilityUnknown},
		{"pounds and ounces", "1 lb 2.5 oz", LineReading, 453.59237 + 2.5*28.349523125, StabilityUnknown},
		{"two masses", "1 g 2 kg", LineUnparseable, 0, StabilityUnknown},
		{"letter stuck to sign", "N+0123.40g", LineReading, 123.4, StabilityUnknown},
		{"stable stuck to number", "ST+0012.34 g", LineReading, 12.34, Stable},
		{"unstable stuck, negative", "US-0001.20g", LineReading, -1.2, Unstable},
		{"counter then mass, commas", "1,12.34,g", LineReading, 12.34, StabilityUnknown},
		{"thousands commas", "1,234,567 mg", LineReading, 1234.567, StabilityUnknown},
		{"control characters", "\x02S S    42.00 g\x03", LineReading, 42, Stable},
		{"blank", "", LineBlank, 0, StabilityUnknown},
		{"only spaces", "     ", LineBlank, 0, StabilityUnknown},
		{"overload word", "  OL", LineOverload, 0, StabilityUnknown},
		{"overload signed", "S +OL", LineOverload, 0, StabilityUnknown},
		{"overload long", "Overload", LineOverload, 0, StabilityUnknown},
		{"underload", "S -OL", LineUnderload, 0, StabilityUnknown},
		{"underload word", "UL", LineUnderload, 0, StabilityUnknown},
		{"error code", "E01", LineError, 0, StabilityUnknown},
		{"error word", "Err 4", LineError, 0, StabilityUnknown},
		{"error with number", "ERROR 12.5", LineError, 0, StabilityUnknown},
		{"text only", "HELLO WORLD", LineUnparseable, 0, StabilityUnknown},
		{"binary", "\x00\xff\xfe\x81\x92", LineUnparseable, 0, StabilityUnknown},
		{"unknown unit", "12.3 zz", LineReading, 12.3, StabilityUnknown}, // an unknown word after a number is not a unit
		{"unknown attached unit", "12.3zz", LineUnparseable, 0, StabilityUnknown},
		{"two decimals", "12.3 45.6", LineUnparseable, 0, StabilityUnknown},
		{"double point", "12.3.4 g", LineUnparseable, 0, StabilityUnknown},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := ParseLine(tc.line, Gram)
			if got.Kind != tc.kind {
				t.Fatalf("ParseLine(%q).Kind = %v (%s), want %v", tc.line, got.Kind, got.Reason, tc.kind)
			}
			if tc.kind != LineReading {
				if got.Kind == LineUnparseable && got.Reason == "" {
					t.Errorf("unparseable line %q has no reason", tc.line)
				}
				return
			}
			if math.Abs(got.MassG-tc.massG) > 1e-9*math.Max(1, math.Abs(tc.massG)) {
				t.Errorf("ParseLine(%q).MassG = %v, want %v", tc.line, got.MassG, tc.massG)
			}
			if got.Stable != tc.stable {
				t.Errorf("ParseLine(%q).Stable = %v, want %v", tc.line, got.Stable, tc.stable)
			}
		})
	}
}

func TestParseLineDefaultUnit(t *testing.T) {
	kg, err := ParseUnit("kg")
	if err != nil {
		t.Fatal(err)
	}
	if got := ParseLine("0.250", kg); got.MassG != 250 {
		t.Errorf("no-unit line with kg default: got %v g, want 250", got.MassG)
	}
	if got := ParseLine("0.250 g", kg); got.MassG != 0.25 {
		t.Errorf("explicit unit must win over the default: got %v g, want 0.25", got.MassG)
	}
	if _, err := ParseUnit("stone"); err == nil {
		t.Error("ParseUnit(stone): want an error")
	}
}

// The same stream delivered in fragments, as a serial line does, must give
// the same lines.
func TestSplitterFragments(t *testing.T) {
	stream := "S S  100.01 g\r\nS S  100.00 g\r\nS D   99.98 g\n\rST,+0099.97g\r\r\n  99.96\npartial"
	want := []string{"S S  100.01 g", "S S  100.00 g", "S D   99.98 g", "", "ST,+0099.97g", "", "  99.96"}
	readers := map[string]func(io.Reader) io.Reader{
		"whole":    func(r io.Reader) io.Reader { return r },
		"one byte": iotest.OneByteReader,
		"half":     iotest.HalfReader,
		"data err": iotest.DataErrReader,
	}
	for name, wrap := range readers {
		t.Run(name, func(t *testing.T) {
			var s Splitter
			var got []string
			r := wrap(strings.NewReader(stream))
			buf := make([]byte, 7)
			for {
				n, err := r.Read(buf)
				s.Feed(buf[:n], func(line []byte, cut bool) { got = append(got, string(line)) })
				if err != nil {
					break
				}
			}
			if strings.Join(got, "|") != strings.Join(want, "|") {
				t.Errorf("lines = %q\nwant %q", got, want)
			}
			if s.Pending() != len("partial") {
				t.Errorf("pending = %d, want %d", s.Pending(), len("partial"))
			}
		})
	}
}

func TestSplitterCutsLongLines(t *testing.T) {
	var s Splitter
	long := bytes.Repeat([]byte("x"), 1<<20)
	var lens []int
	var cuts []bool
	emit := func(line []byte, cut bool) { lens = append(lens, len(line)); cuts = append(cuts, cut) }
	for i := 0; i < len(long); i += 1000 {
		s.Feed(long[i:min(i+1000, len(long))], emit)
		if cap(s.buf) > 2*MaxLineBytes {
			t.Fatalf("buffer grew to %d bytes", cap(s.buf))
		}
	}
	s.Feed([]byte("\n12.5 g\n"), emit)
	if len(lens) != 2 || lens[0] != MaxLineBytes || !cuts[0] || lens[1] != 6 || cuts[1] {
		t.Fatalf("got lens %v cuts %v, want [4096 6] [true false]", lens, cuts)
	}
	if s.Cut != 1 {
		t.Errorf("Cut = %d, want 1", s.Cut)
	}
}

func BenchmarkParseLine(b *testing.B) {
	lines := []string{"S S     123.45 g", "ST,GS,+0012.34g", "   99,98 g ?", "-    0.01 g", "OL"}
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		ParseLine(lines[i%len(lines)], Gram)
	}
}

func BenchmarkSplitAndParse(b *testing.B) {
	var buf bytes.Buffer
	for i := 0; i < 10000; i++ {
		buf.WriteString("S S     123.45 g\r\n")
	}
	data := buf.Bytes()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	var s Splitter
	for b.Loop() {
		s.Feed(data, func(line []byte, cut bool) { ParseLine(string(line), Gram) })
	}
	b.ReportMetric(float64(b.N)*10000/b.Elapsed().Seconds(), "lines/s")
}
