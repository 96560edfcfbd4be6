package db

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"hash"
	"math"
	"strconv"
)

// StarDigests returns, for every star of run runID's set, a digest of
// everything the ledger holds about its verdict there: the verdict's
// columns (the run numbers excepted), its inputs, its reasons as read
// back, its matches and its plane crossings, in order. Equal digests, in
// one ledger or two, mean equal results for the star: the check that a
// gathered run holds what a single run would. It reads through the
// views, so it suits audits and tests more than a billion stars.
func (l *Ledger) StarDigests(ctx context.Context, runID int64) (map[string]string, error) {
	hs := map[string]hash.Hash{}
	of := func(id string) hash.Hash {
		h, ok := hs[id]
		if !ok {
			h = sha256.New()
			hs[id] = h
		}
		return h
	}
	queries := []struct{ what, q string }{
		{"verdict", `SELECT v.*, i.* FROM verdicts AS v LEFT JOIN inputs AS i ON i.run_id = v.computed_in_run AND i.star_id = v.star_id
			WHERE v.run_id = ?1 ORDER BY v.star_id`},
		{"reasons", `SELECT r.star_id, r.seq, r.rule_id, r.outcome, r.severity, r.value, r.threshold, r.message FROM verdicts AS v
			JOIN reasons AS r ON r.run_id = v.computed_in_run AND r.star_id = v.star_id WHERE v.run_id = ?1 ORDER BY r.star_id, r.seq`},
		{"matches", `SELECT m.star_id, m.catalog, m.counterpart_id, m.sep_arcsec, m.match_prob, m.candidates, m.ambiguous FROM verdicts AS v
			JOIN matches AS m ON m.run_id = v.computed_in_run AND m.star_id = v.star_id WHERE v.run_id = ?1 ORDER BY m.star_id, m.catalog`},
		{"crossings", `SELECT x.star_id, x.x_kpc, x.y_kpc, x.t_myr FROM verdicts AS v
			JOIN crossings AS x ON x.run_id = v.computed_in_run AND x.star_id = v.star_id WHERE v.run_id = ?1 ORDER BY x.star_id, x.rowid`},
	}
	for _, q := range queries {
		if err := l.digestRows(ctx, q.q, runID, func(id string) hash.Hash {
			h := of(id)
			h.Write([]byte(q.what))
			return h
		}); err != nil {
			return nil, fmt.Errorf("ledger %s run %d: digest %s: %w", l.path, runID, q.what, err)
		}
	}
	out := make(map[string]string, len(hs))
	for id, h := range hs {
		out[id] = hex.EncodeToString(h.Sum(nil))
	}
	return out, nil
}

// digestRows feeds every row of q (its star id column first, or named
// star_id) to the hash of its star, skipping the run-number columns.
func (l *Ledger) digestRows(ctx context.Context, q string, runID int64, of func(id string) hash.Hash) error {
	rows, err := l.db.QueryContext(ctx, q, runID)
	if err != nil {
		return err
	}
	defer rows.Close()
	cols, err := rows.Columns()
	if err != nil {
		return err
	}
	idCol := 0
	for k, c := range cols {
		if c == "star_id" {
			idCol = k
			break
		}
	}
	vals := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for k := range vals {
		ptrs[k] = &vals[k]
	}
	var buf []byte
	for rows.Next() {
		if err := rows.Scan(ptrs...); err != nil {
			return err
		}
		id := fmt.Sprint(vals[idCol])
		buf = buf[:0]
		for k, v := range vals {
			switch cols[k] {
			case "run_id", "computed_in_run":
				continue
			}
			buf = appendDigestValue(append(buf, cols[k]...), v)
		}
		of(id).Write(buf)
	}
	return rows.Err()
}

func appendDigestValue(b []byte, v any) []byte {
	switch x := v.(type) {
	case nil:
		return append(b, "=null;"...)
	case int64:
		return append(strconv.AppendInt(append(b, "=i"...), x, 10), ';')
	case float64:
		return append(strconv.AppendUint(append(b, "=f"...), math.Float64bits(x), 16), ';')
	case []byte:
		return append(strconv.AppendQuote(append(b, "=s"...), string(x)), ';')
	case string:
		return append(strconv.AppendQuote(append(b, "=s"...), x), ';')
	}
	return append(b, fmt.Sprintf("=%T:%v;", v, v)...)
}
