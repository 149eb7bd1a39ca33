package report

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

func assignmentCost(cost [][]float64, a []int) float64 {
	var total float64
	for i, j := range a {
		total += cost[i][j]
	}
	return total
}

// TestAssignMatchesSciPy compares Assign with
// scipy.optimize.linear_sum_assignment on the cost matrices of
// testdata/report/assign.json (made by assign.py beside it). With ties
// several assignments are optimal, so the totals must agree, and the
// assignment itself wherever the costs have no ties.
func TestAssignMatchesSciPy(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("..", "..", "testdata", "report", "assign.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fixture struct {
		Cases []struct {
			Name       string
			Cost       [][]float64
			Assignment []int
			Total      float64
		}
	}
	if err := json.Unmarshal(raw, &fixture); err != nil {
		t.Fatal(err)
	}
	if len(fixture.Cases) == 0 {
		t.Fatal("no cases")
	}
	for _, c := range fixture.Cases {
		a := Assign(c.Cost)
		seen := make(map[int]bool)
		for _, j := range a {
			seen[j] = true
		}
		if len(seen) != len(c.Cost) {
			t.Errorf("%s: %v is not a permutation", c.Name, a)
			continue
		}
		if got := assignmentCost(c.Cost, a); math.Abs(got-c.Total) > 1e-12*math.Max(1, math.Abs(c.Total)) {
			t.Errorf("%s: total %v (assignment %v), scipy %v (assignment %v)", c.Name, got, a, c.Total, c.Assignment)
		}
		if !strings.HasPrefix(c.Name, "integer") && !slices.Equal(a, c.Assignment) {
			t.Errorf("%s: assignment %v, scipy %v", c.Name, a, c.Assignment)
		}
	}
}

// TestAssignWorkedExample is the example of SciPy's documentation of
// linear_sum_assignment (quoted from memory): rows 0, 1, 2 go to columns
// 1, 0, 2 for a total cost of 5.
func TestAssignWorkedExample(t *testing.T) {
	cost := [][]float64{{4, 1, 3}, {2, 0, 5}, {3, 2, 2}}
	a := Assign(cost)
	if want := []int{1, 0, 2}; a[0] != want[0] || a[1] != want[1] || a[2] != want[2] {
		t.Errorf("Assign = %v, want %v", a, want)
	}
	if got := assignmentCost(cost, a); got != 5 {
		t.Errorf("total %v, want 5", got)
	}
	if a := Assign(nil); len(a) != 0 {
		t.Errorf("Assign(nil) = %v", a)
	}
}

// TestMatchFiltersUndoesChannelOrder gives MatchFilters folds that learnt
// the same filters in shuffled channel orders, with noise: matching must
// put each filter with itself, so the mean is close to the true filters
// and the consistency high.
func TestMatchFiltersUndoesChannelOrder(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	const channels, p, folds = 6, 30, 5
	truth := make([][]float64, channels)
	for c := range truth {
		truth[c] = make([]float64, p)
		for r := range truth[c] {
			truth[c][r] = rng.NormFloat64()
		}
	}
	var all [][][]float64
	for f := range folds {
		order := rng.Perm(channels)
		if f == 0 {
			order = []int{0, 1, 2, 3, 4, 5}
		}
		fold := make([][]float64, channels)
		for c, src := range order {
			fold[c] = make([]float64, p)
			for r := range fold[c] {
				fold[c][r] = truth[src][r] + 0.2*rng.NormFloat64()
			}
		}
		all = append(all, fold)
	}
	mean, consistency := MatchFilters(all)
	for c := range channels {
		if r := correlation(mean[c], truth[c]); r < 0.98 {
			t.Errorf("channel %d: mean filter correlates %.3f with the true one", c, r)
		}
		if consistency[c] < 0.9 {
			t.Errorf("channel %d: consistency %.3f, want ≥ 0.9", c, consistency[c])
		}
	}
}

func TestUniqueFiles(t *testing.T) {
	// Model names that differ only in characters a file name cannot hold
	// (or in case) must not share a figure file.
	figs := []Figure{{File: "observed-fc_net-recall.png"}, {File: "observed-fc_net-recall.png"}, {File: "observed-FC_net-recall.png"}, {File: "observed-fc_net-recall-2.png"}}
	uniqueFiles(figs)
	want := []string{"observed-fc_net-recall.png", "observed-fc_net-recall-2.png", "observed-FC_net-recall-3.png", "observed-fc_net-recall-2-2.png"}
	for i, f := range figs {
		if f.File != want[i] {
			t.Errorf("figure %d: file %q, want %q", i, f.File, want[i])
		}
	}
}
