package experiment

import (
	"fmt"
	"slices"

	"github.com/skein-neuro/skein/train"
)

// The kinds of BatchUnit.
const (
	// BatchModel trains one model on one fold of one repeat (a train.Unit).
	BatchModel = "model"
	// BatchPermutations runs one model's whole cross-validation under a
	// block of permutations of the participants table.
	BatchPermutations = "permutations"
	// BatchSampleSize runs one model's cross-validation with every
	// training fold cut to one fraction, a point of the sample-size curve.
	BatchSampleSize = "sample_size"
)

// A BatchUnit is one piece of a run that a batch job runs on its own,
// independently of every other: a train.Unit of the cross-validation, a
// block of the permutation test for one model, or one model's point of the
// sample-size curve.
type BatchUnit struct {
	Index int    // position in the plan, from 0
	Kind  string // BatchModel, BatchPermutations or BatchSampleSize
	Model string // the model's name
	// Unit and Select are set for BatchModel: the unit and its index
	// into the list train.Runner.Units returns (train.Runner.Select).
	Unit   train.Unit
	Select int
	// First and End are set for BatchPermutations: the block holds
	// permutations First to End-1 (from 0) of train.Permutations' list.
	First, End int
	// Fraction is set for BatchSampleSize: the fraction of every training
	// fold the model trains on.
	Fraction float64
}

// BatchUnits splits the run of exp that r makes into independent units:
// first every train.Unit of Units, in its order, then, when the experiment
// has a permutation test, each tested model's permutations, model by
// model, in blocks of block permutations, then, with a sample-size curve,
// one unit per fraction and curve model, fraction by fraction. For models that fit score columns together
// (model.Kind.ColumnWise: the baselines) a block is rounded up to a multiple of
// permutation.chunk, so that the blocks fit the same chunks of
// permutations as a single-machine run and give the same numbers. block ≤
// 0 means DefaultBlock for the other models (networks, which retrain for
// every permutation) and one chunk for the baselines.
func BatchUnits(r *train.Runner, exp *Experiment, block int) ([]BatchUnit, error) {
	units, err := r.Units()
	if err != nil {
		return nil, err
	}
	var plan []BatchUnit
	for k, u := range units {
		plan = append(plan, BatchUnit{Index: len(plan), Kind: BatchModel, Model: r.Design.Models[u.Model].Name, Unit: u, Select: k})
	}
	if plan, err = permutationUnits(plan, r, exp.Permutation, block); err != nil {
		return nil, err
	}
	ss := exp.SampleSize
	for _, f := range ss.Fractions {
		for _, m := range r.Design.Models {
			if len(ss.Models) == 0 || slices.Contains(ss.Models, m.Name) {
				plan = append(plan, BatchUnit{Index: len(plan), Kind: BatchSampleSize, Model: m.Name, Fraction: f})
			}
		}
	}
	return plan, nil
}

// permutationUnits appends the permutation blocks of BatchUnits to plan.
func permutationUnits(plan []BatchUnit, r *train.Runner, pc Permutation, block int) ([]BatchUnit, error) {
	if pc.Count == 0 {
		return plan, nil
	}
	for _, m := range r.Design.Models {
		if len(pc.Models) > 0 && !slices.Contains(pc.Models, m.Name) {
			continue
		}
		step, err := permutationStep(m, *pc.Chunk)
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
// once for m: chunk when m's kind fits score columns independently
// (model.Kind.ColumnWise), else 1.
func permutationStep(m train.ModelConfig, chunk int) (int, error) {
	k, err := m.Spec()
	if err != nil {
		return 1, fmt.Errorf("model %q: %w", m.Name, err)
	}
	if !k.ColumnWise {
		return 1, nil
	}
	return max(1, chunk), nil
}
