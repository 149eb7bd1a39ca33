package train

import (
	"strings"
	"testing"
)

func TestParseExperimentErrors(t *testing.T) {
	tests := []struct {
		name, text, want string
	}{
		{"unknown key", "seed = 1\n\n[cv]\nfolds = 5\nfoldz = 3\n", `line 5: unknown key "cv.foldz"`},
		{"wrong type", "seed = \"one\"\n", `key "seed"`},
		{"duplicate model", "[[model]]\nname = \"a\"\n[[model]]\nname = \"a\"\n", `name "a" is used twice`},
		{"model without name", "[[model]]\n", `key "name" is required`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := ParseExperiment([]byte(tt.text))
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("got error %v, want one containing %q", err, tt.want)
			}
		})
	}
}
