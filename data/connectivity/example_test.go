package connectivity_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data/connectivity"
)

// Two participants' series of three regions, their partial correlations,
// and their tangent coordinates at the log-Euclidean mean of both.
func Example() {
	series := []*mat.Dense{
		mat.NewDense(5, 3, []float64{1, 2, 0, 2, 1, 1, 3, 4, 1, 4, 3, 3, 5, 6, 2}),
		mat.NewDense(5, 3, []float64{1, 0, 2, 2, 2, 1, 3, 1, 4, 4, 4, 3, 5, 3, 6}),
	}
	var covs []mat.Symmetric
	for _, x := range series {
		c := connectivity.Covariance(x)
		pc, err := connectivity.PartialCorrelation(c)
		if err != nil {
			fmt.Println(err)
			return
		}
		fmt.Printf("partial correlation of regions 1 and 2: %.3f\n", pc.At(0, 1))
		covs = append(covs, c)
	}
	mean, err := connectivity.LogEuclideanMean(covs)
	if err != nil {
		fmt.Println(err)
		return
	}
	w, err := connectivity.InvSqrtm(mean)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, c := range covs {
		t, err := connectivity.Tangent(c, w)
		if err != nil {
			fmt.Println(err)
			return
		}
		fmt.Printf("tangent vector: %.3f\n", connectivity.Vectorize(t, false))
	}
	// Output:
	// partial correlation of regions 1 and 2: 0.950
	// partial correlation of regions 1 and 2: 0.985
	// tangent vector: [-0.567 -0.382 0.276]
	// tangent vector: [0.578 -0.749 0.389]
}
