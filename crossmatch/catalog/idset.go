package catalog

// idSet finds repeated ids among the kept rows of a Table: an open-addressing
// hash table (linear probing) of (64-bit hash, row index) pairs. Equal
// hashes are confirmed by comparing the ids themselves, so the answer is
// exact whatever the hash. One probe sequence both looks up and inserts,
// and each slot is 16 bytes, which keeps a million ids to one cache miss
// per row in the common case.
type idSet struct {
	hash  func(string) uint64
	slots []idSlot // len is a power of two; hash 0 marks an empty slot
	n     int
}

type idSlot struct {
	h   uint64
	row int
}

func newIDSet(hash func(string) uint64) *idSet {
	s := &idSet{hash: hash}
	s.grow(1024)
	return s
}

func (s *idSet) hashOf(id string) uint64 {
	if h := s.hash(id); h != 0 {
		return h
	}
	return 1
}

// addOrFind adds id as row row of t unless t already keeps it; then it
// returns that row's line and true. The caller must append the row to t
// when it gets false.
func (s *idSet) addOrFind(id string, row int, t *Table) (firstLine int, found bool) {
	if 2*(s.n+1) > len(s.slots) {
		s.grow(2 * len(s.slots))
	}
	h := s.hashOf(id)
	mask := len(s.slots) - 1
	for i := int(h) & mask; ; i = (i + 1) & mask {
		sl := &s.slots[i]
		if sl.h == 0 {
			*sl = idSlot{h: h, row: row}
			s.n++
			return 0, false
		}
		if sl.h == h && t.IDs[sl.row] == id {
			return t.Lines[sl.row], true
		}
	}
}

// grow makes room for at least n/2 ids.
func (s *idSet) grow(n int) {
	size := 1024
	for size < n {
		size *= 2
	}
	if size <= len(s.slots) {
		return
	}
	old := s.slots
	s.slots = make([]idSlot, size)
	mask := size - 1
	for _, sl := range old {
		if sl.h == 0 {
			continue
		}
		i := int(sl.h) & mask
		for s.slots[i].h != 0 {
			i = (i + 1) & mask
		}
		s.slots[i] = sl
	}
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
