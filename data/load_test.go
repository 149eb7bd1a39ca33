package data

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"
)

// fixtureDir is a cohort made by testdata/cohort/make_cohorts.py.
func fixtureDir(name string) string { return filepath.Join("..", "testdata", "cohort", name) }

// fixtureSource reads the [cohort] table of a fixture's experiment.toml.
func fixtureSource(t *testing.T, name string) Source {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join(fixtureDir(name), "experiment.toml"))
	if err != nil {
		t.Fatal(err)
	}
	var exp struct {
		Cohort Source `toml:"cohort"`
	}
	if err := toml.Unmarshal(raw, &exp); err != nil {
		t.Fatal(err)
	}
	return exp.Cohort
}

// rawValues is a Preprocess that leaves every matrix as read.
func rawValues() Preprocess {
	return Preprocess{
		FC: FunctionalPreprocess{Transform: NoTransform, Diagonal: KeepDiagonalSetting},
		SC: StructuralPreprocess{Transform: NoTransform, Scale: ScaleNone},
	}
}

func ids(ps []*Participant) []string {
	out := make([]string, len(ps))
	for i, p := range ps {
		out[i] = p.ID
	}
	return out
}

// TestCheckGoodTSV loads the TSV fixture cohort and compares what Check
// reports with the statistics numpy and scipy computed when the fixture
// was made (testdata/cohort/good-tsv/expected.json, by make_cohorts.py).
func TestCheckGoodTSV(t *testing.T) {
	var want struct {
		Included   []string
		FCMean     struct{ Mean, SD float64 } `json:"fc_mean_connectivity"`
		SCMean     struct{ Mean, SD float64 } `json:"sc_mean_connectivity"`
		SCDensity  struct{ Mean, SD float64 } `json:"sc_density"`
		FCMedian   float64                    `json:"fc_median"`
		FCRobustSD float64                    `json:"fc_robust_sd"`
		Recall     struct{ Mean, SD float64 }
		Sub01FC    [][]float64 `json:"sub01_fc"`
		Sub01SC    [][]float64 `json:"sub01_sc"`
	}
	raw, err := os.ReadFile(filepath.Join(fixtureDir("good-tsv"), "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, &want); err != nil {
		t.Fatal(err)
	}
	src := fixtureSource(t, "good-tsv")
	c, rep, err := Check(src, rawValues(), fixtureDir("good-tsv"))
	if err != nil {
		t.Fatal(err)
	}
	if got := ids(c.Participants); !reflect.DeepEqual(got, want.Included) {
		t.Errorf("included %v, want %v", got, want.Included)
	}
	wantExcluded := []Exclusion{
		{"sub-06", "no value in any target column (recall, fluency)"},
		{"sub-08", "no functional file " + filepath.Join(fixtureDir("good-tsv"), "fc", "sub-08_fc.tsv")},
		{"sub-10", `no value in group column "family"`},
	}
	if !reflect.DeepEqual(c.Excluded, wantExcluded) || !reflect.DeepEqual(rep.Excluded, wantExcluded) {
		t.Errorf("excluded %q, want %q", c.Excluded, wantExcluded)
	}
	if c.P() != 4 || !reflect.DeepEqual(c.Regions, []string{"cingulate_a", "cingulate_b", "temporal_a", "temporal_b"}) {
		t.Errorf("regions %q", c.Regions)
	}
	if !reflect.DeepEqual(c.Targets, []string{"recall", "fluency"}) || !reflect.DeepEqual(c.Covariates, []string{"age", "sex", "motion"}) {
		t.Errorf("targets %q, covariates %q", c.Targets, c.Covariates)
	}
	p1 := c.Participants[0]
	for i := range 4 {
		for j := range 4 {
			if p1.Functional.At(i, j) != want.Sub01FC[i][j] || p1.Structural.At(i, j) != want.Sub01SC[i][j] {
				t.Fatalf("sub-01 entry (%d, %d): fc %v sc %v, want %v %v", i, j, p1.Functional.At(i, j), p1.Structural.At(i, j), want.Sub01FC[i][j], want.Sub01SC[i][j])
			}
		}
	}
	if p1.Group != "fam-a" || !reflect.DeepEqual(p1.Scores, []float64{14, 22}) || !reflect.DeepEqual(p1.Covariates, []float64{34, 0, 0.11}) {
		t.Errorf("sub-01: group %q scores %v covariates %v", p1.Group, p1.Scores, p1.Covariates)
	}
	if p3 := c.Participants[2]; p3.Scores[0] != 16 || !math.IsNaN(p3.Scores[1]) {
		t.Errorf("sub-03 scores %v, want [16 NaN]", p3.Scores)
	}
	if p5 := c.Participants[4]; !math.IsNaN(p5.Covariates[0]) || p5.Covariates[1] != 0 {
		t.Errorf("sub-05 covariates %v, want [NaN 0 0.08]", p5.Covariates)
	}
	if p2 := c.Participants[1]; p2.Covariates[1] != 1 {
		t.Errorf("sub-02 sex coded %v, want 1 (M after F)", p2.Covariates[1])
	}

	near := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("%s = %v, want %v", what, got, want)
		}
	}
	near("functional mean connectivity mean", rep.Functional.MeanConnectivity.Mean, want.FCMean.Mean)
	near("functional mean connectivity SD", rep.Functional.MeanConnectivity.SD, want.FCMean.SD)
	near("structural mean connectivity mean", rep.Structural.MeanConnectivity.Mean, want.SCMean.Mean)
	near("structural mean connectivity SD", rep.Structural.MeanConnectivity.SD, want.SCMean.SD)
	near("structural density mean", rep.Structural.Density.Mean, want.SCDensity.Mean)
	near("structural density SD", rep.Structural.Density.SD, want.SCDensity.SD)
	near("recall mean", rep.Scores[0].Mean, want.Recall.Mean)
	near("recall SD", rep.Scores[0].SD, want.Recall.SD)
	if rep.Scores[1].N != 6 || rep.Scores[1].Missing != 1 || rep.PartialScores != 1 {
		t.Errorf("fluency n %d missing %d, partial %d; want 6, 1, 1", rep.Scores[1].N, rep.Scores[1].Missing, rep.PartialScores)
	}
	if cov := rep.Covariates[1]; cov.Kind != "text" || !reflect.DeepEqual(cov.Levels, []string{"F", "M"}) {
		t.Errorf("sex covariate %+v, want text coded F, M", cov)
	}
	if cov := rep.Covariates[0]; cov.Kind != "numeric" || cov.Missing != 1 {
		t.Errorf("age covariate %+v, want numeric with 1 missing", cov)
	}
	if rep.Group == nil || rep.Group.Groups != 5 || rep.Group.Largest != 2 || rep.Group.Smallest != 1 {
		t.Errorf("group %+v, want 5 groups of 1 to 2", rep.Group)
	}
	// The outlier: sub-09's constant 0.9 correlations. The robust SD
	// matches scipy's median_abs_deviation(scale="normal") (1.482602...)
	// to the 5 digits of 1.4826.
	if len(rep.Outliers) != 1 || rep.Outliers[0].ID != "sub-09" || rep.Outliers[0].Measure != "functional mean connectivity" {
		t.Fatalf("outliers %+v, want sub-09's functional mean connectivity", rep.Outliers)
	}
	near("median", rep.Outliers[0].Median, want.FCMedian)
	if got := rep.Outliers[0].RobustSD; math.Abs(got-want.FCRobustSD) > 1e-5*want.FCRobustSD {
		t.Errorf("robust SD %v, want %v", got, want.FCRobustSD)
	}
	if _, err := json.Marshal(rep); err != nil {
		t.Errorf("report is not JSON-serializable: %v", err)
	}
}

