package vetting

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"math"
	"runtime"
	"sync"

	"starvet/crossmatch"
	"starvet/crossmatch/catalog"
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

// mergeStar fills s with primary row i: the primary's values, and for the
// field groups the primary lacks, those of the first matched secondary (in
// campaign order) that has them.
func mergeStar(c *Catalogs, m *Matched, i int, s *quality.Star) {
	p := c.Primary
	s.ID = p.IDs[i]
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		s.Values[f] = math.NaN()
		if col := p.Cols[f]; col != nil {
			s.Values[f] = col[i]
		}
	}
	if cap(s.Matches) < len(c.Secondaries) {
		s.Matches = make([]quality.MatchInfo, len(c.Secondaries))
	}
	s.Matches = s.Matches[:len(c.Secondaries)]
	for k := range c.Secondaries {
		cp := &m.Results[k].Matches[i]
		s.Matches[k] = quality.MatchInfo{
			Matched:    cp.Secondary >= 0,
			SepArcsec:  cp.SepArcsec,
			Prob:       cp.Prob,
			Candidates: int(cp.Candidates),
			Ambiguous:  cp.Ambiguous,
		}
		if cp.Secondary < 0 {
			s.Matches[k].SepArcsec = math.NaN()
			s.Matches[k].Prob = math.NaN()
		}
	}
	s.DupCount = 0
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
}

// inputHash is the fingerprint of everything a star's verdict depends on
// besides the run-wide settings: its merged canonical values, its matches
// and its duplicate count. 128 bits of SHA-256, hex.
func inputHash(c *Catalogs, m *Matched, i int, s *quality.Star, buf []byte) (string, []byte) {
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
		buf = append(buf, cp.SourceID...)
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
	return hex.EncodeToString(sum[:16]), buf
}

func appendFloat(b []byte, x float64) []byte {
	if math.IsNaN(x) {
		x = math.NaN() // one bit pattern for every NaN
	}
	return binary.LittleEndian.AppendUint64(b, math.Float64bits(x))
}

// mergeAll builds every primary star and its input hash, on all workers.
func mergeAll(ctx context.Context, c *Catalogs, m *Matched, workers int) ([]quality.Star, []string, error) {
	n := c.Primary.Len()
	stars := make([]quality.Star, n)
	hashes := make([]string, n)
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	const batch = 8192
	var wg sync.WaitGroup
	next := make(chan int)
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var buf []byte
			for lo := range next {
				hi := min(lo+batch, n)
				for i := lo; i < hi; i++ {
					mergeStar(c, m, i, &stars[i])
					hashes[i], buf = inputHash(c, m, i, &stars[i], buf)
				}
			}
		}()
	}
	var err error
	for lo := 0; lo < n; lo += batch {
		if err = ctx.Err(); err != nil {
			break
		}
		next <- lo
	}
	close(next)
	wg.Wait()
	return stars, hashes, err
}
