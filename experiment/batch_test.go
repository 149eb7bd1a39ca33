package experiment

import "testing"

func TestArrayRangesAndQuoting(t *testing.T) {
	for _, tt := range []struct {
		indices []int
		want    string
	}{
		{[]int{3}, "3"},
		{[]int{3, 7, 12}, "3,7,12"},
		{[]int{0, 1, 2, 3, 5, 8, 9}, "0-3,5,8-9"},
	} {
		var units []BatchUnit
		for _, k := range tt.indices {
			units = append(units, BatchUnit{Index: k})
		}
		if got := arrayRanges(units); got != tt.want {
			t.Errorf("arrayRanges(%v) = %q, want %q", tt.indices, got, tt.want)
		}
	}
	for _, tt := range []struct{ in, want string }{
		{"/opt/skein", "/opt/skein"},
		{"/data/my runs/a", "'/data/my runs/a'"},
		{"it's", `'it'\''s'`},
		{"", "''"},
	} {
		if got := ShellQuote(tt.in); got != tt.want {
			t.Errorf("ShellQuote(%q) = %s, want %s", tt.in, got, tt.want)
		}
	}
}
