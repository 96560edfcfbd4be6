package vetting

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"syscall"
	"testing"

	"starvet/catalog"
	"starvet/crossmatch"
	"starvet/quality"
)

// mergeInput builds an invented primary of n rows and nSec secondaries of
// n rows each, with their cross-match, from a fixed seed. Some cells are
// missing (NaN, and NaNs with other payloads), some columns absent, some
// rows unmatched, so that every branch of mergeStar is taken.
// With ordered, matched secondary rows follow the primary's order (as in
// the end-to-end benchmark's files); otherwise they are drawn at random.
func mergeInput(n, nSec int, seed uint64, ordered bool) (*Catalogs, *Matched) {
	rng := rand.New(rand.NewPCG(seed, 13))
	odd := math.Float64frombits(0x7ff8000000000123) // a NaN with another payload
	col := func(missing float64) []float64 {
		c := make([]float64, n)
		for i := range c {
			switch u := rng.Float64(); {
			case u < missing/2:
				c[i] = math.NaN()
			case u < missing:
				c[i] = odd
			default:
				c[i] = rng.NormFloat64() * 10
			}
		}
		return c
	}
	ids := func(prefix string) []string {
		s := make([]string, n)
		for i := range s {
			s[i] = prefix + strconv.Itoa(i)
		}
		return s
	}
	p := &catalog.Table{Name: "brindle_astro", IDs: ids("ba")}
	for _, f := range []catalog.Field{catalog.RA, catalog.Dec, catalog.RAErr, catalog.DecErr, catalog.Parallax,
		catalog.ParallaxErr, catalog.PMRA, catalog.PMRAErr, catalog.PMDec, catalog.PMDecErr, catalog.FitResidual,
		catalog.FitVisits, catalog.Mag} {
		p.Cols[f] = col(0.02)
	}
	// Half the primary's magnitudes are missing, so the photometric group
	// comes from a secondary when one has it.
	p.Cols[catalog.Mag] = col(0.5)
	c := &Catalogs{Primary: p}
	m := &Matched{DupCount: make([]int32, n)}
	for i := range m.DupCount {
		if rng.Float64() < 0.01 {
			m.DupCount[i] = int32(1 + rng.IntN(3))
		}
	}
	for k := range nSec {
		s := &catalog.Table{Name: fmt.Sprintf("tansy_spec_%d", k), IDs: ids(fmt.Sprintf("ts%d-", k))}
		s.Cols[catalog.RV], s.Cols[catalog.RVErr], s.Cols[catalog.SNR] = col(0.05), col(0.05), col(0)
		s.Cols[catalog.Distance], s.Cols[catalog.DistanceErr] = col(0.2), col(0.2)
		if k%2 == 1 {
			s.Cols[catalog.Mag], s.Cols[catalog.Color] = col(0.1), col(0.1)
		}
		if k%3 == 2 { // distances given as moduli: the group's other two fields
			s.Cols[catalog.DistMod], s.Cols[catalog.DistModErr] = col(0.2), col(0.2)
		}
		res := &crossmatch.Result{Matches: make([]crossmatch.Counterpart, n)}
		for i := range res.Matches {
			cp := &res.Matches[i]
			cp.Secondary = -1
			if rng.Float64() < 0.9 {
				j := rng.IntN(n)
				if ordered {
					j = i
				}
				*cp = crossmatch.Counterpart{Secondary: int32(j), CounterpartID: s.IDs[j], SepArcsec: rng.Float64(),
					Prob: rng.Float64(), BayesFactor: rng.ExpFloat64(), Candidates: int32(1 + rng.IntN(3)), Ambiguous: rng.Float64() < 0.05}
			}
		}
		c.Secondaries = append(c.Secondaries, s)
		m.Results = append(m.Results, res)
	}
	return c, m
}

// mergeStarRef and inputHashRef are the implementation mergeAll had before
// its allocations were pooled (git history of vetting/merge.go), kept as the
// oracle: ledgers store the hash, so its bytes must never change.
func mergeStarRef(c *Catalogs, m *Matched, i int) quality.Star {
	var s quality.Star
	p := c.Primary
	s.ID = p.IDs[i]
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		s.Values[f] = math.NaN()
		if col := p.Cols[f]; col != nil {
			s.Values[f] = col[i]
		}
	}
	if len(c.Secondaries) > 0 {
		s.Matches = make([]quality.MatchInfo, len(c.Secondaries))
	}
	for k := range c.Secondaries {
		cp := &m.Results[k].Matches[i]
		s.Matches[k] = quality.MatchInfo{Matched: cp.Secondary >= 0, SepArcsec: cp.SepArcsec, Prob: cp.Prob,
			Candidates: int(cp.Candidates), Ambiguous: cp.Ambiguous}
		if cp.Secondary < 0 {
			s.Matches[k].SepArcsec = math.NaN()
			s.Matches[k].Prob = math.NaN()
		}
	}
	if m.DupCount != nil {
		s.DupCount = int(m.DupCount[i])
	}
	for _, g := range fieldGroups {
		if !math.IsNaN(s.Values[g[0]]) {
			continue
		}
		for k, t := range c.Secondaries {
			j := m.Results[k].Matches[i].Secondary
			if j < 0 || t.Cols[g[0]] == nil || math.IsNaN(t.Cols[g[0]][j]) {
				continue
			}
			for _, f := range g {
				s.Values[f] = math.NaN()
				if col := t.Cols[f]; col != nil {
					s.Values[f] = col[j]
				}
			}
			break
		}
	}
	return s
}

