package graphnet

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Ensemble is K networks of one Config, each trained on its own part of
// the data and stopped early on another, whose predictions are averaged:
// a model.Regressor, model.Iterative, model.Interpreter and model.Saver.
// It is not safe for concurrent use.
//
// Fit joins the training and the validation set and splits the joined
// participants in K parts (ensembleParts): participants of the same
// data.Participant.Group stay in one part, a participant without a group
// stands alone. Member k (1-based) trains on the other K − 1 parts and
// stops early on part k. The parts and the members' seeds come from the
// ensemble's seed alone.
type Ensemble struct {
	cfg     Config
	p       int
	targets int
	seed    int64
	members []*Network
	onEpoch func(model.Epoch)
}

var (
	_ model.Regressor   = (*Ensemble)(nil)
	_ model.Iterative   = (*Ensemble)(nil)
	_ model.Interpreter = (*Ensemble)(nil)
	_ model.Saver       = (*Ensemble)(nil)
)

// ensembleStream is the PCG stream of an ensemble's random draws ("ens").
const ensembleStream = 0x656e73

// NewEnsemble returns an ensemble of K = *cfg.Ensemble networks of cfg
// (default 5), K ≥ 2, for p regions and the given number of targets. The
// ensemble draws from a PCG generator seeded by seed first K member seeds
// (rand.Int64), with which New builds the members, then the split of Fit.
// The same cfg, p, targets and seed give the same members and, on the same
// data, the same training. For K = 1 use New: the kind "network" builds a
// Network then.
func NewEnsemble(cfg Config, p, targets int, seed int64) (*Ensemble, error) {
	cfg = cfg.clone()
	cfg.SetDefaults()
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	if *cfg.Ensemble < 2 {
		return nil, fmt.Errorf("model.network.ensemble: an Ensemble needs at least 2 networks, found %d (use New for one)", *cfg.Ensemble)
	}
	e := &Ensemble{cfg: cfg, p: p, targets: targets, seed: seed}
	rng := e.rng()
	for range *cfg.Ensemble {
		n, err := New(cfg, p, targets, rng.Int64())
		if err != nil {
			return nil, err
		}
		e.members = append(e.members, n)
	}
	return e, nil
}

// rng returns the ensemble's generator, positioned after the member seeds.
func (e *Ensemble) rng() *rand.Rand {
	return rand.New(rand.NewPCG(uint64(e.seed), ensembleStream))
}

// Config returns the ensemble's configuration, with its defaults filled.
func (e *Ensemble) Config() Config { return e.cfg.clone() }

// P returns the number of regions the ensemble takes.
func (e *Ensemble) P() int { return e.p }

// Targets returns the number of outputs.
func (e *Ensemble) Targets() int { return e.targets }

// Members returns the ensemble's networks, member 1 first. They are the
// ensemble's own: training one trains the ensemble's.
func (e *Ensemble) Members() []*Network { return slices.Clone(e.members) }

// OnEpoch sets a function called after every epoch of every member in the
// next Fit, with Epoch.Member set to the member's number (from 1).
func (e *Ensemble) OnEpoch(f func(model.Epoch)) {
	e.onEpoch = f
	for k, n := range e.members {
		if f == nil {
			n.OnEpoch(nil)
			continue
		}
		n.OnEpoch(func(ep model.Epoch) {
			ep.Member = k + 1
			f(ep)
		})
	}
}

// History returns the epochs of the last Fit of every member, member 1
// first, each with Epoch.Member set: every member has its own epochs from
// 1 and its own Best epoch.
func (e *Ensemble) History() []model.Epoch {
	var out []model.Epoch
	for k, n := range e.members {
		for _, ep := range n.History() {
			ep.Member = k + 1
			out = append(out, ep)
		}
	}
	return out
}

// Fit joins train and valid (train's participants first) and trains
// member k, for k = 1 … K, on every part of the joined set but part k,
// stopping early on part k (Network.Fit), where the parts are those of
// ensembleParts with the ensemble's generator. It needs at least K
// participants or groups in the joined set.
func (e *Ensemble) Fit(ctx context.Context, train, valid model.Dataset) error {
	K := len(e.members)
	joined, err := joinDatasets(train, valid, e.targets)
	if err != nil {
		return err
	}
	rng := e.rng()
	for range K {
		rng.Int64() // the member seeds
	}
	parts, err := ensembleParts(joined.Participants, K, rng)
	if err != nil {
		return err
	}
	for k, n := range e.members {
		fit, stop := memberData(joined, parts, k)
		if err := n.Fit(ctx, fit, stop); err != nil {
			return fmt.Errorf("ensemble member %d of %d: %w", k+1, K, err)
		}
	}
	return nil
}

