package eval

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Disclaimer is the sentence every report of skein carries.
const Disclaimer = "skein is research software: it is not a diagnostic device and must not be used " +
	"to make decisions about individuals. Any use on real participants needs ethics approval, " +
	"data-use agreements and clinical judgement; defer to your local regulations."

// A Summary holds the figures of every model × target of a set of
// predictions. It is the content of metrics.json.
//
// Its JSON form is
//
//	{
//	  "note": Disclaimer,
//	  "bins": 10,                       // equal-frequency bins of the NMI
//	  "groups": [                       // one per model × target, sorted by model then target
//	    {
//	      "model": "ridge", "target": "memory",
//	      "pooled": SCORES,             // all test predictions of all repeats together
//	      "folds": [                    // one per repeat × fold, sorted by repeat then fold;
//	        {"repeat": 1, "fold": 1, SCORES...}, ...   // from 1; absent without fold columns
//	      ],
//	      "fold_mean": VALUES,          // mean over the folds of each metric; absent without folds
//	      "fold_sd": VALUES,            // sample SD (n − 1) over the folds; absent without folds
//	      "fold_undefined": {"pearson_r": 1}   // folds where a metric was NaN; absent when none
//	      "sites": [                    // one per site (Summary.AddSites), sorted; absent without sites
//	        {"site": "site-A", "participants": 40, SCORES...}, ...
//	      ],
//	      "heterogeneity": {"sites": S, "sd_r": .., "q": .., "df": .., "p": .., "i2": .., "pooled_r": ..}
//	    }, ...
//	  ],
//	  "labels": [                       // one per model × class label; absent without labels
//	    {
//	      "model": "logistic", "label": "diagnosis", "classes": ["control", "patient"], "threshold": 0.5,
//	      "pooled": {"n": N, CLASS...},  // all test predictions of all repeats together
//	      "intervals": {"auc_within": {"estimate", "lower", "upper", "level", "resamples", "undefined"}, ...},
//	      "folds": [{"repeat": 1, "fold": 1, "n": N, CLASS...}, ...],
//	      "fold_mean": CLASS, "fold_sd": CLASS,
//	      "permutation_p_auc_within": p, // absent without a permutation test
//	      "reference": "majority",      // the label's reference baseline; absent for it and without one
//	      "is_reference": true,         // absent when false
//	      "diff_auc": {"folds", "mean_diff", "t", "df", "p"}  // corrected t-test of fold AUC against the reference
//	    }, ...
//	  ]
//	}
//
// where CLASS is {"auc_within", "auc", "balanced_accuracy", "accuracy",
// "log_loss", "brier", "sensitivity", "specificity"} (ClassGroup; pooled
// auc_within is AUCWithinFolds, the headline AUC, and auc the AUC of all
// rows ranked together), and SCORES is {"n": complete pairs, "missing": pairs skipped, "bins": B,
// then VALUES, then "nmi_chance": Scores.NMIChance} and VALUES is
// {"pearson_r", "spearman_rho", "mae", "median_ae", "rmse", "r2", "nmi",
// "ami"}, numbers in the units of the score. An
// undefined value (NaN) is written as null and read back as NaN; so would be
// an infinite one, which finite predictions cannot produce.
type Summary struct {
	Bins   int
	Groups []Group
	// Labels holds the figures of every model × class label
	// (SummarizeClasses); nil without labels.
	Labels []ClassGroup
}

// A Group holds the figures of one model on one target.
type Group struct {
	Model  string
	Target string
	// Pooled scores all test predictions of all repeats at once: each
	// participant counts once per repeat. Its PearsonWithin is
	// PearsonWithinFolds of the rows, the headline r.
	Pooled Scores
	// Folds scores each repeat × fold alone; empty when the predictions
	// carry no fold.
	Folds []FoldScores
	// FoldMean and FoldSD are the mean and the sample standard deviation
	// (denominator J − 1) of each metric over the J folds of Folds in which
	// it is defined; NaN when no fold (mean) or fewer than two folds (SD)
	// define it.
	FoldMean, FoldSD Values
	// FoldUndefined counts, for each metric, the folds in which it was NaN
	// and which FoldMean and FoldSD therefore leave out.
	FoldUndefined map[Metric]int
	// Sites scores each site alone and Heterogeneity says how r varies
	// across them; set by AddSites, nil for a cohort without sites.
	Sites         []SiteScores
	Heterogeneity *Heterogeneity
}

