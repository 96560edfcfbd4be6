package catalog

import "starvet/internal/fingerprint"

// idIndex finds the first kept row of an id: open addressing with linear
// probing over hashes of the ids, rows compared by their text on a tag
// match.
type idIndex struct {
	slots []idSlot
	n     int
	sink  uint32 // keeps prefetch's loads
}

type idSlot struct {
	tag uint32 // high half of the hash
	row uint32 // table row + 1; 0 marks an empty slot
}

// hashID is 64-bit FNV-1a (Fowler, Noll and Vo; common practice) followed
// by the MurmurHash3 finaliser (fmix64, Appleby; common practice) so that
// the low bits used for the slot depend on every byte.
func hashID[T string | []byte](id T) uint64 {
	h := fingerprint.FNV1a64(id)
	h ^= h >> 33
	h *= 0xff51afd7ed558ccd
	h ^= h >> 33
	h *= 0xc4ceb9fe1a85ec53
	h ^= h >> 33
	return h
}

// reserve makes room for rows ids at a load of at most one half.
func (x *idIndex) reserve(rows int, ids []string) {
	size := 1 << 10
	for size < 2*rows {
		size <<= 1
	}
	if size <= len(x.slots) {
		return
	}
	old := x.slots
	x.slots = make([]idSlot, size)
	mask := uint64(size - 1)
	for _, sl := range old {
		if sl.row == 0 {
			continue
		}
		for i := hashID(ids[sl.row-1]) & mask; ; i = (i + 1) & mask {
			if x.slots[i].row == 0 {
				x.slots[i] = sl
				break
			}
		}
	}
}

// prefetch loads the first slot of every hash: a tight loop overlaps the
// cache misses that find and insert would otherwise take one by one.
func (x *idIndex) prefetch(hashes []uint64) {
	if len(x.slots) == 0 {
		return
	}
	mask := uint64(len(x.slots) - 1)
	var sum uint32
	for _, h := range hashes {
		sum += x.slots[h&mask].row
	}
	x.sink += sum
}

// find returns the table row holding id, or -1.
func (x *idIndex) find(id string, h uint64, ids []string) int {
	if len(x.slots) == 0 {
		return -1
	}
	mask := uint64(len(x.slots) - 1)
	tag := uint32(h >> 32)
	for i := h & mask; ; i = (i + 1) & mask {
		sl := x.slots[i]
		if sl.row == 0 {
			return -1
		}
		if sl.tag == tag && ids[sl.row-1] == id {
			return int(sl.row - 1)
		}
	}
}

// insert adds row, whose id hashes to h and is not in the index yet.
// ids[row] must be set.
func (x *idIndex) insert(row int, h uint64, ids []string) {
	if 2*(x.n+1) > len(x.slots) {
		x.reserve(max(x.n+1, 2*x.n), ids)
	}
	mask := uint64(len(x.slots) - 1)
	for i := h & mask; ; i = (i + 1) & mask {
		if x.slots[i].row == 0 {
			x.slots[i] = idSlot{tag: uint32(h >> 32), row: uint32(row + 1)}
			x.n++
			return
		}
	}
}
