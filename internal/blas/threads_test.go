package blas

import "testing"

// TestSetThreads checks that SetThreads returns the previous number and
// that Threads reports the new one (OpenBLAS), or that both keep to 1
// (pure Go, whose products run on goroutines).
func TestSetThreads(t *testing.T) {
	start := Threads()
	if start < 1 {
		t.Fatalf("%s: Threads() = %d, want ≥ 1", Name(), start)
	}
	if prev := SetThreads(1); prev != start {
		t.Errorf("%s: SetThreads(1) returned %d, want %d", Name(), prev, start)
	}
	if got := Threads(); got != 1 {
		t.Errorf("%s: Threads() after SetThreads(1) = %d, want 1", Name(), got)
	}
	SetThreads(start)
	if got := Threads(); got != start {
		t.Errorf("%s: Threads() after restoring = %d, want %d", Name(), got, start)
	}
}
