package report

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/internal/figure"
)

// TopEdges is how many edges the importance tables rank.
const TopEdges = 15

// ModelImportance is one model's edge importance on one target, summarized
// over the folds that reported it. For a classifier the target is a label
// and Class names the class whose decision value the maps explain.
type ModelImportance struct {
	Model, Target string
	// Class is "" for a score target. For a label it is the class whose
	// decision value the maps explain (model.ClassInterpreter): the
	// positive class of a binary label (the log-odds of it against the
	// other class), or one class of a label of more classes (its centred
	// logit).
	Class string
	// Decision says in words what the maps of a label explain, such as
	// "log-odds of patient against control"; "" for a score target.
	Decision string
	// View names the input view the maps are of, such as "functional",
	// "structural" or "branch 2: structural" (train.ModelConfig.
	// ImportanceViews); "" when the model's kind names none.
	View string
	// File is the name of the map's figure.
	File string
	P    int
	// Mean is the p × p row-major mean over folds.
	Mean []float64
	// Folds counts the maps averaged.
	Folds int
	// Top ranks the TopEdges edges of largest |mean|.
	Top []EdgeStability
	// Regions ranks regions by strength: the sum of |mean| over the
	// region's edges, largest first (at most TopEdges).
	Regions []RegionStrength
}

// EdgeStability is one edge of a ranking with its stability over folds.
type EdgeStability struct {
	I, J int     // regions, I < J
	Mean float64 // mean importance over folds
	// InTop is the fraction of folds in which the edge is among the
	// TopEdges edges of largest |importance|.
	InTop float64
	// SameSign is the fraction of folds whose importance has the sign
	// of Mean.
	SameSign float64
}

// RegionStrength is a region's summed absolute importance.
type RegionStrength struct {
	Region   int
	Strength float64
}

// ImportanceSummaries averages the run's importance maps over folds, per
// model, input view and target (and class, for a label), and ranks edges
// and regions. Targets are named from the experiment's targets, in order,
// then the labels' maps follow, label by label; views are named from the
// models' settings (importanceViews).
func (r *Run) ImportanceSummaries() ([]ModelImportance, error) {
	keys, maps, err := r.importanceMaps()
	if err != nil {
		return nil, err
	}
	var out []ModelImportance
	for _, k := range keys {
		mi := summarizeImportance(k.model, k.target, maps[k])
		mi.View, mi.Class, mi.Decision = k.view, k.class, k.decision
		parts := []string{"importance", k.model, k.target}
		if k.class != "" {
			parts = append(parts, k.class)
		}
		if k.views > 1 { // "branch 2: structural" as b2-structural
			parts = append(parts, strings.NewReplacer("branch ", "b", ": ", "-").Replace(k.view))
		}
		mi.File = fileName(parts...)
		out = append(out, mi)
	}
	return out, nil
}

// importanceKey is one model's importance of one input view and target,
// and class for a label.
type importanceKey struct {
	model    string
	view     string
	views    int // the model's number of views
	target   string
	class    string // "" for a score target
	decision string // ModelImportance.Decision
}

