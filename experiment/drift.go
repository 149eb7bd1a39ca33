package experiment

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/internal/enum"
	"github.com/skein-neuro/skein/train"
)

// Drift is the rule a nightly rerun is held to when it is compared with an
// earlier run of the same experiment (skein run --against): the [drift]
// table of an experiment file. The rule is broken when, for a checked model
// and any target, a pooled figure worsened by more than Worsen allows, or
// the permutation p-value rose above PLevel.
type Drift struct {
	// Worsen maps a metric name (pearson_r_within, pearson_r,
	// spearman_rho, mae, median_ae, rmse, r2, nmi, ami) to the largest
	// worsening of a model's pooled value allowed from the earlier run, in
	// the metric's units: a drop for the correlations, r2, nmi and ami, a
	// rise for the errors mae, median_ae and rmse. Default none.
	Worsen map[string]float64 `toml:"worsen"`
	// PLevel breaks the rule when a model's permutation p-value of PMetric
	// was at most PLevel in the earlier run and is above it now. 0 (the
	// default) checks no p-value; both runs need a permutation test.
	PLevel float64 `toml:"p_level"`
	// PMetric is the metric whose permutation p-value PLevel checks, one
	// of eval.Metrics. Default eval.MetricPearsonWithin, the headline r.
	PMetric eval.Metric `toml:"p_metric"`
	// Models names the models the rule checks; empty (the default) checks
	// all.
	Models []string `toml:"models"`
}

// SetDefaults fills every unset field with its documented default.
func (d *Drift) SetDefaults() {
	if d.Worsen == nil {
		d.Worsen = map[string]float64{}
	}
	if d.PMetric == "" {
		d.PMetric = eval.MetricPearsonWithin
	}
	if d.Models == nil {
		d.Models = []string{}
	}
}

// Enabled reports whether the rule checks anything.
func (d Drift) Enabled() bool { return len(d.Worsen) > 0 || d.PLevel > 0 }

// Checks reports whether the rule applies to the model named name.
func (d Drift) Checks(name string) bool {
	return len(d.Models) == 0 || slices.Contains(d.Models, name)
}

// Validate reports the first setting that cannot work, naming its key.
func (d Drift) Validate(models []train.ModelConfig) error {
	names := make([]string, 0, len(d.Worsen))
	for name := range d.Worsen {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		v := d.Worsen[name]
		if _, err := eval.ParseMetric(name); err != nil {
			return fmt.Errorf("drift.worsen: %w", err)
		}
		if v < 0 || math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("drift.worsen.%s: want a finite amount ≥ 0, found %v", name, v)
		}
	}
	if d.PLevel < 0 || d.PLevel >= 1 || math.IsNaN(d.PLevel) {
		return fmt.Errorf("drift.p_level: want a level in [0, 1), found %v", d.PLevel)
	}
	if err := enum.Check(d.PMetric); err != nil {
		return fmt.Errorf("drift.p_metric: %w", err)
	}
	for _, name := range d.Models {
		if !slices.ContainsFunc(models, func(m train.ModelConfig) bool { return m.Name == name }) {
			return fmt.Errorf("drift.models: no model is named %q", name)
		}
	}
	return nil
}