// joinDatasets returns the participants and scores of a followed by those
// of b (which may be empty, with a nil Y).
func joinDatasets(a, b model.Dataset, targets int) (model.Dataset, error) {
	out := model.Dataset{Participants: slices.Concat(a.Participants, b.Participants)}
	if len(out.Participants) == 0 {
		return out, fmt.Errorf("graphnet: Ensemble.Fit: the training set is empty")
	}
	out.Y = mat.NewDense(len(out.Participants), targets, nil)
	for _, d := range []struct {
		set  model.Dataset
		what string
		off  int
	}{{a, "training set", 0}, {b, "validation set", a.Len()}} {
		if d.set.Len() == 0 {
			continue
		}
		if d.set.Y == nil {
			return out, fmt.Errorf("graphnet: Ensemble.Fit: %s: no scores (Y is nil)", d.what)
		}
		if r, c := d.set.Y.Dims(); r != d.set.Len() || c != targets {
			return out, fmt.Errorf("graphnet: Ensemble.Fit: %s: Y is %d×%d, want %d×%d (participants × targets)", d.what, r, c, d.set.Len(), targets)
		}
		out.Y.Slice(d.off, d.off+d.set.Len(), 0, targets).(*mat.Dense).Copy(d.set.Y)
	}
	return out, nil
}

// memberData returns the datasets of member k (from 0): the participants of
// every part but k, in the joined order, and those of part k.
func memberData(joined model.Dataset, parts [][]int, k int) (fit, stop model.Dataset) {
	var fitIdx []int
	for j, part := range parts {
		if j != k {
			fitIdx = append(fitIdx, part...)
		}
	}
	slices.Sort(fitIdx)
	return subset(joined, fitIdx), subset(joined, parts[k])
}

// subset returns the rows idx of d.
func subset(d model.Dataset, idx []int) model.Dataset {
	_, T := d.Y.Dims()
	out := model.Dataset{Participants: make([]*data.Participant, len(idx)), Y: mat.NewDense(len(idx), T, nil)}
	for j, i := range idx {
		out.Participants[j] = d.Participants[i]
		out.Y.SetRow(j, d.Y.RawRowView(i))
	}
	return out
}

// ensembleParts splits the participants ps in K parts, keeping the
// participants of one data.Participant.Group together (an empty group
// stands alone). The groups, in the order of their first participant,
// are shuffled by rng (rand.Perm), then stably sorted by size, largest
// first, and each goes to the part with the fewest participants so far
// (the first such part on a tie). Without groups the parts' sizes differ
// by at most one. Each part lists its indices into ps in increasing
// order; no part is empty. Fewer than K groups is an error naming the key
// model.network.ensemble.
func ensembleParts(ps []*data.Participant, K int, rng *rand.Rand) ([][]int, error) {
	var units [][]int
	byGroup := make(map[string]int)
	for i, p := range ps {
		if p.Group == "" {
			units = append(units, []int{i})
			continue
		}
		u, ok := byGroup[p.Group]
		if !ok {
			u = len(units)
			byGroup[p.Group] = u
			units = append(units, nil)
		}
		units[u] = append(units[u], i)
	}
	if len(units) < K {
		return nil, fmt.Errorf("model.network.ensemble: %d networks need at least %d participants or groups in the training and validation sets together, found %d", K, K, len(units))
	}
	order := rng.Perm(len(units))
	slices.SortStableFunc(order, func(a, b int) int { return len(units[b]) - len(units[a]) })
	parts := make([][]int, K)
	for _, u := range order {
		k := 0
		for j := range parts {
			if len(parts[j]) < len(parts[k]) {
				k = j
			}
		}
		parts[k] = append(parts[k], units[u]...)
	}
	for _, part := range parts {
		slices.Sort(part)
	}
	return parts, nil
}

