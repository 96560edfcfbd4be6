package fitscat

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// The FITS Standard 4.0 (Pence et al. 2010, A&A 524, A42, and its 2018
// revision), section 3.1 and 4.1: a header is 2880-byte blocks of 80-byte
// cards, ending with the END card.
const (
	blockBytes = 2880
	cardBytes  = 80
	// maxHeaderBlocks bounds a header so that a file of blanks without END
	// cannot keep the reader busy; the largest headers seen in practice are
	// a few hundred blocks (common practice).
	maxHeaderBlocks = 100_000
)

// errNoEND marks a header that ends before its END card.
var errNoEND = errors.New("header has no END card (file truncated or not FITS)")

// card is one keyword and its value as written.
type card struct {
	key   string
	value string // the value text: a string's content unquoted, else trimmed
	str   bool   // the value was a quoted string
	null  bool   // the keyword has a value indicator but no value
}

// header is one HDU's header: its cards in order, the last value of each
// keyword by name, and the bytes it took.
type header struct {
	cards []card
	byKey map[string]int
	bytes int64
}

// readHeader reads one header, block by block, up to and including the
// block with END. It returns io.EOF when the input ends cleanly before the
// header's first byte.
func readHeader(r *bufio.Reader) (*header, error) {
	h := &header{byKey: make(map[string]int)}
	block := make([]byte, blockBytes)
	for nb := 0; ; nb++ {
		if nb >= maxHeaderBlocks {
			return nil, fmt.Errorf("header longer than %d blocks without END", maxHeaderBlocks)
		}
		_, err := io.ReadFull(r, block)
		if err == io.EOF && nb == 0 {
			return nil, io.EOF
		}
		if err == io.ErrUnexpectedEOF || err == io.EOF {
			return nil, errNoEND
		}
		if err != nil {
			return nil, err
		}
		h.bytes += blockBytes
		for c := 0; c < blockBytes; c += cardBytes {
			end, err := h.addCard(block[c : c+cardBytes])
			if err != nil {
				return nil, fmt.Errorf("card %d: %w", nb*(blockBytes/cardBytes)+c/cardBytes+1, err)
			}
			if end {
				return h, nil
			}
		}
	}
}

// addCard parses one card (FITS Standard 4.0, section 4.1.2 and 4.2) and
// reports whether it is END. A CONTINUE card extends the string before it
// when that string ends in '&' (the long-string convention, section
// 4.2.1.2).
func (h *header) addCard(b []byte) (bool, error) {
	for _, c := range b {
		if c < 0x20 || c > 0x7e {
			return false, fmt.Errorf("byte 0x%02x is not printable ASCII (section 4.1.1)", c)
		}
	}
	key := strings.TrimRight(string(b[:8]), " ")
	switch key {
	case "END":
		return true, nil
	case "", "COMMENT", "HISTORY":
		return false, nil
	case "CONTINUE":
		if len(h.cards) == 0 {
			return false, nil
		}
		last := &h.cards[len(h.cards)-1]
		if !last.str || !strings.HasSuffix(last.value, "&") {
			return false, nil
		}
		v, isStr, _, err := parseValue(string(b[10:]))
		if err != nil {
			return false, fmt.Errorf("CONTINUE after %s: %w", last.key, err)
		}
		if !isStr {
			return false, fmt.Errorf("CONTINUE after %s holds no string", last.key)
		}
		last.value = strings.TrimSuffix(last.value, "&") + v
		return false, nil
	}
	if string(b[8:10]) != "= " {
		return false, nil // commentary keyword without a value (section 4.1.2.2)
	}
	v, isStr, null, err := parseValue(string(b[10:]))
	if err != nil {
		return false, fmt.Errorf("keyword %s: %w", key, err)
	}
	h.byKey[key] = len(h.cards)
	h.cards = append(h.cards, card{key: key, value: v, str: isStr, null: null})
	return false, nil
}

// parseValue reads the value field of a card (section 4.2): a quoted
// string (a doubled quote standing for one) with trailing blanks dropped, or the text
// before the comment's '/'.
func parseValue(s string) (v string, isStr, null bool, err error) {
	t := strings.TrimLeft(s, " ")
	if strings.HasPrefix(t, "'") {
		var sb strings.Builder
		for i := 1; i < len(t); i++ {
			if t[i] != '\'' {
				sb.WriteByte(t[i])
				continue
			}
			if i+1 < len(t) && t[i+1] == '\'' {
				sb.WriteByte('\'')
				i++
				continue
			}
			return strings.TrimRight(sb.String(), " "), true, false, nil
		}
		return "", false, false, errors.New("string value has no closing quote")
	}
	if i := strings.IndexByte(t, '/'); i >= 0 {
		t = t[:i]
	}
	t = strings.TrimSpace(t)
	return t, false, t == "", nil
}

