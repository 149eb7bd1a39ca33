package experiment

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/skein-neuro/skein/eval"
)

// A RunComparison sets run B beside run A (A is usually the earlier one).
type RunComparison struct {
	A, B string // the run folders
	// ParticipantsA and ParticipantsB count the participants with a
	// prediction in each run.
	ParticipantsA, ParticipantsB int
	// Added lists participants of B that A lacks, Removed those of A that
	// B lacks, both sorted.
	Added, Removed []string
	// ExcludedA and ExcludedB count the participants the cohort checks
	// excluded (cohort.json); -1 when the run has no cohort.json.
	ExcludedA, ExcludedB int
	// Settings lists every key of the resolved experiment files whose
	// value differs, sorted by key; Versions every line of versions.txt
	// that differs, in A's order then B's new names.
	Settings, Versions []Change
	// Metrics lists, for every model and target of either run, each
	// metric's pooled value in both runs, sorted by model, target and
	// metric order (eval.Metrics).
	Metrics []MetricChange
	// PValues lists the permutation p-values of the headline r (r within
	// folds), for the models
	// and targets that either run tested; Spread is NaN.
	PValues []MetricChange
}

// A Change is one setting or version that differs. A or B is "" when the
// key is absent from that run.
type Change struct {
	Key, A, B string
}

// A MetricChange is one pooled figure of one model on one target in both
// experiment.
type MetricChange struct {
	Model, Target string
	Metric        eval.Metric
	// A and B are the pooled values; NaN when undefined or absent.
	A, B float64
	// Change is B − A.
	Change float64
	// Spread is the fold-to-fold spread: the mean of the two runs' sample
	// SDs of the metric over folds (one run's when the other has none).
	Spread float64
	// BeyondSpread reports |Change| > Spread; false when either is NaN.
	BeyondSpread bool
}

