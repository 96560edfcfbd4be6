package scenario

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"sort"
)

// revisedFraction is the share of ordinary primary stars whose astrometry a
// new release revises.
const revisedFraction = 0.02

// Update simulates the next release of the catalogs in dir: the
// astrometric catalog is rewritten with revised astrometry (new errors
// 0.5-0.8 times the old, values redrawn about the truth) for about 2 per
// cent of the stars that are neither traps nor bad rows, and the
// spectroscopic catalog gains the spectra held back until this release
// (about a tenth of the injected stars in the footprint and one per cent of
// the bright background there). The campaign file is rewritten with the new
// file names and release labels, and truth.csv and bad_rows.csv with the
// new state; s.Changed lists the primary ids whose inputs changed. s must
// come from Generate (or an earlier Update) in this process.
func Update(s *Scenario, dir string, seed uint64) error {
	if s == nil || s.galaxy == nil {
		return errors.New("scenario: update needs a scenario made by Generate")
	}
	s.Dir = dir
	s.Release++
	rng := rand.New(rand.NewPCG(seed, streamUpdate+uint64(s.Release)))
	changed := map[string]bool{}
	for _, st := range s.stars {
		if st.trap != "" || st.twinOf != nil || st.bad != nil {
			continue
		}
		if rng.Float64() < revisedFraction {
			st.astro = observeAstro(st, rng, 0.5+0.3*rng.Float64(), true)
			st.revised = s.Release
			changed[st.id] = true
		}
	}
	for _, r := range s.specRows {
		if r.release == s.Release && r.host != nil {
			changed[r.host.id] = true
		}
	}
	s.Changed = s.Changed[:0]
	for id := range changed {
		s.Changed = append(s.Changed, id)
	}
	sort.Strings(s.Changed)
	if err := s.write(); err != nil {
		return fmt.Errorf("scenario: update to release %d: %w", s.Release, err)
	}
	return nil
}
