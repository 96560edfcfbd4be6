// Package retired lists the names starvet has given up, each with the name
// that replaced it. A campaign or rule file that still uses a retired name
// is an error that names the successor: there is no silent alias, so a
// file's meaning never depends on which spelling it happens to use.
package retired

// successors maps each retired name to its replacement. The retired names
// were one catalog's own data-model words; the replacements are starvet's.
var successors = map[string]string{
	"parallax_over_error":     "parallax_significance",     // rule expression variable
	"min_parallax_over_error": "min_parallax_significance", // [kinematics] key
	"visibility_periods":      "fit_visits",                // canonical field and built-in check
	"source_id":               "counterpart_id",            // ledger column of matches
}

// Successor returns the name that replaced name, and whether name is retired.
func Successor(name string) (string, bool) {
	s, ok := successors[name]
	return s, ok
}

// Hint is the sentence an error message appends for a retired name, or ""
// when name is not retired.
func Hint(name string) string {
	if s, ok := successors[name]; ok {
		return "; " + name + " was renamed " + s
	}
	return ""
}
