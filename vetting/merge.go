package vetting

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"math"
	"sync"

	"starvet/catalog"
	"starvet/crossmatch"
	"starvet/internal/parallel"
	"starvet/quality"
)

// Catalogs is the ingested input of a campaign: the primary astrometric
// table first, then the secondaries in campaign order.
type Catalogs struct {
	Primary     *catalog.Table
	Secondaries []*catalog.Table
	Reports     []*catalog.Report // index 0 is the primary's
	Specs       []catalog.Spec
}

// Matched is the cross-match of a campaign: one result per secondary and the
// primary's self-match.
type Matched struct {
	Results  []*crossmatch.Result // per secondary, one Counterpart per primary row
	DupCount []int32              // per primary row: other primary rows within the duplicate radius
	// Owned flags the primary rows a sky tile owns (nil: not a tile, every
	// row is the run's).
	Owned []bool
}

// fieldGroups are the fields a secondary may supply when the primary lacks
// them. A group comes from one catalog as a whole, so that a value is never
// paired with another catalog's error. Positions, parallaxes, proper motions
// and fit indicators always come from the primary alone.
var fieldGroups = [][]catalog.Field{
	{catalog.RV, catalog.RVErr, catalog.SNR},
	{catalog.Distance, catalog.DistanceErr, catalog.DistMod, catalog.DistModErr},
	{catalog.Mag, catalog.Color},
}

// mergeChunk is how many stars mergeBatch fills one step at a time: small
// enough that their Star values (280 bytes each) stay in cache between the
// steps.
const mergeChunk = 1024

// mergeBatch fills stars, the primary rows lo, lo+1, ..., and their input
// hashes. Every star gets the primary's values, its matches and duplicate
// count, and for each field group the primary lacks, the values of the
// first matched secondary (in campaign order) that has the group's first
// field. The secondaries are read one column at a time over
// the chunk: their rows come in match order, not file order, and a loop
// that only gathers keeps many cache misses in flight at once.
func mergeBatch(c *Catalogs, m *Matched, lo int, stars []quality.Star, hashes []string, sc *mergeScratch) {
	n := len(stars)
	// One backing array for the batch's matches, one string for its hashes.
	matches := make([]quality.MatchInfo, n*len(c.Secondaries))
	hexBuf := make([]byte, n*2*inputHashBytes)
	fillStars(c, m, lo, stars, matches, sc, func(base int, chunk []quality.Star) {
		for b := range chunk {
			var sum [inputHashBytes]byte
			sum, sc.buf = inputHash(c, m, base+b, &chunk[b], sc.buf)
			hex.Encode(hexBuf[(base-lo+b)*2*inputHashBytes:], sum[:])
		}
	})
	all := string(hexBuf)
	for b := range hashes {
		hashes[b] = all[b*2*inputHashBytes : (b+1)*2*inputHashBytes]
	}
}

// fillStars fills stars with the primary rows lo, lo+1, ... (see
// mergeBatch), their Matches taken from matches (len(stars) times the
// number of secondaries), and calls done with each chunk once it is filled,
// while it is still in cache.
func fillStars(c *Catalogs, m *Matched, lo int, stars []quality.Star, matches []quality.MatchInfo, sc *mergeScratch,
	done func(base int, chunk []quality.Star)) {
	p := c.Primary
	nSec := len(c.Secondaries)
	n := len(stars)
	for c0 := 0; c0 < n; c0 += mergeChunk {
		chunk := stars[c0:min(c0+mergeChunk, n)]
		base := lo + c0
		for b := range chunk {
			s := &chunk[b]
			i := base + b
			s.ID = p.IDs[i]
			s.DupCount = 0
			if m.DupCount != nil {
				s.DupCount = int(m.DupCount[i])
			}
			if nSec > 0 { // with none, Matches stays nil, as before
				off := (c0 + b) * nSec
				s.Matches = matches[off : off+nSec : off+nSec]
			}
		}
		for f := catalog.Field(1); f < catalog.NumFields; f++ {
			col := p.Cols[f]
			if col == nil {
				for b := range chunk {
					chunk[b].Values[f] = math.NaN()
				}
				continue
			}
			col = col[base : base+len(chunk)]
			for b, v := range col {
				chunk[b].Values[f] = v
			}
		}
		for k := range c.Secondaries {
			cps := m.Results[k].Matches[base : base+len(chunk)]
			for b := range cps {
				cp := &cps[b]
				mi := quality.MatchInfo{Matched: cp.Secondary >= 0, SepArcsec: cp.SepArcsec, Prob: cp.Prob,
					Candidates: int(cp.Candidates), Ambiguous: cp.Ambiguous}
				if cp.Secondary < 0 {
					mi.SepArcsec, mi.Prob = math.NaN(), math.NaN()
				}
				chunk[b].Matches[k] = mi
			}
		}
		for _, g := range fieldGroups {
			fillGroup(c, m, g, base, chunk, sc)
		}
		if done != nil {
			sc.touchCounterpartIDs(m, base, len(chunk))
			done(base, chunk)
		}
	}
}

