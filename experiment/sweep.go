package experiment

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strings"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/train"
)

// A Sweep varies one setting of one model over a list of values: a
// [[sweep]] table of an experiment file. Several sweeps of the same model
// form a grid: every combination of their values is a variant of the
// model, run as a model of its own (see Experiment.Expand).
//
//	[[sweep]]
//	model = "net"                     # the name of a [[model]]
//	key = "network.optimizer.rate"    # a key inside that [[model]] table
//	values = [1e-3, 3e-3, 1e-2]
type Sweep struct {
	// Model names the [[model]] whose setting varies.
	Model string `toml:"model"`
	// Key is the dotted path of the setting inside the [[model]] table,
	// starting with its kind table: "network.epochs",
	// "network.optimizer.rate", "ridge.alphas".
	Key string `toml:"key"`
	// Values are the values the setting takes, each of the type the key
	// wants.
	Values []any `toml:"values"`
}

// A Variant is one point of a sweep grid: a model made from a swept
// model by setting some of its keys.
type Variant struct {
	// Base is the name of the swept [[model]]; Name the variant's:
	// BASE[key=value,...], with each key shortened to its last part.
	Base, Name string
	// Keys and Values are the settings of the variant, in sweep order.
	Keys   []string
	Values []any
}

func validateSweeps(sweeps []Sweep, models []train.ModelConfig) error {
	seen := make(map[[2]string]bool)
	for i, s := range sweeps {
		switch {
		case s.Key == "" || s.Key == "name":
			return fmt.Errorf("sweep[%d].key: want the dotted path of a setting such as \"network.epochs\", found %q", i, s.Key)
		case len(s.Values) == 0:
			return fmt.Errorf("sweep[%d].values: want at least one value", i)
		case seen[[2]string{s.Model, s.Key}]:
			return fmt.Errorf("sweep[%d]: model %q, key %q is swept twice", i, s.Model, s.Key)
		}
		seen[[2]string{s.Model, s.Key}] = true
	}
	for i, s := range sweeps {
		if hasModel(models, s.Model) {
			continue
		}
		// An expanded experiment (a run folder's experiment.toml) holds
		// the variants instead.
		for _, v := range sweepGrid(s.Model, sweeps) {
			if !hasModel(models, v.Name) {
				return fmt.Errorf("sweep[%d].model: no model is named %q", i, s.Model)
			}
		}
	}
	return nil
}

func hasModel(models []train.ModelConfig, name string) bool {
	return slices.ContainsFunc(models, func(m train.ModelConfig) bool { return m.Name == name })
}

// sweepGrid returns the variants the sweeps of model base make, in grid
// order: the first sweep varying slowest.
func sweepGrid(base string, sweeps []Sweep) []Variant {
	var mine []Sweep
	for _, s := range sweeps {
		if s.Model == base {
			mine = append(mine, s)
		}
	}
	short := make([]string, len(mine))
	for j, s := range mine {
		parts := strings.Split(s.Key, ".")
		short[j] = parts[len(parts)-1]
	}
	for j := range short {
		if slices.Index(short, short[j]) != j {
			for k, s := range mine { // ambiguous: name variants by the whole keys
				short[k] = s.Key
			}
			break
		}
	}
	var grid []Variant
	choice := make([]int, len(mine))
	for {
		v := Variant{Base: base}
		label := make([]string, len(mine))
		for j, s := range mine {
			value := s.Values[choice[j]]
			v.Keys = append(v.Keys, s.Key)
			v.Values = append(v.Values, value)
			label[j] = short[j] + "=" + variantValue(value)
		}
		v.Name = base + "[" + strings.Join(label, ",") + "]"
		grid = append(grid, v)
		j := len(mine) - 1
		for ; j >= 0; j-- {
			if choice[j]++; choice[j] < len(mine[j].Values) {
				break
			}
			choice[j] = 0
		}
		if j < 0 {
			return grid
		}
	}
}

