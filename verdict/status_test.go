package verdict

import "testing"

// The words are the ledger's stored TEXT (documented in vetting's doc.go and
// filtered on in SQL by users): a change here breaks existing ledgers.
func TestStatusWords(t *testing.T) {
	want := []string{"unbound", "marginal", "bound", "needs-rv", "rejected", "withdrawn"}
	got := All()
	if len(got) != len(want) {
		t.Fatalf("All() has %d statuses, want %d", len(got), len(want))
	}
	for i := range want {
		if string(got[i]) != want[i] {
			t.Errorf("All()[%d] = %q, want %q", i, got[i], want[i])
		}
	}
	got[0] = "changed"
	if All()[0] != Unbound {
		t.Error("All() shares its slice between callers")
	}
}