// FoldScores are the scores of one test fold of one repeat.
type FoldScores struct {
	Repeat, Fold int
	Scores
}

// Summarize scores rows grouped by model and target. Pooled figures use all
// rows of a group; when perFold is true, each repeat × fold of a group is
// also scored alone and summarized by its mean and SD. bins ≤ 0 means
// DefaultBins. Groups are sorted by model, then target.
func Summarize(rows []Prediction, bins int, perFold bool) *Summary {
	if bins <= 0 {
		bins = DefaultBins
	}
	type key struct{ model, target string }
	type foldKey struct{ repeat, fold int }
	var keys []key
	members := make(map[key][]int)
	for i, p := range rows {
		k := key{p.Model, p.Target}
		if _, ok := members[k]; !ok {
			keys = append(keys, k)
		}
		members[k] = append(members[k], i)
	}
	sort.Slice(keys, func(a, b int) bool {
		if keys[a].model != keys[b].model {
			return keys[a].model < keys[b].model
		}
		return keys[a].target < keys[b].target
	})

	s := &Summary{Bins: bins}
	for _, k := range keys {
		idx := members[k]
		g := Group{Model: k.model, Target: k.target, Pooled: scoreRows(rows, idx, bins)}
		groupRows := make([]Prediction, len(idx))
		for j, i := range idx {
			groupRows[j] = rows[i]
		}
		g.Pooled.PearsonWithin = PearsonWithinFolds(groupRows)
		if perFold {
			var folds []foldKey
			byFold := make(map[foldKey][]int)
			for _, i := range idx {
				fk := foldKey{rows[i].Repeat, rows[i].Fold}
				if _, ok := byFold[fk]; !ok {
					folds = append(folds, fk)
				}
				byFold[fk] = append(byFold[fk], i)
			}
			sort.Slice(folds, func(a, b int) bool {
				if folds[a].repeat != folds[b].repeat {
					return folds[a].repeat < folds[b].repeat
				}
				return folds[a].fold < folds[b].fold
			})
			for _, fk := range folds {
				g.Folds = append(g.Folds, FoldScores{Repeat: fk.repeat, Fold: fk.fold, Scores: scoreRows(rows, byFold[fk], bins)})
			}
			g.FoldMean, g.FoldSD, g.FoldUndefined = foldSpread(g.Folds)
		} else {
			g.FoldMean, g.FoldSD, g.FoldUndefined = foldSpread(nil)
		}
		s.Groups = append(s.Groups, g)
	}
	return s
}

func scoreRows(rows []Prediction, idx []int, bins int) Scores {
	obs := make([]float64, len(idx))
	pred := make([]float64, len(idx))
	for j, i := range idx {
		obs[j] = rows[i].Observed
		pred[j] = rows[i].Predicted
	}
	return Score(obs, pred, bins)
}

// foldSpread returns the mean and sample SD of each metric over the folds
// where it is defined, and the count of folds where it is not.
func foldSpread(folds []FoldScores) (mean, sd Values, undefined map[Metric]int) {
	for _, m := range Metrics() {
		var vals []float64
		for _, f := range folds {
			v := f.Get(m)
			if math.IsNaN(v) {
				if undefined == nil {
					undefined = make(map[Metric]int)
				}
				undefined[m]++
				continue
			}
			vals = append(vals, v)
		}
		mu, s := meanSD(vals)
		mean.Set(m, mu)
		sd.Set(m, s)
	}
	return mean, sd, undefined
}

// meanSD returns the mean (NaN for no values) and the sample standard
// deviation (NaN for fewer than two values) of x, in two passes.
func meanSD(x []float64) (mean, sd float64) {
	if len(x) == 0 {
		return math.NaN(), math.NaN()
	}
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	if len(x) < 2 {
		return mean, math.NaN()
	}
	var ss float64
	for _, v := range x {
		d := v - mean
		ss += d * d
	}
	return mean, math.Sqrt(ss / float64(len(x)-1))
}

