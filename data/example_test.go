package data_test

import (
	"fmt"
	"log"

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
		MinParticipants: 5,
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