// Expand returns the experiment with every swept model replaced, in its
// place, by its variants (one per combination of the values of its
// sweeps, the first sweep varying slowest), and the variants in the order
// of the models. Model names in permutation.models, drift.models and
// sample_size.models that name a swept model name all its variants. Each
// variant is decoded, given defaults and validated as a [[model]] table of
// the file would be; an error names the sweep and the key. The result
// keeps the sweeps, and expanding it again changes nothing: written out,
// it is the experiment.toml of a run folder, which reads back as the same
// models and variants. An experiment without sweeps is returned as is.
func (e *Experiment) Expand() (*Experiment, []Variant, error) {
	if len(e.Sweeps) == 0 {
		return e, nil, nil
	}
	out := *e
	out.Models = nil
	swept := make(map[string]bool)
	for _, s := range e.Sweeps {
		swept[s.Model] = true
	}
	byName := make(map[string]Variant)
	renamed := make(map[string][]string)
	for base := range swept {
		for _, v := range sweepGrid(base, e.Sweeps) {
			byName[v.Name] = v
			renamed[base] = append(renamed[base], v.Name)
		}
	}
	for _, m := range e.Models {
		if !swept[m.Name] {
			out.Models = append(out.Models, m)
			continue
		}
		for _, v := range sweepGrid(m.Name, e.Sweeps) {
			if hasModel(e.Models, v.Name) {
				return nil, nil, fmt.Errorf("sweep of model %q: variant %q has the name of a model of the file", m.Name, v.Name)
			}
			cfg, err := variantModel(m, v, e.Sweeps)
			if err != nil {
				return nil, nil, err
			}
			out.Models = append(out.Models, cfg)
		}
	}
	var variants []Variant
	for _, m := range out.Models {
		if v, ok := byName[m.Name]; ok {
			variants = append(variants, v)
		}
	}
	rename := func(names []string) []string {
		to := []string{}
		for _, n := range names {
			if vs, ok := renamed[n]; ok && !hasModel(e.Models, vs[0]) {
				to = append(to, vs...)
			} else {
				to = append(to, n)
			}
		}
		return to
	}
	out.Permutation.Models = rename(e.Permutation.Models)
	out.Drift.Models = rename(e.Drift.Models)
	out.SampleSize.Models = rename(e.SampleSize.Models)
	if err := out.Validate(); err != nil {
		return nil, nil, fmt.Errorf("expanding the sweeps: %w", err)
	}
	return &out, variants, nil
}

// variantModel makes the model of variant v from the swept model m.
func variantModel(m train.ModelConfig, v Variant, sweeps []Sweep) (train.ModelConfig, error) {
	raw, err := toml.Marshal(m)
	if err != nil {
		return train.ModelConfig{}, err
	}
	var table map[string]any
	if err := toml.Unmarshal(raw, &table); err != nil {
		return train.ModelConfig{}, err
	}
	for j, key := range v.Keys {
		if err := setKey(table, strings.Split(key, "."), v.Values[j]); err != nil {
			i := slices.IndexFunc(sweeps, func(s Sweep) bool { return s.Model == m.Name && s.Key == key })
			return train.ModelConfig{}, fmt.Errorf("sweep[%d].key: %w", i, err)
		}
	}
	table["name"] = v.Name
	cfg, err := decodeModel(table)
	if err != nil {
		return train.ModelConfig{}, fmt.Errorf("sweep of model %q, variant %s: %w", m.Name, v.Name, err)
	}
	return cfg, nil
}

// setKey sets the dotted key path of table, which must lead through
// tables that exist.
func setKey(table map[string]any, path []string, value any) error {
	for i, part := range path[:len(path)-1] {
		next, ok := table[part].(map[string]any)
		if !ok {
			return fmt.Errorf("%q is not a table of the model (set its kind table, such as [model.network], in the file)", strings.Join(path[:i+1], "."))
		}
		table = next
	}
	table[path[len(path)-1]] = value
	return nil
}

func decodeModel(table map[string]any) (train.ModelConfig, error) {
	raw, err := toml.Marshal(table)
	if err != nil {
		return train.ModelConfig{}, err
	}
	var cfg train.ModelConfig
	dec := toml.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&cfg); err != nil {
		var strict *toml.StrictMissingError
		if errors.As(err, &strict) && len(strict.Errors) > 0 {
			return train.ModelConfig{}, fmt.Errorf("unknown key %q", strings.Join(strict.Errors[0].Key(), "."))
		}
		var de *toml.DecodeError
		if errors.As(err, &de) {
			msg := describeMismatch(strings.TrimPrefix(de.Error(), "toml: "), fieldType(reflect.TypeFor[train.ModelConfig](), de.Key()))
			return train.ModelConfig{}, fmt.Errorf("key %q: %s", strings.Join(de.Key(), "."), msg)
		}
		return train.ModelConfig{}, err
	}
	cfg.SetDefaults()
	if err := cfg.Validate(); err != nil {
		return train.ModelConfig{}, err
	}
	return cfg, nil
}