// Group returns the group of model and target, or nil.
func (s *Summary) Group(model, target string) *Group {
	for i := range s.Groups {
		if s.Groups[i].Model == model && s.Groups[i].Target == target {
			return &s.Groups[i]
		}
	}
	return nil
}

// JSON encoding. encoding/json cannot write NaN, so the types write their
// own objects, with null for NaN, in a fixed key order.

// jsonObject builds one JSON object, keys in the order added.
type jsonObject struct {
	buf bytes.Buffer
	err error
}

func (o *jsonObject) add(key string, v any) {
	if o.err != nil {
		return
	}
	if o.buf.Len() == 0 {
		o.buf.WriteByte('{')
	} else {
		o.buf.WriteByte(',')
	}
	k, _ := json.Marshal(key)
	o.buf.Write(k)
	o.buf.WriteByte(':')
	if f, ok := v.(float64); ok {
		o.buf.WriteString(formatJSONFloat(f))
		return
	}
	b, err := json.Marshal(v)
	if err != nil {
		o.err = fmt.Errorf("eval: encoding %s: %w", key, err)
		return
	}
	o.buf.Write(b)
}

func (o *jsonObject) addValues(v Values) {
	for _, m := range Metrics() {
		o.add(string(m), v.Get(m))
	}
}

func (o *jsonObject) bytes() ([]byte, error) {
	if o.err != nil {
		return nil, o.err
	}
	if o.buf.Len() == 0 {
		return []byte("{}"), nil
	}
	o.buf.WriteByte('}')
	return o.buf.Bytes(), nil
}

// formatJSONFloat writes f as the shortest decimal that reads back as f,
// null for NaN or an infinity.
func formatJSONFloat(f float64) string {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "null"
	}
	return strconv.FormatFloat(f, 'g', -1, 64)
}

// MarshalJSON writes the metrics as an object keyed by metric name, null for
// NaN.
func (v Values) MarshalJSON() ([]byte, error) {
	var o jsonObject
	o.addValues(v)
	return o.bytes()
}

// UnmarshalJSON reads what MarshalJSON writes; a null or absent metric is
// NaN, an unknown key is an error.
func (v *Values) UnmarshalJSON(b []byte) error {
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	return v.fromRaw(raw, nil)
}

func (v *Values) fromRaw(raw map[string]json.RawMessage, other map[string]any) error {
	for _, m := range Metrics() {
		v.Set(m, math.NaN())
	}
	for key, msg := range raw {
		if dst, ok := other[key]; ok {
			if err := json.Unmarshal(msg, dst); err != nil {
				return fmt.Errorf("eval: key %q: %w", key, err)
			}
			continue
		}
		m, err := ParseMetric(key)
		if err != nil {
			return fmt.Errorf("eval: key %q: %w", key, err)
		}
		var f *float64
		if err := json.Unmarshal(msg, &f); err != nil {
			return fmt.Errorf("eval: key %q: %w", key, err)
		}
		if f != nil {
			v.Set(m, *f)
		}
	}
	return nil
}

// MarshalJSON writes {"n", "missing", "bins", then the metrics}.
func (s Scores) MarshalJSON() ([]byte, error) {
	var o jsonObject
	s.addTo(&o)
	return o.bytes()
}

func (s Scores) addTo(o *jsonObject) {
	o.add("n", s.N)
	o.add("missing", s.Missing)
	o.add("bins", s.Bins)
	o.addValues(s.Values)
	o.add("nmi_chance", s.NMIChance)
}

// UnmarshalJSON reads what MarshalJSON writes.
func (s *Scores) UnmarshalJSON(b []byte) error {
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	s.NMIChance = math.NaN() // when null or absent
	return s.Values.fromRaw(raw, map[string]any{"n": &s.N, "missing": &s.Missing, "bins": &s.Bins, "nmi_chance": &s.NMIChance})
}

