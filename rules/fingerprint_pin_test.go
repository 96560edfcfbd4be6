package rules

import "testing"

// Ledgers store these fingerprints and compare them with new ones to decide
// what to re-vet: the values must never change for the same rules. Pinned
// from the code as of the move to internal/fingerprint.
func TestFingerprintPinned(t *testing.T) {
	rs, err := Parse("fp.toml", []byte(fpBase), Schema{})
	if err != nil {
		t.Fatal(err)
	}
	if want := "27e298d4b6f9db5f090c0fef66b11a637afe372254e5ce98fe985ed0cb3c65cd"; rs.Fingerprint != want {
		t.Errorf("set fingerprint = %s, want %s", rs.Fingerprint, want)
	}
	if want := "cf0f4fca864689efff59817b625345a66cdd703f5c4d2c3cdac6aeccc46af329"; rs.Rules[0].Fingerprint != want {
		t.Errorf("rule %s fingerprint = %s, want %s", rs.Rules[0].ID, rs.Rules[0].Fingerprint, want)
	}
}
