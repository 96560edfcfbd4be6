package verdict

// Status is a star's verdict in one run. The words are stable identifiers:
// users filter on them in SQL, so they never change once released.
type Status string

const (
	// Rejected: a reject rule failed, or the kinematics could not be
	// computed.
	Rejected Status = "rejected"
	// NeedsRV: passed the cuts but has no usable radial velocity.
	NeedsRV Status = "needs-rv"
	// Bound: p_unbound below the marginal threshold.
	Bound Status = "bound"
	// Marginal: p_unbound between the marginal and unbound thresholds.
	Marginal Status = "marginal"
	// Unbound: p_unbound at or above the unbound threshold; a candidate for
	// follow-up, not a discovery.
	Unbound Status = "unbound"
	// Withdrawn: seen in an earlier run, absent from the current primary
	// catalog.
	Withdrawn Status = "withdrawn"
)

// All returns every status in display order, the most interesting first. A
// new slice each call, so no caller can change another's order.
func All() []Status {
	return []Status{Unbound, Marginal, Bound, NeedsRV, Rejected, Withdrawn}
}
