// Package verdict is the one home of the status vocabulary: the words the
// pipeline gives each star, the ledger stores as TEXT, and the report, the
// demo's scoring and the command line read back.
//
// It is a leaf: it imports nothing of starvet, so every package can use it
// without importing the pipeline. It holds words only; the thresholds that
// choose between them (p_unbound levels, in the campaign's [kinematics]) and
// their units live with the pipeline and the campaign.
package verdict
