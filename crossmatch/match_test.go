package crossmatch

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"starvet/catalog"
	"starvet/crossmatch/sky"
	"starvet/internal/units"
)

// randomPair makes a primary (epoch 2000) and a secondary (epoch 2016) with
// true counterparts scattered by their errors, unrelated secondary
// sources, crowds at the RA wrap and both poles, dense clusters, and
// high-proper-motion stars whose counterparts lie tens of arcsec from the
// epoch-2000 position (they match only after propagation).
func randomPair(rng *rand.Rand, n int) (p, s []src, fast map[string]string) {
	const fromJyr, toJyr = 2000.0, 2016.0
	nan := math.NaN()
	fast = map[string]string{}
	place := func(k int) (float64, float64) {
		switch k % 6 {
		case 0: // RA wrap
			return normRA((rng.Float64() - 0.5) * 0.01), (rng.Float64() - 0.5) * 10
		case 1: // north pole
			return rng.Float64() * 360, 90 - rng.Float64()*0.003
		case 2: // south pole
			return rng.Float64() * 360, -90 + rng.Float64()*0.003
		case 3: // dense clusters: about 50 sources within 5 arcsec each
			c := rng.IntN(max(5, n/300))
			ra, dec := offset(math.Mod(float64(c)*37+10, 360), math.Mod(float64(c)*23, 160)-80, rng.Float64()*5, rng.Float64()*2*math.Pi)
			return ra, dec
		default:
			return rng.Float64() * 360, math.Asin(2*rng.Float64()-1) * units.DegPerRad
		}
	}
	for k := 0; k < n; k++ {
		ra, dec := place(k)
		errMas := 20 + rng.Float64()*300
		ps := newSrc(fmt.Sprintf("p%d", k), ra, dec, errMas)
		if k%10 == 0 { // a tenth without own errors: fallback
			ps.raErrMas, ps.decErrMas = nan, nan
		}
		if k%2 == 0 {
			ps.pmRA, ps.pmDec = rng.NormFloat64()*20, rng.NormFloat64()*20
			ps.pmRAErr, ps.pmDecErr = 0.5, 0.7
		}
		if k%7 == 0 { // fast movers, some with parallax and rv
			ps.pmRA, ps.pmDec = (rng.Float64()-0.5)*8000, (rng.Float64()-0.5)*8000
			if k%14 == 0 {
				ps.parallaxMas, ps.rvKms = 5+rng.Float64()*50, (rng.Float64()-0.5)*600
			}
		}
		p = append(p, ps)
		if k%3 == 2 {
			continue // no counterpart
		}
		r2, d2 := ra, dec
		if !math.IsNaN(ps.pmRA) {
			r2, d2, _ = propagate(astro(ra, dec, ps.parallaxMas, ps.pmRA, ps.pmDec, ps.rvKms), fromJyr, toJyr)
		}
		r2, d2 = offset(r2, d2, math.Abs(rng.NormFloat64())*0.2, rng.Float64()*2*math.Pi)
		ss := newSrc(fmt.Sprintf("s%d", len(s)), r2, d2, 50+rng.Float64()*200)
		if k%7 == 0 && math.Hypot(ps.pmRA, ps.pmDec)*(toJyr-fromJyr) > 20000 {
			fast[ps.id] = ss.id
		}
		s = append(s, ss)
	}
	for k := 0; k < n/3; k++ { // unrelated sources
		ra, dec := place(k)
		s = append(s, newSrc(fmt.Sprintf("s%d", len(s)), ra, dec, 100))
	}
	// rows without position are reported, not matched
	p = append(p, newSrc("p-nopos", nan, 10, 100))
	s = append(s, newSrc("s-nopos", 10, nan, 100))
	rng.Shuffle(len(s), func(a, b int) { s[a], s[b] = s[b], s[a] })
	return p, s, fast
}