// MarshalJSON writes {"repeat", "fold", then the scores}, repeat and fold
// numbered from 1 as in predictions.csv.
func (f FoldScores) MarshalJSON() ([]byte, error) {
	var o jsonObject
	o.add("repeat", f.Repeat+1)
	o.add("fold", f.Fold+1)
	f.Scores.addTo(&o)
	return o.bytes()
}

// UnmarshalJSON reads what MarshalJSON writes.
func (f *FoldScores) UnmarshalJSON(b []byte) error {
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	f.NMIChance = math.NaN() // when null or absent
	if err := f.Values.fromRaw(raw, map[string]any{
		"repeat": &f.Repeat, "fold": &f.Fold, "n": &f.N, "missing": &f.Missing, "bins": &f.Bins, "nmi_chance": &f.NMIChance,
	}); err != nil {
		return err
	}
	if f.Repeat < 1 || f.Fold < 1 {
		return fmt.Errorf("eval: fold scores of repeat %d, fold %d: repeats and folds are numbered from 1", f.Repeat, f.Fold)
	}
	f.Repeat--
	f.Fold--
	return nil
}

// groupJSON is the JSON form of a Group; Values and the scores types encode
// NaN themselves. Without folds the fold fields are left out.
type groupJSON struct {
	Model         string         `json:"model"`
	Target        string         `json:"target"`
	Pooled        Scores         `json:"pooled"`
	Folds         []FoldScores   `json:"folds,omitempty"`
	FoldMean      *Values        `json:"fold_mean,omitempty"`
	FoldSD        *Values        `json:"fold_sd,omitempty"`
	FoldUndefined map[Metric]int `json:"fold_undefined,omitempty"`
	Sites         []siteJSON     `json:"sites,omitempty"`
	Heterogeneity *heteroJSON    `json:"heterogeneity,omitempty"`
}

type summaryJSON struct {
	Note   string           `json:"note"`
	Bins   int              `json:"bins"`
	Groups []groupJSON      `json:"groups"`
	Labels []classGroupJSON `json:"labels,omitempty"`
}

// MarshalJSON writes the layout documented on Summary.
func (s *Summary) MarshalJSON() ([]byte, error) {
	out := summaryJSON{Note: Disclaimer, Bins: s.Bins, Groups: make([]groupJSON, len(s.Groups))}
	for _, g := range s.Labels {
		out.Labels = append(out.Labels, g.toJSON())
	}
	for i, g := range s.Groups {
		out.Groups[i] = groupJSON{Model: g.Model, Target: g.Target, Pooled: g.Pooled, FoldUndefined: g.FoldUndefined}
		for _, ss := range g.Sites {
			out.Groups[i].Sites = append(out.Groups[i].Sites, siteJSON{Site: ss.Site, Participants: ss.Participants, Scores: ss.Scores})
		}
		if h := g.Heterogeneity; h != nil {
			out.Groups[i].Heterogeneity = &heteroJSON{Sites: h.Sites, SD: jsonFloat(h.SD), Q: jsonFloat(h.Q), DF: h.DF,
				P: jsonFloat(h.P), I2: jsonFloat(h.I2), Pooled: jsonFloat(h.Pooled)}
		}
		if len(g.Folds) > 0 {
			mean, sd := g.FoldMean, g.FoldSD
			out.Groups[i].Folds, out.Groups[i].FoldMean, out.Groups[i].FoldSD = g.Folds, &mean, &sd
		}
	}
	return json.Marshal(out)
}

// UnmarshalJSON reads what MarshalJSON writes.
func (s *Summary) UnmarshalJSON(b []byte) error {
	var in summaryJSON
	if err := json.Unmarshal(b, &in); err != nil {
		return err
	}
	s.Bins = in.Bins
	s.Groups = make([]Group, len(in.Groups))
	s.Labels = nil
	for _, g := range in.Labels {
		s.Labels = append(s.Labels, g.group())
	}
	for i, g := range in.Groups {
		out := Group{Model: g.Model, Target: g.Target, Pooled: g.Pooled, Folds: g.Folds, FoldUndefined: g.FoldUndefined}
		for _, ss := range g.Sites {
			out.Sites = append(out.Sites, SiteScores{Site: ss.Site, Participants: ss.Participants, Scores: ss.Scores})
		}
		if h := g.Heterogeneity; h != nil {
			out.Heterogeneity = &Heterogeneity{Sites: h.Sites, SD: float64(h.SD), Q: float64(h.Q), DF: h.DF, P: float64(h.P),
				I2: float64(h.I2), Pooled: float64(h.Pooled)}
		}
		out.FoldMean, out.FoldSD, _ = foldSpread(nil)
		if g.FoldMean != nil {
			out.FoldMean = *g.FoldMean
		}
		if g.FoldSD != nil {
			out.FoldSD = *g.FoldSD
		}
		s.Groups[i] = out
	}
	return nil
}

