package ingest

import "strconv"

// parseFloat is strconv.ParseFloat(s, 64) with a fast path for the plain
// decimals a logger writes ("200.02", "-0.5", "60"): at most 15 digits and
// no exponent. Their digits make an integer m below 2^53 and the decimal
// point a power of ten up to 10^15, both exact in a float64, so m/10^k is
// the correctly rounded value, as strconv gives it (Clinger 1990, the
// "fast path"; strconv uses it too). Anything else goes to strconv.
func parseFloat(s string) (float64, error) {
	i, neg := 0, false
	if len(s) > 0 && (s[0] == '-' || s[0] == '+') {
		neg, i = s[0] == '-', 1
	}
	var m uint64
	digits, frac, dot := 0, 0, false
	for ; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= '0' && c <= '9':
			m = m*10 + uint64(c-'0')
			digits++
			if dot {
				frac++
			}
		case c == '.' && !dot:
			dot = true
		default:
			return strconv.ParseFloat(s, 64)
		}
	}
	if digits == 0 || digits > 15 {
		return strconv.ParseFloat(s, 64)
	}
	v := float64(m) / exactPow10[frac]
	if neg {
		v = -v
	}
	return v, nil
}

var exactPow10 = [...]float64{1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15}
