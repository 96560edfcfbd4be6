package campaign

import "testing"

// Ledgers store these hashes and compare them with new ones to decide what
// to recompute: the values must never change for the same settings. Pinned
// from the code as of the move to internal/fingerprint; the model and all
// hashes were pinned again when [kinematics] gained stop_sigma and
// stop_tail_vesc_fraction (the Monte Carlo's early stopping), which every
// campaign now has, so a ledger's next run recomputes every star once.
func TestHashesPinned(t *testing.T) {
	c, err := Parse("h.toml", []byte(baseText), "/data/a")
	if err != nil {
		t.Fatal(err)
	}
	fp := c.Fingerprint()
	for _, h := range []struct{ name, got, want string }{
		{"match", fp.Match, "ea277f66c5e3b9ff6dcf44185b2b7bbd9419b1616e43eb9280b79c5ebc38de74"},
		{"model", fp.Model, "fae305d31f51857537670f35824399da97f32397858a9f1d4420bef0c000ea43"},
		{"all", fp.All, "59c0431464a8bb20047bb28c25f62e2e4ea52248a0ef5bd3b78c4f2025befa2c"},
	} {
		if h.got != h.want {
			t.Errorf("%s hash = %s, want %s", h.name, h.got, h.want)
		}
	}
}
