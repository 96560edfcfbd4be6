package campaign

import (
	"bytes"
	"fmt"
	"strings"

	"github.com/BurntSushi/toml"

	"starvet/catalog"
)

// TileText writes the campaign file of one sky tile of c: every setting
// of c with its effective value, the rule set by absolute path, the
// ledger ledgerFile and the catalogs cats (the tile's shards, File relative
// to the tile's directory), and the [tile] table t. Parsing the text in
// the tile's directory gives the same settings, so a tile's Monte Carlo,
// rules and model are exactly the whole campaign's. header is written as
// comment lines at the top.
func (c *Campaign) TileText(header string, cats []catalog.Spec, ledgerFile string, t *Tile) ([]byte, error) {
	doc := map[string]any{}
	for _, s := range settings {
		if s.name == "match.radius_floor_arcsec" && c.Match.NSigma == 0 {
			continue // Parse refuses it without n_sigma
		}
		p := s.path()
		m := doc
		for _, k := range p[:len(p)-1] {
			sub, ok := m[k].(map[string]any)
			if !ok {
				sub = map[string]any{}
				m[k] = sub
			}
			m = sub
		}
		m[p[len(p)-1]] = s.value(c)
	}
	doc["name"] = c.Name
	doc["ledger"] = ledgerFile
	doc["rules"] = c.Rules
	var cs []map[string]any
	for _, s := range cats {
		e := map[string]any{"name": s.Name, "file": s.File, "role": string(s.Role), "epoch": s.EpochJyr,
			"position_err_mas": s.PositionErrMas}
		if s.Format != "" {
			e["format"] = s.Format
		}
		if s.Release != "" {
			e["release"] = s.Release
		}
		cs = append(cs, e)
	}
	doc["catalog"] = cs
	pot, _ := doc["potential"].(map[string]any)
	if pot == nil {
		pot = map[string]any{}
		doc["potential"] = pot
	}
	if c.Potential.Model != "" {
		pot["model"] = c.Potential.Model
	}
	if len(c.Potential.Components) > 0 {
		var comps []map[string]any
		for _, x := range c.Potential.Components {
			comps = append(comps, map[string]any{"kind": x.Kind, "mass_msun": x.MassMsun, "scale_kpc": x.ScaleKpc, "a_kpc": x.AKpc, "b_kpc": x.BKpc})
		}
		pot["component"] = comps
	}
	doc["tile"] = map[string]any{"order": t.Order, "pixel": int64(t.Pixel), "fine_order": t.FineOrder,
		"inner_arcsec": t.InnerArcsec, "unplaced": t.Unplaced, "plan": t.Plan, "prior": t.Prior}
	var b bytes.Buffer
	for _, line := range strings.Split(strings.TrimSpace(header), "\n") {
		fmt.Fprintf(&b, "# %s\n", line)
	}
	if err := toml.NewEncoder(&b).Encode(doc); err != nil {
		return nil, fmt.Errorf("campaign %s: tile text: %w", c.File, err)
	}
	return b.Bytes(), nil
}
