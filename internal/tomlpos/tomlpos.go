package tomlpos

import (
	"strconv"
	"strings"
)

// Pos is a 1-based line and column (in bytes from the line's start, which
// is the character count for the indentation before a key or header). The
// zero Pos means unknown.
type Pos struct{ Line, Col int }

// Map holds the positions of one text.
type Map struct {
	at map[string]Pos // joined path -> first position
}

// Elem is the path segment of the n-th (0-based) element of the array of
// tables name.
func Elem(name string, n int) string { return name + "#" + strconv.Itoa(n) }

// sep joins path segments inside the map; it cannot occur in a TOML key
// (control characters must be escaped), so a quoted key holding "." stays
// one segment.
const sep = "\x00"

// Find returns the position recorded for path.
func (m *Map) Find(path ...string) (Pos, bool) {
	p, ok := m.at[strings.Join(path, sep)]
	return p, ok
}

// Near returns the position of path, else of its nearest recorded parent,
// else the zero Pos.
func (m *Map) Near(path ...string) Pos {
	for n := len(path); n > 0; n-- {
		if p, ok := m.Find(path[:n]...); ok {
			return p
		}
	}
	return Pos{}
}

func (m *Map) add(path []string, p Pos) {
	k := strings.Join(path, sep)
	if _, seen := m.at[k]; !seen {
		m.at[k] = p
	}
}

// Scan records the positions of every header and key of text.
func Scan(text string) *Map {
	s := scanner{m: &Map{at: map[string]Pos{}}, arrays: map[string]bool{}, counts: map[string]int{}}
	for i, line := range strings.Split(text, "\n") {
		s.line(i+1, strings.TrimRight(line, "\r"))
	}
	return s.m
}

type scanner struct {
	m       *Map
	arrays  map[string]bool // index-less paths of arrays of tables
	counts  map[string]int  // indexed path of an array of tables -> elements so far
	table   []string        // the current table, indexed
	plain   []string        // the current table, index-less
	depth   int             // open brackets and braces of a value spanning lines
	mstring string          // `"""` or `'''` while inside a multi-line string
}

func (s *scanner) line(n int, line string) {
	if s.depth > 0 || s.mstring != "" {
		s.value(line)
		return
	}
	trimmed := strings.TrimLeft(line, " \t")
	here := Pos{n, len(line) - len(trimmed) + 1}
	switch {
	case trimmed == "" || trimmed[0] == '#':
	case strings.HasPrefix(trimmed, "[["):
		if segs, _, ok := readKey(trimmed, 2); ok {
			s.arrayHeader(segs, here)
		}
	case trimmed[0] == '[':
		if segs, _, ok := readKey(trimmed, 1); ok {
			s.table, s.plain = s.indexed(segs), segs
			s.record(s.table, s.plain, here)
		}
	default:
		segs, end, ok := readKey(trimmed, 0)
		if !ok || end >= len(trimmed) || trimmed[end] != '=' {
			return
		}
		// A dotted key also places the tables it defines: a.b = 1 places a.
		for k := 1; k <= len(segs); k++ {
			s.record(join(s.table, segs[:k]), join(s.plain, segs[:k]), here)
		}
		s.value(trimmed[end+1:])
	}
}

// arrayHeader starts a new element of the array of tables segs.
func (s *scanner) arrayHeader(segs []string, here Pos) {
	p := s.indexed(segs)
	arr := strings.Join(p, sep)
	s.counts[arr]++
	s.arrays[strings.Join(segs, sep)] = true
	p[len(p)-1] = Elem(p[len(p)-1], s.counts[arr]-1)
	s.table, s.plain = p, segs
	s.record(s.table, s.plain, here)
}

func (s *scanner) record(indexed, plain []string, p Pos) {
	s.m.add(indexed, p)
	s.m.add(plain, p)
}

func join(a, b []string) []string {
	return append(append(make([]string, 0, len(a)+len(b)), a...), b...)
}

// indexed adds the current element index to every proper prefix of segs
// that is an array of tables: [catalog columns] -> [catalog#2 columns].
func (s *scanner) indexed(segs []string) []string {
	out := append([]string(nil), segs...)
	for i := 0; i < len(segs)-1; i++ {
		if s.arrays[strings.Join(segs[:i+1], sep)] {
			parent := strings.Join(out[:i+1], sep)
			out[i] = Elem(out[i], s.counts[parent]-1)
		}
	}
	return out
}

// readKey reads the dotted key that starts at t[i] (after "[" or "[[" for
// a header) and returns its unquoted segments and the index of the first
// byte after it and the spaces that follow. ok is false when there is no
// key there.
func readKey(t string, i int) (segs []string, end int, ok bool) {
	for {
		i = skipSpace(t, i)
		if i >= len(t) {
			return nil, i, false
		}
		var seg string
		switch t[i] {
		case '"', '\'':
			j := closeQuote(t, i)
			if j < 0 {
				return nil, i, false
			}
			seg = unquote(t[i : j+1])
			i = j + 1
		default:
			j := i
			for j < len(t) && !strings.ContainsRune(" \t.=[]\"'#", rune(t[j])) {
				j++
			}
			if j == i {
				return nil, i, false
			}
			seg, i = t[i:j], j
		}
		segs = append(segs, seg)
		i = skipSpace(t, i)
		if i >= len(t) || t[i] != '.' {
			return segs, i, true
		}
		i++
	}
}

func skipSpace(t string, i int) int {
	for i < len(t) && (t[i] == ' ' || t[i] == '\t') {
		i++
	}
	return i
}

// closeQuote returns the index of the quote closing the one-line string
// that opens at t[i], or -1.
func closeQuote(t string, i int) int {
	q := t[i]
	for j := i + 1; j < len(t); j++ {
		switch {
		case q == '"' && t[j] == '\\':
			j++
		case t[j] == q:
			return j
		}
	}
	return -1
}

func unquote(q string) string {
	if q[0] == '\'' {
		return q[1 : len(q)-1]
	}
	if u, err := strconv.Unquote(q); err == nil {
		return u
	}
	return q[1 : len(q)-1]
}

// value follows the text of a value (or the rest of one spanning lines):
// it counts brackets and braces outside strings and comments and notes a
// multi-line string left open at the end of the line.
func (s *scanner) value(t string) {
	for i := 0; i < len(t); i++ {
		if s.mstring != "" {
			i = s.inMultiline(t, i)
			continue
		}
		switch c := t[i]; c {
		case '#':
			return
		case '[', '{':
			s.depth++
		case ']', '}':
			if s.depth > 0 {
				s.depth--
			}
		case '"', '\'':
			if strings.HasPrefix(t[i:], strings.Repeat(string(c), 3)) {
				s.mstring = strings.Repeat(string(c), 3)
				i += 2
				continue
			}
			j := closeQuote(t, i)
			if j < 0 {
				return
			}
			i = j
		}
	}
}

// inMultiline handles t[i] inside a multi-line string and returns the index
// of the last byte it consumed. The closing delimiter may follow up to two
// quotes that belong to the string (`"""a""""`).
func (s *scanner) inMultiline(t string, i int) int {
	q := s.mstring[0]
	if q == '"' && t[i] == '\\' {
		return i + 1
	}
	if !strings.HasPrefix(t[i:], s.mstring) {
		return i
	}
	j := i + 3
	for k := 0; k < 2 && j < len(t) && t[j] == q; k++ {
		j++
	}
	s.mstring = ""
	return j - 1
}