func inputHashRef(c *Catalogs, m *Matched, i int, s *quality.Star) string {
	f64 := func(b []byte, x float64) []byte {
		if math.IsNaN(x) {
			x = math.NaN()
		}
		return binary.LittleEndian.AppendUint64(b, math.Float64bits(x))
	}
	var buf []byte
	buf = append(buf, s.ID...)
	buf = append(buf, 0)
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		buf = f64(buf, s.Values[f])
	}
	buf = binary.LittleEndian.AppendUint32(buf, uint32(s.DupCount))
	for k, t := range c.Secondaries {
		cp := &m.Results[k].Matches[i]
		buf = append(buf, t.Name...)
		buf = append(buf, 0)
		buf = append(buf, cp.CounterpartID...)
		buf = append(buf, 0)
		buf = f64(buf, cp.SepArcsec)
		buf = f64(buf, cp.Prob)
		buf = binary.LittleEndian.AppendUint32(buf, uint32(cp.Candidates))
		if cp.Ambiguous {
			buf = append(buf, 1)
		} else {
			buf = append(buf, 0)
		}
	}
	sum := sha256.Sum256(buf)
	return hex.EncodeToString(sum[:16])
}

// sameBits compares float64 values bit for bit, except that every NaN
// equals every NaN (the star keeps the payload it was read with).
func sameBits(a, b float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Float64bits(a) == math.Float64bits(b)
}

func TestMergeAllMatchesReference(t *testing.T) {
	cases := []struct {
		name          string
		n, nSec       int
		workers       int
		noDup, noCols bool
		ordered       bool
	}{
		{"one secondary", 20000, 1, 2, false, false, false},
		{"one secondary in primary order", 20000, 1, 2, false, false, true},
		{"two secondaries, one worker", 9000, 2, 1, false, false, false},
		{"three secondaries, five workers", 17000, 3, 5, false, false, false},
		{"no secondary", 100, 0, 2, false, false, false},
		{"no self-match, absent primary columns", 8193, 2, 3, true, true, false},
		{"empty", 0, 1, 2, false, false, false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			c, m := mergeInput(tc.n, tc.nSec, 99, tc.ordered)
			if tc.noDup {
				m.DupCount = nil
			}
			if tc.noCols {
				c.Primary.Cols[catalog.Mag], c.Primary.Cols[catalog.PMRAErr] = nil, nil
			}
			stars, hashes, err := mergeAll(context.Background(), c, m, tc.workers)
			if err != nil {
				t.Fatal(err)
			}
			if len(stars) != tc.n || len(hashes) != tc.n {
				t.Fatalf("%d stars, %d hashes, want %d", len(stars), len(hashes), tc.n)
			}
			for i := range stars {
				want := mergeStarRef(c, m, i)
				got := &stars[i]
				if (got.Matches == nil) != (want.Matches == nil) {
					t.Fatalf("row %d: matches nil %v, want %v", i, got.Matches == nil, want.Matches == nil)
				}
				if got.ID != want.ID || got.DupCount != want.DupCount || len(got.Matches) != len(want.Matches) || cap(got.Matches) != len(want.Matches) {
					t.Fatalf("row %d: id %q dup %d matches %d (cap %d), want %q %d %d", i, got.ID, got.DupCount,
						len(got.Matches), cap(got.Matches), want.ID, want.DupCount, len(want.Matches))
				}
				for f := range got.Values {
					if !sameBits(got.Values[f], want.Values[f]) {
						t.Fatalf("row %d %s: %v, want %v", i, catalog.Fields[f].Name, got.Values[f], want.Values[f])
					}
				}
				for k := range got.Matches {
					g, w := got.Matches[k], want.Matches[k]
					if g.Matched != w.Matched || !sameBits(g.SepArcsec, w.SepArcsec) || !sameBits(g.Prob, w.Prob) ||
						g.Candidates != w.Candidates || g.Ambiguous != w.Ambiguous {
						t.Fatalf("row %d match %d: %+v, want %+v", i, k, g, w)
					}
				}
				if h := inputHashRef(c, m, i, &want); hashes[i] != h {
					t.Fatalf("row %d: hash %s, want %s", i, hashes[i], h)
				}
			}
		})
	}
}

