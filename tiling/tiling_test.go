package tiling

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"starvet/campaign"
	"starvet/crossmatch"
	"starvet/crossmatch/sky/healpix"
	"starvet/db"
	"starvet/internal/units"
	"starvet/vetting"
)

// The check of this package (common practice for any partitioned
// computation): a split campaign, run tile by tile and gathered, must hold
// for every star exactly what one run of the whole campaign holds
// (db.StarDigests: status, quality, reasons, inputs and input hash, match,
// speed percentiles, p_unbound, origin, crossings). The invented sky below
// puts the hard cases on tile borders: dense clusters, duplicates, fast
// proper motions, ambiguous pairs, the poles and the RA wrap.

const (
	testOrder     = 2
	primaryEpoch  = 2019.5
	secondaryEpch = 2011.5
)

// star is one invented primary row; spec, when set, adds a spectroscopic
// row at the star's position moved to the secondary epoch, off by
// (dRA, dDec) arcsec.
type star struct {
	id                  string
	raDeg, decDeg       float64
	plx, plxErr         float64
	pmRA, pmDec         float64
	rv                  float64 // NaN: no spectroscopic row
	specDRA, specDDec   float64
	specID              string
	extraSpec           [][2]float64 // further spectroscopic rows near the star (arcsec offsets), no rv link
	fitResidual, visits float64
}

// skyTestStars builds the invented sky: a random background plus the
// border cases of order testOrder.
func skyTestStars(rng *rand.Rand, nBackground int, fast bool) []star {
	var out []star
	add := func(s star) {
		s.id = fmt.Sprintf("tq%05d", len(out))
		if s.specID == "" && !math.IsNaN(s.rv) {
			s.specID = fmt.Sprintf("sp%05d", len(out))
		}
		if s.fitResidual == 0 {
			s.fitResidual, s.visits = 1.0, 14
		}
		out = append(out, s)
	}
	plain := func(ra, dec float64) star {
		plx := 0.3 + 2*rng.Float64()
		s := star{raDeg: math.Mod(ra+360, 360), decDeg: math.Max(-90, math.Min(90, dec)), plx: plx, plxErr: 0.05 + 0.1*rng.Float64(),
			pmRA: 20 * rng.NormFloat64(), pmDec: 20 * rng.NormFloat64(), rv: math.NaN()}
		if rng.Float64() < 0.7 {
			s.rv = 80 * rng.NormFloat64()
			s.specDRA, s.specDDec = 0.1*rng.NormFloat64(), 0.1*rng.NormFloat64()
		}
		return s
	}
	for range nBackground {
		ra, dec := 360*rng.Float64(), math.Asin(2*rng.Float64()-1)*180/math.Pi
		add(plain(ra, dec))
	}
	// Points on borders between pixels of order testOrder: bisect between
	// neighbouring pixel centres.
	var borders [][2]float64
	for _, pix := range []uint64{3, 17, 40, 77, 100, 131, 170, 190} {
		th, ph := healpix.Pix2AngNest(testOrder, pix)
		for _, nb := range nbs(pix) {
			if nb < 0 {
				continue
			}
			th2, ph2 := healpix.Pix2AngNest(testOrder, uint64(nb))
			borders = append(borders, borderPoint(pix, th, ph, th2, ph2))
		}
	}
	off := func(raDeg, decDeg, dRAArcsec, dDecArcsec float64) (float64, float64) {
		dec := decDeg + dDecArcsec/3600
		return raDeg + dRAArcsec/3600/math.Max(math.Cos(dec*units.RadPerDeg), 1e-6), dec
	}
	for k, b := range borders {
		switch k % 5 {
		case 0: // a dense cluster of 25 stars within 3", spectra for most
			for range 25 {
				ra, dec := off(b[0], b[1], 3*(2*rng.Float64()-1), 3*(2*rng.Float64()-1))
				s := plain(ra, dec)
				s.pmRA, s.pmDec = 0.5*rng.NormFloat64(), 0.5*rng.NormFloat64()
				add(s)
			}
		case 1: // duplicates 0.2" apart across the border
			for _, d := range []float64{-0.1, 0.1} {
				ra, dec := off(b[0], b[1], d, d)
				add(plain(ra, dec))
			}
		case 2: // a fast star whose counterpart lies 24" away at the other epoch, unbound
			s := plain(b[0], b[1])
			s.pmRA, s.pmDec, s.plx, s.plxErr, s.rv = 2000, -2000, 4, 0.02, 900
			if !fast {
				s.pmRA, s.pmDec = 0, 0
			}
			add(s)
		case 3: // an ambiguous pair: two spectra 0.5" and 0.55" away on either side
			s := plain(b[0], b[1])
			s.pmRA, s.pmDec = 0, 0
			s.specDRA, s.specDDec = 0.5, 0
			s.extraSpec = [][2]float64{{-0.55, 0}}
			if math.IsNaN(s.rv) {
				s.rv = 30
			}
			add(s)
		case 4: // a chain: primaries 0.8" apart each with a spectrum between
			for j := -3; j <= 3; j++ {
				ra, dec := off(b[0], b[1], 0.8*float64(j), 0)
				s := plain(ra, dec)
				s.pmRA, s.pmDec, s.rv = 0, 0, 40
				s.specDRA = 0.4
				add(s)
			}
		}
	}
	// The poles: exactly on them and in clusters around them.
	for _, dec := range []float64{90, -90} {
		for k := range 8 {
			s := plain(45*float64(k), dec-math.Copysign(1e-4*float64(k), dec))
			s.pmRA, s.pmDec = 3*rng.NormFloat64(), 3*rng.NormFloat64()
			add(s)
		}
		add(plain(0, dec))
	}
	// The RA wrap, in the equatorial zone and at mid latitude.
	for _, dec := range []float64{0, 41.8, -41.8} {
		for _, ra := range []float64{359.99995, 0.00005, 359.9999, 0.0001} {
			add(plain(ra, dec))
		}
	}
	return out
}