// mergeScratch is one worker's reusable memory.
type mergeScratch struct {
	buf  []byte
	from []int32 // per chunk star: secondary index k that supplies the group, -1 for none
	row  []int32 // its row in that secondary
	sink byte
}

// fillGroup copies field group g from the secondaries into the chunk's
// stars that lack g[0] in the primary.
func fillGroup(c *Catalogs, m *Matched, g []catalog.Field, base int, chunk []quality.Star, sc *mergeScratch) {
	from, row := sc.from[:len(chunk)], sc.row[:len(chunk)]
	open := 0
	for b := range chunk {
		from[b] = -1
		if math.IsNaN(chunk[b].Values[g[0]]) {
			from[b] = -2 // still looking
			open++
		}
	}
	for k, t := range c.Secondaries {
		lead := t.Cols[g[0]]
		if open == 0 {
			break
		}
		if lead == nil {
			continue
		}
		cps := m.Results[k].Matches[base : base+len(chunk)]
		for b := range chunk {
			if from[b] != -2 {
				continue
			}
			if j := cps[b].Secondary; j >= 0 && !math.IsNaN(lead[j]) {
				from[b], row[b] = int32(k), j
				open--
			}
		}
	}
	for b := range from {
		if from[b] == -2 {
			from[b] = -1
		}
	}
	for _, f := range g {
		for k, t := range c.Secondaries {
			col := t.Cols[f]
			for b := range chunk {
				if from[b] != int32(k) {
					continue
				}
				v := math.NaN()
				if col != nil {
					v = col[row[b]]
				}
				chunk[b].Values[f] = v
			}
		}
	}
}

// touchCounterpartIDs reads the first byte of every matched counterpart id of
// the chunk: those strings lie in match order across the secondary's
// memory, and loading them in a tight loop overlaps the cache misses that
// inputHash would otherwise take one at a time.
func (sc *mergeScratch) touchCounterpartIDs(m *Matched, base, n int) {
	var x byte
	for _, r := range m.Results {
		for _, cp := range r.Matches[base : base+n] {
			if len(cp.CounterpartID) > 0 {
				x ^= cp.CounterpartID[0]
			}
		}
	}
	sc.sink ^= x
}

// inputHashBytes is how much of the SHA-256 the input hash keeps (128 bits,
// written as 32 hex digits).
const inputHashBytes = 16

