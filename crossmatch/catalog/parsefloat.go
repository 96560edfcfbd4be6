package catalog

import "strconv"

// pow10Exact holds the powers of ten that float64 represents exactly.
var pow10Exact = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// parseFloat parses a decimal number. Plain decimals of at most 15
// significant digits without exponent (the usual catalog cell) take a fast
// path: the digits as an integer m < 10^15 < 2^53 and 10^k (k <= 22) are
// both exact in float64, so m / 10^k is the correctly rounded value
// (Clinger 1990, ACM SIGPLAN Notices 25(6), 92, "fast path"). Anything else
// goes to strconv.ParseFloat, which also decides what is malformed.
func parseFloat(s string) (float64, error) {
	i, neg := 0, false
	if len(s) > 0 && (s[0] == '-' || s[0] == '+') {
		neg = s[0] == '-'
		i = 1
	}
	var m uint64
	digits, frac, dot := 0, 0, false
	start := i
	for ; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= '0' && c <= '9':
			if m == 0 && c == '0' {
				if dot {
					frac++
				}
				continue // leading zeros are not significant
			}
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
	if i == start || (dot && i == start+1) || digits > 15 || frac >= len(pow10Exact) {
		return strconv.ParseFloat(s, 64)
	}
	v := float64(m) / pow10Exact[frac]
	if neg {
		v = -v
	}
	return v, nil
}
