package data

import (
	"errors"
	"fmt"
	"slices"
	"strconv"
	"strings"
)

// MajorityCaution is the share of a label's known values above which the
// largest class draws a caution (LabelCautions): with a majority of more
// than 80%, accuracy rewards predicting that class for everyone, so
// balanced accuracy and the ROC AUC are the measures to read. Common
// practice, no source.
const MajorityCaution = 0.8

// SortClasses returns the distinct values of a label column in their
// default class order: numerically when every value is a base-10 integer
// (ties of equal numbers written differently, such as "1" and "01", in
// byte order), otherwise in byte order. values may repeat and must not
// hold missing marks.
func SortClasses(values []string) []string {
	classes := slices.Clone(values)
	slices.Sort(classes)
	classes = slices.Compact(classes)
	nums := make(map[string]int64, len(classes))
	for _, c := range classes {
		v, err := strconv.ParseInt(c, 10, 64)
		if err != nil {
			return classes
		}
		nums[c] = v
	}
	slices.SortStableFunc(classes, func(a, b string) int {
		switch {
		case nums[a] < nums[b]:
			return -1
		case nums[a] > nums[b]:
			return 1
		}
		return 0
	})
	return classes
}

// codeLabels fills c.Labels, c.Classes and every kept participant's
// Labels from the label cells of rows (rows[i] is c.Participants[i]'s
// row). It returns the errors of labels that cannot be learned: fewer
// than two classes among the included participants, or a declared class
// that none of them has.
func (l *loader) codeLabels(tbl *table, c *Cohort, rows []tableRow) error {
	c.Labels = slices.Clone(l.src.Labels)
	c.Classes = make([][]string, len(c.Labels))
	for _, p := range c.Participants {
		p.Labels = make([]int, len(c.Labels))
	}
	var errs []error
	for k, name := range c.Labels {
		col := tbl.column(name)
		colErr := func(format string, args ...any) {
			errs = append(errs, &FileError{Path: tbl.path, Column: col + 1, ColumnName: name, Err: fmt.Errorf(format, args...)})
		}
		var present []string
		for _, r := range rows {
			if v := r.labels[k]; v != "" {
				present = append(present, v)
			}
		}
		found := SortClasses(present)
		classes := found
		if declared := l.src.Classes[name]; declared != nil {
			classes = slices.Clone(declared)
			for _, d := range declared {
				if !slices.Contains(found, d) {
					colErr("class %q of cohort.classes.%s is held by none of the %s included; remove it from the list or check its spelling", d, name, participants(len(rows)))
				}
			}
		}
		if len(found) < 2 {
			colErr("label %q has %d class(es) among the %s included (%s); a label needs at least 2", name, len(found), participants(len(rows)), quoteAll(found))
		}
		c.Classes[k] = classes
		for i, r := range rows {
			c.Participants[i].Labels[k] = slices.Index(classes, r.labels[k]) // −1 for ""
		}
	}
	return errors.Join(errs...)
}

// LabelReport describes one class label across the included participants.
type LabelReport struct {
	Name string `json:"name"`
	// Classes are the label's classes in order; Counts[k] is how many
	// included participants are of class k.
	Classes []string `json:"classes"`
	Counts  []int    `json:"counts"`
	// Missing counts included participants without the label.
	Missing int `json:"missing"`
}

// describeLabels returns the class counts of each of c's labels.
func describeLabels(c *Cohort) []LabelReport {
	var reps []LabelReport
	for k, name := range c.Labels {
		counts, missing := ClassCounts(c, k)
		reps = append(reps, LabelReport{Name: name, Classes: c.Classes[k], Counts: counts, Missing: missing})
	}
	return reps
}

// ClassCounts returns, for label k of c, the number of participants of
// each class (counts[j] for c.Classes[k][j]) and the number missing it.
func ClassCounts(c *Cohort, k int) (counts []int, missing int) {
	counts = make([]int, len(c.Classes[k]))
	for _, p := range c.Participants {
		if j := p.Labels[k]; j >= 0 {
			counts[j]++
		} else {
			missing++
		}
	}
	return counts, missing
}

// LabelCautions returns one caution for each label of c whose largest
// class holds more than MajorityCaution of the participants with a known
// value, naming the label, the class and its share. It is a caution, not
// an error: such a label can be learned, but accuracy misleads.
func LabelCautions(c *Cohort) []string {
	var out []string
	for k, name := range c.Labels {
		counts, _ := ClassCounts(c, k)
		total, top := 0, 0
		for j, n := range counts {
			total += n
			if n > counts[top] {
				top = j
			}
		}
		if total == 0 {
			continue
		}
		if share := float64(counts[top]) / float64(total); share > MajorityCaution {
			out = append(out, fmt.Sprintf("Imbalanced classes: class %q of label %q holds %d of the %d participants with a known value (%.0f%%, above %.0f%%). Predicting it for everyone scores an accuracy of %.2f, so read balanced accuracy and the ROC AUC; class_weight = \"balanced\" weighs the classes in training.",
				c.Classes[k][top], name, counts[top], total, 100*share, 100*MajorityCaution, share))
		}
	}
	return out
}

// text is the report's line of a label: its classes with their counts.
func (r LabelReport) text() string {
	parts := make([]string, len(r.Classes))
	for j, c := range r.Classes {
		parts[j] = fmt.Sprintf("%q = %d: %d", c, j, r.Counts[j])
	}
	s := fmt.Sprintf("%s: %s; missing %d", r.Name, strings.Join(parts, ", "), r.Missing)
	if len(r.Classes) == 2 {
		s += fmt.Sprintf(" (positive class %q)", r.Classes[1])
	}
	return s
}