// res0Prior recomputes the prior by brute force: cells occupied by both
// catalogs (primary at the secondary epoch), N* = min(N1, N2).
func res0Prior(pt, st *catalog.Table) float64 {
	c1, c2 := map[uint16]int{}, map[uint16]int{}
	for i := 0; i < pt.Len(); i++ {
		ra, dec := pt.Cols[catalog.RA][i], pt.Cols[catalog.Dec][i]
		if math.IsNaN(ra) || math.IsNaN(dec) {
			continue
		}
		if !math.IsNaN(pt.Cols[catalog.PMRA][i]) {
			ra, dec, _ = propagate(astro(ra, dec, pt.Cols[catalog.Parallax][i],
				pt.Cols[catalog.PMRA][i], pt.Cols[catalog.PMDec][i], pt.Cols[catalog.RV][i]), pt.EpochJyr, st.EpochJyr)
		}
		c1[cellOf(normRA(ra), dec)]++
	}
	for j := 0; j < st.Len(); j++ {
		ra, dec := st.Cols[catalog.RA][j], st.Cols[catalog.Dec][j]
		if !math.IsNaN(ra) && !math.IsNaN(dec) {
			c2[cellOf(normRA(ra), dec)]++
		}
	}
	n1, n2 := 0, 0
	for c, k := range c1 {
		if c2[c] > 0 {
			n1 += k
			n2 += c2[c]
		}
	}
	return float64(min(n1, n2)) / (float64(n1) * float64(n2))
}

// oracle is the brute-force O(N M) matcher, written from the spec without
// the index or the component shortcut.
func oracle(t *testing.T, pt, st *catalog.Table, opt Options) ([]Counterpart, []pair) {
	t.Helper()
	dt := st.EpochJyr - pt.EpochJyr
	ratio := cmp.Or(opt.AmbiguityRatio, DefaultAmbiguityRatio)
	radius := cmp.Or(opt.RadiusArcsec, DefaultRadiusArcsec) * units.RadPerArcsec
	sigma := func(t *catalog.Table, i int, fallback, dt float64) float64 {
		e1, e2 := t.Cols[catalog.RAErr][i], t.Cols[catalog.DecErr][i]
		s := math.Sqrt((e1*e1 + e2*e2) / 2)
		if math.IsNaN(s) {
			s = fallback
		}
		if dt != 0 && !math.IsNaN(t.Cols[catalog.PMRA][i]) {
			q1, q2 := t.Cols[catalog.PMRAErr][i], t.Cols[catalog.PMDecErr][i]
			if q := math.Sqrt((q1*q1 + q2*q2) / 2); !math.IsNaN(q) {
				s = math.Hypot(s, q*math.Abs(dt))
			}
		}
		return s * units.RadPerMas
	}
	var pairs []pair
	nc := make([]int32, pt.Len())
	for i := 0; i < pt.Len(); i++ {
		ra, dec := pt.Cols[catalog.RA][i], pt.Cols[catalog.Dec][i]
		if math.IsNaN(ra) || math.IsNaN(dec) {
			continue
		}
		if !math.IsNaN(pt.Cols[catalog.PMRA][i]) {
			ra, dec, _ = propagate(astro(ra, dec, pt.Cols[catalog.Parallax][i],
				pt.Cols[catalog.PMRA][i], pt.Cols[catalog.PMDec][i], pt.Cols[catalog.RV][i]), pt.EpochJyr, st.EpochJyr)
		}
		s1 := sigma(pt, i, opt.PrimaryPosErrMas, dt)
		for j := 0; j < st.Len(); j++ {
			r2, d2 := st.Cols[catalog.RA][j], st.Cols[catalog.Dec][j]
			if math.IsNaN(r2) || math.IsNaN(d2) {
				continue
			}
			s2 := sigma(st, j, opt.SecondaryPosErrMas, 0)
			sep := sky.Separation(normRA(ra)*units.RadPerDeg, dec*units.RadPerDeg, normRA(r2)*units.RadPerDeg, d2*units.RadPerDeg)
			lim := radius
			if opt.NSigma > 0 {
				lim = max(opt.NSigma*math.Sqrt(s1*s1+s2*s2), opt.RadiusFloorArcsec*units.RadPerArcsec)
			}
			if sep <= lim {
				pairs = append(pairs, pair{i: int32(i), j: int32(j), sepRad: sep, lnB: LogBayesFactor(sep, s1, s2)})
				nc[i]++
			}
		}
	}
	out := make([]Counterpart, pt.Len())
	for i := range out {
		out[i] = Counterpart{Secondary: -1, SepArcsec: math.NaN(), BayesFactor: math.NaN(), Candidates: nc[i]}
	}
	sorted := slices.Clone(pairs)
	slices.SortStableFunc(sorted, func(a, b pair) int {
		return cmp.Or(cmp.Compare(b.lnB, a.lnB), cmp.Compare(a.i, b.i), cmp.Compare(a.j, b.j))
	})
	taken := map[int32]bool{}
	for _, pr := range sorted {
		if out[pr.i].Secondary >= 0 || taken[pr.j] {
			continue
		}
		taken[pr.j] = true
		out[pr.i].Secondary, out[pr.i].SepArcsec, out[pr.i].BayesFactor = pr.j, pr.sepRad/units.RadPerArcsec, math.Exp(pr.lnB)
		out[pr.i].CounterpartID = st.IDs[pr.j]
	}
	p0 := res0Prior(pt, st)
	for i := range out {
		if out[i].Secondary >= 0 {
			out[i].Prob = PosteriorLog(math.Log(out[i].BayesFactor), p0)
		}
	}
	// Ambiguity from the definition in the Match doc comment.
	byI, byJ := map[int32][]pair{}, map[int32][]pair{}
	for _, pr := range pairs {
		byI[pr.i] = append(byI[pr.i], pr)
		byJ[pr.j] = append(byJ[pr.j], pr)
	}
	for i := range out {
		mine := byI[int32(i)]
		if len(mine) == 0 {
			continue
		}
		best := mine[0]
		for _, pr := range mine {
			if pr.lnB > best.lnB {
				best = pr
			}
		}
		for _, pr := range mine {
			if pr.j != best.j && math.Exp(pr.lnB) >= math.Exp(best.lnB)/ratio && pr.lnB >= best.lnB-math.Log(ratio) {
				out[i].Ambiguous = true
			}
		}
		for _, pr := range byJ[best.j] {
			if int(pr.i) != i && math.Abs(pr.lnB-best.lnB) <= math.Log(ratio) {
				out[i].Ambiguous = true
			}
		}
	}
	return out, pairs
}

