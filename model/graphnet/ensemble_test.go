package graphnet

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// ensembleCohort is plantedCohort with families: participants 2i and 2i+1
// share the group "fam-i" for i < 4; the others have no group.
func ensembleCohort(n, p int) ([]*data.Participant, *mat.Dense) {
	ps, y := plantedCohort(n, p, 0.5, 11)
	for i := range 8 {
		ps[i].Group = fmt.Sprintf("fam-%d", i/2)
	}
	return ps, y
}

// An ensemble predicts the mean of K networks built and trained by hand as
// Ensemble documents it (the definition of the method, common practice,
// no source): member k has the k-th seed of the ensemble's generator,
// trains on every part but k of the joined training and validation sets
// and stops early on part k. Its edge importance is the mean of theirs.
func TestEnsembleIsMeanOfMembers(t *testing.T) {
	const p, K, seed = 5, 3, 42
	ps, y := ensembleCohort(24, p)
	cfg := testConfig(Float64, BranchConfig{Layers: layers(e2n(2), n2g(3))})
	cfg.Ensemble = new(K)
	cfg.Patience = new(2)
	train, valid := dataset(ps, y, 0, 18), dataset(ps, y, 18, 24)
	ens, err := NewEnsemble(cfg, p, 1, seed)
	if err != nil {
		t.Fatal(err)
	}
	var events []model.Epoch
	ens.OnEpoch(func(e model.Epoch) { events = append(events, e) })
	if err := ens.Fit(context.Background(), train, valid); err != nil {
		t.Fatal(err)
	}

	rng := rand.New(rand.NewPCG(seed, ensembleStream))
	seeds := make([]int64, K)
	for k := range seeds {
		seeds[k] = rng.Int64()
	}
	parts, err := ensembleParts(ps, K, rng) // train then valid: ps in order
	if err != nil {
		t.Fatal(err)
	}
	test := ps[:10]
	wantPred := mat.NewDense(len(test), 1, nil)
	var wantImp *mat.Dense
	for k := range K {
		var fitIdx, stopIdx []int
		for i := range ps {
			if slices.Contains(parts[k], i) {
				stopIdx = append(stopIdx, i)
			} else {
				fitIdx = append(fitIdx, i)
			}
		}
		member := cfg.clone()
		member.Ensemble = new(1)
		n, err := New(member, p, 1, seeds[k])
		if err != nil {
			t.Fatal(err)
		}
		if err := n.Fit(context.Background(), rows(ps, y, fitIdx), rows(ps, y, stopIdx)); err != nil {
			t.Fatal(err)
		}
		pred, _ := n.Predict(test)
		imp, err := n.EdgeImportance(test)
		if err != nil {
			t.Fatal(err)
		}
		for i := range len(test) {
			wantPred.Set(i, 0, wantPred.At(i, 0)+pred.At(i, 0)/K)
		}
		imp[0].Scale(1.0/K, imp[0])
		if wantImp == nil {
			wantImp = imp[0]
		} else {
			wantImp.Add(wantImp, imp[0])
		}
		if got := ens.Members()[k].History(); len(got) != len(n.History()) {
			t.Errorf("member %d trained %d epochs, by hand %d", k+1, len(got), len(n.History()))
		}
	}
	got, err := ens.Predict(test)
	if err != nil {
		t.Fatal(err)
	}
	if !mat.EqualApprox(got, wantPred, 1e-12) {
		t.Errorf("ensemble predicts\n%v\nthe mean of its members by hand is\n%v", mat.Formatted(got), mat.Formatted(wantPred))
	}
	imp, err := ens.EdgeImportance(test)
	if err != nil {
		t.Fatal(err)
	}
	if !mat.EqualApprox(imp[0], wantImp, 1e-12) {
		t.Errorf("ensemble importance\n%v\nthe members' mean by hand is\n%v", mat.Formatted(imp[0]), mat.Formatted(wantImp))
	}

	// History: each member's epochs from 1, numbered by member; OnEpoch
	// reported the same epochs.
	h := ens.History()
	if !slices.EqualFunc(h, events, func(a, b model.Epoch) bool { return a.Member == b.Member && a.Epoch == b.Epoch }) {
		t.Errorf("History and OnEpoch differ: %d and %d epochs", len(h), len(events))
	}
	for k := 1; k <= K; k++ {
		i := slices.IndexFunc(h, func(e model.Epoch) bool { return e.Member == k })
		if i < 0 || h[i].Epoch != 1 {
			t.Errorf("member %d: history does not start at epoch 1", k)
		}
	}
}

// rows returns the participants idx of ps with their rows of y.
func rows(ps []*data.Participant, y *mat.Dense, idx []int) model.Dataset {
	d := model.Dataset{Y: mat.NewDense(len(idx), 1, nil)}
	for j, i := range idx {
		d.Participants = append(d.Participants, ps[i])
		d.Y.Set(j, 0, y.At(i, 0))
	}
	return d
}

