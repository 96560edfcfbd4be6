package tiling

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"starvet/db"
)

// PlanFile is the split's plan, in the split directory.
const PlanFile = "plan.json"

// quarantineFile holds the rows the split quarantined, for the gather.
const quarantineFile = "quarantine.json"

// tilesDir is where the tiles' directories are, in the split directory.
const tilesDir = "tiles"

// planVersion is the layout of plan.json.
const planVersion = 1

// ErrPlan marks a split directory whose plan is missing, unreadable or
// inconsistent.
var ErrPlan = errors.New("bad split plan")

// Plan is what a split decided and counted. It is written as plan.json.
type Plan struct {
	Version int `json:"version"`
	// Campaign is the absolute path of the whole campaign's file, and
	// CampaignHash its campaign.Hash when split.
	Campaign     string `json:"campaign"`
	CampaignHash string `json:"campaign_hash"`
	// Geometry is the fingerprint of the tiling (campaign, orders,
	// margin), written into every tile's campaign as tile.plan.
	Geometry string `json:"geometry"`
	// Order is the HEALPix order of the tiles; FineOrder that of the
	// margin and inner tests (crossmatch/sky/healpix.ParentsNear).
	Order     int `json:"order"`
	FineOrder int `json:"fine_order"`
	// ReachArcsec bounds the distance between any two rows whose
	// relation (a candidate pair or duplicates) a star's result depends on;
	// MarginArcsec is how far around its pixel a tile holds rows, and
	// InnerArcsec (MarginArcsec - ReachArcsec) how far its rows are
	// complete; Hops = InnerArcsec / ReachArcsec.
	ReachArcsec  float64                `json:"reach_arcsec"`
	MarginArcsec float64                `json:"margin_arcsec"`
	InnerArcsec  float64                `json:"inner_arcsec"`
	Hops         int                    `json:"hops"`
	Reaches      map[string]CatalogSpan `json:"reaches"`
	// Prior is each secondary catalog's prior match probability over the
	// whole catalogs.
	Prior    map[string]float64 `json:"prior"`
	Catalogs []db.CatalogRow    `json:"catalogs"`
	Tiles    []Tile             `json:"tiles"`
}

// CatalogSpan is how far one secondary catalog's matching reaches.
type CatalogSpan struct {
	SearchArcsec float64 `json:"search_arcsec"`
	ShiftArcsec  float64 `json:"shift_arcsec"`
}

// Tile is one tile of a plan.
type Tile struct {
	Name  string `json:"name"`
	Pixel uint64 `json:"pixel"`
	// Unplaced: the tile owns the primaries without a position.
	Unplaced bool `json:"unplaced,omitempty"`
	// Owned counts the primaries the tile owns; Rows each catalog's rows
	// in its shard (owned and margin).
	Owned int            `json:"owned"`
	Rows  map[string]int `json:"rows"`
	// CampaignHash is the campaign.Hash of the tile's campaign file, and
	// Shards each shard's SHA-256: a tile ledger whose last complete run
	// has both is up to date.
	CampaignHash string            `json:"campaign_hash"`
	Shards       map[string]string `json:"shards"`
	// Contents fingerprints each shard's ids and values (splitting
	// again keeps a shard whose content is unchanged).
	Contents map[string]string `json:"contents"`
}

// Dir is the tile's directory under the split directory dir.
func (t *Tile) Dir(dir string) string { return filepath.Join(dir, tilesDir, t.Name) }

// CampaignPath is the tile's campaign file.
func (t *Tile) CampaignPath(dir string) string { return filepath.Join(t.Dir(dir), "campaign.toml") }

// LedgerPath is the tile's ledger.
func (t *Tile) LedgerPath(dir string) string { return filepath.Join(t.Dir(dir), tileLedger) }

// tileLedger is a tile's ledger file name in its directory.
const tileLedger = "ledger.db"

// tileName names the tile of pixel at order.
func tileName(order int, pixel uint64) string { return fmt.Sprintf("o%d-%d", order, pixel) }

// ReadPlan reads dir's plan.
func ReadPlan(dir string) (*Plan, error) {
	path := filepath.Join(dir, PlanFile)
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("%s: %w: %w", path, ErrPlan, err)
	}
	var p Plan
	if err := json.Unmarshal(data, &p); err != nil {
		return nil, fmt.Errorf("%s: %w: %w", path, ErrPlan, err)
	}
	if p.Version != planVersion {
		return nil, fmt.Errorf("%s: %w: version %d, this build writes %d", path, ErrPlan, p.Version, planVersion)
	}
	return &p, nil
}

// writeJSON writes v to path through a temporary file and a rename, so a
// reader never sees half a file.
func writeJSON(path string, v any) error {
	data, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	tmp := path + ".tmp"
	if err := os.WriteFile(tmp, append(data, '\n'), 0o644); err != nil {
		return err
	}
	return os.Rename(tmp, path)
}