// importanceMaps gathers the units' maps by model, view and target, in
// the order the units first report them (model, then the scores' maps by
// view and target, then the labels' by label, view and class).
func (r *Run) importanceMaps() ([]importanceKey, map[importanceKey][][]float64, error) {
	targets := r.Experiment.Cohort.Targets
	var keys []importanceKey
	maps := make(map[importanceKey][][]float64)
	add := func(key importanceKey, m []float64) {
		if _, ok := maps[key]; !ok {
			keys = append(keys, key)
		}
		maps[key] = append(maps[key], m)
	}
	for _, u := range r.Importance {
		if len(u.Maps) > 0 && (len(targets) == 0 || len(u.Maps)%len(targets) != 0) {
			return nil, nil, fmt.Errorf("units/%s: repeat %d, fold %d: %d importance maps for %d targets", u.Model, u.Repeat+1, u.Fold+1, len(u.Maps), len(targets))
		}
		if len(u.Maps) > 0 {
			views := r.importanceViews(u.Model, len(u.Maps)/len(targets))
			for k, m := range u.Maps {
				v, t := k/len(targets), k%len(targets)
				add(importanceKey{model: u.Model, view: views[v], views: len(views), target: targets[t]}, m)
			}
		}
		nViews := 0
		for _, lm := range u.LabelMaps {
			nViews = max(nViews, lm.View+1)
		}
		views := r.importanceViews(u.Model, nViews)
		for k, lm := range u.LabelMaps {
			if lm.View < 0 || lm.Map == nil {
				return nil, nil, fmt.Errorf("units/%s: repeat %d, fold %d: label importance map %d has view %d", u.Model, u.Repeat+1, u.Fold+1, k+1, lm.View)
			}
			class, decision := r.explained(lm.Label, lm.Class)
			add(importanceKey{model: u.Model, view: views[lm.View], views: len(views), target: lm.Label, class: class, decision: decision},
				lm.Map.RawMatrix().Data)
		}
	}
	return keys, maps, nil
}

// explained names class c of label and says what a map of its decision
// value explains (model.ClassInterpreter): for a binary label the log-odds
// of class c against the other class, for more classes the centred logit
// of class c. A label or class the experiment does not list is named by
// its index.
func (r *Run) explained(label string, c int) (class, decision string) {
	for _, lt := range r.Labels {
		if lt.Name != label || c < 0 || c >= len(lt.Classes) {
			continue
		}
		if len(lt.Classes) == 2 {
			return lt.Classes[c], fmt.Sprintf("log-odds of %s against %s", lt.Classes[c], lt.Classes[1-c])
		}
		return lt.Classes[c], fmt.Sprintf("centred logit of %s (its log-probability less the mean over the %d classes)", lt.Classes[c], len(lt.Classes))
	}
	class = fmt.Sprintf("class %d", c)
	return class, "decision value of " + class
}

// importanceViews names the n importance views of model from its
// settings; when they do not name n views (a run folder of an earlier
// skein, whose maps had one view per target), the views are "" for one
// and "view 1", "view 2", ... for more.
func (r *Run) importanceViews(model string, n int) []string {
	for _, m := range r.Experiment.Models {
		if views := m.ImportanceViews(); m.Name == model && len(views) == n {
			return views
		}
	}
	views := make([]string, n)
	for v := range views {
		if n > 1 {
			views[v] = fmt.Sprintf("view %d", v+1)
		}
	}
	return views
}

func summarizeImportance(model, target string, maps [][]float64) ModelImportance {
	p := int(math.Round(math.Sqrt(float64(len(maps[0])))))
	mi := ModelImportance{Model: model, Target: target, P: p, Folds: len(maps), Mean: make([]float64, p*p)}
	for _, m := range maps {
		for i, v := range m {
			mi.Mean[i] += v / float64(len(maps))
		}
	}
	type edge struct{ i, j int }
	var edges []edge
	for i := range p {
		for j := i + 1; j < p; j++ {
			edges = append(edges, edge{i, j})
		}
	}
	rank := func(m []float64) []edge {
		e := append([]edge(nil), edges...)
		sort.SliceStable(e, func(a, b int) bool {
			return math.Abs(m[e[a].i*p+e[a].j]) > math.Abs(m[e[b].i*p+e[b].j])
		})
		return e[:min(TopEdges, len(e))]
	}
	inTop := make(map[edge]int)
	for _, m := range maps {
		for _, e := range rank(m) {
			inTop[e]++
		}
	}
	for _, e := range rank(mi.Mean) {
		mean := mi.Mean[e.i*p+e.j]
		same := 0
		for _, m := range maps {
			if v := m[e.i*p+e.j]; v != 0 && (v > 0) == (mean > 0) {
				same++
			}
		}
		mi.Top = append(mi.Top, EdgeStability{I: e.i, J: e.j, Mean: mean,
			InTop: float64(inTop[e]) / float64(len(maps)), SameSign: float64(same) / float64(len(maps))})
	}
	strength := make([]RegionStrength, p)
	for i := range p {
		strength[i].Region = i
		for j := range p {
			if j != i {
				strength[i].Strength += math.Abs(mi.Mean[i*p+j])
			}
		}
	}
	sort.SliceStable(strength, func(a, b int) bool { return strength[a].Strength > strength[b].Strength })
	mi.Regions = strength[:min(TopEdges, p)]
	return mi
}