// ensemblePartsByClass splits the participants ps of a Classifier's
// joined set in K parts as ensembleParts does, groups whole, and
// stratified by class: labels[i] is the class of ps[i]. The groups, in
// the order of their first participant, are shuffled by rng (rand.Perm),
// then stably sorted by the joined set's count of their rarest class,
// rarest first, and each goes to the part holding the fewest participants
// of that class, then the fewest participants in all (the first such part
// on a tie). Without groups every part thus holds ⌊n_c/K⌋ or ⌈n_c/K⌉ of
// the n_c participants of each class c, so that each member stops early
// on a part with the label's proportions (common practice, no source). An
// empty part always takes the next group, so no part is empty. Fewer than
// K groups is an error naming model.network.ensemble.
func ensemblePartsByClass(ps []*data.Participant, labels []int, K int, rng *rand.Rand) ([][]int, error) {
	var units [][]int
	byGroup := make(map[string]int)
	for i, p := range ps {
		if p.Group == "" {
			units = append(units, []int{i})
			continue
		}
		u, ok := byGroup[p.Group]
		if !ok {
			u = len(units)
			byGroup[p.Group] = u
			units = append(units, nil)
		}
		units[u] = append(units[u], i)
	}
	if len(units) < K {
		return nil, fmt.Errorf("model.network.ensemble: %d networks need at least %d participants or groups in the training and validation sets together, found %d", K, K, len(units))
	}
	total := make(map[int]int)
	for _, y := range labels {
		total[y]++
	}
	rarest := make([]int, len(units)) // per unit, its class of fewest participants in ps
	for u, members := range units {
		rarest[u] = labels[members[0]]
		for _, i := range members {
			if y := labels[i]; total[y] < total[rarest[u]] || total[y] == total[rarest[u]] && y < rarest[u] {
				rarest[u] = y
			}
		}
	}
	order := rng.Perm(len(units))
	slices.SortStableFunc(order, func(a, b int) int { return total[rarest[a]] - total[rarest[b]] })
	parts := make([][]int, K)
	ofClass := make([]map[int]int, K)
	for k := range ofClass {
		ofClass[k] = make(map[int]int)
	}
	for _, u := range order {
		c, best := rarest[u], 0
		for k := range parts {
			if ofClass[k][c] < ofClass[best][c] || ofClass[k][c] == ofClass[best][c] && len(parts[k]) < len(parts[best]) {
				best = k
			}
		}
		parts[best] = append(parts[best], units[u]...)
		for _, i := range units[u] {
			ofClass[best][labels[i]]++
		}
	}
	for _, part := range parts {
		slices.Sort(part)
	}
	return parts, nil
}

// Predict returns the mean of the members' predictions (Network.Predict):
// len(ps) × T, on the scale of the Y the ensemble was fitted on.
func (e *Ensemble) Predict(ps []*data.Participant) (*mat.Dense, error) {
	var sum *mat.Dense
	for k, n := range e.members {
		pred, err := n.Predict(ps)
		if err != nil {
			return nil, fmt.Errorf("ensemble member %d: %w", k+1, err)
		}
		if sum == nil {
			sum = pred
			continue
		}
		sum.Add(sum, pred)
	}
	sum.Scale(1/float64(len(e.members)), sum)
	return sum, nil
}

// EdgeImportance returns, per target, the mean over the members of their
// gradient × input saliency maps (Network.EdgeImportance) over ps. Since
// the saliency of a member is linear in its output gradient, this is the
// gradient × input saliency of the ensemble's mean prediction.
func (e *Ensemble) EdgeImportance(ps []*data.Participant) ([]*mat.Dense, error) {
	return e.EdgeImportanceFrom(ps, nil)
}

// EdgeImportanceFrom is EdgeImportance measured from reference inputs:
// the mean over the members of Network.EdgeImportanceFrom
// (model.ReferenceInterpreter); nil ref measures from inputs of 0.
func (e *Ensemble) EdgeImportanceFrom(ps, ref []*data.Participant) ([]*mat.Dense, error) {
	var sum []*mat.Dense
	for k, n := range e.members {
		maps, err := n.EdgeImportanceFrom(ps, ref)
		if err != nil {
			return nil, fmt.Errorf("ensemble member %d: %w", k+1, err)
		}
		if sum == nil {
			sum = maps
			continue
		}
		for t := range sum {
			sum[t].Add(sum[t], maps[t])
		}
	}
	for _, m := range sum {
		m.Scale(1/float64(len(e.members)), m)
	}
	return sum, nil
}

// FirstLayerFilters returns the first-layer filters of member 1
// (Network.FirstLayerFilters). Members' filters are not averaged: the
// channels of two networks need not match.
func (e *Ensemble) FirstLayerFilters() []Filters { return e.members[0].FirstLayerFilters() }

var _ model.ReferenceInterpreter = (*Ensemble)(nil)

// The saved-ensemble format; see the package documentation.
const (
	ensembleFormat  = "skein-graphnet-ensemble"
	ensembleVersion = 1
)

// ensembleManifest is the JSON document manifest.json of a saved ensemble.
type ensembleManifest struct {
	Format  string `json:"format"`
	Version int    `json:"version"`
	Config  Config `json:"config"`
	P       int    `json:"p"`
	Targets int    `json:"targets"`
	// Classes is K for a Classifier, absent for an Ensemble.
	Classes int      `json:"classes,omitempty"`
	Seed    int64    `json:"seed"`
	Members []string `json:"members"`
}

// memberDir names the folder of member k (from 0) of a saved ensemble.
func memberDir(k int) string { return "member" + strconv.Itoa(k+1) }

