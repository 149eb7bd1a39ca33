package experiment

import (
	"bytes"
	"fmt"
	"strings"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/model"
)

// MarshalApplicable returns e as TOML, every default filled as in the
// experiment.toml of a run, without the keys that do not apply to this
// experiment, for a report to show:
//
//   - keys whose value is empty text or an empty list (nothing set);
//   - [permutation]'s keys other than count when count is 0 (no test),
//     and permutation.blocks without a group column;
//   - cv.site_confound, cv.sites_out and cv.stratify_site without a site
//     column (cohort.site);
//   - [drift] when it sets no rule, and drift.p_metric when p_level is 0;
//   - [sample_size] when it asks for no curve;
//   - each model's keys that its kind reports as inapplicable to its
//     other settings (model.Inapplicable);
//   - the headers of tables left empty, except the kind tables of models.
//
// The text it returns reads back as the same experiment.
func (e *Experiment) MarshalApplicable() ([]byte, error) {
	raw, err := toml.Marshal(e)
	if err != nil {
		return nil, err
	}
	drop := make(map[string]bool) // dotted keys and tables of the file, models as model[N]
	if e.Permutation.Count == 0 {
		for _, k := range []string{"blocks", "models", "chunk"} {
			drop["permutation."+k] = true
		}
	}
	if e.Cohort.Group == "" {
		drop["permutation.blocks"] = true
	}
	if e.Cohort.Site == "" {
		for _, k := range []string{"site_confound", "sites_out", "stratify_site"} {
			drop["cv."+k] = true
		}
	}
	if e.Drift.PLevel == 0 {
		drop["drift.p_metric"] = true
		if len(e.Drift.Worsen) == 0 {
			drop["drift"] = true
		}
	}
	if len(e.SampleSize.Fractions) == 0 {
		drop["sample_size"] = true
	}
	for i, m := range e.Models {
		in, ok := m.Settings().(model.Inapplicable)
		if !ok {
			continue
		}
		for _, k := range in.InapplicableKeys() {
			drop[fmt.Sprintf("model[%d].%s.%s", i+1, m.Kind(), k)] = true
		}
	}
	return filterTOML(raw, drop), nil
}

// filterTOML removes from raw, TOML as go-toml writes it (one key a line,
// a header a table), the keys and tables of drop and the keys with empty
// values. Arrays of tables are addressed with 1-based indices, as in
// "model[2].network.branch[1].layers[3].size".
func filterTOML(raw []byte, drop map[string]bool) []byte {
	var out bytes.Buffer
	counts := make(map[string]int) // tables of an array so far, by the array's indexed path
	table := ""                    // the current table's indexed path
	header := ""                   // its header line, until a kept key is written
	dropped := func(path string) bool {
		for p := path; p != ""; {
			if drop[p] {
				return true
			}
			i := strings.LastIndexByte(p, '.')
			if i < 0 {
				break
			}
			p = p[:i]
		}
		return false
	}
	for _, line := range strings.SplitAfter(string(raw), "\n") {
		text := strings.TrimSpace(line)
		switch {
		case strings.HasPrefix(text, "[[") && strings.HasSuffix(text, "]]"):
			table = indexPath(strings.Trim(text, "[]"), counts, true)
			header = ""
			if !dropped(table) {
				out.WriteString(line) // an array's table is kept, empty or not
			}
		case strings.HasPrefix(text, "[") && strings.HasSuffix(text, "]"):
			name := strings.Trim(text, "[]")
			table = indexPath(name, counts, false)
			header = line
			// A model's kind table ([model.ridge]) says the kind: keep it.
			if parts := strings.Split(name, "."); len(parts) == 2 && parts[0] == "model" && !dropped(table) {
				out.WriteString(header)
				header = ""
			}
		case text == "":
			if header == "" {
				out.WriteString(line)
			}
		default:
			k, v, ok := strings.Cut(text, " = ")
			if !ok {
				out.WriteString(line)
				continue
			}
			path := k
			if table != "" {
				path = table + "." + k
			}
			if v == "''" || v == `""` || v == "[]" || dropped(path) {
				continue
			}
			out.WriteString(header)
			header = ""
			out.WriteString(line)
		}
	}
	return out.Bytes()
}

// indexPath turns a table name such as "model.network.branch" into its
// indexed path ("model[1].network.branch[2]") from the numbers of array
// tables seen so far in counts, which are keyed by indexed path (so the
// branches of each model count from 1); a new array table (isArray)
// counts one more of its array.
func indexPath(name string, counts map[string]int, isArray bool) string {
	parts := strings.Split(name, ".")
	path := ""
	for i, p := range parts {
		if path != "" {
			path += "."
		}
		path += p
		last := i == len(parts)-1
		if last && isArray {
			counts[path]++
		}
		if n, ok := counts[path]; ok {
			path = fmt.Sprintf("%s[%d]", path, n)
		}
	}
	return path
}
