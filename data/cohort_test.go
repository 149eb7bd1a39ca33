package data

import (
	"reflect"
	"testing"
)

// Grouping indices by label (common practice, no source).
func TestGroupIndices(t *testing.T) {
	tests := []struct {
		labels []string
		want   [][]int
	}{
		{nil, nil},
		{[]string{"", "", ""}, [][]int{{0}, {1}, {2}}},
		{[]string{"b", "a", "b", "", "a"}, [][]int{{0, 2}, {1, 4}, {3}}},
	}
	for _, tt := range tests {
		if got := GroupIndices(tt.labels); !reflect.DeepEqual(got, tt.want) {
			t.Errorf("GroupIndices(%q) = %v, want %v", tt.labels, got, tt.want)
		}
	}
}
