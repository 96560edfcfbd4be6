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
		{"model", fp.Model, "7860a2b7364e80af18be5290d428c3a1e4e9a25a3ea3ef176e1051479d7d47bd"},
		{"all", fp.All, "6e491008ee648ef7a54a5c1c977503d9f3383a529a123a86448ff26437ea8f03"},
	} {
		if h.got != h.want {
			t.Errorf("%s hash = %s, want %s", h.name, h.got, h.want)
		}
	}
}
