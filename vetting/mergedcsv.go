package vetting

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"starvet/catalog"
	ecsv "starvet/catalog/ecsv"
	fitscat "starvet/catalog/fits"
	votable "starvet/catalog/votable"
	"starvet/quality"
)

// WriteMerged writes one row per primary source: id, then per secondary
// catalog <name>_id, <name>_sep_arcsec, <name>_match_prob,
// <name>_candidates, <name>_ambiguous, then dup_count, and, when as is not
// nil, quality and failed_rules (ids joined by ";"), in the format path's
// ending names (WriteOut). Numbers keep full precision; unmatched cells
// are null (empty in CSV).
func WriteMerged(path string, cats *Catalogs, m *Matched, as []quality.Assessment) error {
	return WriteOut(path, MergedTable(cats, m, as))
}

// MergedTable is the merged table WriteMerged writes, with units and UCDs.
func MergedTable(cats *Catalogs, m *Matched, as []quality.Assessment) *catalog.OutTable {
	n := cats.Primary.Len()
	id := catalog.FieldColumn(catalog.ID)
	id.UCD += ";meta.main"
	id.Text = cats.Primary.IDs
	t := &catalog.OutTable{Name: "merged", Columns: []catalog.OutColumn{id}}
	for k, s := range cats.Secondaries {
		cid := catalog.OutColumn{Name: s.Name + "_id", UCD: "meta.id.cross", Description: "id of the best counterpart in " + s.Name, Text: make([]string, n)}
		sep := catalog.OutColumn{Name: s.Name + "_sep_arcsec", Unit: "arcsec", UCD: "pos.angDistance", Description: "separation from the counterpart", Float: make([]float64, n)}
		prob := catalog.OutColumn{Name: s.Name + "_match_prob", UCD: "stat.probability", Description: "posterior probability that the counterpart is the same source", Float: make([]float64, n)}
		cand := catalog.OutColumn{Name: s.Name + "_candidates", UCD: "meta.number", Description: "candidate counterparts within the search radius", Int: make([]int64, n)}
		amb := catalog.OutColumn{Name: s.Name + "_ambiguous", Description: "true when a rival candidate or a rival primary is within the ambiguity ratio", Text: make([]string, n)}
		for i := range n {
			cp := &m.Results[k].Matches[i]
			if cp.Secondary < 0 {
				sep.Float[i], prob.Float[i] = math.NaN(), math.NaN()
				cand.Int[i] = int64(cp.Candidates)
				if cp.Candidates == 0 {
					cand.Int[i] = catalog.OutNullInt
				}
				continue
			}
			cid.Text[i], sep.Float[i], prob.Float[i] = cp.CounterpartID, cp.SepArcsec, cp.Prob
			cand.Int[i], amb.Text[i] = int64(cp.Candidates), strconv.FormatBool(cp.Ambiguous)
		}
		t.Columns = append(t.Columns, cid, sep, prob, cand, amb)
	}
	dup := catalog.OutColumn{Name: "dup_count", UCD: "meta.number", Description: "other primary sources within the duplicate radius", Int: make([]int64, n)}
	for i := range n {
		dup.Int[i] = int64(m.DupCount[i])
	}
	t.Columns = append(t.Columns, dup)
	if as != nil {
		q := catalog.OutColumn{Name: "quality", UCD: "meta.code.qual", Description: "pass, flag or reject under the rule set", Text: make([]string, n)}
		failed := catalog.OutColumn{Name: "failed_rules", Description: "ids of the rules the source fails, joined by ';'", Text: make([]string, n)}
		for i := range n {
			q.Text[i], failed.Text[i] = as[i].Quality, strings.Join(as[i].FailedRules, ";")
		}
		t.Columns = append(t.Columns, q, failed)
	}
	return t
}

// WriteOut writes t in the format path's ending names (catalog.OutFormat):
// CSV, ECSV, FITS, or VOTable with TABLEDATA.
func WriteOut(path string, t *catalog.OutTable) error {
	format, err := catalog.OutFormat(path)
	if err != nil {
		return err
	}
	switch format {
	case catalog.FormatECSV:
		return ecsv.WriteTable(path, t)
	case catalog.FormatFITS:
		return fitscat.WriteTable(path, t)
	case catalog.FormatVOTable:
		return votable.WriteTable(path, t, false)
	case catalog.FormatCSV:
		return catalog.WriteOutCSV(path, t)
	}
	return fmt.Errorf("%s: no writer for format %q", path, format)
}
