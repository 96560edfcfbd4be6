package tiling

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"

	"starvet/campaign"
	"starvet/catalog"
	"starvet/catalog/shard"
	"starvet/crossmatch"
	"starvet/crossmatch/sky/healpix"
	"starvet/db"
	"starvet/internal/fingerprint"
	"starvet/internal/parallel"
	"starvet/internal/units"
	"starvet/vetting"
)

// Defaults of SplitOptions.
const (
	DefaultStarsPerTile = 250_000
	DefaultHops         = 3
	// maxAutoOrder is the finest order StarsPerTile may choose (about
	// 0.014 deg^2 per tile).
	maxAutoOrder = 12
)

// SplitOptions tune Split.
type SplitOptions struct {
	// Order is the tiles' HEALPix order; < 0 chooses the coarsest order
	// at which no tile owns more than StarsPerTile primaries. A directory
	// split before keeps its order.
	Order        int
	StarsPerTile int // 0: DefaultStarsPerTile
	// Hops is how many candidate-pair steps from an owned star the margin
	// keeps complete (0: DefaultHops); a longer chain that reaches a tile's
	// border stops the tile's run with an error (crossmatch.ErrRegionReach).
	Hops   int
	Strict bool // the first bad input row is fatal
}

// Split reads the campaign's catalogs once and writes, under dir, one
// directory per sky tile holding the tile's shards and campaign, the
// rows the catalogs quarantined, and the plan (returned). A directory
// already split keeps its order and its tiles, so its tile ledgers carry
// their stars forward.
func Split(ctx context.Context, e *vetting.Engine, c *campaign.Campaign, dir string, opt SplitOptions) (*Plan, error) {
	if opt.StarsPerTile <= 0 {
		opt.StarsPerTile = DefaultStarsPerTile
	}
	if opt.Hops <= 0 {
		opt.Hops = DefaultHops
	}
	campaignPath, err := filepath.Abs(c.File)
	if err != nil {
		return nil, err
	}
	old, err := ReadPlan(dir)
	switch {
	case err == nil:
		if old.Campaign != campaignPath {
			return nil, fmt.Errorf("%s was split from campaign %s, not %s: split into another directory", dir, old.Campaign, campaignPath)
		}
		if opt.Order >= 0 && opt.Order != old.Order {
			return nil, fmt.Errorf("%s was split at order %d, not %d: split into another directory", dir, old.Order, opt.Order)
		}
		opt.Order = old.Order
	case errors.Is(err, fs.ErrNotExist):
		old = nil
	default:
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	cats, err := e.Ingest(ctx, c, opt.Strict, dir)
	if err != nil {
		return nil, err
	}
	p := &Plan{Version: planVersion, Campaign: campaignPath, CampaignHash: c.Hash(), Hops: opt.Hops,
		Reaches: map[string]CatalogSpan{}, Prior: map[string]float64{}}
	if err := p.reach(ctx, c, cats, e.Workers); err != nil {
		return nil, err
	}
	owners, unplaced := ownersOf(cats.Primary, opt.Order)
	if opt.Order < 0 {
		opt.Order = chooseOrder(cats.Primary, opt.StarsPerTile)
		owners, unplaced = ownersOf(cats.Primary, opt.Order)
	}
	p.Order = opt.Order
	p.FineOrder = fineOrder(p.Order, p.MarginArcsec)
	if old != nil && old.Hops == p.Hops && p.ReachArcsec <= old.ReachArcsec {
		// The old margin still covers the data: keeping it keeps the
		// shards and campaigns of unchanged tiles, which need not run.
		p.ReachArcsec, p.MarginArcsec, p.InnerArcsec, p.FineOrder = old.ReachArcsec, old.MarginArcsec, old.InnerArcsec, old.FineOrder
	}
	p.Geometry, err = fingerprint.JSON(struct {
		Order, FineOrder, Hops int
		Reach, Margin, Inner   float64
	}{p.Order, p.FineOrder, p.Hops, p.ReachArcsec, p.MarginArcsec, p.InnerArcsec})
	if err != nil {
		return nil, err
	}
	p.makeTiles(owners, unplaced, old)
	members, err := p.assign(ctx, cats, owners, e.Workers)
	if err != nil {
		return nil, err
	}
	if err := p.writeTiles(ctx, c, dir, cats, members, old, e.Workers); err != nil {
		return nil, err
	}
	p.Catalogs, err = writeQuarantine(dir, cats)
	if err != nil {
		return nil, err
	}
	return p, writeJSON(filepath.Join(dir, PlanFile), p)
}

// reach sets the prior and the reach of every secondary catalog, and the
// margins.
func (p *Plan) reach(ctx context.Context, c *campaign.Campaign, cats *vetting.Catalogs, workers int) error {
	r := c.Match.DuplicateRadiusArcsec
	for k, t := range cats.Secondaries {
		rc, err := crossmatch.Survey(ctx, cats.Primary, t, vetting.MatchOptions(c, cats, k, workers))
		if err != nil {
			return fmt.Errorf("split: match %s with %s: %w", cats.Primary.Name, t.Name, err)
		}
		name := cats.Specs[k+1].Name
		p.Prior[name] = rc.Prior
		p.Reaches[name] = CatalogSpan{SearchArcsec: rc.SearchArcsec, ShiftArcsec: rc.ShiftArcsec}
		r = max(r, rc.ReachArcsec())
	}
	// Room for rounding in the separations the tests compute.
	r = r*(1+1e-9) + 1e-6
	p.ReachArcsec = r
	p.InnerArcsec = float64(p.Hops) * r
	p.MarginArcsec = p.InnerArcsec + r
	return nil
}

// ownersOf returns each primary row's tile pixel and whether it has a
// position (order < 0: none yet).
func ownersOf(t *catalog.Table, order int) ([]uint64, []bool) {
	if order < 0 {
		return nil, nil
	}
	ra, dec := t.Cols[catalog.RA], t.Cols[catalog.Dec]
	owners := make([]uint64, t.Len())
	unplaced := make([]bool, t.Len())
	for i := range owners {
		var ok bool
		owners[i], ok = vetting.Owner(order, ra[i], dec[i])
		unplaced[i] = !ok
	}
	return owners, unplaced
}

// chooseOrder is the coarsest order (up to maxAutoOrder) at which no
// pixel holds more than perTile primaries.
func chooseOrder(t *catalog.Table, perTile int) int {
	owners, _ := ownersOf(t, maxAutoOrder)
	slices.Sort(owners)
	for order := 0; order < maxAutoOrder; order++ {
		shift := 2 * uint(maxAutoOrder-order)
		most, run := 0, 0
		for i, o := range owners {
			if i > 0 && o>>shift == owners[i-1]>>shift {
				run++
			} else {
				run = 1
			}
			most = max(most, run)
		}
		if most <= perTile {
			return order
		}
	}
	return maxAutoOrder
}

// fineOrder is the order of the margin tests: the coarsest at or above
// order whose pixel bound is below the margin, so that a margin query
// walks a few dozen pixels.
func fineOrder(order int, marginArcsec float64) int {
	for f := order; f < healpix.MaxOrder; f++ {
		if healpix.MaxPixRadRad(f) < marginArcsec*units.RadPerArcsec {
			return f
		}
	}
	return healpix.MaxOrder
}

// makeTiles lists the tiles: every pixel that owns a primary, and every
// tile of the previous plan (whose ledger holds stars that may now be
// withdrawn), ascending by pixel. The first owns the unplaced primaries.
func (p *Plan) makeTiles(owners []uint64, unplaced []bool, old *Plan) {
	var pixels []uint64
	for i, o := range owners {
		if !unplaced[i] {
			pixels = append(pixels, o)
		}
	}
	if old != nil {
		for _, t := range old.Tiles {
			pixels = append(pixels, t.Pixel)
		}
	}
	if len(pixels) == 0 {
		pixels = append(pixels, 0)
	}
	slices.Sort(pixels)
	pixels = slices.Compact(pixels)
	p.Tiles = make([]Tile, len(pixels))
	for k, px := range pixels {
		p.Tiles[k] = Tile{Name: tileName(p.Order, px), Pixel: px, Unplaced: k == 0, Rows: map[string]int{}, Shards: map[string]string{}, Contents: map[string]string{}}
	}
	for i, o := range owners {
		if unplaced[i] {
			p.Tiles[0].Owned++
		} else {
			k, _ := slices.BinarySearch(pixels, o)
			p.Tiles[k].Owned++
		}
	}
}

// tileOf is the index of the tile of pixel, or -1.
func (p *Plan) tileOf(pixel uint64) int {
	k, ok := slices.BinarySearchFunc(p.Tiles, pixel, func(t Tile, px uint64) int {
		switch {
		case t.Pixel < px:
			return -1
		case t.Pixel > px:
			return 1
		}
		return 0
	})
	if !ok {
		return -1
	}
	return k
}

// assign returns, per catalog (the primary first) and per tile, the rows
// of the tile's shard, ascending: the rows whose pixel is the tile's and
// those within its margin (healpix.ParentsNear at FineOrder with radius
// MarginArcsec, after the cheap healpix.DiscInside test). A primary row's
// own tile is its owner's (vetting.Owner), whatever the margin test says.
func (p *Plan) assign(ctx context.Context, cats *vetting.Catalogs, owners []uint64, workers int) ([][][]int32, error) {
	tables := append([]*catalog.Table{cats.Primary}, cats.Secondaries...)
	out := make([][][]int32, len(tables))
	marginRad := p.MarginArcsec * units.RadPerArcsec
	reach := marginRad + healpix.MaxPixRadRad(p.FineOrder)
	const batch = 8192
	for ci, t := range tables {
		ra, dec := t.Cols[catalog.RA], t.Cols[catalog.Dec]
		nb := (t.Len() + batch - 1) / batch
		parts := make([][][2]int32, nb) // (tile, row) pairs per batch
		err := parallel.Batches(ctx, t.Len(), batch, workers, func(sc *[2][]uint64, lo, hi int) {
			var pairs [][2]int32
			for i := lo; i < hi; i++ {
				if math.IsNaN(ra[i]) || math.IsNaN(dec[i]) {
					pairs = append(pairs, [2]int32{0, int32(i)})
					continue
				}
				theta, phi := (90-dec[i])*units.RadPerDeg, ra[i]*units.RadPerDeg
				own, inside := healpix.DiscInside(p.Order, p.FineOrder, theta, phi, reach)
				if ci == 0 {
					own = owners[i]
				}
				if k := p.tileOf(own); k >= 0 {
					pairs = append(pairs, [2]int32{int32(k), int32(i)})
				}
				if inside {
					continue
				}
				var near []uint64
				near, sc[0] = healpix.ParentsNear(p.Order, p.FineOrder, theta, phi, marginRad, sc[0], sc[1])
				sc[1] = near
				for _, px := range near {
					if k := p.tileOf(px); k >= 0 && px != own {
						pairs = append(pairs, [2]int32{int32(k), int32(i)})
					}
				}
			}
			parts[lo/batch] = pairs
		}, nil)
		if err != nil {
			return nil, err
		}
		// Batches are in row order, so each tile's rows come out ascending.
		per := make([][]int32, len(p.Tiles))
		for _, pairs := range parts {
			for _, pr := range pairs {
				per[pr[0]] = append(per[pr[0]], pr[1])
			}
		}
		out[ci] = per
	}
	return out, nil
}

// writeTiles writes every tile's shards and campaign, several tiles at
// once, and records their counts and hashes in the plan.
func (p *Plan) writeTiles(ctx context.Context, c *campaign.Campaign, dir string, cats *vetting.Catalogs, members [][][]int32, old *Plan, workers int) error {
	tables := append([]*catalog.Table{cats.Primary}, cats.Secondaries...)
	oldTiles := map[string]*Tile{}
	if old != nil {
		for k := range old.Tiles {
			oldTiles[old.Tiles[k].Name] = &old.Tiles[k]
		}
	}
	errs := make([]error, len(p.Tiles))
	err := parallel.Batches(ctx, len(p.Tiles), 1, workers, func(_ *struct{}, k, _ int) {
		t := &p.Tiles[k]
		errs[k] = func() error {
			tdir := t.Dir(dir)
			if err := os.MkdirAll(tdir, 0o755); err != nil {
				return err
			}
			var specs []catalog.Spec
			for ci, tab := range tables {
				spec := cats.Specs[ci]
				file := spec.Name + ".shard"
				path := filepath.Join(tdir, file)
				rows := members[ci][k]
				content := contentHash(tab, rows)
				t.Rows[spec.Name], t.Contents[spec.Name] = len(rows), content
				if ot := oldTiles[t.Name]; ot != nil && ot.Contents[spec.Name] == content {
					// The same rows as the shard written before: keep its
					// bytes (its source lines may be an older release's,
					// used only in error messages the split would have
					// raised first), so its tile need not run again.
					if sum, err := fileSHA256(path); err == nil && sum == ot.Shards[spec.Name] {
						t.Shards[spec.Name] = sum
						specs = append(specs, tileSpec(spec, file, tab))
						continue
					}
				}
				// Without the release label, which changes with every
				// release but changes no result.
				unlabelled := *tab
				unlabelled.Release = ""
				if err := shard.Write(path, &unlabelled, rows); err != nil {
					return err
				}
				sum, err := fileSHA256(path)
				if err != nil {
					return err
				}
				t.Shards[spec.Name] = sum
				specs = append(specs, tileSpec(spec, file, tab))
			}
			header := fmt.Sprintf("Sky tile %s (HEALPix order %d, nested pixel %d) of campaign %s,\nwritten by starvet tile. Do not edit: split the campaign again instead.", t.Name, p.Order, t.Pixel, p.Campaign)
			text, err := c.TileText(header, specs, tileLedger, &campaign.Tile{Order: p.Order, Pixel: t.Pixel, Unplaced: t.Unplaced,
				FineOrder: p.FineOrder, InnerArcsec: p.InnerArcsec, Prior: p.Prior, Plan: p.Geometry})
			if err != nil {
				return err
			}
			path := t.CampaignPath(dir)
			if err := os.WriteFile(path, text, 0o644); err != nil {
				return err
			}
			tc, err := campaign.Load(path)
			if err != nil {
				return fmt.Errorf("tile %s: the campaign written does not read back: %w", t.Name, err)
			}
			t.CampaignHash = tc.Hash()
			return nil
		}()
	}, nil)
	if err != nil {
		return err
	}
	for _, err := range errs {
		if err != nil {
			return err // the first; the others are usually the same
		}
	}
	return nil
}

// tileSpec is the tile campaign's entry for the shard file of a catalog.
func tileSpec(spec catalog.Spec, file string, tab *catalog.Table) catalog.Spec {
	return catalog.Spec{Name: spec.Name, File: file, Format: catalog.FormatShard, Role: spec.Role,
		EpochJyr: tab.EpochJyr, PositionErrMas: spec.PositionErrMas}
}

// contentHash fingerprints what a shard holds that can change a result:
// the catalog's name, role and epoch and, row by row, the id and every
// value (not the source line).
func contentHash(t *catalog.Table, rows []int32) string {
	h := sha256.New()
	var buf []byte
	buf = append(buf, t.Name...)
	buf = append(buf, 0)
	buf = append(buf, t.Role...)
	buf = binary.LittleEndian.AppendUint64(append(buf, 0), math.Float64bits(t.EpochJyr))
	for f := range t.Cols {
		if t.Cols[f] != nil {
			buf = append(buf, byte(f))
		}
	}
	h.Write(buf)
	for _, i := range rows {
		buf = append(buf[:0], t.IDs[i]...)
		buf = append(buf, 0)
		for f := range t.Cols {
			if c := t.Cols[f]; c != nil {
				buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(c[i]))
			}
		}
		h.Write(buf)
	}
	return hex.EncodeToString(h.Sum(nil))
}

// writeQuarantine keeps the catalogs' quarantined rows for the gather and
// returns the catalogs' rows as a single run would record them.
func writeQuarantine(dir string, cats *vetting.Catalogs) ([]db.CatalogRow, error) {
	rows, quarantined := vetting.CatalogRecords(cats)
	var q []db.QuarantineRow
	for _, x := range quarantined {
		q = append(q, x...)
	}
	return rows, writeJSON(filepath.Join(dir, quarantineFile), q)
}

func fileSHA256(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", fmt.Errorf("%s: %w", path, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