// variantValue writes a swept value for a variant's name: a string as it
// is, anything else as TOML writes it (settingValue), so that a table
// reads {kind = "e2n"} and never as a Go map.
func variantValue(v any) string {
	if x, ok := v.(string); ok {
		return x
	}
	return settingValue(v)
}

// A SweepRank is one variant's inner-validation score.
type SweepRank struct {
	Variant
	// Rank is 1 for the best variant of its base model, 0 when the
	// variant could not be ranked.
	Rank int
	// InnerLoss is the mean over the variant's units of the best inner
	// validation loss of its training (model.Epoch.ValidLoss of the
	// epoch kept; for an ensemble, the mean over its members of each
	// member's), on the standardized scores; NaN when the model has no
	// inner validation loss (baselines, or cv.inner_validation = 0).
	InnerLoss float64
	// Units counts the units InnerLoss averages.
	Units int
}

// RankSweep ranks the variants of each swept model by their inner
// validation loss alone, never by the outer test folds: for each variant,
// the mean over its units (repeat × fold) of the validation loss of the
// epoch whose weights were kept, lowest first. Only iteratively trained
// models (graph networks) have such a loss; other variants are listed
// unranked. The result keeps variants of one base together, best first.
func RankSweep(variants []Variant, exp *Experiment, res *train.Result) []SweepRank {
	index := make(map[string]int)
	for i, m := range exp.Models {
		index[m.Name] = i
	}
	var out []SweepRank
	for _, v := range variants {
		r := SweepRank{Variant: v, InnerLoss: math.NaN()}
		sum, n := 0.0, 0
		for _, u := range res.Units {
			if u.Model != index[v.Name] {
				continue
			}
			if loss := keptValidLoss(res.Histories[u]); !math.IsNaN(loss) {
				sum += loss
				n++
			} else {
				n = -1
				break
			}
		}
		if n > 0 {
			r.InnerLoss, r.Units = sum/float64(n), n
		}
		out = append(out, r)
	}
	baseOrder := make(map[string]int)
	for _, v := range variants {
		if _, ok := baseOrder[v.Base]; !ok {
			baseOrder[v.Base] = len(baseOrder)
		}
	}
	slices.SortStableFunc(out, func(a, b SweepRank) int {
		if a.Base != b.Base {
			return baseOrder[a.Base] - baseOrder[b.Base]
		}
		switch an, bn := math.IsNaN(a.InnerLoss), math.IsNaN(b.InnerLoss); {
		case an && bn:
			return 0
		case an:
			return 1
		case bn:
			return -1
		}
		return cmpFloat(a.InnerLoss, b.InnerLoss)
	})
	rank := make(map[string]int)
	for i := range out {
		if !math.IsNaN(out[i].InnerLoss) {
			rank[out[i].Base]++
			out[i].Rank = rank[out[i].Base]
		}
	}
	return out
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// keptValidLoss returns the validation loss of the last epoch marked
// Best, or the lowest one when none is marked; NaN without validation
// losses. For
// the history of an ensemble (epochs of several model.Epoch.Member), it is
// the mean over the members of each member's kept loss, NaN when a member
// has none.
func keptValidLoss(h []model.Epoch) float64 {
	var members []int
	byMember := make(map[int][]model.Epoch)
	for _, e := range h {
		if _, ok := byMember[e.Member]; !ok {
			members = append(members, e.Member)
		}
		byMember[e.Member] = append(byMember[e.Member], e)
	}
	if len(members) == 0 {
		return math.NaN()
	}
	sum := 0.0
	for _, m := range members {
		sum += memberValidLoss(byMember[m])
	}
	return sum / float64(len(members))
}

// memberValidLoss is keptValidLoss for the epochs of one model: the
// validation loss of the last epoch marked Best (Best marks each new best
// so far; the weights of the last are kept), or the lowest one when none
// is marked.
func memberValidLoss(h []model.Epoch) float64 {
	kept, lowest := math.NaN(), math.NaN()
	for _, e := range h {
		if math.IsNaN(e.ValidLoss) {
			continue
		}
		if e.Best {
			kept = e.ValidLoss
		}
		if math.IsNaN(lowest) || e.ValidLoss < lowest {
			lowest = e.ValidLoss
		}
	}
	if !math.IsNaN(kept) {
		return kept
	}
	return lowest
}