// WriteJSON writes s as indented JSON (the layout documented on Summary)
// followed by a newline.
func (s *Summary) WriteJSON(w io.Writer) error {
	b, err := json.Marshal(s)
	if err != nil {
		return err
	}
	var out bytes.Buffer
	if err := json.Indent(&out, b, "", "  "); err != nil {
		return err
	}
	out.WriteByte('\n')
	_, err = w.Write(out.Bytes())
	return err
}

// WriteMarkdown writes s as Markdown for summary.md: for each target, in
// the order the targets first appear in s.Groups, a table with one row
// per model in the order of s.Groups and one column per metric, each cell the
// mean ± SD over folds followed by the pooled value in brackets (the pooled
// value alone when there are no folds), then a legend; then, for each
// class label of s.Labels, a table of its models and a legend; then
// Disclaimer.
func (s *Summary) WriteMarkdown(w io.Writer) error {
	var b strings.Builder
	var targets []string
	for _, g := range s.Groups {
		if !contains(targets, g.Target) {
			targets = append(targets, g.Target)
		}
	}
	hasFolds := false
	for _, g := range s.Groups {
		if len(g.Folds) > 0 {
			hasFolds = true
		}
	}
	for ti, t := range targets {
		if ti > 0 {
			b.WriteString("\n")
		}
		name := t
		if name == "" {
			name = "(unnamed target)"
		}
		fmt.Fprintf(&b, "### %s\n\n", EscapeMarkdown(name))
		b.WriteString("| model | n | folds |")
		for _, m := range Metrics() {
			fmt.Fprintf(&b, " %s |", m.Label())
			if m == MetricNMI {
				b.WriteString(" NMI by chance |")
			}
		}
		b.WriteString("\n| --- | ---: | ---: |")
		for _, m := range Metrics() {
			b.WriteString(" ---: |")
			if m == MetricNMI {
				b.WriteString(" ---: |")
			}
		}
		b.WriteString("\n")
		for _, g := range s.Groups {
			if g.Target != t {
				continue
			}
			model := g.Model
			if model == "" {
				model = "(unnamed model)"
			}
			fmt.Fprintf(&b, "| %s | %d | %d |", EscapeMarkdown(model), g.Pooled.N, len(g.Folds))
			for _, m := range Metrics() {
				fmt.Fprintf(&b, " %s |", g.cell(m))
				if m == MetricNMI {
					fmt.Fprintf(&b, " %s |", g.chanceCell())
				}
			}
			b.WriteString("\n")
		}
	}
	b.WriteString("\n")
	switch {
	case len(s.Groups) == 0:
	case hasFolds:
		b.WriteString("Each cell is the mean ± SD over test folds (all repeats), then in brackets the value " +
			"pooled over all test predictions; n counts pooled pairs (a participant once per repeat). " +
			"r within folds, the headline r, pools the predictions after centring each test fold's scores and " +
			"predictions on their own means. Pearson r pooled without centring (in brackets) also correlates each " +
			"fold's training mean with its test scores, which are anti-correlated: it is biased downwards, below 0 " +
			"for a model that knows nothing, and pooled Spearman ρ shares the bias. ")
	default:
		b.WriteString("Each cell is the value over all predictions; n counts pairs. ")
	}
	if len(s.Groups) > 0 {
		fmt.Fprintf(&b, "NMI and AMI use %d equal-frequency bins, tied values sharing a bin. NMI is above 0 even "+
			"when predictions carry no information: compare it with NMI by chance, its expected value under random "+
			"pairing of the same bins. AMI is NMI corrected for chance (0 at chance, 1 for matching bins). The chance "+
			"level of r, ρ and AMI is 0; R² is out of sample and slightly below 0 at chance; the mean predictor's MAE "+
			"and RMSE are the chance level of the errors. Predictions constant to rounding have no r or ρ (–).\n", s.Bins)
	}
	if len(s.Labels) > 0 {
		writeLabelsMarkdown(&b, s.Labels)
	}
	s.writeSitesMarkdown(&b)
	if note := s.SmallFoldNote(); note != "" {
		b.WriteString("\n" + note + "\n")
	}
	b.WriteString("\n> " + Disclaimer + "\n")
	_, err := io.WriteString(w, b.String())
	return err
}

