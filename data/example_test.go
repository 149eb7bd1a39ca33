package data_test

import (
	"fmt"
	"log"
	"os"

	"github.com/skein-neuro/skein/data"
)

// ExampleLoad loads the invented fixture cohort of testdata/cohort/good-tsv:
// a TSV participants table, functional matrices as labelled text files and
// structural matrices as .npy files.
func ExampleLoad() {
	src := data.Source{
		Participants:    "participants.tsv",
		Targets:         []string{"recall", "fluency"},
		Covariates:      []string{"age", "sex"},
		Group:           "family",
		Regions:         "regions.txt",
		MinParticipants: new(5),
		Functional:      &data.Modality{Files: "fc/{participant_id}_fc.tsv"},
		Structural:      &data.Modality{Files: "sc/{participant_id}_sc.npy"},
	}
	var pre data.Preprocess // defaults: Fisher z, log1p and scaling
	cohort, err := data.Load(src, pre, "../testdata/cohort/good-tsv")
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println("regions:", cohort.Regions)
	fmt.Println("included:", len(cohort.Participants))
	for _, e := range cohort.Excluded {
		fmt.Printf("excluded %s: %s\n", e.ID, e.Reason)
	}
	p := cohort.Participants[2]
	fmt.Println(p.ID, p.Group, p.Scores, p.Covariates)
	// Output:
	// regions: [cingulate_a cingulate_b temporal_a temporal_b]
	// included: 7
	// excluded sub-06: no value in any target column (recall, fluency)
	// excluded sub-08: no functional file ../testdata/cohort/good-tsv/fc/sub-08_fc.tsv
	// excluded sub-10: no value in group column "family"
	// sub-03 fam-b [16 NaN] [41 0]
}

// ExampleCheck checks the stacked layout of the invented fixture cohort
// (testdata/cohort/good-npy) and prints the report a person reads; the
// same report encodes as JSON for scripts.
func ExampleCheck() {
	src := data.Source{
		Participants:    "participants.csv",
		Targets:         []string{"recall", "fluency"},
		Covariates:      []string{"sex"},
		MinParticipants: new(5),
		Functional:      &data.Modality{Stack: "fc.npy", StackIDs: "fc_ids.txt"},
		Structural:      &data.Modality{Stack: "sc.npy", StackIDs: "sc_ids.txt"},
	}
	_, report, err := data.Check(src, data.Preprocess{}, "../testdata/cohort/good-npy")
	if err != nil {
		log.Fatal(err)
	}
	if err := report.WriteText(os.Stdout); err != nil {
		log.Fatal(err)
	}
	// Output:
	// participants table: ../testdata/cohort/good-npy/participants.csv (10 rows)
	// included: 9 participants
	// excluded: 1 participant
	//   sub-06: no value in any target column (recall, fluency)
	// kept with some scores missing: 1 participant (missing scores are masked in training)
	// regions: 4 (labels: default)
	// functional (fc.npy):
	//   mean connectivity mean 0.1979, SD 0.2769, range -0.02162 to 0.9; n = 9, missing 0
	// structural (sc.npy):
	//   mean connectivity mean 27.22, SD 6.56, range 19.83 to 38.17; n = 9, missing 0
	//   density mean 0.9074, SD 0.08784, range 0.8333 to 1; n = 9, missing 0
	// scores:
	//   recall: mean 13, SD 2.739, range 9 to 17; n = 9, missing 0
	//   fluency: mean 21, SD 2.928, range 17 to 25; n = 8, missing 1
	// covariates:
	//   sex: text, coded "F" = 0, "M" = 1; n = 9, missing 0
	// outliers (more than 3 robust SD from the median; flagged, not excluded): 1
	//   sub-09: functional mean connectivity 0.9 (median 0.1203, robust SD 0.0814, robust z = +9.6)
	// research software, not a diagnostic device: results need ethics approval, data-use agreements and clinical judgement; defer to your local regulations
}

// ExampleReadSeries reads a participant's regional time series from a
// CIFTI-2 parcellated series file (written by nibabel, see
// testdata/formats/gen_cifti.py): T time points by p parcels, with the
// parcel names.
func ExampleReadSeries() {
	series, regions, err := data.ReadSeries("testdata/formats/series.ptseries.nii", "")
	if err != nil {
		fmt.Println(err)
		return
	}
	t, p := series.Dims()
	fmt.Println(t, "time points,", p, "regions:", regions)
	// Output: 7 time points, 4 regions: [L_visual L_motor R_visual R_motor]
}