// TestCheckGoodNPY loads the stacked layout of the same invented cohort
// (fc float32 little-endian C order, sc float64 big-endian Fortran order)
// and compares its matrices with the text and .npy files of good-tsv.
func TestCheckGoodNPY(t *testing.T) {
	stacked, err := Load(fixtureSource(t, "good-npy"), rawValues(), fixtureDir("good-npy"))
	if err != nil {
		t.Fatal(err)
	}
	files, err := Load(fixtureSource(t, "good-tsv"), rawValues(), fixtureDir("good-tsv"))
	if err != nil {
		t.Fatal(err)
	}
	if got, want := ids(stacked.Participants), []string{"sub-01", "sub-02", "sub-03", "sub-04", "sub-05", "sub-07", "sub-08", "sub-09", "sub-10"}; !reflect.DeepEqual(got, want) {
		t.Fatalf("included %v, want %v", got, want)
	}
	if !reflect.DeepEqual(stacked.Regions, []string{"R001", "R002", "R003", "R004"}) {
		t.Errorf("default regions %q", stacked.Regions)
	}
	byID := map[string]*Participant{}
	for _, p := range stacked.Participants {
		byID[p.ID] = p
	}
	for _, p := range files.Participants {
		s := byID[p.ID]
		for i := range 4 {
			for j := range 4 {
				if d := math.Abs(s.Functional.At(i, j) - p.Functional.At(i, j)); d > 1e-7 {
					t.Errorf("%s fc (%d, %d): stack %v, file %v", p.ID, i, j, s.Functional.At(i, j), p.Functional.At(i, j))
				}
				if s.Structural.At(i, j) != p.Structural.At(i, j) {
					t.Errorf("%s sc (%d, %d): stack %v, file %v", p.ID, i, j, s.Structural.At(i, j), p.Structural.At(i, j))
				}
			}
		}
	}
}

