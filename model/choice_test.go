package model

import (
	"math"
	"testing"
)

// TestChoiceAtEdge: a value is at the edge of its grid when it is the
// smallest or the largest of at least two distinct values (common
// practice, no source: a penalty chosen at the end of its grid may be
// bettered outside it).
func TestChoiceAtEdge(t *testing.T) {
	tests := []struct {
		name string
		c    Choice
		want bool
	}{
		{"largest", Choice{Setting: "alphas", Value: 1e3, Min: 1e-3, Max: 1e3}, true},
		{"smallest", Choice{Setting: "alphas", Value: 1e-3, Min: 1e-3, Max: 1e3}, true},
		{"inside", Choice{Setting: "alphas", Value: 1, Min: 1e-3, Max: 1e3}, false},
		{"zero penalty smallest", Choice{Setting: "alphas", Value: 0, Min: 0, Max: 10}, true},
		{"one value", Choice{Setting: "alphas", Value: 2, Min: 2, Max: 2}, false},
		{"NaN", Choice{Setting: "alphas", Value: math.NaN(), Min: 0, Max: 1}, false},
	}
	for _, tt := range tests {
		if got := tt.c.AtEdge(); got != tt.want {
			t.Errorf("%s: %+v.AtEdge() = %v, want %v", tt.name, tt.c, got, tt.want)
		}
	}
}