func TestMatchAgainstBruteForce(t *testing.T) {
	seed := testSeed(t, 2026)
	cases := []struct {
		name string
		opt  Options
	}{
		{"fixed 2 arcsec", Options{RadiusArcsec: 2, PrimaryPosErrMas: 150, SecondaryPosErrMas: 80}},
		{"fixed 6 arcsec, ratio 10", Options{RadiusArcsec: 6, AmbiguityRatio: 10, PrimaryPosErrMas: 150, SecondaryPosErrMas: 80}},
		{"5 sigma, floor 0.3 arcsec", Options{NSigma: 5, RadiusFloorArcsec: 0.3, PrimaryPosErrMas: 150, SecondaryPosErrMas: 80}},
		{"default radius, 1 worker", Options{PrimaryPosErrMas: 150, Workers: 1}},
	}
	for n, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(seed, uint64(n)))
			ps, ss, fast := randomPair(rng, 3000)
			pt, st := table("test-primary", 2000, ps), table("test-secondary", 2016, ss)
			res, err := Match(context.Background(), pt, st, c.opt)
			if err != nil {
				t.Fatal(err)
			}
			want, wantPairs := oracle(t, pt, st, c.opt)
			if res.Stats.CandidatePairs != len(wantPairs) {
				t.Errorf("CandidatePairs = %d, brute force %d", res.Stats.CandidatePairs, len(wantPairs))
			}
			// The candidate sets themselves, pair by pair.
			opt := c.opt
			if err := opt.normalize(); err != nil {
				t.Fatal(err)
			}
			_, cs, err := findCandidates(context.Background(), pt, st, &opt)
			if err != nil {
				t.Fatal(err)
			}
			var gotPairs []pair
			for _, ps := range cs.batches {
				for _, pr := range ps {
					gotPairs = append(gotPairs, pair{i: pr.i, j: pr.j, sepRad: pr.sepRad, lnB: pr.lnB})
				}
			}
			byRows := func(a, b pair) int { return cmp.Or(cmp.Compare(a.i, b.i), cmp.Compare(a.j, b.j)) }
			slices.SortFunc(gotPairs, byRows)
			slices.SortFunc(wantPairs, byRows)
			if !slices.Equal(gotPairs, wantPairs) {
				for k := range min(len(gotPairs), len(wantPairs)) {
					if gotPairs[k] != wantPairs[k] {
						t.Fatalf("candidate %d: %+v, brute force %+v", k, gotPairs[k], wantPairs[k])
					}
				}
				t.Fatalf("%d candidates, brute force %d", len(gotPairs), len(wantPairs))
			}
			var matched, amb, multi int
			for i := range want {
				g, w := res.Matches[i], want[i]
				if g.Secondary != w.Secondary || g.CounterpartID != w.CounterpartID || g.Candidates != w.Candidates ||
					g.Ambiguous != w.Ambiguous || !sameFloat(g.SepArcsec, w.SepArcsec) || !sameFloat(g.BayesFactor, w.BayesFactor) {
					t.Fatalf("primary row %d (%s): got %+v, brute force %+v", i, pt.IDs[i], g, w)
				}
				if math.Abs(g.Prob-w.Prob) > 1e-12 {
					t.Errorf("row %d: Prob %.15g, brute force %.15g", i, g.Prob, w.Prob)
				}
				if g.Secondary >= 0 {
					matched++
				}
				if g.Ambiguous {
					amb++
				}
				if g.Candidates > 1 {
					multi++
				}
			}
			if matched != res.Stats.Matched || amb != res.Stats.Ambiguous {
				t.Errorf("Stats Matched %d Ambiguous %d, rows say %d and %d", res.Stats.Matched, res.Stats.Ambiguous, matched, amb)
			}
			// The data must exercise what the test is for.
			if matched < 1000 || amb == 0 || multi == 0 {
				t.Errorf("weak test data: %d matched, %d ambiguous, %d with several candidates", matched, amb, multi)
			}
			// Fast movers: matched to their own counterpart, which is far
			// from the unpropagated position.
			byID := map[string]int{}
			for i, id := range pt.IDs {
				byID[id] = i
			}
			got := 0
			for pid, sid := range fast {
				i := byID[pid]
				if res.Matches[i].CounterpartID == sid {
					got++
				}
			}
			if len(fast) < 20 || got < len(fast)*9/10 {
				t.Errorf("fast movers: %d of %d matched to their counterpart", got, len(fast))
			}
			if res.Stats.PrimaryNoPosition != 1 || res.Stats.SecondaryNoPosition != 1 {
				t.Errorf("no-position rows: %d primary, %d secondary, want 1 and 1", res.Stats.PrimaryNoPosition, res.Stats.SecondaryNoPosition)
			}
			t.Logf("%d matched, %d ambiguous, %d with >1 candidate, %d fast movers, prior %g, overlap %.0f deg^2",
				matched, amb, multi, len(fast), res.Prior, res.OverlapSqDeg)
		})
	}
}