// TestCheckBadFixtures runs every broken fixture: each must fail with a
// message naming the file and the place.
func TestCheckBadFixtures(t *testing.T) {
	for _, tc := range []struct {
		dir  string
		file string // the file the error names, relative to the fixture
		want string
		line int // FileError.Line, 0 when not checked
	}{
		{"bad-score-not-number", "participants.tsv", `line 5, column 2 ("recall"): value "nine" is not a number`, 5},
		{"bad-duplicate-id", "participants.tsv", `line 8, column 1 ("participant_id"): participant_id "sub-02" is already on line 3`, 8},
		{"bad-missing-column", "participants.tsv", `line 1: no column "naming" (named in cohort.targets)`, 1},
		{"bad-mixed-covariate", "participants.tsv", `line 5, column 4 ("age"): value "forty" is not a number, but this covariate is numeric from line 2 on`, 5},
		{"bad-ragged-table", "participants.tsv", "line 5: found 6 fields, expected 7 as in the header row", 5},
		{"bad-not-square", "fc/sub-05_fc.tsv", "matrix is 4 × 3; expected a square p × p matrix", 0},
		{"bad-p-mismatch", "fc/sub-05_fc.tsv", "matrix is 3 × 3, expected 4 × 4 as in", 0},
		{"bad-p-mismatch-modalities", "sc/sub-01_sc.npy", "matrix is 5 × 5, expected 4 × 4", 0},
		{"bad-labels-mismatch", "fc/sub-01_fc.tsv", `region label 4 is "temporal_b", but ` + filepath.Join(fixtureDir("bad-labels-mismatch"), "regions.txt") + ` has "insula"`, 0},
		{"bad-asymmetric", "fc/sub-04_fc.tsv", "line 3, column 5: not symmetric: entry (2, 4) is 0.187004 but entry (4, 2) is -0.012996; the difference 0.2 exceeds symmetry_tolerance 1e-06 (the worst pair)", 3},
		{"bad-nonfinite", "fc/sub-04_fc.tsv", "line 3, column 4: entry (2, 3) is NaN; expected a finite number", 3},
		{"bad-fc-range", "fc/sub-04_fc.tsv", "line 2, column 5: entry (1, 4) is 1.5, outside [-1, 1]", 2},
		{"bad-sc-negative", "sc/sub-02_sc.npy", "entry (2, 3) is -3; structural values must be non-negative", 0},
		{"bad-matrix-not-number", "fc/sub-03_fc.tsv", `line 4, column 2: value "abc" is not a number`, 4},
		{"bad-npy-dtype", "sc/sub-02_sc.npy", `dtype "<i8" is not supported`, 0},
		{"bad-npy-dims", "sc/sub-02_sc.npy", "array has 3 dimensions (shape [2 4 4]); expected a 2-D p × p matrix", 0},
		{"bad-unlisted-file", "fc/sub-99_fc.tsv", `participant_id "sub-99" has no row in`, 0},
		{"bad-unlisted-stack", "fc_ids.txt", `line 11: participant_id "sub-42" has a matrix in`, 11},
		{"bad-stack-count", "fc.npy", "stack holds 9 matrices (shape [9 4 4]) but", 0},
	} {
		t.Run(tc.dir, func(t *testing.T) {
			_, _, err := Check(fixtureSource(t, tc.dir), Preprocess{}, fixtureDir(tc.dir))
			prefix := filepath.Join(fixtureDir(tc.dir), tc.file) + ": "
			if err == nil || !strings.HasPrefix(err.Error(), prefix) || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %v\nwant one starting %q and holding %q", err, prefix, tc.want)
			}
			var fe *FileError
			if !errors.As(err, &fe) {
				t.Fatalf("error %T is not a *FileError", err)
			}
			if tc.line != 0 && fe.Line != tc.line {
				t.Errorf("FileError.Line = %d, want %d", fe.Line, tc.line)
			}
		})
	}
}