// Save writes the ensemble to the folder dir, creating it if needed: a
// manifest.json naming the members and, per member k, a folder memberK
// holding the member as Network.Save writes it (see the package
// documentation).
func (e *Ensemble) Save(dir string) error {
	return saveEnsemble(dir, ensembleManifest{Format: ensembleFormat, Version: ensembleVersion, Config: e.cfg, P: e.p, Targets: e.targets, Seed: e.seed}, e.members)
}

// saveEnsemble writes m, with its Members filled, and the members to the
// folder dir (see Ensemble.Save).
func saveEnsemble(dir string, m ensembleManifest, members []*Network) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("graphnet: Ensemble.Save: %w", err)
	}
	for k, n := range members {
		m.Members = append(m.Members, memberDir(k))
		if err := n.Save(filepath.Join(dir, memberDir(k))); err != nil {
			return fmt.Errorf("graphnet: Ensemble.Save: member %d: %w", k+1, err)
		}
	}
	js, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return fmt.Errorf("graphnet: Ensemble.Save: %s: %w", manifestFile, err)
	}
	if err := os.WriteFile(filepath.Join(dir, manifestFile), append(js, '\n'), 0o644); err != nil {
		return fmt.Errorf("graphnet: Ensemble.Save: %w", err)
	}
	return nil
}

// LoadEnsemble reads an ensemble saved by Ensemble.Save from the folder
// dir. A manifest of another format or version, a member folder other
// than those Save writes, or a member that Load refuses or that does not
// match the ensemble's p and targets gives an error naming the file, and
// so does an ensemble of a Classifier (read it with LoadClassifier).
func LoadEnsemble(dir string) (*Ensemble, error) {
	m, members, err := readEnsemble(dir)
	if err != nil {
		return nil, err
	}
	if m.Classes > 0 {
		return nil, fmt.Errorf("graphnet: LoadEnsemble: %s: a classifier of %d classes; read it with LoadClassifier", filepath.Join(dir, manifestFile), m.Classes)
	}
	e := &Ensemble{cfg: m.Config, p: m.P, targets: m.Targets, seed: m.Seed, members: members}
	e.cfg.SetDefaults()
	return e, nil
}

// readEnsemble reads the manifest and the members of a saved Ensemble or
// ensemble Classifier, checking that they agree (see LoadEnsemble).
func readEnsemble(dir string) (ensembleManifest, []*Network, error) {
	mpath := filepath.Join(dir, manifestFile)
	var m ensembleManifest
	raw, err := os.ReadFile(mpath)
	if err != nil {
		return m, nil, fmt.Errorf("graphnet: LoadEnsemble: %w", err)
	}
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&m); err != nil {
		return m, nil, fmt.Errorf("graphnet: LoadEnsemble: %s: %w", mpath, err)
	}
	if m.Format != ensembleFormat || m.Version != ensembleVersion {
		return m, nil, fmt.Errorf("graphnet: LoadEnsemble: %s: format %q version %d, want %q version %d", mpath, m.Format, m.Version, ensembleFormat, ensembleVersion)
	}
	if m.Config.Ensemble == nil || *m.Config.Ensemble != len(m.Members) || len(m.Members) < 2 {
		return m, nil, fmt.Errorf("graphnet: LoadEnsemble: %s: %d members listed, config.ensemble is %v", mpath, len(m.Members), deref(m.Config.Ensemble))
	}
	var members []*Network
	for k, name := range m.Members {
		if name != memberDir(k) {
			return m, nil, fmt.Errorf("graphnet: LoadEnsemble: %s: members[%d] is %q, want %q", mpath, k, name, memberDir(k))
		}
		n, err := loadNetwork(filepath.Join(dir, name))
		if err != nil {
			return m, nil, fmt.Errorf("graphnet: LoadEnsemble: member %d: %w", k+1, err)
		}
		if n.p != m.P || n.targets != m.Targets || n.classes != m.Classes {
			return m, nil, fmt.Errorf("graphnet: LoadEnsemble: %s: member %d takes p = %d, %d targets and %d classes, the ensemble p = %d, %d targets and %d classes", mpath, k+1, n.p, n.targets, n.classes, m.P, m.Targets, m.Classes)
		}
		members = append(members, n)
	}
	return m, members, nil
}

// loadSaved reads a saved Network or Ensemble from dir, by the format of
// its manifest.json.
func loadSaved(dir string) (model.Regressor, error) {
	raw, err := os.ReadFile(filepath.Join(dir, manifestFile))
	if err != nil {
		return nil, fmt.Errorf("graphnet: Load: %w", err)
	}
	var head struct {
		Format string `json:"format"`
	}
	if json.Unmarshal(raw, &head) == nil && head.Format == ensembleFormat {
		return LoadEnsemble(dir)
	}
	return Load(dir)
}