// inputHash is the fingerprint of everything a star's verdict depends on
// besides the run-wide settings: its merged canonical values, its matches
// and its duplicate count. The first 128 bits of SHA-256. The byte layout
// is stored in every ledger and must not change.
func inputHash(c *Catalogs, m *Matched, i int, s *quality.Star, buf []byte) ([inputHashBytes]byte, []byte) {
	buf = buf[:0]
	buf = append(buf, s.ID...)
	buf = append(buf, 0)
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		buf = appendFloat(buf, s.Values[f])
	}
	buf = binary.LittleEndian.AppendUint32(buf, uint32(s.DupCount))
	for k, t := range c.Secondaries {
		cp := &m.Results[k].Matches[i]
		buf = append(buf, t.Name...)
		buf = append(buf, 0)
		buf = append(buf, cp.CounterpartID...)
		buf = append(buf, 0)
		buf = appendFloat(buf, cp.SepArcsec)
		buf = appendFloat(buf, cp.Prob)
		buf = binary.LittleEndian.AppendUint32(buf, uint32(cp.Candidates))
		if cp.Ambiguous {
			buf = append(buf, 1)
		} else {
			buf = append(buf, 0)
		}
	}
	sum := sha256.Sum256(buf)
	return [inputHashBytes]byte(sum[:inputHashBytes]), buf
}

func appendFloat(b []byte, x float64) []byte {
	if math.IsNaN(x) {
		x = math.NaN() // one bit pattern for every NaN
	}
	return binary.LittleEndian.AppendUint64(b, math.Float64bits(x))
}

func newMergeScratch() *mergeScratch {
	return &mergeScratch{from: make([]int32, mergeChunk), row: make([]int32, mergeChunk)}
}

// mergeAll builds every primary star and its input hash, on all workers.
func mergeAll(ctx context.Context, c *Catalogs, m *Matched, workers int) ([]quality.Star, []string, error) {
	n := c.Primary.Len()
	stars := make([]quality.Star, n)
	hashes := make([]string, n)
	err := mergeBatches(ctx, n, workers, func(lo, hi int, sc *mergeScratch) {
		mergeBatch(c, m, lo, stars[lo:hi], hashes[lo:hi], sc)
	})
	return stars, hashes, err
}

// hashAll computes the input hash of every primary star, on all workers,
// keeping only the hashes: a run merges the stars it computes again, from
// the same tables (mergeRows), so the million stars it carries never sit
// in memory at once.
func hashAll(ctx context.Context, c *Catalogs, m *Matched, workers int) ([]string, error) {
	n := c.Primary.Len()
	hashes := make([]string, n)
	var mu sync.Mutex
	var spare [][]quality.Star
	err := mergeBatches(ctx, n, workers, func(lo, hi int, sc *mergeScratch) {
		mu.Lock()
		var buf []quality.Star
		if k := len(spare); k > 0 {
			buf, spare = spare[k-1], spare[:k-1]
		}
		mu.Unlock()
		if cap(buf) < hi-lo {
			buf = make([]quality.Star, mergeBatchRows)
		}
		mergeBatch(c, m, lo, buf[:hi-lo], hashes[lo:hi], sc)
		mu.Lock()
		spare = append(spare, buf)
		mu.Unlock()
	})
	return hashes, err
}

// mergeRows fills out[k] with primary row rows[k], as mergeAll would.
func mergeRows(c *Catalogs, m *Matched, rows []int, out []quality.Star) {
	nSec := len(c.Secondaries)
	matches := make([]quality.MatchInfo, len(rows)*nSec)
	sc := newMergeScratch()
	for k := 0; k < len(rows); {
		// A run of consecutive rows is filled as one range.
		e := k + 1
		for e < len(rows) && rows[e] == rows[e-1]+1 {
			e++
		}
		fillStars(c, m, rows[k], out[k:e], matches[k*nSec:e*nSec], sc, nil)
		k = e
	}
}

// mergeBatchRows is how many primary rows one worker merges at a time.
const mergeBatchRows = 8192

// mergeBatches calls fn for the row ranges [lo, hi) that cover n rows,
// batch by batch on workers goroutines, each with its own scratch; ctx is
// checked between batches.
func mergeBatches(ctx context.Context, n, workers int, fn func(lo, hi int, sc *mergeScratch)) error {
	return parallel.Batches(ctx, n, mergeBatchRows, workers, func(sc **mergeScratch, lo, hi int) {
		if *sc == nil {
			*sc = newMergeScratch()
		}
		fn(lo, hi, *sc)
	}, nil)
}
