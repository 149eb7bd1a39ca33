package train

import "testing"

// TestChooseParallelism checks the documented rule: units first,
// single-threaded BLAS, never more threads than cores (the rule is this
// package's own, from bench/parallel.sh; no outside source).
func TestChooseParallelism(t *testing.T) {
	tests := []struct {
		cores, units int
		want         Parallelism
	}{
		{2, 10, Parallelism{Jobs: 2, BLASThreads: 1}},
		{2, 2, Parallelism{Jobs: 2, BLASThreads: 1}},
		{2, 1, Parallelism{Jobs: 1, BLASThreads: 1}},
		{8, 3, Parallelism{Jobs: 3, BLASThreads: 1}},
		{1, 5, Parallelism{Jobs: 1, BLASThreads: 1}},
		{4, 0, Parallelism{Jobs: 1, BLASThreads: 1}},
		{0, 5, Parallelism{Jobs: 1, BLASThreads: 1}},
	}
	for _, tt := range tests {
		got := ChooseParallelism(tt.cores, tt.units)
		if got != tt.want {
			t.Errorf("ChooseParallelism(%d, %d) = %+v, want %+v", tt.cores, tt.units, got, tt.want)
		}
		if got.Jobs*got.BLASThreads > max(tt.cores, 1) {
			t.Errorf("ChooseParallelism(%d, %d) = %+v asks for more threads than cores", tt.cores, tt.units, got)
		}
	}
}
