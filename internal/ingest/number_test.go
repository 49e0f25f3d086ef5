package ingest

import (
	"math"
	"strconv"
	"testing"
)

// The fast path gives strconv's value, to the bit, and strconv's error.
func checkParseFloat(t *testing.T, s string) {
	got, gerr := parseFloat(s)
	want, werr := strconv.ParseFloat(s, 64)
	if (gerr == nil) != (werr == nil) || math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
		t.Errorf("parseFloat(%q) = %v, %v; strconv: %v, %v", s, got, gerr, want, werr)
	}
}

func TestParseFloatIsStrconv(t *testing.T) {
	for _, s := range []string{"0", "-0", "+0", "200.02", "199.99", "0.30000000000000004", "-0.5", ".5", "5.", ".",
		"-", "+", "", "1e3", "123456789012345", "1234567890123456", "0.000000000000001", "999999999999999.9",
		"60.1", "1,5", "0x10", "Inf", "nan", "1_000", "00012.5000", "9007199254740993"} {
		checkParseFloat(t, s)
	}
}

func FuzzParseFloat(f *testing.F) {
	for _, s := range []string{"200.02", "-0.5", "1e3", ".5", "123456789012345"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) { checkParseFloat(t, s) })
}
