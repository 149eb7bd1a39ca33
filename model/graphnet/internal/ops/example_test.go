package ops_test

import (
	"fmt"
	"log"
	"math/rand/v2"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"

	"github.com/skein-neuro/skein/model/graphnet/internal/ops"
)

// An edge-to-edge filter on one 2×2 connectome: the row weights pick
// column 0 of row i, the column weights pick row 1 of column j.
func ExampleE2E() {
	g := gorgonia.NewGraph()
	x := gorgonia.NewTensor(g, tensor.Float64, 4, gorgonia.WithShape(1, 1, 2, 2), gorgonia.WithName("x"),
		gorgonia.WithValue(tensor.New(tensor.WithShape(1, 1, 2, 2), tensor.WithBacking([]float64{1, 2, 3, 4}))))
	wr := gorgonia.NewTensor(g, tensor.Float64, 3, gorgonia.WithShape(1, 1, 2), gorgonia.WithName("wr"),
		gorgonia.WithValue(tensor.New(tensor.WithShape(1, 1, 2), tensor.WithBacking([]float64{1, 0}))))
	wc := gorgonia.NewTensor(g, tensor.Float64, 3, gorgonia.WithShape(1, 1, 2), gorgonia.WithName("wc"),
		gorgonia.WithValue(tensor.New(tensor.WithShape(1, 1, 2), tensor.WithBacking([]float64{0, 1}))))
	b := gorgonia.NewVector(g, tensor.Float64, gorgonia.WithShape(1), gorgonia.WithName("b"),
		gorgonia.WithValue(tensor.New(tensor.WithShape(1), tensor.WithBacking([]float64{0.5}))))
	h, err := ops.E2E(x, wr, wc, b, ops.NoInputGrad())
	if err != nil {
		log.Fatal(err)
	}
	var hv gorgonia.Value
	gorgonia.Read(h, &hv)
	m := gorgonia.NewTapeMachine(g)
	defer m.Close()
	if err := m.RunAll(); err != nil {
		log.Fatal(err)
	}
	fmt.Println(hv.Shape(), hv.Data())
	// Output: (1, 1, 2, 2) [4.5 5.5 6.5 7.5]
}

// A dropout mask is an input node bound once and refilled in place before
// every training step.
func ExampleFillMask() {
	mask := tensor.New(tensor.WithShape(2, 4), tensor.WithBacking(make([]float64, 8)))
	if err := ops.FillMask(mask, 0.5, rand.New(rand.NewPCG(1, 2))); err != nil {
		log.Fatal(err)
	}
	for _, v := range mask.Data().([]float64) {
		if v != 0 && v != 2 {
			fmt.Println("unexpected mask value", v)
		}
	}
	fmt.Println("every value is 0 or 1/(1-0.5) = 2")
	// Output: every value is 0 or 1/(1-0.5) = 2
}
