package catalog

// idSet finds repeated ids among the kept rows of a Table. It keys a map by
// a 64-bit hash of the id and keeps the row index, which is smaller and
// faster than keying by string; ids whose hash collides with a different
// id go to a string-keyed overflow map, so the answer is always exact.
type idSet struct {
	hash     func(string) uint64
	byHash   map[uint64]int // hash -> row index of the first id with it
	overflow map[string]int // colliding ids -> line
}

func newIDSet(hash func(string) uint64) *idSet {
	return &idSet{hash: hash, byHash: make(map[uint64]int, 1024), overflow: map[string]int{}}
}

// lookup reports whether id is already kept in t and, if so, its line.
func (s *idSet) lookup(id string, t *Table) (line int, found bool) {
	i, ok := s.byHash[s.hash(id)]
	if !ok {
		return 0, false
	}
	if t.IDs[i] == id {
		return t.Lines[i], true
	}
	line, found = s.overflow[id]
	return line, found
}

// add records that id is kept as row index row, found on line; call it
// only after lookup found nothing.
func (s *idSet) add(id string, row, line int) {
	h := s.hash(id)
	if _, taken := s.byHash[h]; taken {
		s.overflow[id] = line
		return
	}
	s.byHash[h] = row
}

func (s *idSet) grow(n int) {
	m := make(map[uint64]int, n)
	for k, v := range s.byHash {
		m[k] = v
	}
	s.byHash = m
}

// fnv1a is the 64-bit FNV-1a hash (Fowler, Noll & Vo; offset basis and
// prime from memory, checked in the tests against the standard library's
// hash/fnv). Inlined here because hash/fnv needs an allocation per id.
func fnv1a(s string) uint64 {
	h := uint64(14695981039346656037)
	for i := 0; i < len(s); i++ {
		h ^= uint64(s[i])
		h *= 1099511628211
	}
	return h
}