// ImportanceFigures draws each summary's fold-averaged map as a region ×
// region heat map in region-label order.
func (r *Run) ImportanceFigures(sums []ModelImportance) ([]Figure, error) {
	var figs []Figure
	for _, s := range sums {
		labels := r.Regions
		if len(labels) != s.P {
			labels = defaultLabels(s.P)
		}
		target := s.Target
		if s.Class != "" {
			target = fmt.Sprintf("%s (%s)", s.Target, s.Class)
		}
		title := fmt.Sprintf("%s — %s: edge importance, mean of %d folds", s.Model, target, s.Folds)
		of := ""
		if s.View != "" {
			title = fmt.Sprintf("%s — %s: %s edges' importance, mean of %d folds", s.Model, target, s.View, s.Folds)
			of = fmt.Sprintf(" of the %s input's edges alone (each input view of the model has a map of its own, never summed)", s.View)
		}
		img, err := heatMap(title, "region", "region", labels, labels, s.P, s.P, s.Mean, figure.DoubleColumn, 6)
		if err != nil {
			return nil, fmt.Errorf("importance figure of %s, %s: %w", s.Model, target, err)
		}
		raised := "predicted " + s.Target
		if s.Class != "" {
			raised = s.Decision + " for " + s.Target
		}
		caption := fmt.Sprintf("%s%s, averaged over the %d test folds; red edges raise the %s, blue ones lower it. %s",
			r.importanceKind(s.Model, s.Class != ""), of, s.Folds, raised, "Importance shows what the model uses, not a cause.")
		figs = append(figs, fromImage(img, s.File, SectionImportance, title, caption))
	}
	return figs, nil
}

// importanceKind says how a model's importance is defined: its kind's
// model.Importance, or its ClassImportance for a label.
func (r *Run) importanceKind(model string, label bool) string {
	for _, m := range r.Experiment.Models {
		if m.Name != model {
			continue
		}
		k, err := m.Spec()
		switch {
		case err != nil:
		case label && k.ClassImportance.Description != "":
			return k.ClassImportance.Description
		case !label && k.Importance.Description != "":
			return k.Importance.Description
		}
	}
	return "Edge importance"
}

func defaultLabels(p int) []string {
	out := make([]string, p)
	for i := range out {
		out[i] = fmt.Sprint(i + 1)
	}
	return out
}

// FilterSummary is one branch's first-layer filters of one model,
// matched and averaged over its saved fold networks (MatchFilters).
type FilterSummary struct {
	Model  string
	Branch int
	Array  string
	Folds  int
	// Mean[c] is the mean over folds of the filters matched to channel c
	// of the first fold, channels × p.
	Mean [][]float64
	// Consistency[c] is the mean Pearson correlation between each fold's
	// filter matched to channel c and the mean of the other folds' (NaN
	// with one fold); near 1 when every fold learnt the same filter.
	Consistency []float64
}

