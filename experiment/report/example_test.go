package report_test

import (
	"fmt"

	"github.com/skein-neuro/skein/experiment/report"
)

// Assign solves the assignment problem; here the example of SciPy's
// linear_sum_assignment documentation.
func ExampleAssign() {
	cost := [][]float64{
		{4, 1, 3},
		{2, 0, 5},
		{3, 2, 2},
	}
	fmt.Println(report.Assign(cost))
	// Output: [1 0 2]
}

// Build draws the figures of a finished run folder and writes its
// report.html; skein run calls it on every run, and skein report on an
// existing folder.
func ExampleBuild() {
	figs, err := report.Build("runs/demo-20261201-120000")
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, f := range figs {
		fmt.Println(f.File, f.Width, "×", f.Height)
	}
}
