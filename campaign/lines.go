package campaign

import (
	"strconv"
	"strings"
)

// keyLines maps TOML key paths to the line that defines them. The TOML
// library keeps key positions private, so we scan the text ourselves. Paths
// are key segments joined by '.', with "#n" appended to a segment that is
// the n-th (0-based) element of an array of tables: "catalog#1.columns.ra".
// Each path is also recorded without indices ("catalog.columns.ra"), first
// occurrence winning, for keys reported by MetaData.Undecoded.
type keyLines struct {
	m map[string]int
}

func scanKeyLines(text string) keyLines {
	kl := keyLines{m: make(map[string]int)}
	arrays := make(map[string]bool) // indexless paths of arrays of tables
	counts := make(map[string]int)  // indexed path of an array -> elements so far
	var prefix []string             // current table, indexed
	var plain []string              // current table, indexless
	var cont scanState
	for i, line := range strings.Split(text, "\n") {
		n := i + 1
		if cont.open() {
			cont.feed(line)
			continue
		}
		s := strings.TrimSpace(line)
		switch {
		case s == "" || s[0] == '#':
		case strings.HasPrefix(s, "[["):
			segs := splitKey(strings.TrimSuffix(strings.TrimSpace(cutComment(s[2:])), "]]"))
			p, _ := indexed(segs, arrays, counts)
			arr := strings.Join(p, ".")
			counts[arr]++
			arrays[strings.Join(segs, ".")] = true
			p[len(p)-1] += "#" + strconv.Itoa(counts[arr]-1)
			prefix, plain = p, segs
			kl.add(prefix, plain, n)
		case s[0] == '[':
			segs := splitKey(strings.TrimSuffix(strings.TrimSpace(cutComment(s[1:])), "]"))
			prefix, _ = indexed(segs, arrays, counts)
			plain = segs
			kl.add(prefix, plain, n)
		default:
			eq := keyEnd(s)
			if eq < 0 {
				continue
			}
			segs := splitKey(s[:eq])
			kl.add(append(append([]string(nil), prefix...), segs...), append(append([]string(nil), plain...), segs...), n)
			cont.feed(s[eq+1:])
		}
	}
	return kl
}

func (kl keyLines) add(indexedPath, plainPath []string, line int) {
	if k := strings.Join(indexedPath, "."); kl.m[k] == 0 {
		kl.m[k] = line
	}
	if k := strings.Join(plainPath, "."); kl.m[k] == 0 {
		kl.m[k] = line
	}
}

// line returns the line of path, or of its nearest recorded parent, or 0.
func (kl keyLines) line(path ...string) int {
	for n := len(path); n > 0; n-- {
		if l := kl.m[strings.Join(path[:n], ".")]; l > 0 {
			return l
		}
	}
	return 0
}

// indexed adds the current element index to every prefix of segs that is
// an array of tables, e.g. [catalog columns] -> [catalog#2 columns].
func indexed(segs []string, arrays map[string]bool, counts map[string]int) ([]string, []string) {
	out := make([]string, len(segs))
	for i := range segs {
		out[i] = segs[i]
		if i < len(segs)-1 && arrays[strings.Join(segs[:i+1], ".")] {
			parent := strings.Join(out[:i+1], ".")
			out[i] += "#" + strconv.Itoa(counts[parent]-1)
		}
	}
	return out, segs
}

// splitKey splits a dotted TOML key into unquoted segments.
func splitKey(s string) []string {
	var segs []string
	var b strings.Builder
	quote := byte(0)
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case quote != 0 && c == quote:
			quote = 0
		case quote == '"' && c == '\\' && i+1 < len(s):
			i++
			b.WriteByte(s[i])
		case quote != 0:
			b.WriteByte(c)
		case c == '"' || c == '\'':
			quote = c
		case c == '.':
			segs = append(segs, strings.TrimSpace(b.String()))
			b.Reset()
		case c == ' ' || c == '\t':
		default:
			b.WriteByte(c)
		}
	}
	return append(segs, strings.TrimSpace(b.String()))
}

// keyEnd returns the index of the '=' ending the key of a key/value line.
func keyEnd(s string) int {
	quote := byte(0)
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case quote != 0 && c == quote:
			quote = 0
		case quote != 0:
		case c == '"' || c == '\'':
			quote = c
		case c == '=':
			return i
		}
	}
	return -1
}

func cutComment(s string) string {
	if i := strings.IndexByte(s, '#'); i >= 0 && !strings.ContainsAny(s[:i], `"'`) {
		return s[:i]
	}
	return s
}

// scanState follows values that continue over several lines: multi-line
// strings and arrays or inline tables whose brackets are not yet closed.
type scanState struct {
	depth   int
	mstring string // `"""` or `'''` while inside one
}

func (st *scanState) open() bool { return st.depth > 0 || st.mstring != "" }

func (st *scanState) feed(s string) {
	for i := 0; i < len(s); i++ {
		if st.mstring != "" {
			if strings.HasPrefix(s[i:], st.mstring) {
				i += 2
				st.mstring = ""
			}
			continue
		}
		switch c := s[i]; c {
		case '#':
			return
		case '[', '{':
			st.depth++
		case ']', '}':
			st.depth--
		case '"', '\'':
			if strings.HasPrefix(s[i:], string([]byte{c, c, c})) {
				st.mstring = string([]byte{c, c, c})
				i += 2
				continue
			}
			for i++; i < len(s) && s[i] != c; i++ {
				if c == '"' && s[i] == '\\' {
					i++
				}
			}
		}
	}
}
