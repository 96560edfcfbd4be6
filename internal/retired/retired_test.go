package retired

import "testing"

func TestSuccessor(t *testing.T) {
	for old, want := range map[string]string{
		"parallax_over_error":     "parallax_significance",
		"min_parallax_over_error": "min_parallax_significance",
		"visibility_periods":      "fit_visits",
		"source_id":               "counterpart_id",
	} {
		if got, ok := Successor(old); !ok || got != want {
			t.Errorf("Successor(%q) = %q, %v; want %q", old, got, ok, want)
		}
		if h := Hint(old); h != "; "+old+" was renamed "+want {
			t.Errorf("Hint(%q) = %q", old, h)
		}
	}
	if s, ok := Successor("parallax"); ok || Hint("parallax") != "" {
		t.Errorf("parallax is not retired, got %q", s)
	}
}
