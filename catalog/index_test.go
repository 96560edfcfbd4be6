package catalog

import (
	"math/rand/v2"
	"strconv"
	"testing"
)

func TestIDIndex(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	var x idIndex
	var ids []string
	ref := map[string]int{}
	for range 300000 {
		id := "s" + strconv.Itoa(rng.IntN(200000))
		h := hashID(id)
		got := x.find(id, h, ids)
		want, dup := ref[id]
		if !dup {
			want = -1
		}
		if got != want {
			t.Fatalf("find(%q) = %d, want %d", id, got, want)
		}
		if !dup {
			ids = append(ids, id)
			x.insert(len(ids)-1, h, ids)
			ref[id] = len(ids) - 1
		}
	}
	if x.n != len(ref) || 2*x.n > len(x.slots) {
		t.Errorf("%d entries in %d slots, want %d at most half full", x.n, len(x.slots), len(ref))
	}
	if hashID("abc") != hashID([]byte("abc")) {
		t.Errorf("string and byte hashes differ")
	}
}