// borderPoint bisects the great-circle segment from the centre of pixel
// pix towards another centre down to the point where its pixel changes.
func borderPoint(pix uint64, th1, ph1, th2, ph2 float64) [2]float64 {
	a, b := unit(th1, ph1), unit(th2, ph2)
	lo, hi := 0.0, 1.0
	at := func(t float64) (float64, float64) {
		v := [3]float64{a[0] + t*(b[0]-a[0]), a[1] + t*(b[1]-a[1]), a[2] + t*(b[2]-a[2])}
		n := math.Sqrt(v[0]*v[0] + v[1]*v[1] + v[2]*v[2])
		return math.Acos(v[2] / n), math.Atan2(v[1], v[0])
	}
	for range 60 {
		mid := (lo + hi) / 2
		th, ph := at(mid)
		if healpix.Ang2PixNest(testOrder, th, ph) == pix {
			lo = mid
		} else {
			hi = mid
		}
	}
	th, ph := at(lo)
	return [2]float64{math.Mod(ph/units.RadPerDeg+360, 360), 90 - th/units.RadPerDeg}
}

func nbs(pix uint64) []int64 {
	n := healpix.NeighboursNest(testOrder, pix)
	return n[:4]
}

func unit(th, ph float64) [3]float64 {
	return [3]float64{math.Sin(th) * math.Cos(ph), math.Sin(th) * math.Sin(ph), math.Cos(th)}
}

