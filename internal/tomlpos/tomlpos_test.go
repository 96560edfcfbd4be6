package tomlpos

import (
	"strings"
	"testing"
)

// Every expected position below was counted by hand in the text it uses.

func TestPositions(t *testing.T) {
	text := `a = 1 # comment [x]
"quoted.key" = 2
arr = [
  1, # y = 3
  2,
]
s = """
z = 4
"""
[t]
  b.c = 5
inline = { d = 6 }
[[list]]
e = 7
[[list]]
e = 8
[list.sub]
f = 9
[[list.items]]
g = 10
`
	m := Scan(text)
	cases := []struct {
		path []string
		want Pos
	}{
		{[]string{"a"}, Pos{1, 1}},
		{[]string{"quoted.key"}, Pos{2, 1}},
		{[]string{"arr"}, Pos{3, 1}},
		{[]string{"y"}, Pos{}},
		{[]string{"s"}, Pos{7, 1}},
		{[]string{"z"}, Pos{}},
		{[]string{"t"}, Pos{10, 1}},
		{[]string{"t", "b"}, Pos{11, 3}},
		{[]string{"t", "b", "c"}, Pos{11, 3}},
		{[]string{"t", "inline", "d"}, Pos{12, 1}},
		{[]string{"list#0", "e"}, Pos{14, 1}},
		{[]string{"list#1", "e"}, Pos{16, 1}},
		{[]string{"list", "e"}, Pos{14, 1}},
		{[]string{"list#1", "sub", "f"}, Pos{18, 1}},
		{[]string{"list#1", "items#0", "g"}, Pos{20, 1}},
		{[]string{"list#1", "nothing"}, Pos{15, 1}},
	}
	for _, c := range cases {
		t.Run(strings.Join(c.path, "."), func(t *testing.T) {
			if got := m.Near(c.path...); got != c.want {
				t.Errorf("got %v, want %v", got, c.want)
			}
		})
	}
}

// The array-of-tables headers of a rule file, with comments, multi-line
// strings that hold header-like lines, multi-line arrays with "=" in
// comments, literal and escaped quotes.
func TestArraysOfTables(t *testing.T) {
	text := `name = "p"

[[rule]]   # a comment with [[rule]] in it
id = "multi"
expr = """
pm_total > 1 && \"""
[[rule]]
"""""
when = 'mag'

	[[rule]]
id = "arr"
fields = [
  "ra",  # id = "not a key"
  "de]c",
]
"limit" = 3
'lit' = '''
[[rule]]'''
after = 1
`
	m := Scan(text)
	cases := []struct {
		path []string
		want Pos
	}{
		{[]string{"rule#0"}, Pos{3, 1}},
		{[]string{"rule#0", "expr"}, Pos{5, 1}},
		{[]string{"rule#0", "when"}, Pos{9, 1}},
		{[]string{"rule#1"}, Pos{11, 2}},
		{[]string{"rule#1", "fields"}, Pos{13, 1}},
		{[]string{"rule#1", "limit"}, Pos{17, 1}},
		{[]string{"rule#1", "lit"}, Pos{18, 1}},
		{[]string{"rule#1", "after"}, Pos{20, 1}},
		{[]string{"rule"}, Pos{3, 1}},
		{[]string{"rule", "id"}, Pos{4, 1}},
	}
	for _, c := range cases {
		if got, ok := m.Find(c.path...); !ok || got != c.want {
			t.Errorf("%v: got %v (%v), want %v", c.path, got, ok, c.want)
		}
	}
	if _, ok := m.Find("rule#2"); ok {
		t.Error("a [[rule]] inside a multi-line string was counted as a header")
	}
	if _, ok := m.Find("rule#1", "id"); !ok {
		t.Error("rule#1.id missing")
	}
}

// Header names may be quoted and spaced; a dotted key in an array element
// is indexed like the element's own keys.
func TestQuotedHeadersAndInlineArrays(t *testing.T) {
	text := "[ \"a.b\" . 'c' ]\nx = 1\nrule = [\n  {id = \"a\"},\n  {id = \"b\"},\n]\n[[p.q]]\nr.s = 2\n"
	m := Scan(text)
	for _, c := range []struct {
		path []string
		want Pos
	}{
		{[]string{"a.b", "c"}, Pos{1, 1}},
		{[]string{"a.b", "c", "x"}, Pos{2, 1}},
		{[]string{"a.b", "c", "rule"}, Pos{3, 1}},
		{[]string{"p", "q#0", "r", "s"}, Pos{8, 1}},
		{[]string{"p", "q", "r"}, Pos{8, 1}},
	} {
		if got, ok := m.Find(c.path...); !ok || got != c.want {
			t.Errorf("%v: got %v (%v), want %v", c.path, got, ok, c.want)
		}
	}
	if _, ok := m.Find("a.b", "c", "rule", "id"); ok {
		t.Error("a key inside an inline table was recorded")
	}
}

// Text the decoder would reject must not stop the scanner.
func TestMalformed(t *testing.T) {
	for _, text := range []string{"[", "[[", "\"", "a = \"\"\"", "= 1", "a = [[[", "'''\n", "[\"x]\n", "a.=1", "\r\n\r\n"} {
		Scan(text)
	}
	if p := Scan("[").Near("x"); p != (Pos{}) {
		t.Errorf("got %v from nothing", p)
	}
}

// FuzzScan: the scanner never panics, and every position it records lies
// inside the text: a line that exists, a column on that line.
func FuzzScan(f *testing.F) {
	f.Add("a = 1\n[t]\nb.c = '''x\n[[y]]'''\n[[list]]\ne = [1,\n 2]\n")
	f.Add("[ \"a.b\" . 'c' ]\ns = \"\"\"\\\"\"\"\"\"\n")
	f.Fuzz(func(t *testing.T, text string) {
		lines := strings.Split(text, "\n")
		for path, p := range Scan(text).at {
			if p.Line < 1 || p.Line > len(lines) || p.Col < 1 || p.Col > len(lines[p.Line-1]) {
				t.Fatalf("%q at %v outside the text (%d lines)", path, p, len(lines))
			}
		}
	})
}
