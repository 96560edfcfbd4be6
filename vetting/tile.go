package vetting

import (
	"context"
	"math"
	"slices"

	"starvet/campaign"
	"starvet/catalog"
	"starvet/crossmatch/sky/healpix"
	"starvet/db"
	"starvet/internal/parallel"
	"starvet/internal/units"
)

// A tile's campaign (campaign.Tile set) is an ordinary run on the tile's
// shards, with three differences: each secondary is matched with the
// whole catalogs' prior, Match refuses an owned star whose candidate graph
// reaches rows near the margin's edge (crossmatch.Region), and only the
// stars the tile owns are computed and written.

// Owner is the tile pixel at order that owns a primary row at (raDeg,
// decDeg), its position at the primary epoch; ok is false for a row
// without a position (the plan gives those to one tile).
func Owner(order int, raDeg, decDeg float64) (pixel uint64, ok bool) {
	if math.IsNaN(raDeg) || math.IsNaN(decDeg) {
		return 0, false
	}
	return healpix.Ang2PixNestRADec(order, raDeg, decDeg), true
}

// ownedRows flags the primary rows the tile owns.
func ownedRows(t *campaign.Tile, tab *catalog.Table) []bool {
	ra, dec := tab.Cols[catalog.RA], tab.Cols[catalog.Dec]
	owned := make([]bool, tab.Len())
	for i := range owned {
		p, ok := Owner(t.Order, ra[i], dec[i])
		owned[i] = (ok && p == t.Pixel) || (!ok && t.Unplaced)
	}
	return owned
}

// InnerRows flags the rows of tab that lie within t.InnerArcsec of the
// tile in the sense of healpix.ParentsNear at t.FineOrder: every row of
// the whole catalogs within distance d of such a row lies within
// InnerArcsec + d of the tile, and the split put every row within its
// margin into the shard. A row without a position is inner only in the
// tile that owns the unplaced rows.
func InnerRows(ctx context.Context, t *campaign.Tile, tab *catalog.Table, workers int) ([]bool, error) {
	ra, dec := tab.Cols[catalog.RA], tab.Cols[catalog.Dec]
	inner := make([]bool, tab.Len())
	radius := t.InnerArcsec * units.RadPerArcsec
	const batch = 4096
	err := parallel.Batches(ctx, tab.Len(), batch, workers, func(sc *[2][]uint64, lo, hi int) {
		for i := lo; i < hi; i++ {
			if math.IsNaN(ra[i]) || math.IsNaN(dec[i]) {
				inner[i] = t.Unplaced
				continue
			}
			if p, _ := Owner(t.Order, ra[i], dec[i]); p == t.Pixel {
				// A row in the tile: its own fine pixel is the tile's, so
				// ParentsNear would find the tile at any radius.
				inner[i] = true
				continue
			}
			var parents []uint64
			parents, sc[0] = healpix.ParentsNear(t.Order, t.FineOrder, (90-dec[i])*units.RadPerDeg, ra[i]*units.RadPerDeg, radius, sc[0], sc[1])
			sc[1] = parents
			_, inner[i] = slices.BinarySearch(parents, t.Pixel)
		}
	}, nil)
	return inner, err
}

// keepOwned drops from order (primary rows in id order) the rows the tile
// does not own; owned nil keeps every row.
func keepOwned(order []int32, owned []bool) []int32 {
	if owned == nil {
		return order
	}
	out := order[:0]
	for _, i := range order {
		if owned[i] {
			out = append(out, i)
		}
	}
	return out
}

// RunInfo is what the ledger records for a run of campaign c (its hashes
// and settings), as Run would write it: a gathered run of a split
// campaign records the whole campaign's.
func RunInfo(c *campaign.Campaign, toolVersion, rulesOverride string, full bool) (db.RunInfo, error) {
	s, err := newRunSettings(c, RunOptions{RulesOverride: rulesOverride, Full: full})
	if err != nil {
		return db.RunInfo{}, err
	}
	return runInfo(toolVersion, s), nil
}