func TestMatchNeedsPropagation(t *testing.T) {
	// A star moving 4"/yr seen 16 yr later 64" away: matched only because
	// its position is propagated first.
	p := newSrc("fast", 100, 20, 50)
	p.pmRA, p.pmDec = 4000, 0
	ra2, dec2, _ := propagate(astro(100, 20, math.NaN(), 4000, 0, math.NaN()), 2000, 2016)
	s := []src{newSrc("far-counterpart", ra2, dec2, 50), newSrc("at-old-place-2arcsec-off", 100, 20+2.0/units.ArcsecPerDeg, 50)}
	res, err := Match(context.Background(), table("a", 2000, []src{p}), table("b", 2016, s), Options{RadiusArcsec: 1})
	if err != nil {
		t.Fatal(err)
	}
	m := res.Matches[0]
	if m.CounterpartID != "far-counterpart" || m.SepArcsec > 1e-6 || m.Candidates != 1 {
		t.Errorf("got %+v, want far-counterpart at ~0 arcsec", m)
	}
	if sep := sky.Separation(100*units.RadPerDeg, 20*units.RadPerDeg, ra2*units.RadPerDeg, dec2*units.RadPerDeg) / units.RadPerArcsec; sep < 60 {
		t.Errorf("counterpart only %g arcsec from the old position: test is not testing propagation", sep)
	}
	if res.Stats.Propagated != 1 {
		t.Errorf("Propagated = %d", res.Stats.Propagated)
	}
}

