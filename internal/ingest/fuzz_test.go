package ingest

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

func FuzzParseLine(f *testing.F) {
	for _, s := range []string{"S S     123.45 g", "ST,GS,+0012.34g", "US,NT,-0.5 kg", "123,45", "OL", "E01", "1,234.56 lb", "\x00\xff", "- 1 g ?", "9999999999999999999"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		l := ParseLine(s, Gram)
		if l.Kind == LineReading && (math.IsNaN(l.MassG) || math.IsInf(l.MassG, 0)) {
			t.Fatalf("ParseLine(%q) gave mass %v", s, l.MassG)
		}
		if l.Kind == LineUnparseable && l.Reason == "" {
			t.Fatalf("ParseLine(%q): unparseable with no reason", s)
		}
		if strings.TrimSpace(s) == "" && l.Kind != LineBlank {
			t.Fatalf("ParseLine(%q): blank line gave %v", s, l.Kind)
		}
	})
}

func FuzzSplitter(f *testing.F) {
	f.Add([]byte("a\r\nb\rc\n\nd"), 3)
	f.Fuzz(func(t *testing.T, data []byte, chunk int) {
		if chunk <= 0 || chunk > 1<<16 {
			chunk = 1
		}
		var whole, parts []string
		var s1, s2 Splitter
		s1.Feed(data, func(l []byte, cut bool) { whole = append(whole, string(l)) })
		for i := 0; i < len(data); i += chunk {
			s2.Feed(data[i:min(i+chunk, len(data))], func(l []byte, cut bool) { parts = append(parts, string(l)) })
		}
		if strings.Join(whole, "\x00") != strings.Join(parts, "\x00") {
			t.Fatalf("fragmenting changed the lines: %q vs %q", whole, parts)
		}
		for _, l := range whole {
			if len(l) > MaxLineBytes || strings.ContainsAny(l, "\r\n") {
				t.Fatalf("bad line %q", l)
			}
		}
	})
}

func FuzzTable(f *testing.F) {
	f.Add("elapsed_s,mass_g,air_temp_c", "10,199.5,60")
	f.Add("time (min);weight (kg)", "1,5;0,2")
	f.Fuzz(func(t *testing.T, header, row string) {
		tb, err := NewTable(header, TableOptions{})
		if err != nil {
			return
		}
		r, err := tb.Decode(row)
		if err == nil && (math.IsNaN(r.MassG) || math.IsInf(r.MassG, 0)) {
			t.Fatalf("row %q under %q gave mass %v", row, header, r.MassG)
		}
	})
}

// A mass written the way balances write it comes back.
func FuzzParseRoundTrip(f *testing.F) {
	f.Add(123.45, uint8(0))
	f.Add(-0.01, uint8(3))
	f.Fuzz(func(t *testing.T, mass float64, shape uint8) {
		if math.IsNaN(mass) || math.IsInf(mass, 0) || math.Abs(mass) > 1e9 {
			return
		}
		formats := []string{"S S %10.2f g", "ST,GS,%+011.2fg", "%.3f", "US %9.2f g ?", "%10.2f g  S"}
		line := fmt.Sprintf(formats[int(shape)%len(formats)], mass)
		l := ParseLine(line, Gram)
		if l.Kind != LineReading || math.Abs(l.MassG-mass) > 0.0051 {
			t.Fatalf("%q: %v %v, want %v", line, l.Kind, l.MassG, mass)
		}
	})
}