func TestCheckTooFew(t *testing.T) {
	_, rep, err := Check(fixtureSource(t, "bad-too-few"), Preprocess{}, fixtureDir("bad-too-few"))
	var tf *TooFewError
	if !errors.As(err, &tf) || tf.Included != 7 || tf.Min != 8 || tf.Excluded != 3 {
		t.Fatalf("error %v, want a TooFewError of 7 < 8 after 3 exclusions", err)
	}
	if rep == nil || rep.Included != 7 || len(rep.Excluded) != 3 {
		t.Errorf("report %+v, want 7 included and 3 excluded", rep)
	}
	if want := "only 7 participants left after 3 exclusions; cohort.min_participants is 8"; err.Error() != want {
		t.Errorf("message %q, want %q", err, want)
	}
}

// TestCheckUnlistedReport: with unlisted = "report" a file with no table
// row is listed in the report and the cohort loads.
func TestCheckUnlistedReport(t *testing.T) {
	src := fixtureSource(t, "bad-unlisted-file")
	src.Unlisted = UnlistedReport
	c, rep, err := Check(src, Preprocess{}, fixtureDir("bad-unlisted-file"))
	if err != nil {
		t.Fatal(err)
	}
	want := []Unlisted{{ID: "sub-99", Modality: "functional", File: filepath.Join(fixtureDir("bad-unlisted-file"), "fc", "sub-99_fc.tsv")}}
	if !reflect.DeepEqual(rep.Unlisted, want) || len(c.Participants) != 7 {
		t.Errorf("unlisted %+v (want %+v), %d participants", rep.Unlisted, want, len(c.Participants))
	}
}