// Compare sets b beside a.
func CompareRuns(a, b *Folder) *RunComparison {
	c := &RunComparison{A: a.Dir, B: b.Dir, ParticipantsA: len(a.Participants), ParticipantsB: len(b.Participants),
		ExcludedA: excluded(a), ExcludedB: excluded(b)}
	c.Added = difference(b.Participants, a.Participants)
	c.Removed = difference(a.Participants, b.Participants)

	fa, fb := make(map[string]string), make(map[string]string)
	flatten("", a.Settings, fa)
	flatten("", b.Settings, fb)
	var keys []string
	for k := range fa {
		keys = append(keys, k)
	}
	for k := range fb {
		if _, ok := fa[k]; !ok {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	for _, k := range keys {
		if fa[k] != fb[k] {
			c.Settings = append(c.Settings, Change{Key: k, A: fa[k], B: fb[k]})
		}
	}

	va := make(map[string]string)
	for _, v := range a.Versions {
		va[v[0]] = v[1]
	}
	vb := make(map[string]string)
	for _, v := range b.Versions {
		vb[v[0]] = v[1]
	}
	for _, v := range a.Versions {
		if vb[v[0]] != v[1] {
			c.Versions = append(c.Versions, Change{Key: v[0], A: v[1], B: vb[v[0]]})
		}
	}
	for _, v := range b.Versions {
		if _, ok := va[v[0]]; !ok {
			c.Versions = append(c.Versions, Change{Key: v[0], B: v[1]})
		}
	}

	for _, k := range groupKeys(a, b) {
		ga, gb := a.Summary.Group(k[0], k[1]), b.Summary.Group(k[0], k[1])
		for _, m := range eval.Metrics() {
			mc := MetricChange{Model: k[0], Target: k[1], Metric: m, A: pooled(ga, m), B: pooled(gb, m)}
			mc.Change = mc.B - mc.A
			mc.Spread = meanIgnoringNaN(foldSD(ga, m), foldSD(gb, m))
			mc.BeyondSpread = math.Abs(mc.Change) > mc.Spread
			c.Metrics = append(c.Metrics, mc)
		}
		pa, okA := a.P[k]
		pb, okB := b.P[k]
		if okA || okB {
			mc := MetricChange{Model: k[0], Target: k[1], Metric: eval.MetricPearsonWithin, A: math.NaN(), B: math.NaN(), Spread: math.NaN()}
			if okA {
				mc.A = pa.PearsonWithin
			}
			if okB {
				mc.B = pb.PearsonWithin
			}
			mc.Change = mc.B - mc.A
			c.PValues = append(c.PValues, mc)
		}
	}
	return c
}

func excluded(r *Folder) int {
	if r.Cohort == nil {
		return -1
	}
	return len(r.Cohort.Excluded)
}

// difference returns the members of sorted list a that sorted list b
// lacks.
func difference(a, b []string) []string {
	var out []string
	for _, s := range a {
		if _, found := slices.BinarySearch(b, s); !found {
			out = append(out, s)
		}
	}
	return out
}

// groupKeys returns every model and target of either run, sorted.
func groupKeys(a, b *Folder) [][2]string {
	seen := make(map[[2]string]bool)
	var keys [][2]string
	for _, r := range []*Folder{a, b} {
		for _, g := range r.Summary.Groups {
			k := [2]string{g.Model, g.Target}
			if !seen[k] {
				seen[k] = true
				keys = append(keys, k)
			}
		}
	}
	sort.Slice(keys, func(i, j int) bool {
		if keys[i][0] != keys[j][0] {
			return keys[i][0] < keys[j][0]
		}
		return keys[i][1] < keys[j][1]
	})
	return keys
}

func pooled(g *eval.Group, m eval.Metric) float64 {
	if g == nil {
		return math.NaN()
	}
	return g.Pooled.Get(m)
}

func foldSD(g *eval.Group, m eval.Metric) float64 {
	if g == nil {
		return math.NaN()
	}
	return g.FoldSD.Get(m)
}

func meanIgnoringNaN(x ...float64) float64 {
	var sum float64
	var n int
	for _, v := range x {
		if !math.IsNaN(v) {
			sum += v
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return sum / float64(n)
}

// flatten writes every scalar of v into out under its dotted key. Arrays of
// tables that all have a "name" key are keyed by name (model[ridge].ridge.alpha),
// other arrays of tables by index; arrays of scalars are one value.
func flatten(prefix string, v any, out map[string]string) {
	join := func(k string) string {
		if prefix == "" {
			return k
		}
		return prefix + "." + k
	}
	switch v := v.(type) {
	case map[string]any:
		for k, e := range v {
			flatten(join(k), e, out)
		}
	case []any:
		if len(v) == 0 {
			out[prefix] = "[]"
			return
		}
		tables, named := true, true
		names := make(map[string]bool)
		for _, e := range v {
			t, ok := e.(map[string]any)
			if !ok {
				tables = false
				break
			}
			name, ok := t["name"].(string)
			if !ok || names[name] {
				named = false
			}
			names[name] = true
		}
		switch {
		case tables && named:
			for _, e := range v {
				t := e.(map[string]any)
				rest := make(map[string]any, len(t))
				for k, x := range t {
					if k != "name" {
						rest[k] = x
					}
				}
				flatten(prefix+"["+strconv.Quote(t["name"].(string))+"]", rest, out)
			}
		case tables:
			for i, e := range v {
				flatten(prefix+"["+strconv.Itoa(i)+"]", e, out)
			}
		default:
			out[prefix] = settingValue(v)
		}
	default:
		out[prefix] = settingValue(v)
	}
}

// formatValue writes a TOML value as a person reads it in TOML.
func settingValue(v any) string {
	switch v := v.(type) {
	case string:
		return strconv.Quote(v)
	case float64:
		return strconv.FormatFloat(v, 'g', -1, 64)
	case time.Time:
		return v.Format(time.RFC3339Nano)
	case []any:
		parts := make([]string, len(v))
		for i, e := range v {
			parts[i] = settingValue(e)
		}
		return "[" + strings.Join(parts, ", ") + "]"
	case map[string]any:
		keys := make([]string, 0, len(v))
		for k := range v {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		parts := make([]string, len(keys))
		for i, k := range keys {
			parts[i] = k + " = " + settingValue(v[k])
		}
		return "{" + strings.Join(parts, ", ") + "}"
	}
	return fmt.Sprint(v)
}

// WriteText writes the comparison as aligned tables for a terminal.
func (c *RunComparison) WriteText(w io.Writer) error {
	var b strings.Builder
	fmt.Fprintf(&b, "A  %s  (%d participants%s)\n", c.A, c.ParticipantsA, excludedNote(c.ExcludedA))
	fmt.Fprintf(&b, "B  %s  (%d participants%s)\n\n", c.B, c.ParticipantsB, excludedNote(c.ExcludedB))
	fmt.Fprintf(&b, "Participants: %s\n\n", c.participantLine())
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
	writeChanges := func(title string, changes []Change) {
		if len(changes) == 0 {
			fmt.Fprintf(&b, "%s: no difference\n\n", title)
			return
		}
		fmt.Fprintf(&b, "%s: %d differ\n", title, len(changes))
		fmt.Fprintln(tw, "  key\tA\tB")
		for _, ch := range changes {
			fmt.Fprintf(tw, "  %s\t%s\t%s\n", ch.Key, orAbsent(ch.A), orAbsent(ch.B))
		}
		tw.Flush()
		b.WriteString("\n")
	}
	writeChanges("Experiment settings", c.Settings)
	writeChanges("Versions", c.Versions)
	b.WriteString("Metrics (pooled; * = change larger than the fold-to-fold SD):\n")
	fmt.Fprintln(tw, "  model\ttarget\tmetric\tA\tB\tchange\tfold SD")
	for _, m := range c.Metrics {
		fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s\t%s%s\t%s\n", m.Model, m.Target, m.Metric, num(m.A), num(m.B), signed(m.Change), star(m.BeyondSpread), num(m.Spread))
	}
	tw.Flush()
	if len(c.PValues) > 0 {
		b.WriteString("\nPermutation p-values of r within folds:\n")
		fmt.Fprintln(tw, "  model\ttarget\tA\tB")
		for _, m := range c.PValues {
			fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\n", m.Model, m.Target, num(m.A), num(m.B))
		}
		tw.Flush()
	}
	fmt.Fprintf(&b, "\n%s\n", eval.Disclaimer)
	_, err := io.WriteString(w, b.String())
	return err
}

// WriteMarkdown writes the comparison as Markdown tables.
func (c *RunComparison) WriteMarkdown(w io.Writer) error {
	var b strings.Builder
	b.WriteString("# skein run comparison\n\n")
	fmt.Fprintf(&b, "- A: `%s` (%d participants%s)\n", c.A, c.ParticipantsA, excludedNote(c.ExcludedA))
	fmt.Fprintf(&b, "- B: `%s` (%d participants%s)\n\n", c.B, c.ParticipantsB, excludedNote(c.ExcludedB))
	fmt.Fprintf(&b, "Participants: %s\n\n", c.participantLine())
	writeChanges := func(title string, changes []Change) {
		fmt.Fprintf(&b, "## %s\n\n", title)
		if len(changes) == 0 {
			b.WriteString("No difference.\n\n")
			return
		}
		b.WriteString("| key | A | B |\n| --- | --- | --- |\n")
		for _, ch := range changes {
			fmt.Fprintf(&b, "| `%s` | %s | %s |\n", md(ch.Key), md(orAbsent(ch.A)), md(orAbsent(ch.B)))
		}
		b.WriteString("\n")
	}
	writeChanges("Experiment settings", c.Settings)
	writeChanges("Versions", c.Versions)
	b.WriteString("## Metrics\n\nPooled values; **bold** changes are larger than the fold-to-fold SD (the mean of the two runs' SDs over folds).\n\n")
	b.WriteString("| model | target | metric | A | B | change | fold SD |\n| --- | --- | --- | ---: | ---: | ---: | ---: |\n")
	for _, m := range c.Metrics {
		change := signed(m.Change)
		if m.BeyondSpread {
			change = "**" + change + "**"
		}
		fmt.Fprintf(&b, "| %s | %s | %s | %s | %s | %s | %s |\n", md(m.Model), md(m.Target), m.Metric.Label(), num(m.A), num(m.B), change, num(m.Spread))
	}
	if len(c.PValues) > 0 {
		b.WriteString("\n## Permutation p-values of r within folds\n\n| model | target | A | B |\n| --- | --- | ---: | ---: |\n")
		for _, m := range c.PValues {
			fmt.Fprintf(&b, "| %s | %s | %s | %s |\n", md(m.Model), md(m.Target), num(m.A), num(m.B))
		}
	}
	fmt.Fprintf(&b, "\n%s\n", eval.Disclaimer)
	_, err := io.WriteString(w, b.String())
	return err
}

// WriteJSON writes the comparison as indented JSON: the fields of
// RunComparison in snake case, null for NaN, and a "note" with
// eval.Disclaimer.
func (c *RunComparison) WriteJSON(w io.Writer) error {
	type change struct {
		Key string  `json:"key"`
		A   *string `json:"a"`
		B   *string `json:"b"`
	}
	type metric struct {
		Model        string   `json:"model"`
		Target       string   `json:"target"`
		Metric       string   `json:"metric"`
		A            *float64 `json:"a"`
		B            *float64 `json:"b"`
		Change       *float64 `json:"change"`
		Spread       *float64 `json:"fold_sd,omitempty"`
		BeyondSpread *bool    `json:"beyond_fold_sd,omitempty"`
	}
	changes := func(cs []Change) []change {
		out := make([]change, len(cs))
		for i, ch := range cs {
			out[i] = change{Key: ch.Key, A: strOrNil(ch.A), B: strOrNil(ch.B)}
		}
		return out
	}
	metrics := func(ms []MetricChange, spread bool) []metric {
		out := make([]metric, len(ms))
		for i, m := range ms {
			out[i] = metric{Model: m.Model, Target: m.Target, Metric: string(m.Metric), A: numOrNil(m.A), B: numOrNil(m.B), Change: numOrNil(m.Change)}
			if spread {
				beyond := m.BeyondSpread
				out[i].Spread, out[i].BeyondSpread = numOrNil(m.Spread), &beyond
			}
		}
		return out
	}
	out := struct {
		Note          string   `json:"note"`
		A             string   `json:"a"`
		B             string   `json:"b"`
		ParticipantsA int      `json:"participants_a"`
		ParticipantsB int      `json:"participants_b"`
		ExcludedA     *int     `json:"excluded_a"`
		ExcludedB     *int     `json:"excluded_b"`
		Added         []string `json:"added"`
		Removed       []string `json:"removed"`
		Settings      []change `json:"settings"`
		Versions      []change `json:"versions"`
		Metrics       []metric `json:"metrics"`
		PValues       []metric `json:"permutation_p_r_within_folds"`
	}{
		Note: eval.Disclaimer, A: c.A, B: c.B, ParticipantsA: c.ParticipantsA, ParticipantsB: c.ParticipantsB,
		ExcludedA: intOrNil(c.ExcludedA), ExcludedB: intOrNil(c.ExcludedB),
		Added: nonNil(c.Added), Removed: nonNil(c.Removed),
		Settings: changes(c.Settings), Versions: changes(c.Versions),
		Metrics: metrics(c.Metrics, true), PValues: metrics(c.PValues, false),
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}

func (c *RunComparison) participantLine() string {
	if len(c.Added) == 0 && len(c.Removed) == 0 {
		return "the same in both runs"
	}
	return fmt.Sprintf("%d added (%s), %d removed (%s)", len(c.Added), listOrNone(c.Added), len(c.Removed), listOrNone(c.Removed))
}

func listOrNone(ids []string) string {
	if len(ids) == 0 {
		return "none"
	}
	return strings.Join(ids, ", ")
}

func excludedNote(n int) string {
	if n < 0 {
		return ""
	}
	return fmt.Sprintf(", %d excluded", n)
}

func orAbsent(s string) string {
	if s == "" {
		return "(absent)"
	}
	return s
}

func num(x float64) string {
	if math.IsNaN(x) {
		return "—"
	}
	return strconv.FormatFloat(x, 'f', 3, 64)
}

func signed(x float64) string {
	if math.IsNaN(x) {
		return "—"
	}
	s := strconv.FormatFloat(x, 'f', 3, 64)
	if x > 0 {
		s = "+" + s
	}
	return s
}

func star(b bool) string {
	if b {
		return "*"
	}
	return ""
}

func md(s string) string { return strings.ReplaceAll(s, "|", `\|`) }

func strOrNil(s string) *string {
	if s == "" {
		return nil
	}
	return &s
}

func numOrNil(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return &x
}

func intOrNil(n int) *int {
	if n < 0 {
		return nil
	}
	return &n
}

func nonNil(s []string) []string {
	if s == nil {
		return []string{}
	}
	return s
}
