package data

import (
	"fmt"
	"io"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// Notice closes every summary skein writes.
const Notice = "research software, not a diagnostic device: results need ethics approval, " +
	"data-use agreements and clinical judgement; defer to your local regulations"

// Report is what Check found in a cohort, for a person (WriteText) or a
// script (encoding/json). Statistics describe the included participants'
// matrices as read, before preprocessing.
type Report struct {
	Participants string `json:"participants_table"` // path of the participants table
	Rows         int    `json:"table_rows"`         // participant rows in the table
	Included     int    `json:"included"`
	// IncludedIDs lists the included participants in cohort order.
	IncludedIDs []string    `json:"included_ids"`
	Excluded    []Exclusion `json:"excluded"`
	// PartialScores counts included participants missing some, but not
	// all, scores; they are kept with NaN there.
	PartialScores int    `json:"participants_with_missing_scores"`
	Regions       int    `json:"regions"`       // p
	RegionLabels  string `json:"region_labels"` // where the labels came from: a file, a matrix header or "default"
	// Functional and Structural describe each modality; nil when absent.
	Functional *ModalityReport  `json:"functional,omitempty"`
	Structural *ModalityReport  `json:"structural,omitempty"`
	Scores     []VariableReport `json:"scores"`
	Covariates []VariableReport `json:"covariates,omitempty"`
	// Labels gives the class counts of each class label (cohort.labels).
	Labels []LabelReport `json:"labels,omitempty"`
	Group  *GroupReport  `json:"group,omitempty"`
	// OutlierSD is the threshold of the outlier flags, in robust SDs.
	OutlierSD float64   `json:"outlier_sd"`
	Outliers  []Outlier `json:"outliers"`
	// Unlisted lists matrix files or stack entries with no table row,
	// when cohort.unlisted = "report".
	Unlisted []Unlisted `json:"unlisted,omitempty"`
	// Cautions are what the cohort should be read with, not errors, such
	// as a label whose largest class holds most participants
	// (LabelCautions).
	Cautions []string `json:"cautions,omitempty"`
	Notice   string   `json:"notice"`
}

// ModalityReport describes one modality across the included participants.
type ModalityReport struct {
	Source string `json:"source"` // the files template or stack path, as written
	// MeanConnectivity describes, across participants, each participant's
	// mean off-diagonal entry: (2 / (p(p−1))) Σ_{i<j} a_ij.
	MeanConnectivity Stat `json:"mean_connectivity"`
	// Density (structural only) describes each participant's fraction of
	// region pairs i<j with a_ij > 0.
	Density *Stat `json:"density,omitempty"`
	// ParticipantMeans and ParticipantDensities hold each included
	// participant's value, in the order of Report.IncludedIDs, for plots
	// of the distributions.
	ParticipantMeans     []float64 `json:"participant_mean_connectivity"`
	ParticipantDensities []float64 `json:"participant_density,omitempty"`
	// Series (functional read from time series only) is how the matrices
	// were estimated; TimePoints describes the participants' numbers of
	// time points T, which may differ, and ParticipantTimePoints holds
	// each included participant's T in the order of Report.IncludedIDs.
	Series                *SeriesSettings `json:"series,omitempty"`
	TimePoints            *Stat           `json:"time_points,omitempty"`
	ParticipantTimePoints []float64       `json:"participant_time_points,omitempty"`
}

// VariableReport describes one score or covariate column across the
// included participants.
type VariableReport struct {
	Name string `json:"name"`
	// Kind is "numeric" or "text". A text covariate is coded as the index
	// of its value in Levels (sorted distinct values): Levels[0] is 0.
	Kind   string   `json:"kind"`
	Levels []string `json:"levels,omitempty"`
	Stat
}

// Stat summarizes values, ignoring NaN (missing) ones. SD is the sample
// standard deviation (n − 1 denominator), 0 for fewer than two values;
// Mean, SD, Min and Max are 0 when N is 0.
type Stat struct {
	N       int     `json:"n"`
	Missing int     `json:"missing"`
	Mean    float64 `json:"mean"`
	SD      float64 `json:"sd"`
	Min     float64 `json:"min"`
	Max     float64 `json:"max"`
}

// GroupReport describes the grouping column.
type GroupReport struct {
	Column   string `json:"column"`
	Groups   int    `json:"groups"`   // distinct values among included participants
	Largest  int    `json:"largest"`  // participants in the largest group
	Smallest int    `json:"smallest"` // participants in the smallest group
}

// Outlier flags a participant whose measure lies more than OutlierSD
// robust SDs from the cohort median: |x − median| > k × RobustSD(xs).
// No value is flagged when the robust SD is 0 (all values equal).
type Outlier struct {
	ID       string  `json:"participant_id"`
	Measure  string  `json:"measure"` // "functional mean connectivity" or "structural density"
	Value    float64 `json:"value"`
	Median   float64 `json:"median"`
	RobustSD float64 `json:"robust_sd"`
	RobustZ  float64 `json:"robust_z"` // (value − median) / robust SD
}

// Unlisted is a matrix with no row in the participants table.
type Unlisted struct {
	ID       string `json:"participant_id"`
	Modality string `json:"modality"`
	File     string `json:"file"`
}

// offDiagonal returns a square matrix's mean entry above the diagonal and
// the fraction of those entries that are positive.
func offDiagonal(a *mat.Dense) (mean, density float64) {
	p, _ := a.Dims()
	var sum float64
	var positive, n int
	for i := range p {
		for j := i + 1; j < p; j++ {
			v := a.At(i, j)
			sum += v
			if v > 0 {
				positive++
			}
			n++
		}
	}
	return sum / float64(n), float64(positive) / float64(n)
}

// describe summarizes xs, skipping NaN.
func describe(xs []float64) Stat {
	var vals []float64
	for _, x := range xs {
		if !math.IsNaN(x) {
			vals = append(vals, x)
		}
	}
	s := Stat{N: len(vals), Missing: len(xs) - len(vals)}
	if len(vals) == 0 {
		return s
	}
	s.Mean = stat.Mean(vals, nil)
	if len(vals) > 1 {
		s.SD = stat.StdDev(vals, nil)
	}
	s.Min, s.Max = vals[0], vals[0]
	for _, v := range vals {
		s.Min, s.Max = math.Min(s.Min, v), math.Max(s.Max, v)
	}
	return s
}

// median returns the median of xs, which it sorts.
func median(xs []float64) float64 {
	sort.Float64s(xs)
	n := len(xs)
	if n%2 == 1 {
		return xs[n/2]
	}
	return (xs[n/2-1] + xs[n/2]) / 2
}

// RobustSD returns the median of xs and a robust standard deviation:
// 1.4826 × MAD, the median absolute deviation from the median (1.4826 ≈
// 1/Φ⁻¹(3/4) makes it match the SD of normal data; scipy.stats
// median_abs_deviation(scale="normal")). When MAD is 0, as with
// discrete measures such as density, it falls back to 1.253314 × the mean
// absolute deviation from the median (1.253314 ≈ √(π/2); the usual
// fallback of the modified z-score, from memory). It returns 0 only when
// every value equals the median.
func RobustSD(xs []float64) (med, sd float64) {
	if len(xs) == 0 {
		return math.NaN(), math.NaN()
	}
	dev := append([]float64(nil), xs...)
	med = median(dev)
	for i, x := range xs {
		dev[i] = math.Abs(x - med)
	}
	if mad := median(dev); mad > 0 {
		return med, 1.4826 * mad
	}
	return med, 1.253314 * stat.Mean(dev, nil)
}

// outliers flags participants whose value lies more than k robust SDs
// from the median; values[i] belongs to ps[i].
func outliers(ps []*Participant, values []float64, measure string, k float64) []Outlier {
	if len(values) == 0 {
		return nil
	}
	med, sd := RobustSD(values)
	var out []Outlier
	for i, v := range values {
		if sd == 0 || math.Abs(v-med) <= k*sd {
			continue
		}
		out = append(out, Outlier{ID: ps[i].ID, Measure: measure, Value: v, Median: med, RobustSD: sd, RobustZ: (v - med) / sd})
	}
	return out
}

func describeGroups(column string, ps []*Participant) *GroupReport {
	count := map[string]int{}
	for _, p := range ps {
		count[p.Group]++
	}
	g := &GroupReport{Column: column, Groups: len(count)}
	for _, n := range count {
		if n > g.Largest {
			g.Largest = n
		}
		if g.Smallest == 0 || n < g.Smallest {
			g.Smallest = n
		}
	}
	return g
}

// WriteText writes the report for a person to read, ending with Notice.
func (r *Report) WriteText(w io.Writer) error {
	var b strings.Builder
	fmt.Fprintf(&b, "participants table: %s (%d rows)\n", r.Participants, r.Rows)
	fmt.Fprintf(&b, "included: %s\n", participants(r.Included))
	fmt.Fprintf(&b, "excluded: %s\n", participants(len(r.Excluded)))
	for _, e := range r.Excluded {
		fmt.Fprintf(&b, "  %s: %s\n", e.ID, e.Reason)
	}
	if r.PartialScores > 0 {
		fmt.Fprintf(&b, "kept with some scores missing: %s (missing scores are masked in training)\n", participants(r.PartialScores))
	}
	fmt.Fprintf(&b, "regions: %d (labels: %s)\n", r.Regions, r.RegionLabels)
	if m := r.Functional; m != nil {
		fmt.Fprintf(&b, "functional (%s):\n  mean connectivity %s\n", m.Source, m.MeanConnectivity.text())
		if s := m.Series; s != nil {
			est := fmt.Sprintf("%s, shrinkage %s", s.Estimator, s.Shrinkage)
			if s.Estimator == EstimatorTangent {
				est += fmt.Sprintf(", %s reference mean fitted on each training fold, diagonal %s (mean connectivity above: of the covariances)", s.TangentMean, s.TangentDiagonal)
			}
			fmt.Fprintf(&b, "  estimated from time series: %s\n", est)
			if t := m.TimePoints; t != nil {
				differ := "the same for every participant"
				if t.Min != t.Max {
					differ = "differs between participants (allowed)"
				}
				fmt.Fprintf(&b, "  time points T: %.0f to %.0f, mean %.1f; T %s\n", t.Min, t.Max, t.Mean, differ)
			}
		}
	}
	if m := r.Structural; m != nil {
		fmt.Fprintf(&b, "structural (%s):\n  mean connectivity %s\n", m.Source, m.MeanConnectivity.text())
		if m.Density != nil {
			fmt.Fprintf(&b, "  density %s\n", m.Density.text())
		}
	}
	b.WriteString("scores:\n")
	for _, v := range r.Scores {
		fmt.Fprintf(&b, "  %s: %s\n", v.Name, v.Stat.text())
	}
	if len(r.Covariates) > 0 {
		b.WriteString("covariates:\n")
		for _, v := range r.Covariates {
			if v.Kind == "text" {
				codes := make([]string, len(v.Levels))
				for k, lv := range v.Levels {
					codes[k] = fmt.Sprintf("%q = %d", lv, k)
				}
				fmt.Fprintf(&b, "  %s: text, coded %s; n = %d, missing %d\n", v.Name, strings.Join(codes, ", "), v.N, v.Missing)
				continue
			}
			fmt.Fprintf(&b, "  %s: %s\n", v.Name, v.Stat.text())
		}
	}
	if len(r.Labels) > 0 {
		b.WriteString("labels (class = index: participants):\n")
		for _, l := range r.Labels {
			fmt.Fprintf(&b, "  %s\n", l.text())
		}
	}
	if g := r.Group; g != nil {
		fmt.Fprintf(&b, "groups (%s): %d, of %d to %d participants\n", g.Column, g.Groups, g.Smallest, g.Largest)
	}
	fmt.Fprintf(&b, "outliers (more than %g robust SD from the median; flagged, not excluded): %d\n", r.OutlierSD, len(r.Outliers))
	for _, o := range r.Outliers {
		fmt.Fprintf(&b, "  %s: %s %.4g (median %.4g, robust SD %.3g, robust z = %+.1f)\n", o.ID, o.Measure, o.Value, o.Median, o.RobustSD, o.RobustZ)
	}
	if len(r.Unlisted) > 0 {
		fmt.Fprintf(&b, "unlisted (matrices with no table row, not used): %d\n", len(r.Unlisted))
		for _, u := range r.Unlisted {
			fmt.Fprintf(&b, "  %s: %s %s\n", u.ID, u.Modality, u.File)
		}
	}
	for _, c := range r.Cautions {
		fmt.Fprintf(&b, "caution: %s\n", c)
	}
	b.WriteString(Notice + "\n")
	_, err := io.WriteString(w, b.String())
	return err
}

func (s Stat) text() string {
	if s.N == 0 {
		return fmt.Sprintf("n = 0, missing %d", s.Missing)
	}
	return fmt.Sprintf("mean %.4g, SD %.4g, range %.4g to %.4g; n = %d, missing %d", s.Mean, s.SD, s.Min, s.Max, s.N, s.Missing)
}

func participants(n int) string {
	if n == 1 {
		return "1 participant"
	}
	return fmt.Sprintf("%d participants", n)
}