// SmallFoldNote returns a warning when some fold has fewer than twice as
// many pairs as NMI has bins, where per-fold NMI is biased upwards, and ""
// otherwise.
func (s *Summary) SmallFoldNote() string {
	small := s.smallestFold()
	if small < 0 || small >= 2*s.Bins {
		return ""
	}
	return fmt.Sprintf("Some folds have fewer than %d pairs (the smallest has %d): their NMI is biased "+
		"upwards, and is 1 by construction at %d untied pairs or fewer; compare the pooled NMI.", 2*s.Bins, small, s.Bins)
}

// smallestFold returns the fewest pairs of any fold, −1 without folds.
func (s *Summary) smallestFold() int {
	smallest := -1
	for _, g := range s.Groups {
		for _, f := range g.Folds {
			if smallest < 0 || f.N < smallest {
				smallest = f.N
			}
		}
	}
	return smallest
}

// cell formats one metric of g for a table: "mean ± SD [pooled]". Pearson
// r's folds are those of r within folds, so its cell holds only its
// pooled value, in brackets.
func (g *Group) cell(m Metric) string {
	pooled := formatNumber(g.Pooled.Get(m))
	if len(g.Folds) == 0 {
		return pooled
	}
	if m == MetricPearson {
		return "[" + pooled + "]"
	}
	return fmt.Sprintf("%s ± %s [%s]", formatNumber(g.FoldMean.Get(m)), formatNumber(g.FoldSD.Get(m)), pooled)
}

// chanceCell formats g's chance level of NMI as cell does a metric: the
// mean over folds [pooled]; the SD is left out.
func (g *Group) chanceCell() string {
	pooled := formatNumber(g.Pooled.NMIChance)
	if len(g.Folds) == 0 {
		return pooled
	}
	var sum float64
	var n int
	for _, f := range g.Folds {
		if !math.IsNaN(f.NMIChance) {
			sum += f.NMIChance
			n++
		}
	}
	return fmt.Sprintf("%s [%s]", formatNumber(sum/float64(n)), pooled)
}

// formatNumber writes x with three decimals, "–" for NaN.
func formatNumber(x float64) string {
	if math.IsNaN(x) {
		return "–"
	}
	return strconv.FormatFloat(x, 'f', 3, 64)
}

// EscapeMarkdown makes s, a name from the user's files (a model, a
// target, a covariate), literal text inside a Markdown paragraph, heading,
// list item or table cell: every character that could start emphasis,
// code, a link, raw HTML, an entity or a table column (\ ` * _ [ ] < > &
// | ~) is escaped with a backslash, which CommonMark allows before any
// ASCII punctuation (CommonMark spec 0.31, section 2.4, "Backslash
// escapes"), and line breaks become spaces. Other characters are kept, so
// that a name such as "fc+sc-net" still reads plainly on a terminal.
func EscapeMarkdown(s string) string {
	return markdownEscaper.Replace(s)
}

var markdownEscaper = strings.NewReplacer(
	`\`, `\\`, "`", "\\`", "*", `\*`, "_", `\_`, "[", `\[`, "]", `\]`,
	"<", `\<`, ">", `\>`, "&", `\&`, "|", `\|`, "~", `\~`,
	"\r\n", " ", "\n", " ", "\r", " ")
