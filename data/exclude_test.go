package data

import (
	"reflect"
	"strings"
	"testing"
)

// TestBadParticipants: one participant's bad matrix fails the cohort by
// default, and is left out with the failed check as its reason under
// on_bad_participant = "exclude"; cohort.exclude leaves participants out
// by id with the reason given, without reading their cells or files.
func TestBadParticipants(t *testing.T) {
	fc := "1 0.2 0.1\n0.2 1 0.3\n0.1 0.3 1\n"
	deadRegion := "1 0.2 NaN\n0.2 1 NaN\nNaN NaN NaN\n" // region 3 had no signal
	base := func() map[string]string {
		return map[string]string{
			"participants.csv": "participant_id,score,sex\ns1,1,F\ns2,2,M\ns3,3,F\ns4,4,M\n",
			"fc/s1.txt":        fc, "fc/s2.txt": fc, "fc/s3.txt": fc, "fc/s4.txt": fc,
		}
	}
	src := func() Source {
		return Source{Participants: "participants.csv", Targets: []string{"score"}, Covariates: []string{"sex"},
			MinParticipants: new(1), Functional: &Modality{Files: "fc/{participant_id}.txt"}}
	}
	zeroDiagonal := Preprocess{FC: FunctionalPreprocess{Transform: NoTransform, Diagonal: ZeroDiagonalSetting},
		SC: StructuralPreprocess{Transform: NoTransform, Scale: ScaleNone}}
	for _, tc := range []struct {
		name     string
		edit     func(files map[string]string, s *Source)
		pre      Preprocess
		wantErr  string   // error substring; "" for success
		kept     []string // ids kept
		excluded []string // ids excluded, with a reason holding the matching entry of reasons
		reasons  []string
	}{
		{"dead region fails the cohort by default", func(f map[string]string, _ *Source) {
			f["fc/s2.txt"] = deadRegion
		}, zeroDiagonal, "fc/s2.txt: line 1, column 3: entry (1, 3) is NaN; expected a finite number", nil, nil, nil},
		{"dead region excluded on request", func(f map[string]string, s *Source) {
			f["fc/s2.txt"] = deadRegion
			s.OnBadParticipant = BadParticipantExclude
		}, zeroDiagonal, "", []string{"s1", "s3", "s4"}, []string{"s2"},
			[]string{`failed a check (cohort.on_bad_participant = "exclude"): ` + "DIR/fc/s2.txt: line 1, column 3: entry (1, 3) is NaN"}},
		{"two bad participants both listed", func(f map[string]string, s *Source) {
			f["fc/s2.txt"] = deadRegion
			f["fc/s4.txt"] = "1 0.2\n0.2 1\n"
			s.OnBadParticipant = BadParticipantExclude
		}, zeroDiagonal, "", []string{"s1", "s3"}, []string{"s2", "s4"},
			[]string{"is NaN", "matrix is 2 × 2, expected 3 × 3"}},
		{"single-precision diagonal on a replaced diagonal", func(f map[string]string, _ *Source) {
			f["fc/s3.txt"] = "1.0000002 0.2 0.1\n0.2 1 0.3\n0.1 0.3 0.9999998\n"
		}, zeroDiagonal, "", []string{"s1", "s2", "s3", "s4"}, nil, nil},
		{"diagonal beyond the tolerance", func(f map[string]string, _ *Source) {
			f["fc/s3.txt"] = "1.00001 0.2 0.1\n0.2 1 0.3\n0.1 0.3 1\n"
		}, zeroDiagonal, "entry (1, 1) is 1.00001, outside [-1, 1]", nil, nil, nil},
		{"diagonal kept is data: no tolerance", func(f map[string]string, _ *Source) {
			f["fc/s3.txt"] = "1.0000002 0.2 0.1\n0.2 1 0.3\n0.1 0.3 1\n"
		}, rawValues(), "entry (1, 1) is 1.0000002, outside [-1, 1]", nil, nil, nil},
		{"off-diagonal gets no tolerance", func(f map[string]string, _ *Source) {
			f["fc/s3.txt"] = "1 1.0000002 0.1\n1.0000002 1 0.3\n0.1 0.3 1\n"
		}, zeroDiagonal, "entry (1, 2) is 1.0000002, outside [-1, 1]", nil, nil, nil},
		{"excluded by id, cells and files not read", func(f map[string]string, s *Source) {
			f["participants.csv"] = "participant_id,score,sex\ns1,1,F\ns2,not measured,3\ns3,3,F\ns4,4,M\n"
			f["fc/s2.txt"] = deadRegion
			s.Exclude = map[string]string{"s2": "region 3 lost in acquisition"}
		}, zeroDiagonal, "", []string{"s1", "s3", "s4"}, []string{"s2"},
			[]string{"excluded in the experiment file (cohort.exclude): region 3 lost in acquisition"}},
		{"excluded id without a row", func(_ map[string]string, s *Source) {
			s.Exclude = map[string]string{"s9": "typo"}
		}, zeroDiagonal, `cohort.exclude: participant_id "s9" has no row in`, nil, nil, nil},
		{"excluded without a reason", func(_ map[string]string, s *Source) {
			s.Exclude = map[string]string{"s1": " "}
		}, zeroDiagonal, `cohort.exclude: "s1": give the reason`, nil, nil, nil},
		{"unknown policy", func(_ map[string]string, s *Source) {
			s.OnBadParticipant = "skip"
		}, zeroDiagonal, "cohort.on_bad_participant", nil, nil, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			files, s := base(), src()
			tc.edit(files, &s)
			dir := writeCohort(t, files)
			c, rep, err := Check(s, tc.pre, dir)
			if tc.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), tc.wantErr) {
					t.Fatalf("error %v, want one holding %q", err, tc.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if got := ids(c.Participants); !reflect.DeepEqual(got, tc.kept) {
				t.Errorf("kept %q, want %q", got, tc.kept)
			}
			if len(c.Excluded) != len(tc.excluded) || !reflect.DeepEqual(rep.Excluded, c.Excluded) {
				t.Fatalf("excluded %q (report %q), want %q", c.Excluded, rep.Excluded, tc.excluded)
			}
			for k, x := range c.Excluded {
				want := strings.ReplaceAll(tc.reasons[k], "DIR/", dir+"/")
				if x.ID != tc.excluded[k] || !strings.Contains(x.Reason, want) {
					t.Errorf("excluded %s: %q, want %s: %q", x.ID, x.Reason, tc.excluded[k], want)
				}
			}
			var text strings.Builder
			if err := rep.WriteText(&text); err != nil {
				t.Fatal(err)
			}
			for _, x := range c.Excluded {
				if !strings.Contains(text.String(), x.ID+": "+x.Reason) {
					t.Errorf("check output lacks %s and its reason:\n%s", x.ID, text.String())
				}
			}
		})
	}
}
