package data

import (
	"bytes"
	"reflect"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"
)

func TestSortClasses(t *testing.T) {
	for _, tc := range []struct {
		in, want []string
	}{
		{[]string{"patient", "control", "patient"}, []string{"control", "patient"}},
		// Integers numerically, not "10" < "2" as bytes.
		{[]string{"10", "2", "-1", "2"}, []string{"-1", "2", "10"}},
		{[]string{"01", "1", "0"}, []string{"0", "01", "1"}},
		// One non-integer makes the whole column text.
		{[]string{"10", "2", "2.5"}, []string{"10", "2", "2.5"}},
		{[]string{"b", "B", "a"}, []string{"B", "a", "b"}},
	} {
		if got := SortClasses(tc.in); !reflect.DeepEqual(got, tc.want) {
			t.Errorf("SortClasses(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
}

// TestCheckLabels loads small tables with class-label columns: class
// order, missing labels, and every error naming its file, line and key.
func TestCheckLabels(t *testing.T) {
	fc := "1 0.2 0.1\n0.2 1 0.3\n0.1 0.3 1\n"
	const table = "participant_id\tscore\tdx\tstage\tage\n" +
		"s1\t1\tpatient\t10\t30\n" +
		"s2\t2\tcontrol\t2\t31\n" +
		"s3\t\tcontrol\tn/a\t32\n" +
		"s4\t4\tn/a\t2\t33\n" +
		"s5\t\t\t\t34\n"
	src := func() Source {
		return Source{Participants: "participants.tsv", Targets: []string{"score"}, Labels: []string{"dx"}, MinParticipants: new(1), Unlisted: UnlistedReport,
			Functional: &Modality{Files: "fc/{participant_id}.txt"}}
	}
	for _, tc := range []struct {
		name     string
		table    string // "" takes table
		edit     func(s *Source)
		want     string // error substring; "" for success
		ids      []string
		classes  [][]string
		labels   [][]int // per participant
		cautions int
	}{
		{"text label sorted", "", func(*Source) {}, "",
			[]string{"s1", "s2", "s3", "s4"}, [][]string{{"control", "patient"}},
			[][]int{{1}, {0}, {0}, {-1}}, 0},
		{"declared order", "", func(s *Source) { s.Classes = map[string][]string{"dx": {"patient", "control"}} }, "",
			[]string{"s1", "s2", "s3", "s4"}, [][]string{{"patient", "control"}},
			[][]int{{0}, {1}, {1}, {-1}}, 0},
		{"integer label sorted numerically, second label", "", func(s *Source) { s.Labels = []string{"dx", "stage"} }, "",
			[]string{"s1", "s2", "s3", "s4"}, [][]string{{"control", "patient"}, {"2", "10"}},
			[][]int{{1, 1}, {0, 0}, {0, -1}, {-1, 0}}, 0},
		{"label only, no targets", "", func(s *Source) { s.Targets = nil }, "",
			[]string{"s1", "s2", "s3"}, [][]string{{"control", "patient"}},
			[][]int{{1}, {0}, {0}}, 0},
		{"majority caution", "participant_id\tscore\tdx\n" +
			"s1\t1\tcontrol\ns2\t1\tcontrol\ns3\t1\tcontrol\ns4\t1\tcontrol\ns5\t1\tcontrol\ns6\t1\tpatient\n", func(*Source) {}, "",
			[]string{"s1", "s2", "s3", "s4", "s5", "s6"}, [][]string{{"control", "patient"}},
			[][]int{{0}, {0}, {0}, {0}, {0}, {1}}, 1},
		{"value not declared", "", func(s *Source) { s.Classes = map[string][]string{"dx": {"control", "case"}} },
			`participants.tsv: line 2, column 3 ("dx"): value "patient" is not a class of label "dx" (cohort.classes.dx: "control", "case"`, nil, nil, nil, 0},
		{"declared class absent", "", func(s *Source) { s.Classes = map[string][]string{"dx": {"control", "patient", "prodromal"}} },
			`participants.tsv: column 3 ("dx"): class "prodromal" of cohort.classes.dx is held by none of the 4 participants included`, nil, nil, nil, 0},
		{"one class", "participant_id\tscore\tdx\ns1\t1\tcontrol\ns2\t2\tcontrol\ns3\t3\t\n", func(*Source) {},
			`participants.tsv: column 3 ("dx"): label "dx" has 1 class(es) among the 3 participants included ("control"); a label needs at least 2`, nil, nil, nil, 0},
		{"label is a target", "", func(s *Source) { s.Labels = []string{"score"} },
			`cohort.labels: column "score" is already named in cohort.targets`, nil, nil, nil, 0},
		{"label is a covariate", "", func(s *Source) { s.Covariates = []string{"dx"} },
			`cohort.labels: column "dx" is already named in cohort.covariates`, nil, nil, nil, 0},
		{"label is the group", "", func(s *Source) { s.Group = "dx" },
			`cohort.group: column "dx" is already named in cohort.labels`, nil, nil, nil, 0},
		{"label is the id column", "", func(s *Source) { s.Labels = []string{"participant_id"} },
			`cohort.labels: "participant_id" is the id column, not a label`, nil, nil, nil, 0},
		{"no label column", "", func(s *Source) { s.Labels = []string{"diagnosis"} },
			`participants.tsv: line 1: no column "diagnosis" (named in cohort.labels)`, nil, nil, nil, 0},
		{"classes of no label", "", func(s *Source) { s.Classes = map[string][]string{"group": {"a", "b"}} },
			`cohort.classes.group: "group" is not named in cohort.labels`, nil, nil, nil, 0},
		{"one declared class", "", func(s *Source) { s.Classes = map[string][]string{"dx": {"control"}} },
			`cohort.classes.dx: a label needs at least 2 classes, found 1`, nil, nil, nil, 0},
		{"declared twice", "", func(s *Source) { s.Classes = map[string][]string{"dx": {"control", "patient", "control"}} },
			`cohort.classes.dx: class "control" is listed twice (1 and 3)`, nil, nil, nil, 0},
		{"declared n/a", "", func(s *Source) { s.Classes = map[string][]string{"dx": {"control", "n/a"}} },
			`cohort.classes.dx: class 2 is "n/a", which marks a missing value`, nil, nil, nil, 0},
		{"no targets nor labels", "", func(s *Source) { s.Targets, s.Labels = nil, nil },
			`cohort: key "targets" needs at least one score column (or "labels" a class-label column)`, nil, nil, nil, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tbl := tc.table
			if tbl == "" {
				tbl = table
			}
			files := map[string]string{"participants.tsv": tbl}
			for _, id := range []string{"s1", "s2", "s3", "s4", "s5", "s6"} {
				files["fc/"+id+".txt"] = fc
			}
			s := src()
			tc.edit(&s)
			c, rep, err := Check(s, rawValues(), writeCohort(t, files))
			if tc.want != "" {
				if err == nil || !strings.Contains(err.Error(), tc.want) {
					t.Fatalf("error %v, want one holding %q", err, tc.want)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if got := ids(c.Participants); !reflect.DeepEqual(got, tc.ids) {
				t.Errorf("included %q, want %q", got, tc.ids)
			}
			if !reflect.DeepEqual(c.Classes, tc.classes) || !reflect.DeepEqual(c.Labels, s.Labels) {
				t.Errorf("labels %q classes %q, want %q %q", c.Labels, c.Classes, s.Labels, tc.classes)
			}
			for i, p := range c.Participants {
				if !reflect.DeepEqual(p.Labels, tc.labels[i]) {
					t.Errorf("%s: labels %v, want %v", p.ID, p.Labels, tc.labels[i])
				}
			}
			if len(rep.Cautions) != tc.cautions {
				t.Errorf("cautions %q, want %d", rep.Cautions, tc.cautions)
			}
		})
	}
}

// TestLabelReport checks the class counts of the report and its text.
func TestLabelReport(t *testing.T) {
	c := &Cohort{Labels: []string{"dx"}, Classes: [][]string{{"control", "patient"}}}
	for _, l := range []int{0, 0, 0, 0, 0, 0, 0, 0, 0, 1, -1} {
		c.Participants = append(c.Participants, &Participant{Labels: []int{l}})
	}
	rep := &Report{Labels: describeLabels(c), Cautions: LabelCautions(c)}
	if want := []LabelReport{{Name: "dx", Classes: []string{"control", "patient"}, Counts: []int{9, 1}, Missing: 1}}; !reflect.DeepEqual(rep.Labels, want) {
		t.Errorf("labels %+v, want %+v", rep.Labels, want)
	}
	var b bytes.Buffer
	if err := rep.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{
		`dx: "control" = 0: 9, "patient" = 1: 1; missing 1 (positive class "patient")`,
		`caution: Imbalanced classes: class "control" of label "dx" holds 9 of the 10 participants with a known value (90%, above 80%).`,
	} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("report lacks %q:\n%s", want, b.String())
		}
	}
}

// TestDecodeClasses reads the keys from an experiment file's [cohort].
func TestDecodeClasses(t *testing.T) {
	var exp struct {
		Cohort Source `toml:"cohort"`
	}
	raw := "[cohort]\nlabels = [\"diagnosis\"]\n[cohort.classes]\ndiagnosis = [\"control\", \"patient\"]\n"
	if err := toml.Unmarshal([]byte(raw), &exp); err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(exp.Cohort.Labels, []string{"diagnosis"}) || !reflect.DeepEqual(exp.Cohort.Classes, map[string][]string{"diagnosis": {"control", "patient"}}) {
		t.Errorf("decoded %q %q", exp.Cohort.Labels, exp.Cohort.Classes)
	}
}
