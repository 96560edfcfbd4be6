package vetting

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"os"
	"strconv"
	"strings"

	"starvet/internal/numfmt"
	"starvet/quality"
)

// WriteMerged writes one row per primary source: id, then per secondary
// catalog <name>_id, <name>_sep_arcsec, <name>_match_prob,
// <name>_candidates, <name>_ambiguous, then dup_count, and, when as is not
// nil, quality and failed_rules (ids joined by ";"). Numbers keep full
// precision; unmatched cells are empty.
func WriteMerged(path string, cats *Catalogs, m *Matched, as []quality.Assessment) (err error) {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	defer func() {
		if cerr := f.Close(); err == nil {
			err = cerr
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<20)
	w := csv.NewWriter(bw)
	header := []string{"id"}
	for _, t := range cats.Secondaries {
		for _, s := range []string{"_id", "_sep_arcsec", "_match_prob", "_candidates", "_ambiguous"} {
			header = append(header, t.Name+s)
		}
	}
	header = append(header, "dup_count")
	if as != nil {
		header = append(header, "quality", "failed_rules")
	}
	if err := w.Write(header); err != nil {
		return err
	}
	rec := make([]string, len(header))
	for i, id := range cats.Primary.IDs {
		rec = rec[:0]
		rec = append(rec, id)
		for k := range cats.Secondaries {
			cp := &m.Results[k].Matches[i]
			if cp.Secondary < 0 {
				cand := ""
				if cp.Candidates > 0 {
					cand = strconv.Itoa(int(cp.Candidates))
				}
				rec = append(rec, "", "", "", cand, "")
				continue
			}
			rec = append(rec, cp.CounterpartID,
				numfmt.CSV(cp.SepArcsec),
				numfmt.CSV(cp.Prob),
				strconv.Itoa(int(cp.Candidates)),
				strconv.FormatBool(cp.Ambiguous))
		}
		rec = append(rec, strconv.Itoa(int(m.DupCount[i])))
		if as != nil {
			rec = append(rec, as[i].Quality, strings.Join(as[i].FailedRules, ";"))
		}
		if err := w.Write(rec); err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
	}
	w.Flush()
	if err := w.Error(); err != nil {
		return err
	}
	return bw.Flush()
}