// The split of an ensemble: every participant in one part, groups whole,
// no part empty, sizes within one of each other without groups, the same
// for the same seed (common practice for grouped k-fold, no source).
func TestEnsembleParts(t *testing.T) {
	grouped, _ := ensembleCohort(23, 3)
	plain, _ := plantedCohort(23, 3, 0.5, 1)
	for _, tt := range []struct {
		name string
		ps   []*data.Participant
		K    int
	}{{"grouped", grouped, 5}, {"plain", plain, 5}, {"plain K=2", plain, 2}, {"one each", plain[:4], 4}} {
		parts, err := ensembleParts(tt.ps, tt.K, rand.New(rand.NewPCG(7, ensembleStream)))
		if err != nil {
			t.Fatalf("%s: %v", tt.name, err)
		}
		again, _ := ensembleParts(tt.ps, tt.K, rand.New(rand.NewPCG(7, ensembleStream)))
		if !slices.EqualFunc(parts, again, slices.Equal) {
			t.Errorf("%s: the same seed gave other parts", tt.name)
		}
		partOf := make(map[int]int)
		minSize, maxSize := len(tt.ps), 0
		for k, part := range parts {
			minSize, maxSize = min(minSize, len(part)), max(maxSize, len(part))
			for _, i := range part {
				if _, dup := partOf[i]; dup {
					t.Errorf("%s: participant %d in two parts", tt.name, i)
				}
				partOf[i] = k
			}
		}
		if len(partOf) != len(tt.ps) || minSize == 0 || len(parts) != tt.K {
			t.Errorf("%s: %d parts cover %d of %d participants, smallest %d", tt.name, len(parts), len(partOf), len(tt.ps), minSize)
		}
		for i, q := range tt.ps {
			for j, r := range tt.ps {
				if q.Group != "" && q.Group == r.Group && partOf[i] != partOf[j] {
					t.Errorf("%s: group %s split", tt.name, q.Group)
				}
			}
		}
		if tt.ps[0].Group == "" && maxSize-minSize > 1 {
			t.Errorf("%s: part sizes %d to %d", tt.name, minSize, maxSize)
		}
	}
	if _, err := ensembleParts(plain[:3], 4, rand.New(rand.NewPCG(1, 1))); err == nil || !strings.Contains(err.Error(), "model.network.ensemble: 4 networks need at least 4") {
		t.Errorf("3 participants, 4 networks: error %v", err)
	}
}

// The kind "network" with ensemble = 1 builds the Network of New, which
// trains and predicts bit for bit as before ensembles; with ensemble > 1
// an Ensemble.
func TestKindBuildsNetworkOrEnsemble(t *testing.T) {
	const p = 5
	ps, y := plantedCohort(16, p, 0.5, 3)
	kind, err := model.Lookup(kindNetwork)
	if err != nil {
		t.Fatal(err)
	}
	cfg := testConfig(Float32, BranchConfig{Layers: layers(e2e(2), e2n(2), n2g(3))})
	cfg.Ensemble = new(1)
	reg, err := kind.New(&cfg, p, 1, 9)
	if err != nil {
		t.Fatal(err)
	}
	net, ok := reg.(*Network)
	if !ok {
		t.Fatalf("ensemble = 1 built a %T", reg)
	}
	cfg.Ensemble = nil // today's call: New ignores the key
	direct, _ := New(cfg, p, 1, 9)
	for _, n := range []*Network{net, direct} {
		if err := n.Fit(context.Background(), dataset(ps, y, 0, 12), dataset(ps, y, 12, 16)); err != nil {
			t.Fatal(err)
		}
	}
	a, _ := net.Predict(ps)
	b, _ := direct.Predict(ps)
	if !mat.Equal(a, b) {
		t.Error("ensemble = 1 differs from New")
	}
	cfg.SetDefaults()
	if reg, err = kind.New(&cfg, p, 1, 9); err != nil {
		t.Fatal(err)
	}
	if e, ok := reg.(*Ensemble); !ok || len(e.Members()) != 5 {
		t.Errorf("the default ensemble built a %T", reg)
	}
	if got := kind.Describe(&cfg); !strings.Contains(got, "mean of 5 networks") {
		t.Errorf("Describe = %q", got)
	}
}

// Save and Load keep an ensemble's predictions, history and first-layer
// filters; the kind's Load tells an ensemble from a network.
func TestEnsembleSaveLoad(t *testing.T) {
	const p = 5
	ps, y := ensembleCohort(20, p)
	cfg := testConfig(Float32, BranchConfig{Layers: layers(e2e(2), e2n(2), n2g(3))})
	cfg.Ensemble = new(2)
	ens, err := NewEnsemble(cfg, p, 1, 3)
	if err != nil {
		t.Fatal(err)
	}
	if err := ens.Fit(context.Background(), dataset(ps, y, 0, 15), dataset(ps, y, 15, 20)); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := ens.Save(dir); err != nil {
		t.Fatal(err)
	}
	kind, _ := model.Lookup(kindNetwork)
	reg, err := kind.Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	back, ok := reg.(*Ensemble)
	if !ok {
		t.Fatalf("Load gave a %T", reg)
	}
	want, _ := ens.Predict(ps)
	got, _ := back.Predict(ps)
	if !mat.Equal(got, want) {
		t.Error("predictions differ after Save and Load")
	}
	if !slices.EqualFunc(back.History(), ens.History(), func(a, b model.Epoch) bool {
		return a.Member == b.Member && a.Epoch == b.Epoch && a.TrainLoss == b.TrainLoss && a.Best == b.Best &&
			(a.ValidLoss == b.ValidLoss || math.IsNaN(a.ValidLoss) && math.IsNaN(b.ValidLoss))
	}) {
		t.Error("history differs after Save and Load")
	}
	if f := back.FirstLayerFilters(); len(f) != 1 || !slices.EqualFunc(f[0].Weights, ens.Members()[0].FirstLayerFilters()[0].Weights, slices.Equal) {
		t.Error("first-layer filters are not member 1's")
	}
	if *back.Config().Ensemble != 2 {
		t.Errorf("ensemble = %d after Load", *back.Config().Ensemble)
	}
	if _, err := LoadEnsemble(dir + "/member1"); err == nil || !strings.Contains(err.Error(), "unknown field") {
		t.Errorf("LoadEnsemble of a network: %v", err)
	}
}
