package experiment

import (
	"slices"

	"github.com/skein-neuro/skein/train"
)

// The kinds of BatchUnit.
const (
	// BatchModel trains one model on one fold of one repeat (a train.Unit).
	BatchModel = "model"
	// BatchPermutations runs one model's whole cross-validation under a
	// block of permutations of the scores.
	BatchPermutations = "permutations"
)

// A BatchUnit is one piece of a run that a batch job runs on its own,
// independently of every other: a train.Unit of the cross-validation, or a block
// of the permutation test for one model.
type BatchUnit struct {
	Index int    // position in the plan, from 0
	Kind  string // BatchModel or BatchPermutations
	Model string // the model's name
	// train.Unit and Select are set for BatchModel: the unit and its index
	// into the list train.Runner.Units returns (train.Runner.Select).
	Unit   train.Unit
	Select int
	// First and End are set for BatchPermutations: the block holds
	// permutations First to End-1 (from 0) of Permutations' list.
	First, End int
}

// BatchUnits splits the run of r into independent units: first every train.Unit
// of Units, in its order, then, when the experiment has a permutation
// test, each tested model's permutations, model by model, in blocks of
// block permutations. For models that fit score columns together
// (model.ColumnWise: the baselines) a block is rounded up to a multiple of
// permutation.chunk, so that the blocks fit the same chunks of
// permutations as a single-machine run and give the same numbers. block ≤
// 0 means DefaultBlock for the other models (networks, which retrain for
// every permutation) and one chunk for the baselines.
func BatchUnits(r *train.Runner, pc Permutation, block int) ([]BatchUnit, error) {
	units, err := r.Units()
	if err != nil {
		return nil, err
	}
	var plan []BatchUnit
	for k, u := range units {
		plan = append(plan, BatchUnit{Index: len(plan), Kind: BatchModel, Model: r.Design.Models[u.Model].Name, Unit: u, Select: k})
	}
	if pc.Count == 0 {
		return plan, nil
	}
	for _, m := range r.Design.Models {
		if len(pc.Models) > 0 && !slices.Contains(pc.Models, m.Name) {
			continue
		}
		step, err := permutationStep(r, m, *pc.Chunk)
		if err != nil {
			return nil, err
		}
		size := block
		switch {
		case size <= 0 && step > 1:
			size = step
		case size <= 0:
			size = DefaultBlock
		}
		size = (size + step - 1) / step * step
		for first := 0; first < pc.Count; first += size {
			plan = append(plan, BatchUnit{Index: len(plan), Kind: BatchPermutations, Model: m.Name, First: first, End: min(first+size, pc.Count)})
		}
	}
	return plan, nil
}

// DefaultBlock is the number of permutations of a network in one unit of
// BatchUnits when none is asked for: each is a whole cross-validation.
const DefaultBlock = 10

// permutationStep returns how many permutations RunPermutations fits at
// once for m: chunk for a model.ColumnWise, else 1.
func permutationStep(r *train.Runner, m train.ModelConfig, chunk int) (int, error) {
	columnWise, err := r.ColumnWise(m)
	if err != nil || !columnWise {
		return 1, err
	}
	return max(1, chunk), nil
}
