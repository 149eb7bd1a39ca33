package data

import (
	"strings"
	"testing"
)

func TestSourceDefaults(t *testing.T) {
	s := Source{Functional: &Modality{}, Structural: &Modality{}}
	s.SetDefaults()
	if *s.MinParticipants != 10 || *s.OutlierSD != 3 || s.Unlisted != UnlistedError ||
		s.Functional.Values != ValuesCorrelation || *s.Functional.SymmetryTolerance != 1e-6 ||
		s.Structural.Values != "" || *s.Structural.SymmetryTolerance != 1e-6 {
		t.Errorf("defaults %+v, functional %+v, structural %+v", s, *s.Functional, *s.Structural)
	}
}

func TestSourceValidate(t *testing.T) {
	good := func() Source {
		s := Source{Participants: "participants.tsv", Targets: []string{"recall"}, Covariates: []string{"age"},
			Functional: &Modality{Files: "fc/{participant_id}.tsv"}}
		s.SetDefaults()
		return s
	}
	for _, tc := range []struct {
		name string
		edit func(*Source)
		want string // "" for valid
	}{
		{"good", func(*Source) {}, ""},
		{"stack", func(s *Source) {
			s.Functional.Files, s.Functional.Stack, s.Functional.StackIDs = "", "fc.npy", "ids.txt"
		}, ""},
		{"no table", func(s *Source) { s.Participants = "" }, `cohort: key "participants" is required`},
		{"xlsx", func(s *Source) { s.Participants = "p.xlsx" }, `cohort.participants: "p.xlsx" must end in .tsv or .csv, found ".xlsx"`},
		{"no targets", func(s *Source) { s.Targets = nil }, `cohort: key "targets" needs at least one score column`},
		{"id as target", func(s *Source) { s.Targets = []string{"participant_id"} }, `cohort.targets: "participant_id" is the id column`},
		{"target as covariate", func(s *Source) { s.Covariates = []string{"recall"} }, `cohort.covariates: column "recall" is already named in cohort.targets`},
		{"group as covariate", func(s *Source) { s.Group = "age" }, `cohort.group: column "age" is already named in cohort.covariates`},
		{"empty column", func(s *Source) { s.Covariates = []string{""} }, "cohort.covariates: empty column name"},
		{"min", func(s *Source) { s.MinParticipants = new(-1) }, "cohort.min_participants: must be at least 1, found -1"},
		{"outlier", func(s *Source) { s.OutlierSD = new(-2.0) }, "cohort.outlier_sd: must be positive, found -2"},
		{"unlisted", func(s *Source) { s.Unlisted = "ignore" }, `cohort.unlisted: want "error" or "report", found "ignore"`},
		{"no modality", func(s *Source) { s.Functional = nil }, "cohort: needs a [cohort.functional] or [cohort.structural] table"},
		{"both", func(s *Source) { s.Functional.Stack = "fc.npy" }, `cohort.functional: set either "files" or "stack", not both`},
		{"neither", func(s *Source) { s.Functional.Files = "" }, `cohort.functional: set "files" (a path template) or "stack"`},
		{"no placeholder", func(s *Source) { s.Functional.Files = "fc/sub.tsv" }, `cohort.functional.files: template "fc/sub.tsv" must hold {participant_id} exactly once, found 0`},
		{"two placeholders", func(s *Source) { s.Functional.Files = "{participant_id}/{participant_id}.tsv" }, `cohort.functional.files: template "{participant_id}/{participant_id}.tsv" must hold {participant_id} exactly once, found 2`},
		{"other placeholder", func(s *Source) { s.Functional.Files = "{session}/{participant_id}.tsv" }, `cohort.functional.files: template "{session}/{participant_id}.tsv": the only placeholder is {participant_id}`},
		{"ids with files", func(s *Source) { s.Functional.StackIDs = "ids.txt" }, `cohort.functional.stack_ids: goes with "stack", not "files"`},
		{"stack not npy", func(s *Source) {
			s.Functional.Files, s.Functional.Stack, s.Functional.StackIDs = "", "fc.csv", "ids.txt"
		}, `cohort.functional.stack: "fc.csv" must be a .npy, .npz or .mat file`},
		{"npz stack with an id array", func(s *Source) {
			s.Functional.Files, s.Functional.Stack, s.Functional.IDsVariable = "", "fc.npz", "ids"
		}, ""},
		{"variable on text files", func(s *Source) { s.Functional.Variable = "fc" }, `cohort.functional.variable: names an array in .npz or .mat files, but "fc/{participant_id}.tsv" is neither`},
		{"variable on a npy stack", func(s *Source) {
			s.Functional.Files, s.Functional.Stack, s.Functional.StackIDs, s.Functional.Variable = "", "fc.npy", "ids.txt", "fc"
		}, `cohort.functional.variable: names an array in .npz or .mat files, but "fc.npy" is neither`},
		{"id array in a mat stack", func(s *Source) {
			s.Functional.Files, s.Functional.Stack, s.Functional.IDsVariable = "", "fc.mat", "ids"
		}, `cohort.functional.ids_variable: names an id array in an .npz stack, but "fc.mat" is not .npz`},
		{"both id sources", func(s *Source) {
			s.Functional.Files, s.Functional.Stack, s.Functional.StackIDs, s.Functional.IDsVariable = "", "fc.npz", "ids.txt", "ids"
		}, `cohort.functional: set either "stack_ids" (a file) or "ids_variable"`},
		{"id array with files", func(s *Source) { s.Functional.IDsVariable = "ids" }, `cohort.functional.ids_variable: goes with an .npz "stack", not "files"`},
		{"stack without ids", func(s *Source) { s.Functional.Files, s.Functional.Stack = "", "fc.npy" }, `cohort.functional: "stack" needs "stack_ids"`},
		{"values", func(s *Source) { s.Functional.Values = "partial" }, `cohort.functional.values: want "correlation" or "any", found "partial"`},
		{"structural values", func(s *Source) {
			s.Structural = &Modality{Files: "sc/{participant_id}.npy", Values: "any"}
			s.SetDefaults()
		}, "cohort.structural.values: structural matrices are always checked non-negative"},
		{"tolerance", func(s *Source) { *s.Functional.SymmetryTolerance = -1 }, "cohort.functional.symmetry_tolerance: must be a finite number, zero or positive, found -1"},
		{"exact symmetry", func(s *Source) { *s.Functional.SymmetryTolerance = 0 }, ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := good()
			tc.edit(&s)
			err := s.Validate()
			switch {
			case tc.want == "" && err != nil:
				t.Errorf("unexpected error %v", err)
			case tc.want != "" && (err == nil || !strings.HasPrefix(err.Error(), tc.want)):
				t.Errorf("error %v, want %q", err, tc.want)
			}
		})
	}
}
