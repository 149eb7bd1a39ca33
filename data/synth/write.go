package synth

import (
	"bufio"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"codeberg.org/sbinet/npyio"
	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
)

// ErrExists is the error Write returns when the output folder exists and
// is not empty.
var ErrExists = errors.New("exists and is not empty")

// Formats of the matrix files Write accepts.
const (
	FormatTSV = "tsv" // tab-separated text, one matrix row a line, no header
	FormatNPY = "npy" // NumPy .npy, float64, C order
)

// Write writes c into the folder dir in the layout a lab's pipeline
// leaves, with format "tsv" or "npy" for the matrices:
//
//	participants.tsv              participant_id, family (when grouped), the
//	                              scores, age, sex ("F"/"M"), motion, then
//	                              the class label (when there is one); "n/a"
//	                              where missing
//	regions.txt                   the region labels, one a line
//	fc/{participant_id}_fc.tsv    raw correlations (or _fc.npy)
//	sc/{participant_id}_sc.tsv    raw streamline counts (or _sc.npy)
//	ts/{participant_id}_ts.tsv    with Config.Series: the T × p regional
//	                              time series, a header row of region
//	                              names (or _ts.npy, without names); the
//	                              experiment file then reads them
//	planted.tsv                   the truth: target, modality, sign, region_1, region_2
//	                              (a label's edges under its name)
//	experiment.toml               the [cohort] and [preprocess] tables for these files
//
// dir must not exist or be an empty folder (otherwise the error wraps
// ErrExists). Everything is written into a fresh sibling folder
// "DIR.tmp-*" that becomes dir (or whose files move into the empty folder
// dir, experiment.toml last) only once complete, so a failed Write never
// leaves a folder that looks whole.
func Write(dir string, c *Cohort, format string) error {
	return write(dir, c, format, false)
}

// Replace is Write that first removes whatever folder is at dir, once the
// new one is complete. It refuses a dir that is a file.
func Replace(dir string, c *Cohort, format string) error {
	return write(dir, c, format, true)
}

