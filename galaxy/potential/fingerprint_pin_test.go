package potential

import "testing"

// Ledgers store the potential's fingerprint: it must never change for the
// same components. Pinned from the code as of the move to
// internal/fingerprint.
func TestFingerprintPinned(t *testing.T) {
	m := mustNew(t, Component{Kind: KindHernquist, MassMsun: 1e10, ScaleKpc: 0.6},
		Component{Kind: KindMiyamotoNagai, MassMsun: 6.8e10, AKpc: 3, BKpc: 0.28},
		Component{Kind: KindNFW, MassMsun: 4.5e11, ScaleKpc: 16},
		Component{Kind: KindPoint, MassMsun: 4e6})
	if want := "1e828a7f46df6f1adae90205a6f39164"; m.Fingerprint() != want {
		t.Errorf("Fingerprint = %s, want %s", m.Fingerprint(), want)
	}
}
