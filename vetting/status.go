package vetting

// Verdict statuses written to the ledger. They are stable identifiers:
// users filter on them in SQL.
const (
	StatusRejected  = "rejected"  // a reject rule failed, or the kinematics could not be computed
	StatusNeedsRV   = "needs-rv"  // passed the cuts but has no usable radial velocity
	StatusBound     = "bound"     // p_unbound below the marginal threshold
	StatusMarginal  = "marginal"  // p_unbound between the marginal and unbound thresholds
	StatusUnbound   = "unbound"   // p_unbound at or above the unbound threshold: a candidate for follow-up
	StatusWithdrawn = "withdrawn" // seen in an earlier run, absent from the current primary catalog
)

// AllStatuses lists every status in display order.
func AllStatuses() []string {
	return []string{StatusUnbound, StatusMarginal, StatusBound, StatusNeedsRV, StatusRejected, StatusWithdrawn}
}