func TestMatchAmbiguity(t *testing.T) {
	// All errors 100 mas, so for s1 = s2 = 100 mas the ratio of two
	// Bayes factors is exp(-(psi_a^2 - psi_b^2) / (2 (2 * 0.1^2))) with psi in
	// arcsec (from the formula of Budavari & Szalay 2008): 0.10" vs 0.12"
	// gives exp(-(0.0144-0.01)/0.04) = exp(-0.11) = 0.896 (close: within 3);
	// 0.10" vs 0.40" gives exp(-(0.16-0.01)/0.04) = exp(-3.75) = 0.0235
	// (not close).
	at := func(id string, sep, bearing float64) src {
		ra, dec := offset(50, 10, sep, bearing)
		return newSrc(id, ra, dec, 100)
	}
	cases := []struct {
		name      string
		p, s      []src
		want      []int32 // secondary row per primary
		wantAmb   []bool
		bestTaken int
	}{
		{"one primary, two close candidates",
			[]src{at("p", 0, 0)}, []src{at("s0", 0.12, 1), at("s1", 0.10, 2)},
			[]int32{1}, []bool{true}, 0},
		{"one primary, clear best",
			[]src{at("p", 0, 0)}, []src{at("s0", 0.40, 1), at("s1", 0.10, 2)},
			[]int32{1}, []bool{false}, 0},
		{"two primaries, one secondary, close",
			[]src{at("p0", 0.12, 0), at("p1", 0.10, math.Pi)}, []src{at("s", 0, 0)},
			[]int32{-1, 0}, []bool{true, true}, 1},
		{"two primaries, one secondary, clear",
			[]src{at("p0", 0.40, 0), at("p1", 0.10, math.Pi)}, []src{at("s", 0, 0)},
			[]int32{-1, 0}, []bool{false, false}, 1},
		// p0 is best for s0; p1 prefers s0 too but loses it and takes s1.
		{"greedy chain",
			[]src{at("p0", 0.0, 0), at("p1", 0.35, 0)}, []src{at("s0", 0.02, math.Pi), at("s1", 0.9, 0)},
			[]int32{0, 1}, []bool{false, false}, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			res, err := Match(context.Background(), table("a", 2010, c.p), table("b", 2010, c.s), Options{RadiusArcsec: 2})
			if err != nil {
				t.Fatal(err)
			}
			for i, m := range res.Matches {
				if m.Secondary != c.want[i] || m.Ambiguous != c.wantAmb[i] {
					t.Errorf("primary %d: Secondary %d Ambiguous %v, want %d %v (%+v)", i, m.Secondary, m.Ambiguous, c.want[i], c.wantAmb[i], m)
				}
			}
			if res.Stats.BestTaken != c.bestTaken {
				t.Errorf("BestTaken = %d, want %d", res.Stats.BestTaken, c.bestTaken)
			}
		})
	}
}

func TestMatchDeterministicAcrossWorkers(t *testing.T) {
	seed := testSeed(t, 99)
	rng := rand.New(rand.NewPCG(seed, 3))
	ps, ss, _ := randomPair(rng, 6000) // two batches
	pt, st := table("a", 2000, ps), table("b", 2016, ss)
	var ref *Result
	for _, w := range []int{1, 2, 3, 8} {
		res, err := Match(context.Background(), pt, st, Options{RadiusArcsec: 3, PrimaryPosErrMas: 100, SecondaryPosErrMas: 100, Workers: w})
		if err != nil {
			t.Fatal(err)
		}
		if ref == nil {
			ref = res
			continue
		}
		if res.Stats != ref.Stats || res.Prior != ref.Prior || res.OverlapSqDeg != ref.OverlapSqDeg {
			t.Errorf("workers %d: stats/prior differ: %+v vs %+v", w, res.Stats, ref.Stats)
		}
		for i := range res.Matches {
			a, b := res.Matches[i], ref.Matches[i]
			if a.Secondary != b.Secondary || a.CounterpartID != b.CounterpartID || a.Candidates != b.Candidates || a.Ambiguous != b.Ambiguous ||
				!sameFloat(a.SepArcsec, b.SepArcsec) || !sameFloat(a.Prob, b.Prob) || !sameFloat(a.BayesFactor, b.BayesFactor) {
				t.Fatalf("workers %d, row %d: %+v vs %+v", w, i, a, b)
			}
		}
	}
}

