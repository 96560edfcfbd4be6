package campaign

import "testing"

// Ledgers store these hashes and compare them with new ones to decide what
// to recompute: the values must never change for the same settings. Pinned
// from the code as of the move to internal/fingerprint.
func TestHashesPinned(t *testing.T) {
	c, err := Parse("h.toml", []byte(baseText), "/data/a")
	if err != nil {
		t.Fatal(err)
	}
	fp := c.Fingerprint()
	for _, h := range []struct{ name, got, want string }{
		{"match", fp.Match, "ea277f66c5e3b9ff6dcf44185b2b7bbd9419b1616e43eb9280b79c5ebc38de74"},
		{"model", fp.Model, "9c8ed9438aed4a073925cfe9b12ae418e3974a7bbe193309bcb7b6c1f5de58ee"},
		{"all", fp.All, "e7ce8d13369c4df0a57dc2a030b90375ea0d7bd0fdc9c77d9581381a900d7b88"},
	} {
		if h.got != h.want {
			t.Errorf("%s hash = %s, want %s", h.name, h.got, h.want)
		}
	}
}
