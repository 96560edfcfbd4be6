package rules

import (
	"strconv"
	"strings"
)

// pos is a 1-based line and column in the rule file.
type pos struct{ Line, Col int }

// layout records where things are in the TOML text, because the TOML
// decoder does not report positions of decoded keys.
type layout struct {
	top   map[string]pos // top-level keys
	rules []rulePos      // one per [[rule]] header, in file order
	other map[string]pos // other table headers ([x], [[y]])
	lines int            // number of lines in the file
}

type rulePos struct {
	header pos
	keys   map[string]pos
}

// scanLayout finds [[rule]] headers and "key =" lines. It follows TOML far
// enough to skip multi-line strings and comments; anything it cannot place
// falls back to the enclosing header, so an error never lacks a line.
func scanLayout(text string) layout {
	l := layout{top: map[string]pos{}, other: map[string]pos{}}
	lines := strings.Split(text, "\n")
	l.lines = len(lines)
	section := -1 // -1: top level; >= 0: rule index; -2: some other table
	inMulti := "" // closing delimiter of an open multi-line string
	depth := 0    // open brackets of a multi-line array or inline table
	for i, raw := range lines {
		line := strings.TrimRight(raw, "\r")
		if inMulti != "" {
			if idx := strings.Index(line, inMulti); idx >= 0 {
				line = line[idx+len(inMulti):]
				inMulti = ""
			} else {
				continue
			}
			depth += bracketDelta(line, &inMulti)
			continue
		}
		trimmed := strings.TrimLeft(line, " \t")
		col := len(line) - len(trimmed) + 1
		here := pos{i + 1, col}
		if depth > 0 {
			depth += bracketDelta(line, &inMulti)
			if depth < 0 {
				depth = 0
			}
			continue
		}
		if trimmed == "" || trimmed[0] == '#' {
			continue
		}
		if strings.HasPrefix(trimmed, "[") {
			name, array := headerName(trimmed)
			if array && name == "rule" {
				l.rules = append(l.rules, rulePos{header: here, keys: map[string]pos{}})
				section = len(l.rules) - 1
			} else {
				if _, seen := l.other[name]; !seen {
					l.other[name] = here
				}
				section = -2
			}
			continue
		}
		eq := strings.IndexByte(trimmed, '=')
		if eq <= 0 {
			continue
		}
		key := unquoteKey(strings.TrimSpace(trimmed[:eq]))
		switch {
		case section == -1:
			if _, seen := l.top[key]; !seen {
				l.top[key] = here
			}
		case section >= 0:
			if _, seen := l.rules[section].keys[key]; !seen {
				l.rules[section].keys[key] = here
			}
		}
		depth += bracketDelta(trimmed[eq+1:], &inMulti)
		if depth < 0 {
			depth = 0
		}
	}
	return l
}

// headerName returns the table name of a "[name]" or "[[name]]" line.
func headerName(s string) (name string, array bool) {
	array = strings.HasPrefix(s, "[[")
	s = strings.TrimLeft(s, "[")
	if end := strings.IndexByte(s, ']'); end >= 0 {
		s = s[:end]
	}
	return unquoteKey(strings.TrimSpace(s)), array
}

func unquoteKey(k string) string {
	if len(k) >= 2 && (k[0] == '"' || k[0] == '\'') && k[len(k)-1] == k[0] {
		if k[0] == '\'' {
			return k[1 : len(k)-1]
		}
		if u, err := strconv.Unquote(k); err == nil {
			return u
		}
	}
	return k
}

// bracketDelta counts opening minus closing brackets and braces outside
// strings and comments; it sets *openMulti when a multi-line string starts
// and does not end on this line.
func bracketDelta(s string, openMulti *string) int {
	d := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch c {
		case '#':
			return d
		case '[', '{':
			d++
		case ']', '}':
			d--
		case '"', '\'':
			delim := string(c)
			if strings.HasPrefix(s[i:], strings.Repeat(delim, 3)) {
				delim = strings.Repeat(delim, 3)
			}
			j := i + len(delim)
			for j < len(s) {
				if c == '"' && s[j] == '\\' && len(delim) == 1 {
					j += 2
					continue
				}
				if strings.HasPrefix(s[j:], delim) {
					break
				}
				j++
			}
			if j >= len(s) {
				if len(delim) == 3 {
					*openMulti = delim
				}
				return d
			}
			i = j + len(delim) - 1
		}
	}
	return d
}