// writeSky writes the catalogs and a campaign file and returns its path.
func writeSky(t *testing.T, dir string, stars []star, release string) string {
	t.Helper()
	var p, s strings.Builder
	p.WriteString("id,ra,dec,ra_err,dec_err,parallax,parallax_err,pm_ra,pm_ra_err,pm_dec,pm_dec_err,fit_residual,fit_visits\n")
	s.WriteString("id,ra,dec,rv,rv_err\n")
	dt := secondaryEpch - primaryEpoch
	for _, x := range stars {
		fmt.Fprintf(&p, "%s,%.10f,%.10f,0.05,0.05,%.4f,%.4f,%.4f,0.05,%.4f,0.05,%.3f,%g\n",
			x.id, x.raDeg, x.decDeg, x.plx, x.plxErr, x.pmRA, x.pmDec, x.fitResidual, x.visits)
		if x.specID == "" {
			continue
		}
		cosd := math.Max(math.Cos(x.decDeg*units.RadPerDeg), 1e-6)
		ra := x.raDeg + (x.pmRA*dt/1000+x.specDRA)/3600/cosd
		dec := math.Max(-90, math.Min(90, x.decDeg+(x.pmDec*dt/1000+x.specDDec)/3600))
		fmt.Fprintf(&s, "%s,%.10f,%.10f,%.3f,2.0\n", x.specID, math.Mod(ra+360, 360), dec, x.rv)
		for k, e := range x.extraSpec {
			ra := x.raDeg + (x.pmRA*dt/1000+e[0])/3600/cosd
			dec := x.decDeg + (x.pmDec*dt/1000+e[1])/3600
			fmt.Fprintf(&s, "%sx%d,%.10f,%.10f,%.3f,2.0\n", x.specID, k, math.Mod(ra+360, 360), dec, x.rv+5)
		}
	}
	if err := os.WriteFile(filepath.Join(dir, "astro_"+release+".csv"), []byte(p.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "spec_"+release+".csv"), []byte(s.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "campaign.toml")
	text := fmt.Sprintf(`name = "tiling-test"
seed = 11

[match]
radius_arcsec = 1.0
duplicate_radius_arcsec = 0.4

[[catalog]]
name = "brellin_astro"
file = "astro_%[1]s.csv"
role = "astrometry"
epoch = %[2]g
release = "%[1]s"

[[catalog]]
name = "ostvar_spec"
file = "spec_%[1]s.csv"
role = "spectroscopy"
epoch = %[3]g
release = "%[1]s"

[kinematics]
samples = 200
trace_samples = 40
`, release, primaryEpoch, secondaryEpch)
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// runTiles runs, in this process, every tile of the split in dir whose
// ledger is not up to date, and returns their names.
func runTiles(t *testing.T, ctx context.Context, e *vetting.Engine, dir string) []string {
	t.Helper()
	p, err := ReadPlan(dir)
	if err != nil {
		t.Fatal(err)
	}
	states, err := States(ctx, dir, p)
	if err != nil {
		t.Fatal(err)
	}
	var ran []string
	for _, st := range states {
		if st.Problem == "" {
			continue
		}
		tc, err := campaign.Load(st.Tile.CampaignPath(dir))
		if err != nil {
			t.Fatal(err)
		}
		if _, err := e.Run(ctx, tc, vetting.RunOptions{}); err != nil {
			t.Fatalf("tile %s: %v", st.Tile.Name, err)
		}
		ran = append(ran, st.Tile.Name)
	}
	return ran
}

// digests returns the star digests of a ledger's last complete run and
// the run.
func digests(t *testing.T, ctx context.Context, path string) (map[string]string, *db.Run) {
	t.Helper()
	l, err := db.Open(ctx, path, db.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	run, err := l.LastCompleteRun(ctx)
	if err != nil || run == nil {
		t.Fatalf("%s: no complete run (%v)", path, err)
	}
	d, err := l.StarDigests(ctx, run.ID)
	if err != nil {
		t.Fatal(err)
	}
	return d, run
}

// sameStars fails the test unless both ledgers' last runs hold the same
// stars with the same results, and the same counts.
func sameStars(t *testing.T, ctx context.Context, single, gathered string) {
	t.Helper()
	a, ra := digests(t, ctx, single)
	b, rb := digests(t, ctx, gathered)
	if len(a) != len(b) {
		t.Errorf("single run holds %d stars, gathered %d", len(a), len(b))
	}
	var bad []string
	for id, h := range a {
		if b[id] != h {
			bad = append(bad, id)
		}
	}
	slices.Sort(bad)
	if len(bad) > 0 {
		t.Errorf("%d stars differ between the single and the gathered run, e.g. %v", len(bad), bad[:min(len(bad), 8)])
	}
	if ra.StarsTotal != rb.StarsTotal || ra.StarsComputed != rb.StarsComputed || ra.StarsCarried != rb.StarsCarried ||
		ra.RowsQuarantined != rb.RowsQuarantined || ra.ModelHash != rb.ModelHash || ra.RulesetHash != rb.RulesetHash ||
		ra.ConfigHash != rb.ConfigHash || ra.MatchHash != rb.MatchHash {
		t.Errorf("runs differ:\nsingle   %+v\ngathered %+v", *ra, *rb)
	}
}

func TestGatheredEqualsSingle(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a campaign whole and in tiles")
	}
	ctx := context.Background()
	rng := rand.New(rand.NewPCG(2026, 12))
	stars := skyTestStars(rng, 2500, true)
	dir := t.TempDir()
	cpath := writeSky(t, dir, stars, "r1")
	c, err := campaign.Load(cpath)
	if err != nil {
		t.Fatal(err)
	}
	e := &vetting.Engine{Workers: 2, ToolVersion: "test"}
	single := filepath.Join(dir, "single.db")
	if _, err := e.Run(ctx, c, vetting.RunOptions{LedgerPath: single}); err != nil {
		t.Fatal(err)
	}
	split := filepath.Join(dir, "split")
	p, err := Split(ctx, e, c, split, SplitOptions{Order: testOrder})
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Tiles) < 100 {
		t.Fatalf("only %d tiles at order %d: the test needs borders", len(p.Tiles), testOrder)
	}
	owned := 0
	for _, tl := range p.Tiles {
		owned += tl.Owned
	}
	if owned != len(stars) {
		t.Fatalf("tiles own %d stars, the catalog has %d", owned, len(stars))
	}
	// The fast stars' proper motion sets the margin: 2.83"/yr over 8 yr.
	if span := p.Reaches["ostvar_spec"]; math.Abs(span.ShiftArcsec-2000*math.Sqrt2*8/1000) > 0.05 {
		t.Errorf("largest shift %.4g\", want about %.4g\"", span.ShiftArcsec, 2000*math.Sqrt2*8/1000)
	}
	t.Logf("r1: prior %v reach %v geometry %.8s", p.Prior, p.ReachArcsec, p.Geometry)
	runTiles(t, ctx, e, split)
	gathered := filepath.Join(dir, "gathered.db")
	if _, err := Gather(ctx, split, GatherOptions{Ledger: gathered, ToolVersion: "test"}); err != nil {
		t.Fatal(err)
	}
	sameStars(t, ctx, single, gathered)

	// A catalog update that leaves the priors alone (every sky cell holds
	// both catalogs, and their counts do not change): a few tiles run.
	stars[5].plx *= 1.5
	stars[600].pmRA += 3
	k := slices.IndexFunc(stars, func(s star) bool { return s.specID == "" && s.raDeg > 200 })
	stars = slices.Delete(stars, k, k+1)
	stars = append(stars, star{id: "tqnew01", raDeg: 120, decDeg: -30, plx: 1, plxErr: 0.1, rv: math.NaN(), fitResidual: 1, visits: 12})
	update(t, ctx, e, dir, stars, "r2", single, split, gathered, func(ran int) {
		if ran == 0 || ran > len(p.Tiles)/4 {
			t.Errorf("after a small update %d of %d tiles ran again", ran, len(p.Tiles))
		}
	})
	// One that changes a prior (a new spectrum): every match probability,
	// so every tile, runs again, and the single run recomputes every
	// matched star.
	// It also empties one tile: its stars are withdrawn by the tile's own
	// run, as the single run withdraws them.
	stars = append(stars, star{id: "tqnew02", raDeg: 10, decDeg: 10, plx: 1, plxErr: 0.1, rv: 20, specID: "spnew02", fitResidual: 1, visits: 12})
	stars = slices.Delete(stars, 1000, 1001)
	emptied, _ := vetting.Owner(testOrder, stars[50].raDeg, stars[50].decDeg)
	before := len(stars)
	stars = slices.DeleteFunc(stars, func(s star) bool {
		px, ok := vetting.Owner(testOrder, s.raDeg, s.decDeg)
		return ok && px == emptied
	})
	if before-len(stars) < 3 {
		t.Fatalf("emptying tile %d removed %d stars", emptied, before-len(stars))
	}
	update(t, ctx, e, dir, stars, "r3", single, split, gathered, func(ran int) {
		if ran != len(p.Tiles) {
			t.Errorf("after a prior changed %d of %d tiles ran again", ran, len(p.Tiles))
		}
	})
}

// update writes a new release, runs it whole and in tiles and compares.
func update(t *testing.T, ctx context.Context, e *vetting.Engine, dir string, stars []star, release, single, split, gathered string, checkRan func(int)) {
	t.Helper()
	c, err := campaign.Load(writeSky(t, dir, stars, release))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := e.Run(ctx, c, vetting.RunOptions{LedgerPath: single}); err != nil {
		t.Fatal(err)
	}
	if _, err := Split(ctx, e, c, split, SplitOptions{Order: -1}); err != nil {
		t.Fatal(err)
	}
	if p, err := ReadPlan(split); err == nil {
		t.Logf("%s: prior %v reach %v geometry %.8s", release, p.Prior, p.ReachArcsec, p.Geometry)
	}
	ran := runTiles(t, ctx, e, split)
	t.Logf("%s: %d tiles ran again", release, len(ran))
	checkRan(len(ran))
	if _, err := Gather(ctx, split, GatherOptions{Ledger: gathered, ToolVersion: "test"}); err != nil {
		t.Fatal(err)
	}
	sameStars(t, ctx, single, gathered)
}

// A margin that keeps too few steps complete must stop a tile whose
// chain of candidate pairs reaches past it, never decide it differently;
// a wide enough one gives the single run's result.
func TestShortMarginRefused(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a campaign in tiles")
	}
	ctx := context.Background()
	rng := rand.New(rand.NewPCG(7, 7))
	stars := skyTestStars(rng, 300, false) // no fast stars: a reach of about 1"
	dir := t.TempDir()
	c, err := campaign.Load(writeSky(t, dir, stars, "r1"))
	if err != nil {
		t.Fatal(err)
	}
	e := &vetting.Engine{Workers: 2, ToolVersion: "test"}
	single := filepath.Join(dir, "single.db")
	if _, err := e.Run(ctx, c, vetting.RunOptions{LedgerPath: single}); err != nil {
		t.Fatal(err)
	}
	for _, hops := range []int{1, 8} {
		split := filepath.Join(dir, fmt.Sprintf("split%d", hops))
		p, err := Split(ctx, e, c, split, SplitOptions{Order: testOrder, Hops: hops})
		if err != nil {
			t.Fatal(err)
		}
		// The match radius plus the slow stars' shift over 8 yr.
		if p.ReachArcsec > 2 {
			t.Fatalf("reach %g\", want below 2\"", p.ReachArcsec)
		}
		refused := 0
		for _, tl := range p.Tiles {
			tc, err := campaign.Load(tl.CampaignPath(split))
			if err != nil {
				t.Fatal(err)
			}
			_, err = e.Run(ctx, tc, vetting.RunOptions{})
			switch {
			case errors.Is(err, crossmatch.ErrRegionReach):
				refused++
			case err != nil:
				t.Fatalf("tile %s: %v", tl.Name, err)
			}
		}
		t.Logf("hops %d: margin %.3g\", %d of %d tiles refused", hops, p.MarginArcsec, refused, len(p.Tiles))
		if hops == 1 {
			// Chains of 0.8" steps run 2.4" across borders: past a 1" inner zone.
			if refused == 0 {
				t.Error("no tile refused its chains with a margin of 2 reaches")
			}
			continue
		}
		if refused > 0 {
			t.Fatalf("%d tiles refused with a margin of %g\"", refused, p.MarginArcsec)
		}
		gathered := filepath.Join(dir, "gathered.db")
		if _, err := Gather(ctx, split, GatherOptions{Ledger: gathered, ToolVersion: "test"}); err != nil {
			t.Fatal(err)
		}
		sameStars(t, ctx, single, gathered)
	}
}