// TestInputHashKnownValue pins the hash of one hand-built star to the
// SHA-256 of its byte layout written out here (id, NUL, 28 float64 LE,
// uint32 dup count, then per catalog name NUL id NUL sep prob uint32 flag),
// so a change of the layout shows even if the reference moved with it.
func TestInputHashKnownValue(t *testing.T) {
	p := &catalog.Table{Name: "p", IDs: []string{"k1"}}
	p.Cols[catalog.RA], p.Cols[catalog.Dec] = []float64{1.5}, []float64{-2}
	s := &catalog.Table{Name: "s", IDs: []string{"x"}}
	c := &Catalogs{Primary: p, Secondaries: []*catalog.Table{s}}
	m := &Matched{DupCount: []int32{2}, Results: []*crossmatch.Result{{Matches: []crossmatch.Counterpart{
		{Secondary: 0, CounterpartID: "x", SepArcsec: 0.25, Prob: 0.5, Candidates: 1, Ambiguous: true}}}}}
	_, hashes, err := mergeAll(context.Background(), c, m, 1)
	if err != nil {
		t.Fatal(err)
	}
	var b []byte
	b = append(b, "k1\x00"...)
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		v := math.NaN()
		switch f {
		case catalog.RA:
			v = 1.5
		case catalog.Dec:
			v = -2
		}
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
	}
	b = append(b, 2, 0, 0, 0)
	b = append(b, "s\x00x\x00"...)
	b = binary.LittleEndian.AppendUint64(b, math.Float64bits(0.25))
	b = binary.LittleEndian.AppendUint64(b, math.Float64bits(0.5))
	b = append(b, 1, 0, 0, 0, 1)
	sum := sha256.Sum256(b) // SHA-256 as the standard library computes it (FIPS 180-4)
	if want := hex.EncodeToString(sum[:16]); hashes[0] != want {
		t.Errorf("hash %s, want %s", hashes[0], want)
	}
}

// TestHashAllAndMergeRows: the run's path (hashes of every star, then the
// stars it computes merged again by row) gives what mergeAll gives.
func TestHashAllAndMergeRows(t *testing.T) {
	for _, tc := range []struct {
		name    string
		n, nSec int
		workers int
	}{
		{"one secondary", 20000, 1, 2},
		{"three secondaries", 9000, 3, 3},
		{"no secondary", 300, 0, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c, m := mergeInput(tc.n, tc.nSec, 5, false)
			stars, want, err := mergeAll(context.Background(), c, m, tc.workers)
			if err != nil {
				t.Fatal(err)
			}
			got, err := hashAll(context.Background(), c, m, tc.workers)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(got, want) {
				t.Fatal("hashAll differs from mergeAll")
			}
			// Rows in a seeded random order with runs of consecutive rows.
			rng := rand.New(rand.NewPCG(8, 9))
			var rows []int
			for len(rows) < tc.n/3 {
				r := rng.IntN(tc.n)
				for k := 0; k < 1+rng.IntN(4) && r+k < tc.n; k++ {
					rows = append(rows, r+k)
				}
			}
			out := make([]quality.Star, len(rows))
			mergeRows(c, m, rows, out)
			for k, i := range rows {
				a, b := &out[k], &stars[i]
				if a.ID != b.ID || a.DupCount != b.DupCount || len(a.Matches) != len(b.Matches) || (a.Matches == nil) != (b.Matches == nil) {
					t.Fatalf("row %d: %q %d %d matches, want %q %d %d", i, a.ID, a.DupCount, len(a.Matches), b.ID, b.DupCount, len(b.Matches))
				}
				for f := range a.Values {
					if !sameBits(a.Values[f], b.Values[f]) {
						t.Fatalf("row %d %s: %v, want %v", i, catalog.Fields[f].Name, a.Values[f], b.Values[f])
					}
				}
				for j := range a.Matches {
					x, y := a.Matches[j], b.Matches[j]
					if x.Matched != y.Matched || !sameBits(x.SepArcsec, y.SepArcsec) || !sameBits(x.Prob, y.Prob) || x.Candidates != y.Candidates || x.Ambiguous != y.Ambiguous {
						t.Fatalf("row %d match %d: %+v, want %+v", i, j, x, y)
					}
				}
			}
		})
	}
}

func TestMergeAllCancelled(t *testing.T) {
	c, m := mergeInput(100000, 1, 3, false)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, _, err := mergeAll(ctx, c, m, 2); !errors.Is(err, context.Canceled) {
		t.Errorf("err = %v, want context.Canceled", err)
	}
}

// BenchmarkMergeAll1M merges 1,000,000 primary stars with one matched
// secondary (the shape of the end-to-end run benchmark), whose rows either
// follow the primary's order or come in random order.
func BenchmarkMergeAll1M(b *testing.B) {
	for _, order := range []string{"ordered", "shuffled"} {
		b.Run(order, func(b *testing.B) {
			c, m := mergeInput(1_000_000, 1, 1, order == "ordered")
			b.ReportAllocs()
			b.ResetTimer()
			cpu0 := mergeCPUSeconds(b)
			for b.Loop() {
				if _, _, err := mergeAll(context.Background(), c, m, 0); err != nil {
					b.Fatal(err)
				}
			}
			b.StopTimer()
			b.ReportMetric((mergeCPUSeconds(b)-cpu0)/float64(b.N), "cpu-s/op")
		})
	}
}

// mergeCPUSeconds is the user+system CPU time of the process so far; on a
// shared machine it is steadier than wall time.
func mergeCPUSeconds(b *testing.B) float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		b.Fatal(err)
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}