func TestMatchErrors(t *testing.T) {
	good := []src{newSrc("a", 1, 1, 100), newSrc("b", 2, 2, 100)}
	badDec := []src{newSrc("a", 1, 1, 100), newSrc("b", 2, 91, 100)}
	noErr := []src{newSrc("a", 1, 1, 100), newSrc("b", 2, 2, math.NaN())}
	noRA := table("no-ra", 2000, good)
	noRA.Cols[catalog.RA] = nil
	cases := []struct {
		name     string
		p, s     *catalog.Table
		opt      Options
		sentinel error
		want     string
	}{
		{"dec out of range", table("cat-p", 2000, badDec), table("cat-s", 2000, good), Options{},
			ErrBadPosition, `match: catalog "cat-p": line 3: column dec: value 91 outside [-90, 90]: bad position`},
		{"no error, no fallback", table("cat-p", 2000, good), table("cat-s", 2000, noErr), Options{},
			ErrNoPositionError, `match: catalog "cat-s": line 3: column ra_err: no ra_err/dec_err and no fallback positional error: no positional error`},
		{"missing ra column", noRA, table("cat-s", 2000, good), Options{},
			ErrNoColumn, `match: catalog "no-ra": no ra column: missing column`},
		{"negative radius", table("cat-p", 2000, good), table("cat-s", 2000, good), Options{RadiusArcsec: -1},
			ErrBadOptions, "match: option radius = -1: bad match options"},
		{"ratio below 1", table("cat-p", 2000, good), table("cat-s", 2000, good), Options{AmbiguityRatio: 0.5},
			ErrBadOptions, "match: option ambiguity ratio = 0.5: bad match options"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Match(context.Background(), c.p, c.s, c.opt)
			if err == nil || !errors.Is(err, c.sentinel) || err.Error() != c.want {
				t.Errorf("err = %v\nwant %s (wrapping %v)", err, c.want, c.sentinel)
			}
		})
	}
	t.Run("fallback used", func(t *testing.T) {
		res, err := Match(context.Background(), table("p", 2000, good), table("s", 2000, noErr), Options{SecondaryPosErrMas: 70})
		if err != nil || res.Stats.SecondaryFallbackErr != 1 || res.Matches[1].Secondary != 1 {
			t.Errorf("err %v, stats %+v, match %+v", err, res.Stats, res.Matches[1])
		}
	})
	t.Run("cancelled", func(t *testing.T) {
		ctx, cancel := context.WithCancel(context.Background())
		cancel()
		_, err := Match(ctx, table("p", 2000, good), table("s", 2000, good), Options{})
		if !errors.Is(err, context.Canceled) {
			t.Errorf("err = %v", err)
		}
	})
}

func TestMatchEmpty(t *testing.T) {
	one := []src{newSrc("a", 1, 1, 100)}
	cases := []struct {
		name string
		p, s []src
	}{
		{"empty primary", nil, one},
		{"empty secondary", one, nil},
		{"both empty", nil, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			res, err := Match(context.Background(), table("p", 2000, c.p), table("s", 2000, c.s), Options{})
			if err != nil {
				t.Fatal(err)
			}
			if len(res.Matches) != len(c.p) || res.Prior != 0 || res.Stats.CandidatePairs != 0 {
				t.Errorf("got %d matches, prior %g, %d pairs", len(res.Matches), res.Prior, res.Stats.CandidatePairs)
			}
			for _, m := range res.Matches {
				if m.Secondary != -1 || !math.IsNaN(m.SepArcsec) {
					t.Errorf("match %+v, want none", m)
				}
			}
		})
	}
}