// FilterSummaries matches and averages the first-layer filters of every
// saved network model, branch by branch.
func (r *Run) FilterSummaries() []FilterSummary {
	type key struct {
		model  string
		branch int
	}
	var keys []key
	folds := make(map[key][][][]float64)
	arrays := make(map[key]string)
	for _, n := range r.Networks {
		for _, b := range n.Branches {
			k := key{n.Model, b.Branch}
			if _, ok := folds[k]; !ok {
				keys = append(keys, k)
				arrays[k] = b.Array
			}
			if len(folds[k]) > 0 && (len(folds[k][0]) != len(b.Weights) || len(folds[k][0][0]) != len(b.Weights[0])) {
				continue
			}
			folds[k] = append(folds[k], b.Weights)
		}
	}
	var out []FilterSummary
	for _, k := range keys {
		mean, cons := MatchFilters(folds[k])
		out = append(out, FilterSummary{Model: k.model, Branch: k.branch, Array: arrays[k], Folds: len(folds[k]), Mean: mean, Consistency: cons})
	}
	return out
}

// FilterFigures draws each filter summary as a region × channel heat map,
// the channels labelled with their consistency over folds.
func (r *Run) FilterFigures(sums []FilterSummary) ([]Figure, error) {
	var figs []Figure
	for _, s := range sums {
		o, p := len(s.Mean), len(s.Mean[0])
		z := make([]float64, p*o)
		var channels []string
		var meanCons float64
		for c := range o {
			for i := range p {
				z[i*o+c] = s.Mean[c][i]
			}
			channels = append(channels, fmt.Sprintf("%d (%s)", c+1, num(s.Consistency[c])))
			meanCons += s.Consistency[c] / float64(o)
		}
		labels := r.Regions
		if len(labels) != p {
			labels = defaultLabels(p)
		}
		title := fmt.Sprintf("%s, branch %d: first-layer filters, %d folds", s.Model, s.Branch+1, s.Folds)
		width := figure.SingleColumn
		if o > 8 {
			width = figure.DoubleColumn
		}
		img, err := heatMap(title, "channel (consistency over folds)", "region", channels, labels, p, o, z, width, 6)
		if err != nil {
			return nil, fmt.Errorf("filter figure of %s: %w", s.Model, err)
		}
		caption := fmt.Sprintf("Weights of %s (averaged over input channels) of each fold's network, matched to the "+
			"first fold's channels by correlation (Hungarian method) and averaged. In brackets the consistency of each "+
			"channel: the mean correlation of a fold's filter with the mean of the other folds' (mean %s; 1 = identical).",
			s.Array, num(meanCons))
		figs = append(figs, fromImage(img, fileName("filters", s.Model, fmt.Sprintf("b%d", s.Branch+1)), SectionFilters, title, caption))
	}
	return figs, nil
}

// importanceCSV returns the run's importance maps as
// experiment.ImportanceFile, whose columns that constant documents.
func (r *Run) importanceCSV() []byte {
	keys, maps, err := r.importanceMaps()
	if err != nil {
		keys = nil // ImportanceSummaries reports the error
	}
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write([]string{"model", "target", "view", "region_i", "region_j", "mean", "sd", "folds", "same_sign", "class"})
	format := func(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }
	for _, k := range keys {
		ms := maps[k]
		p := int(math.Round(math.Sqrt(float64(len(ms[0])))))
		labels := r.Regions
		if len(labels) != p {
			labels = defaultLabels(p)
		}
		vals := make([]float64, len(ms))
		for i := range p {
			for j := i + 1; j < p; j++ {
				for f, m := range ms {
					vals[f] = m[i*p+j]
				}
				mean, sd := stat.MeanStdDev(vals, nil)
				same := 0
				for _, v := range vals {
					if v != 0 && (v > 0) == (mean > 0) {
						same++
					}
				}
				sdText := ""
				if len(vals) > 1 {
					sdText = format(sd)
				}
				w.Write([]string{k.model, k.target, k.view, labels[i], labels[j], format(mean), sdText,
					strconv.Itoa(len(vals)), format(float64(same) / float64(len(vals))), k.class})
			}
		}
	}
	w.Flush()
	return buf.Bytes()
}
