package main

import (
	"strings"
	"testing"
)

// TestParseNetworks: the networks of a models file are read and checked
// as skein run checks an experiment file; baselines are left out; a bad
// word is an error naming its key.
func TestParseNetworks(t *testing.T) {
	tests := []struct {
		name, raw string
		want      []string // network names; nil when an error is expected
		errHas    string
	}{
		{"built-in", builtinNetworks, []string{"e2n-two-branch", "e2n-fc"}, ""},
		{"baselines left out", "[[model]]\nname = \"r\"\n[model.ridge]\n" + builtinNetworks, []string{"e2n-two-branch", "e2n-fc"}, ""},
		{"bad word", "[[model]]\nname = \"n\"\n[model.network]\nmerge = \"sum\"\n[[model.network.branch]]\ninput = \"functional\"\nlayers = [{kind = \"e2n\", channels = 4}]\n", nil, "merge"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			ms, err := parseNetworks([]byte(tc.raw))
			if tc.want == nil {
				if err == nil || !strings.Contains(err.Error(), tc.errHas) {
					t.Fatalf("err = %v, want one naming %q", err, tc.errHas)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			var got []string
			for _, m := range ms {
				got = append(got, m.Name)
			}
			if strings.Join(got, ",") != strings.Join(tc.want, ",") {
				t.Errorf("networks %v, want %v", got, tc.want)
			}
		})
	}
}