func write(dir string, c *Cohort, format string, replace bool) error {
	if format != FormatTSV && format != FormatNPY {
		return fmt.Errorf("synth: format %q is not one of %q or %q", format, FormatTSV, FormatNPY)
	}
	for _, part := range c.Participants {
		if part.ID == "" || strings.ContainsAny(part.ID, `/\`) || part.ID == "." || part.ID == ".." {
			return fmt.Errorf("synth: participant_id %q cannot name a file", part.ID)
		}
	}
	dir, err := filepath.Abs(dir) // so that "." has a parent to write beside
	if err != nil {
		return err
	}
	existing, err := checkTarget(dir, replace)
	if err != nil {
		return err
	}
	parent := filepath.Dir(dir)
	if err := os.MkdirAll(parent, 0o755); err != nil {
		return err
	}
	tmp, err := os.MkdirTemp(parent, filepath.Base(dir)+".tmp-")
	if err != nil {
		return err
	}
	if err := writeFiles(tmp, c, format); err != nil {
		os.RemoveAll(tmp)
		return err
	}
	if err := os.Chmod(tmp, 0o755); err != nil { // MkdirTemp makes it 0700
		os.RemoveAll(tmp)
		return err
	}
	if !existing {
		if err := os.Rename(tmp, dir); err != nil {
			os.RemoveAll(tmp)
			return err
		}
		return nil
	}
	if !replace { // an empty folder: keep it (it may be the working folder) and move the files in
		return moveInto(tmp, dir)
	}
	// Move the old folder aside, put the new one in place, then delete the
	// old one; put it back if the swap fails.
	aside, err := os.MkdirTemp(parent, filepath.Base(dir)+".old-")
	if err == nil {
		err = os.Remove(aside)
	}
	if err == nil {
		err = os.Rename(dir, aside)
	}
	if err != nil {
		os.RemoveAll(tmp)
		return err
	}
	if err := os.Rename(tmp, dir); err != nil {
		os.Rename(aside, dir)
		os.RemoveAll(tmp)
		return err
	}
	return os.RemoveAll(aside)
}

// moveInto moves every entry of the complete folder tmp into the empty
// folder dir, experiment.toml last so that dir looks whole only once it is,
// and removes tmp.
func moveInto(tmp, dir string) error {
	defer os.RemoveAll(tmp)
	entries, err := os.ReadDir(tmp)
	if err != nil {
		return err
	}
	var moved []string
	undo := func(err error) error {
		for _, name := range moved {
			os.RemoveAll(filepath.Join(dir, name))
		}
		return err
	}
	last := "experiment.toml"
	for _, e := range entries {
		if e.Name() == last {
			continue
		}
		if err := os.Rename(filepath.Join(tmp, e.Name()), filepath.Join(dir, e.Name())); err != nil {
			return undo(err)
		}
		moved = append(moved, e.Name())
	}
	if err := os.Rename(filepath.Join(tmp, last), filepath.Join(dir, last)); err != nil {
		return undo(err)
	}
	return nil
}

// checkTarget reports whether dir exists as a folder that must be replaced,
// or an error if it may not be written.
func checkTarget(dir string, replace bool) (existing bool, err error) {
	info, err := os.Stat(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return false, nil
	}
	if err != nil {
		return false, err
	}
	if !info.IsDir() {
		return false, fmt.Errorf("synth: %s is a file, not a folder", dir)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return false, err
	}
	if len(entries) > 0 && !replace {
		return false, fmt.Errorf("output folder %s %w (%d entries)", dir, ErrExists, len(entries))
	}
	return true, nil
}

func writeFiles(dir string, c *Cohort, format string) error {
	if err := writeParticipants(filepath.Join(dir, "participants.tsv"), c); err != nil {
		return err
	}
	if err := writeLines(filepath.Join(dir, "regions.txt"), c.Regions); err != nil {
		return err
	}
	for _, modality := range []string{"fc", "sc"} {
		if err := os.Mkdir(filepath.Join(dir, modality), 0o755); err != nil {
			return err
		}
	}
	for _, part := range c.Participants {
		for _, modality := range []string{"fc", "sc"} {
			m := part.Functional
			if modality == "sc" {
				m = part.Structural
			}
			if m == nil {
				return fmt.Errorf("synth: participant %s has no %s matrix", part.ID, modality)
			}
			path := filepath.Join(dir, modality, part.ID+"_"+modality+"."+format)
			if err := writeMatrix(path, m, format); err != nil {
				return err
			}
		}
	}
	if c.Series != nil {
		if len(c.Series) != len(c.Participants) {
			return fmt.Errorf("synth: %d time series for %d participants", len(c.Series), len(c.Participants))
		}
		if err := os.Mkdir(filepath.Join(dir, "ts"), 0o755); err != nil {
			return err
		}
		for i, part := range c.Participants {
			if err := writeSeries(filepath.Join(dir, "ts", part.ID+"_ts."+format), c.Series[i], c.Regions, format); err != nil {
				return err
			}
		}
	}
	if err := writePlanted(filepath.Join(dir, "planted.tsv"), c); err != nil {
		return err
	}
	return writeFile(filepath.Join(dir, "experiment.toml"), func(w *bufio.Writer) error {
		_, err := w.WriteString(experimentTOML(c, format))
		return err
	})
}

// writeFile creates path and lets fill write it through a buffer.
func writeFile(path string, fill func(*bufio.Writer) error) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriter(f)
	err = fill(w)
	if err == nil {
		err = w.Flush()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return fmt.Errorf("synth: writing %s: %w", path, err)
	}
	return nil
}

func writeLines(path string, lines []string) error {
	return writeFile(path, func(w *bufio.Writer) error {
		for _, l := range lines {
			w.WriteString(l)
			w.WriteByte('\n')
		}
		return nil
	})
}

// formatNumber writes v in the shortest form that reads back as the same
// float64, "n/a" for NaN.
func formatNumber(v float64) string {
	if math.IsNaN(v) {
		return "n/a"
	}
	return strconv.FormatFloat(v, 'f', -1, 64)
}

func writeParticipants(path string, c *Cohort) error {
	header := []string{"participant_id"}
	if c.Grouped() {
		header = append(header, "family")
	}
	if c.sited() {
		header = append(header, "site")
	}
	header = append(header, c.Targets...)
	header = append(header, c.Covariates...)
	header = append(header, c.Labels...)
	sexColumn := -1
	for j, name := range c.Covariates {
		if name == "sex" {
			sexColumn = j
		}
	}
	return writeFile(path, func(w *bufio.Writer) error {
		w.WriteString(strings.Join(header, "\t") + "\n")
		for _, part := range c.Participants {
			row := []string{part.ID}
			if c.Grouped() {
				row = append(row, part.Group)
			}
			if c.sited() {
				row = append(row, part.Site)
			}
			for _, s := range part.Scores {
				row = append(row, formatNumber(s))
			}
			for j, v := range part.Covariates {
				switch {
				case j == sexColumn && v == 0:
					row = append(row, "F")
				case j == sexColumn && v == 1:
					row = append(row, "M")
				default:
					row = append(row, formatNumber(v))
				}
			}
			for k, class := range part.Labels {
				if class < 0 {
					row = append(row, "n/a")
				} else {
					row = append(row, c.Classes[k][class])
				}
			}
			w.WriteString(strings.Join(row, "\t") + "\n")
		}
		return nil
	})
}

func writeMatrix(path string, m *mat.Dense, format string) error {
	return writeFile(path, func(w *bufio.Writer) error {
		if format == FormatNPY {
			return npyio.Write(w, m)
		}
		rows, cols := m.Dims()
		for i := range rows {
			for j := range cols {
				if j > 0 {
					w.WriteByte('\t')
				}
				w.WriteString(formatNumber(m.At(i, j)))
			}
			w.WriteByte('\n')
		}
		return nil
	})
}

// writeSeries writes a T × p series: .npy, or tab-separated text under
// a header row of the region names, values to 6 significant digits.
func writeSeries(path string, x *mat.Dense, regions []string, format string) error {
	if format == FormatNPY {
		return writeMatrix(path, x, format)
	}
	return writeFile(path, func(w *bufio.Writer) error {
		w.WriteString(strings.Join(regions, "\t") + "\n")
		rows, cols := x.Dims()
		for t := range rows {
			for j := range cols {
				if j > 0 {
					w.WriteByte('\t')
				}
				w.WriteString(strconv.FormatFloat(x.At(t, j), 'g', 6, 64))
			}
			w.WriteByte('\n')
		}
		return nil
	})
}

func writePlanted(path string, c *Cohort) error {
	return writeFile(path, func(w *bufio.Writer) error {
		w.WriteString("target\tmodality\tsign\tregion_1\tregion_2\n")
		for _, pt := range c.Truth {
			for _, set := range []struct {
				modality, sign string
				edges          []Edge
			}{
				{"functional", "+", pt.Positive},
				{"functional", "-", pt.Negative},
				{"structural", "+", pt.StructuralPositive},
				{"structural", "-", pt.StructuralNegative},
			} {
				for _, e := range set.edges {
					fmt.Fprintf(w, "%s\t%s\t%s\t%s\t%s\n", pt.Target, set.modality, set.sign, c.Regions[e.I], c.Regions[e.J])
				}
			}
		}
		if lt := c.LabelTruth; lt != nil {
			for _, e := range lt.Positive {
				fmt.Fprintf(w, "%s\tfunctional\t+\t%s\t%s\n", lt.Label, c.Regions[e.I], c.Regions[e.J])
			}
			for _, e := range lt.Negative {
				fmt.Fprintf(w, "%s\tfunctional\t-\t%s\t%s\n", lt.Label, c.Regions[e.I], c.Regions[e.J])
			}
		}
		return nil
	})
}

func quotedList(names []string) string {
	q := make([]string, len(names))
	for i, n := range names {
		q[i] = strconv.Quote(n)
	}
	return "[" + strings.Join(q, ", ") + "]"
}

// experimentTOML is the [cohort] and [preprocess] part of an experiment
// file for the files writeFiles makes, with every preprocessing default
// written out.
func experimentTOML(c *Cohort, format string) string {
	var b strings.Builder
	b.WriteString("# A synthetic cohort made by skein synth: the participants, connectomes and\n")
	b.WriteString("# scores are invented (no real data). skein is research software, not a\n")
	b.WriteString("# diagnostic device.\n#\n")
	b.WriteString("# Planted truth (edges in planted.tsv): the best Pearson r any model can reach\n")
	for _, pt := range c.Truth {
		if pt.Signal == nil {
			fmt.Fprintf(&b, "#   %-10s null: independent of the connectomes", pt.Target)
			if pt.MotionWeight > 0 {
				b.WriteString(" (except through motion)")
			}
			b.WriteString("\n")
			continue
		}
		fmt.Fprintf(&b, "#   %-10s ceiling r = %.3f (noise SD %.3f", pt.Target, pt.Ceiling, pt.NoiseSD)
		if pt.MotionWeight > 0 {
			fmt.Fprintf(&b, ", motion weight %.3f", pt.MotionWeight)
		}
		if pt.StructuralShare > 0 {
			fmt.Fprintf(&b, ", structural share %.2f", pt.StructuralShare)
		}
		b.WriteString(")\n")
	}
	if lt := c.LabelTruth; lt != nil {
		b.WriteString("# Planted class label: the best ROC AUC any classifier can reach (oracle)\n")
		if lt.Signal == nil {
			fmt.Fprintf(&b, "#   %-10s null: independent of the connectomes (AUC 0.5; %s share %.2f)\n", lt.Label, LabelClasses[1], lt.Prevalence)
		} else {
			fmt.Fprintf(&b, "#   %-10s oracle AUC = %.3f (%s share %.2f, effect rho %.3f on the %d+%d functional edges)\n",
				lt.Label, lt.AUC, LabelClasses[1], lt.Prevalence, lt.Effect, len(lt.Positive), len(lt.Negative))
		}
	}
	var pre data.Preprocess
	pre.SetDefaults()
	b.WriteString("\n[cohort]\n")
	b.WriteString("participants = \"participants.tsv\"\n")
	fmt.Fprintf(&b, "targets = %s\n", quotedList(c.Targets))
	if len(c.Labels) > 0 {
		fmt.Fprintf(&b, "labels = %s\n", quotedList(c.Labels))
	}
	fmt.Fprintf(&b, "covariates = %s\n", quotedList(c.Covariates))
	if c.Grouped() {
		b.WriteString("group = \"family\"\n")
	}
	if c.sited() {
		b.WriteString("site = \"site\"\n")
	}
	b.WriteString("regions = \"regions.txt\"\n")
	if c.Series != nil {
		b.WriteString("\n# The functional connectomes are estimated from the regional time series;\n")
		b.WriteString("# the correlations skein synth made of them are in fc/. Other estimators:\n")
		b.WriteString("# \"partial\", \"covariance\", \"tangent\" (with tangent_mean = \"geometric\"\n")
		b.WriteString("# or \"log_euclidean\"); shrinkage = \"ledoit_wolf\" shrinks each covariance.\n")
		fmt.Fprintf(&b, "[cohort.functional]\nseries = \"ts/{participant_id}_ts.%s\"\nestimator = \"correlation\"\n", format)
	} else {
		fmt.Fprintf(&b, "\n[cohort.functional]\nfiles = \"fc/{participant_id}_fc.%s\"\n", format)
	}
	for k, name := range c.Labels {
		fmt.Fprintf(&b, "\n[cohort.classes]\n%s = %s\n", name, quotedList(c.Classes[k]))
	}
	fmt.Fprintf(&b, "\n[cohort.structural]\nfiles = \"sc/{participant_id}_sc.%s\"\n", format)
	fmt.Fprintf(&b, "\n[preprocess.functional]\ntransform = %q\nclip = %g\ndiagonal = %q\n",
		pre.FC.Transform, *pre.FC.Clip, pre.FC.Diagonal)
	fmt.Fprintf(&b, "\n[preprocess.structural]\ntransform = %q\nscale = %q\ndensity = %.1f\n",
		pre.SC.Transform, pre.SC.Scale, *pre.SC.Density)
	return b.String()
}

// sited reports whether the participants have sites (AddSites).
func (c *Cohort) sited() bool {
	return len(c.Participants) > 0 && c.Participants[0].Site != ""
}
