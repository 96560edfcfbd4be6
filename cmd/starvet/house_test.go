package main

import (
	"os/exec"
	"strings"
	"testing"
)

// The folders tell the same story as the imports (DEVELOPERS.md, "The
// house"): each rule names packages that must not import others.
func TestHouseImports(t *testing.T) {
	out, err := exec.Command("go", "list", "-f", "{{.ImportPath}} {{join .Imports \" \"}}", "starvet/...").Output()
	if err != nil {
		t.Fatalf("go list: %v", err)
	}
	imports := map[string][]string{}
	for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		f := strings.Fields(line)
		for _, imp := range f[1:] {
			if strings.HasPrefix(imp, "starvet/") {
				imports[f[0]] = append(imports[f[0]], imp)
			}
		}
	}
	if len(imports["starvet/vetting"]) == 0 {
		t.Fatal("go list gave no imports for starvet/vetting")
	}
	under := func(pkg, room string) bool { return pkg == room || strings.HasPrefix(pkg, room+"/") }
	rules := []struct {
		importers []string // packages (and everything under them) ...
		forbidden []string // ... that must not import these (or anything under them)
		why       string
	}{
		{[]string{"starvet/internal", "starvet/verdict"}, []string{"starvet/"}, "shared words stand on their own"},
		{[]string{"starvet/catalog"}, []string{"starvet/crossmatch", "starvet/galaxy", "starvet/campaign", "starvet/rules", "starvet/quality", "starvet/db", "starvet/vetting", "starvet/report", "starvet/scenario"}, "ingest is the foundation of every stage"},
		{[]string{"starvet/galaxy"}, []string{"starvet/vetting", "starvet/campaign", "starvet/db", "starvet/catalog", "starvet/crossmatch", "starvet/report", "starvet/scenario"}, "the Galaxy's physics has no I/O and no pipeline"},
		{[]string{"starvet/db", "starvet/rules"}, []string{"starvet/crossmatch"}, "no package the ledger or the rules need lives in the cross-match room"},
		{[]string{"starvet/report", "starvet/scenario", "starvet/campaign"}, []string{"starvet/vetting"}, "the pipeline is not a library of the report, the demo or the configuration"},
		{[]string{"starvet/dispatch"}, []string{"starvet/"}, "running commands on a cluster knows nothing of stars"},
		{[]string{"starvet/vetting", "starvet/db", "starvet/crossmatch", "starvet/campaign", "starvet/catalog", "starvet/report", "starvet/scenario"}, []string{"starvet/tiling", "starvet/dispatch", "starvet/inference"}, "a tile's run is an ordinary run and weighing reads what runs wrote: both sit above the pipeline"},
		{[]string{"starvet/crossmatch", "starvet/quality", "starvet/rules", "starvet/campaign", "starvet/db", "starvet/galaxy", "starvet/report", "starvet/scenario", "starvet/vetting", "starvet/catalog", "starvet/tiling", "starvet/dispatch", "starvet/inference"}, []string{"starvet/cmd"}, "cmd is the top"},
	}
	for _, r := range rules {
		for pkg, imps := range imports {
			inRoom := false
			for _, room := range r.importers {
				inRoom = inRoom || under(pkg, room)
			}
			if !inRoom {
				continue
			}
			for _, imp := range imps {
				for _, f := range r.forbidden {
					if (strings.HasSuffix(f, "/") && strings.HasPrefix(imp, f)) || under(imp, f) {
						t.Errorf("%s imports %s: %s", pkg, imp, r.why)
					}
				}
			}
		}
	}
	for pkg, imps := range imports {
		for _, imp := range imps {
			if strings.HasPrefix(pkg, "starvet/catalog") && !strings.HasPrefix(imp, "starvet/catalog") && !strings.HasPrefix(imp, "starvet/internal/") {
				t.Errorf("%s imports %s: catalog and its format readers stand on the shared words alone", pkg, imp)
			}
		}
	}
}
