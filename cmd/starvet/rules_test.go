package main

import (
	"bytes"
	"context"
	"errors"
	"strings"
	"testing"
)

func TestRulesCommand(t *testing.T) {
	cases := []struct {
		name     string
		args     []string
		code     int
		inStdout []string
		inStderr []string
	}{
		{"show default", []string{"rules", "show"}, 0,
			[]string{"rule set:    default", "fingerprint: ", "fit-residual", "<= 1.4", "Lindegren et al. 2018, technical note LL-124", "is_missing(distance)"}, nil},
		{"show default with catalogs", []string{"rules", "show", "--catalogs", "spec-a,phot-b"}, 0,
			[]string{"catalogs:    spec-a, phot-b"}, nil},
		{"show file, flags after it", []string{"rules", "show", "../../testdata/rules/example.toml", "--catalogs", "spec-north,phot-deep"}, 0,
			[]string{"rule set:    example, version 1", "spectrum-match", "match spec-north", "prob >= 0.95, sep <= 0.5 arcsec, unambiguous", "expr: mag > 12"}, nil},
		{"check good, permissive", []string{"rules", "check", "../../testdata/rules/example.toml"}, 0,
			[]string{"example.toml: ok, 4 rules, fingerprint "}, nil},
		{"check good, catalog not declared", []string{"rules", "check", "--catalogs", "phot-deep", "../../testdata/rules/example.toml"}, 1,
			nil, []string{`example.toml:17:1: rule "spectrum-match": unknown catalog "spec-north"`}},
		{"check broken", []string{"rules", "check", "../../testdata/rules/broken.toml"}, 1, nil, []string{
			`broken.toml:8:1: rule "fit-residual": unknown check "fit_residuals"`,
			`broken.toml:13:1: rule "snr": severity "warn": want reject or flag`,
			`broken.toml:18:1: rule "snr": duplicate id (first used by the rule on line 11)`,
			`broken.toml:21:1: rule "snr": limit must be a number, got a string`,
			`broken.toml:26:1: rule "fast": expr: unexpected token EOF`,
			`broken.toml:32:1: rule "colour": unknown field "colour"`,
			"6 problem(s) in ../../testdata/rules/broken.toml",
		}},
		{"check missing file", []string{"rules", "check", "no/such.toml"}, 1, nil, nil},
		{"check needs a file", []string{"rules", "check"}, 2, nil, nil},
		{"unknown action", []string{"rules", "frobnicate"}, 2, nil, nil},
		{"bad catalogs flag", []string{"rules", "show", "--catalogs", "a,,b"}, 2, nil, nil},
		{"help", []string{"rules", "show", "--help"}, 0, []string{"Usage: starvet rules show"}, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			err := Run(context.Background(), c.args, &stdout, &stderr)
			if got := exitCode(err); got != c.code {
				t.Fatalf("exit %d (%v), want %d\nstdout:\n%s\nstderr:\n%s", got, err, c.code, &stdout, &stderr)
			}
			if c.code == 1 && strings.Contains(c.name, "missing file") && (err == nil || errors.Is(err, errSilent)) {
				t.Errorf("missing file should give a printed error, got %v", err)
			}
			for _, s := range c.inStdout {
				if !strings.Contains(stdout.String(), s) {
					t.Errorf("stdout lacks %q:\n%s", s, &stdout)
				}
			}
			for _, s := range c.inStderr {
				if !strings.Contains(stderr.String(), s) {
					t.Errorf("stderr lacks %q:\n%s", s, &stderr)
				}
			}
		})
	}
}
