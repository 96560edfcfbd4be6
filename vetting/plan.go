package vetting

import (
	"starvet/db"
	"starvet/verdict"
)

// plan is which stars a run computes, carries forward and withdraws.
type plan struct {
	compute  []int    // primary rows to compute, in star id order
	withdraw []string // stars of the previous run absent now, in id order
	// was is the previous status (the ledger's TEXT) of every star
	// computed or withdrawn now that the previous run knew.
	was map[string]string
	// carried counts the stars carried forward by status; an absent star
	// already withdrawn stays withdrawn and is carried too.
	carried  map[verdict.Status]int
	nCarried int
}

// recomputeAllReason says why every star must be recomputed ("" when an
// incremental run may carry stars forward): prev is the last complete run
// (nil if none), the hashes are this run's rule-set and model fingerprints.
func recomputeAllReason(prev *db.Run, full bool, rulesetHash, modelHash string) string {
	switch {
	case prev == nil:
		return "first run of this ledger"
	case full:
		return "--full"
	case prev.RulesetHash != rulesetHash:
		return "the rule set changed"
	case prev.ModelHash != modelHash:
		return "the model settings changed"
	}
	return ""
}

// makePlan walks the primary rows in star id order (order, from idOrder(ids))
// beside the previous complete run's set, which the ledger gives in id
// order. A star is carried when the previous run has it, not withdrawn, with
// the same input hash, and recomputeAll is false; otherwise it is computed.
// A previous star absent now is withdrawn, unless it already was.
func makePlan(prev *db.PrevSet, ids []string, order []int32, hashes []string, recomputeAll bool) plan {
	p := plan{was: map[string]string{}, carried: map[verdict.Status]int{}}
	k := 0
	absent := func(k int) {
		if s := prev.Stars[k]; s.Status == string(verdict.Withdrawn) {
			p.nCarried++
			p.carried[verdict.Withdrawn]++
		} else {
			p.withdraw = append(p.withdraw, prev.IDs[k])
			p.was[prev.IDs[k]] = s.Status
		}
	}
	for _, i := range order {
		id := ids[i]
		for ; k < prev.Len() && prev.IDs[k] < id; k++ {
			absent(k)
		}
		if k < prev.Len() && prev.IDs[k] == id {
			s := prev.Stars[k]
			k++
			if !recomputeAll && s.Status != string(verdict.Withdrawn) && s.InputHash == hashes[i] {
				p.nCarried++
				p.carried[verdict.Status(s.Status)]++
				continue
			}
			p.was[id] = s.Status
		}
		p.compute = append(p.compute, int(i))
	}
	for ; k < prev.Len(); k++ {
		absent(k)
	}
	return p
}
