package data_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

func ExamplePreprocess() {
	var p data.Preprocess
	p.SetDefaults() // Fisher z and a zero diagonal; log1p, scaled by the maximum
	if err := p.Validate(); err != nil {
		panic(err)
	}

	fc := mat.NewDense(3, 3, []float64{
		1, 0.5, -0.3,
		0.5, 1, 0.1,
		-0.3, 0.1, 1,
	})
	if err := p.Functional(fc); err != nil {
		panic(err)
	}
	fmt.Printf("Fisher z:\n%.4f\n", mat.Formatted(fc))

	sc := mat.NewDense(3, 3, []float64{
		0, 255, 15,
		255, 0, 0,
		15, 0, 0,
	})
	if err := p.Structural(sc); err != nil {
		panic(err)
	}
	fmt.Printf("log1p, scaled:\n%.4f\n", mat.Formatted(sc))
	// Output:
	// Fisher z:
	// ⎡ 0.0000   0.5493  -0.3095⎤
	// ⎢ 0.5493   0.0000   0.1003⎥
	// ⎣-0.3095   0.1003   0.0000⎦
	// log1p, scaled:
	// ⎡0.0000  1.0000  0.5000⎤
	// ⎢1.0000  0.0000  0.0000⎥
	// ⎣0.5000  0.0000  0.0000⎦
}

func ExampleKeepDensity() {
	sc := mat.NewDense(4, 4, []float64{
		0, 5, 1, 3,
		5, 0, 3, 0,
		1, 3, 0, 2,
		3, 0, 2, 0,
	})
	data.KeepDensity(sc, 0.5) // keep round(0.5 · 6) = 3 of the 6 region pairs
	fmt.Printf("%v\n", mat.Formatted(sc))
	// Output:
	// ⎡0  5  0  3⎤
	// ⎢5  0  3  0⎥
	// ⎢0  3  0  0⎥
	// ⎣3  0  0  0⎦
}

func ExampleOperator() {
	// A path on three regions: 0 — 1 — 2.
	a := mat.NewDense(3, 3, []float64{
		0, 1, 0,
		1, 0, 1,
		0, 1, 0,
	})
	l, err := data.Operator(data.Laplacian, a)
	if err != nil {
		panic(err)
	}
	fmt.Printf("%v\n", mat.Formatted(l))
	// Output:
	// ⎡ 1  -1   0⎤
	// ⎢-1   2  -1⎥
	// ⎣ 0  -1   1⎦
}