// writeCohort writes files (name -> contents) into a new folder.
func writeCohort(t *testing.T, files map[string]string) string {
	t.Helper()
	dir := t.TempDir()
	for name, text := range files {
		path := filepath.Join(dir, name)
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

func TestCheckSmallCohorts(t *testing.T) {
	fc := "1 0.2 0.1\n0.2 1 0.3\n0.1 0.3 1\n"
	labelled := "roi,a,b,c\na,1,0.2,0.1\nb,0.2,1,0.3\nc,0.1,0.3,1\n"
	base := func() map[string]string {
		return map[string]string{
			"participants.csv": "participant_id,score,site\ns1,1,x\ns2,2,y\ns3,,x\n",
			"fc/s1.txt":        fc, "fc/s2.txt": fc, "fc/s3.txt": fc,
		}
	}
	src := func() Source {
		return Source{Participants: "participants.csv", Targets: []string{"score"}, MinParticipants: new(1),
			Functional: &Modality{Files: "fc/{participant_id}.txt"}}
	}
	for _, tc := range []struct {
		name    string
		edit    func(files map[string]string, s *Source)
		want    string // error substring; "" for success
		regions []string
		n       int
	}{
		{"default labels and a missing score", func(map[string]string, *Source) {}, "", []string{"R001", "R002", "R003"}, 2},
		{"labels from headers", func(f map[string]string, _ *Source) {
			f["fc/s1.txt"], f["fc/s2.txt"] = labelled, labelled
		}, "", []string{"a", "b", "c"}, 2},
		{"headers disagree", func(f map[string]string, _ *Source) {
			f["fc/s1.txt"], f["fc/s2.txt"] = labelled, strings.Replace(labelled, "c", "d", 2)
		}, `fc/s2.txt: region label 3 is "d", but header of`, nil, 0},
		{"labels file too long", func(f map[string]string, s *Source) {
			f["regions.txt"], s.Regions = "a\nb\nc\nd\n", "regions.txt"
		}, "fc/s1.txt: matrix is 3 × 3, expected 4 × 4 as in", nil, 0},
		{"labels file with duplicates", func(f map[string]string, s *Source) {
			f["regions.txt"], s.Regions = "a\nb\na\n", "regions.txt"
		}, `cohort.regions: ` + "REGIONS" + `: line 3: region label "a" is already on line 1`, nil, 0},
		{"missing labels file", func(_ map[string]string, s *Source) { s.Regions = "none.txt" }, "cohort.regions: open", nil, 0},
		{"missing table", func(_ map[string]string, s *Source) { s.Participants = "none.tsv" }, "participants table: open", nil, 0},
		{"empty id", func(f map[string]string, _ *Source) {
			f["participants.csv"] = "participant_id,score\n,1\n"
		}, `participants.csv: line 2, column 1 ("participant_id"): participant_id is empty`, nil, 0},
		{"id with a slash", func(f map[string]string, _ *Source) {
			f["participants.csv"] = "participant_id,score\n../s1,1\n"
		}, `participant_id "../s1" cannot name a file`, nil, 0},
		{"id column named by id_column", func(f map[string]string, s *Source) {
			f["participants.csv"] = "subject,score,site\ns1,1,x\ns2,2,y\ns3,,x\n"
			s.IDColumn = "subject"
		}, "", []string{"R001", "R002", "R003"}, 2},
		{"id_column missing from the table", func(f map[string]string, s *Source) {
			s.IDColumn = "subject"
		}, `participants.csv: line 1: no column "subject" (named in cohort.id_column)`, nil, 0},
		{"duplicate id in a renamed id column", func(f map[string]string, s *Source) {
			f["participants.csv"] = "subject,score\ns1,1\ns1,2\n"
			s.IDColumn = "subject"
		}, `line 3, column 1 ("subject"): subject "s1" is already on line 2`, nil, 0},
		{"stack ids headed by the id column", func(f map[string]string, s *Source) {
			f["participants.csv"] = "subject,score\ns1,1\ns2,2\n"
			s.IDColumn = "subject"
			s.Functional = nil
			s.Structural = &Modality{Stack: "sc.npy", StackIDs: "ids.txt"}
			f["ids.txt"] = "subject\ns2\ns1\n"
			f["sc.npy"] = npyBytes(t, "m3_f8_C_le.npy")
		}, "sc.npy: stack of shape [2 3 4]", nil, 0},
		{"target named like the id column", func(f map[string]string, s *Source) {
			s.IDColumn, s.Targets = "score", []string{"score"}
		}, `cohort.targets: "score" is the id column`, nil, 0},
		{"no rows", func(f map[string]string, _ *Source) {
			f["participants.csv"] = "participant_id,score\n"
		}, "participants.csv: table has a header but no participant rows", nil, 0},
		{"infinite score", func(f map[string]string, _ *Source) {
			f["participants.csv"] = "participant_id,score\ns1,Inf\n"
		}, `line 2, column 2 ("score"): value "Inf" is not a finite number`, nil, 0},
		{"NA is not missing", func(f map[string]string, _ *Source) {
			f["participants.csv"] = "participant_id,score\ns1,NA\n"
		}, `value "NA" is not a number (a missing score is an empty cell or n/a)`, nil, 0},
		{"text covariate with a number", func(f map[string]string, s *Source) {
			f["participants.csv"] = "participant_id,score,sex\ns1,1,F\ns2,2,1\n"
			s.Covariates = []string{"sex"}
		}, `line 3, column 3 ("sex"): value "1" is a number, but this covariate is text from line 2 on ("F")`, nil, 0},
		{"site column", func(_ map[string]string, s *Source) { s.Site = "site" }, "", []string{"R001", "R002", "R003"}, 2},
		{"missing site", func(f map[string]string, s *Source) {
			f["participants.csv"] = "participant_id,score,site\ns1,1,x\ns2,2,\n"
			s.Site = "site"
		}, `line 3, column 3 ("site"): participant s2 has no site (cohort.site names this column`, nil, 0},
		{"no site column", func(_ map[string]string, s *Source) { s.Site = "scanner" }, `no column "scanner" (named in cohort.site)`, nil, 0},
		{"values any", func(f map[string]string, s *Source) {
			f["fc/s1.txt"] = "1 2\n2 1\n"
			f["fc/s2.txt"] = "1 2\n2 1\n"
			s.Functional.Values = ValuesAny
		}, "", []string{"R001", "R002"}, 2},
		{"within tolerance", func(f map[string]string, s *Source) {
			f["fc/s1.txt"] = "1 0.2\n0.2001 1\n"
			f["fc/s2.txt"] = "1 0.2\n0.2 1\n"
			tol := 1e-3
			s.Functional.SymmetryTolerance = &tol
		}, "", []string{"R001", "R002"}, 2},
		{"numeric header", func(f map[string]string, s *Source) {
			f["fc/s1.txt"] = "1 2 3\n" + fc
		}, "fc/s1.txt: matrix is 4 × 3; expected a square p × p matrix (labels that are numbers are read as values", nil, 0},
		{"one region", func(f map[string]string, s *Source) {
			f["fc/s1.txt"] = "1\n"
		}, "fc/s1.txt: matrix is 1 × 1; expected at least 2 regions", nil, 0},
		{"structural stack with its ids", func(f map[string]string, s *Source) {
			s.Functional = nil
			s.Structural = &Modality{Stack: "sc.npy", StackIDs: "ids.txt"}
			f["ids.txt"] = "s2\ns1\n"
			f["sc.npy"] = npyBytes(t, "m3_f8_C_le.npy")
		}, "sc.npy: stack of shape [2 3 4] holds 3 × 4 matrices; expected square p × p", nil, 0},
		{"stack ids missing a participant", func(f map[string]string, s *Source) {
			s.Functional = &Modality{Stack: "fc.npy", StackIDs: "ids.txt"}
			f["ids.txt"] = "s2\n"
			f["fc.npy"] = npyBytes(t, "m2_f8_C_le.npy")
		}, "fc.npy: array has 2 dimensions (shape [3 4]); expected a 3-D n × p × p stack", nil, 0},
		// Fixtures of testdata/formats, written by nibabel, numpy and scipy.io.savemat.
		{"CIFTI-2 .pconn.nii files with parcel names", func(f map[string]string, s *Source) {
			sym := string(fixtureBytes(t, "sym.pconn.nii"))
			f["fc/s1.pconn.nii"], f["fc/s2.pconn.nii"], f["fc/s3.pconn.nii"] = sym, sym, sym
			s.Functional.Files = "fc/{participant_id}.pconn.nii"
		}, "", []string{"L_visual", "L_motor", "R_visual", "R_motor"}, 2},
		{"asymmetric .pconn.nii", func(f map[string]string, s *Source) {
			f["fc/s1.pconn.nii"] = string(fixtureBytes(t, "conn.pconn.nii"))
			s.Functional.Files, s.Functional.Values = "fc/{participant_id}.pconn.nii", ValuesAny
		}, "fc/s1.pconn.nii: not symmetric", nil, 0},
		{".ptseries.nii as matrix files", func(f map[string]string, s *Source) {
			s.Functional.Files = "fc/{participant_id}.ptseries.nii"
		}, "cohort.functional.files: \"fc/{participant_id}.ptseries.nii\" is a CIFTI-2 time series", nil, 0},
		{".npz stack with its id array", func(f map[string]string, s *Source) {
			f["participants.csv"] = "participant_id,score\nsub-01,1\nsub-02,2\nsub-03,3\n"
			f["fc.npz"] = string(fixtureBytes(t, "stack.npz"))
			s.Functional = &Modality{Stack: "fc.npz", Variable: "fc", IDsVariable: "ids", Values: ValuesAny}
		}, "", []string{"R001", "R002", "R003", "R004"}, 3},
		{".npz stack with an id unlisted", func(f map[string]string, s *Source) {
			f["participants.csv"] = "participant_id,score\nsub-01,1\nsub-02,2\n"
			f["fc.npz"] = string(fixtureBytes(t, "stack.npz"))
			s.Functional = &Modality{Stack: "fc.npz", Variable: "fc", IDsVariable: "ids", Values: ValuesAny}
		}, `fc.npz (array "ids"): participant_id "sub-03" has a matrix in`, nil, 0},
		{".npz stack, id array missing", func(f map[string]string, s *Source) {
			f["fc.npz"] = string(fixtureBytes(t, "stack.npz"))
			s.Functional = &Modality{Stack: "fc.npz", Variable: "fc", IDsVariable: "subjects"}
		}, `cohort.functional.stack: `, nil, 0},
		{".mat stack, compressed", func(f map[string]string, s *Source) {
			f["fc.mat"] = string(fixtureBytes(t, "v5z.mat"))
			f["ids.txt"] = "s1\ns2\ns3\n"
			s.Functional = &Modality{Stack: "fc.mat", Variable: "fcstack", StackIDs: "ids.txt"}
		}, "", []string{"R001", "R002", "R003", "R004"}, 2},
		{".mat stack with the participants last", func(f map[string]string, s *Source) {
			f["fc.mat"] = string(fixtureBytes(t, "v5z.mat")) // "stack" is 3 × 4 × 4
			f["ids.txt"] = "s1\ns2\ns3\ns4\n"
			s.Functional = &Modality{Stack: "fc.mat", Variable: "stack", StackIDs: "ids.txt"}
		}, "stack holds 3 matrices (shape [3 4 4]) but", nil, 0},
		{".mat files without the variable", func(f map[string]string, s *Source) {
			f["fc/s1.mat"] = string(fixtureBytes(t, "v5.mat"))
			s.Functional = &Modality{Files: "fc/{participant_id}.mat", Variable: "fc"}
		}, `fc/s1.mat: no variable "fc" (named by cohort.functional.variable)`, nil, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			files, s := base(), src()
			tc.edit(files, &s)
			dir := writeCohort(t, files)
			c, _, err := Check(s, rawValues(), dir)
			want := strings.ReplaceAll(tc.want, "REGIONS", filepath.Join(dir, "regions.txt"))
			if want != "" {
				if err == nil || !strings.Contains(err.Error(), want) {
					t.Fatalf("error %v, want one holding %q", err, want)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(c.Regions, tc.regions) || len(c.Participants) != tc.n {
				t.Errorf("regions %q, %d participants; want %q, %d", c.Regions, len(c.Participants), tc.regions, tc.n)
			}
		})
	}
}

func npyBytes(t *testing.T, name string) string {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "testdata", "npy", name))
	if err != nil {
		t.Fatal(err)
	}
	return string(raw)
}

// TestCheckStackMissingParticipant: a table row absent from stack_ids is
// excluded with its reason.
func TestCheckStackMissingParticipant(t *testing.T) {
	src := fixtureSource(t, "good-npy")
	dir := t.TempDir()
	for _, name := range []string{"participants.csv", "fc.npy", "sc.npy", "sc_ids.txt"} {
		raw, err := os.ReadFile(filepath.Join(fixtureDir("good-npy"), name))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, name), raw, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	// fc_ids.txt names sub-11 in sub-05's place: sub-05 has no functional
	// matrix, and sub-11 has no table row.
	ids := "sub-01\nsub-02\nsub-03\nsub-04\nsub-11\nsub-06\nsub-07\nsub-08\nsub-09\nsub-10\n"
	if err := os.WriteFile(filepath.Join(dir, "fc_ids.txt"), []byte(ids), 0o644); err != nil {
		t.Fatal(err)
	}
	src.Unlisted = UnlistedReport
	c, rep, err := Check(src, Preprocess{}, dir)
	if err != nil {
		t.Fatal(err)
	}
	want := Exclusion{"sub-05", "not listed in the functional stack_ids " + filepath.Join(dir, "fc_ids.txt")}
	if len(c.Excluded) != 2 || c.Excluded[0] != want {
		t.Errorf("excluded %q, want %q then sub-06", c.Excluded, want)
	}
	if len(rep.Unlisted) != 1 || rep.Unlisted[0].ID != "sub-11" {
		t.Errorf("unlisted %+v, want sub-11", rep.Unlisted)
	}
}

func TestCheckLeavesSourceAlone(t *testing.T) {
	src := fixtureSource(t, "good-npy")
	before := *src.Functional
	if _, err := Load(src, Preprocess{}, fixtureDir("good-npy")); err != nil {
		t.Fatal(err)
	}
	if *src.Functional != before {
		t.Errorf("Load changed the caller's Source: %+v, was %+v", *src.Functional, before)
	}
}

func TestRobustSD(t *testing.T) {
	for _, tc := range []struct {
		xs          []float64
		median, rsd float64
	}{
		// Hand-computed: median 3, |x − 3| = 2 1 0 1 97, MAD 1.
		{[]float64{1, 2, 3, 4, 100}, 3, 1.4826},
		// MAD 0: mean |x − 1| = 2/5, times 1.253314.
		{[]float64{1, 1, 1, 1, 3}, 1, 1.253314 * 0.4},
		{[]float64{2, 2}, 2, 0},
	} {
		m, s := RobustSD(tc.xs)
		if m != tc.median || math.Abs(s-tc.rsd) > 1e-12 {
			t.Errorf("RobustSD(%v) = %v, %v; want %v, %v", tc.xs, m, s, tc.median, tc.rsd)
		}
	}
}