func (h *header) card(key string) (card, bool) {
	i, ok := h.byKey[key]
	if !ok {
		return card{}, false
	}
	return h.cards[i], true
}

// str is the value of a string keyword, "" when absent.
func (h *header) str(key string) string {
	c, ok := h.card(key)
	if !ok || !c.str {
		return ""
	}
	return c.value
}

// integer is the value of an integer keyword.
func (h *header) integer(key string) (int64, bool, error) {
	c, ok := h.card(key)
	if !ok {
		return 0, false, nil
	}
	if c.str || c.null {
		return 0, true, fmt.Errorf("keyword %s = %q is not an integer", key, c.value)
	}
	v, err := strconv.ParseInt(strings.TrimPrefix(c.value, "+"), 10, 64)
	if err != nil {
		return 0, true, fmt.Errorf("keyword %s = %s is not an integer", key, c.value)
	}
	return v, true, nil
}

// float is the value of a real or integer keyword; FITS writes exponents
// with E or D (section 4.2.4).
func (h *header) float(key string) (float64, bool, error) {
	c, ok := h.card(key)
	if !ok {
		return 0, false, nil
	}
	v, err := parseReal(c.value)
	if c.str || c.null || err != nil {
		return 0, true, fmt.Errorf("keyword %s = %s is not a number", key, c.value)
	}
	return v, true, nil
}

func parseReal(s string) (float64, error) {
	s = strings.Map(func(r rune) rune {
		if r == 'D' || r == 'd' {
			return 'E'
		}
		return r
	}, s)
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, fmt.Errorf("%q is not a finite number", s)
	}
	return v, nil
}

// logical is the value of a logical keyword (T or F).
func (h *header) logical(key string) (bool, bool) {
	c, ok := h.card(key)
	return ok && !c.str && c.value == "T", ok
}

// dataBytes is the size of the HDU's data, before padding to a block
// (section 4.4.1.1 and 7.3.1): |BITPIX|/8 x GCOUNT x (PCOUNT + NAXIS1 x
// ... x NAXISn), with NAXIS1 = 0 in random groups not counted.
func (h *header) dataBytes(primary bool) (int64, error) {
	bitpix, ok, err := h.integer("BITPIX")
	if err != nil {
		return 0, err
	}
	if !ok || (bitpix != 8 && bitpix != 16 && bitpix != 32 && bitpix != 64 && bitpix != -32 && bitpix != -64) {
		return 0, fmt.Errorf("BITPIX missing or not one of 8, 16, 32, 64, -32, -64")
	}
	naxis, ok, err := h.integer("NAXIS")
	if err != nil {
		return 0, err
	}
	if !ok || naxis < 0 || naxis > 999 {
		return 0, fmt.Errorf("NAXIS missing or outside 0..999")
	}
	if naxis == 0 {
		return 0, nil
	}
	n := int64(1)
	for i := int64(1); i <= naxis; i++ {
		v, ok, err := h.integer("NAXIS" + strconv.FormatInt(i, 10))
		if err != nil {
			return 0, err
		}
		if !ok || v < 0 {
			return 0, fmt.Errorf("NAXIS%d missing or negative", i)
		}
		if i == 1 && v == 0 && primary {
			continue // random groups (section 6)
		}
		if n, err = mulBytes(n, v); err != nil {
			return 0, err
		}
	}
	pcount, _, err := h.integer("PCOUNT")
	if err != nil {
		return 0, err
	}
	gcount, ok, err := h.integer("GCOUNT")
	if err != nil {
		return 0, err
	}
	if !ok {
		gcount = 1
	}
	if pcount < 0 || gcount < 0 {
		return 0, fmt.Errorf("PCOUNT or GCOUNT negative")
	}
	if n > math.MaxInt64-pcount {
		return 0, errHuge
	}
	if n, err = mulBytes(n+pcount, gcount); err != nil {
		return 0, err
	}
	a := bitpix
	if a < 0 {
		a = -a
	}
	return mulBytes(n, a/8)
}

var errHuge = errors.New("data size overflows 63 bits")

func mulBytes(a, b int64) (int64, error) {
	if a != 0 && b > math.MaxInt64/a {
		return 0, errHuge
	}
	return a * b, nil
}

// padded rounds n up to whole blocks.
func padded(n int64) int64 {
	return (n + blockBytes - 1) / blockBytes * blockBytes
}
