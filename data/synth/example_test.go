package synth_test

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/skein-neuro/skein/data/synth"
)

func ExampleGenerate() {
	c, err := synth.Generate(synth.Config{N: 40, P: 16, Seed: 1, Ceiling: 0.7, FamilySize: 2})
	if err != nil {
		panic(err)
	}
	fmt.Println(len(c.Participants), "participants,", c.P(), "regions")
	fmt.Println("first:", c.Participants[0].ID, "in", c.Participants[0].Group)
	fmt.Println("scores:", c.Targets, "covariates:", c.Covariates)
	for _, pt := range c.Truth {
		fmt.Printf("%s: %d positive and %d negative functional edges, ceiling r = %.2f\n",
			pt.Target, len(pt.Positive), len(pt.Negative), pt.Ceiling)
	}
	// Output:
	// 40 participants, 16 regions
	// first: sub-001 in fam-001
	// scores: [recall fluency] covariates: [age sex motion]
	// recall: 3 positive and 3 negative functional edges, ceiling r = 0.70
	// fluency: 3 positive and 3 negative functional edges, ceiling r = 0.70
}

func ExampleWrite() {
	c, err := synth.Generate(synth.Config{N: 20, P: 8, Seed: 2, Targets: 1})
	if err != nil {
		panic(err)
	}
	dir, err := os.MkdirTemp("", "synth-example-")
	if err != nil {
		panic(err)
	}
	defer os.RemoveAll(dir)
	if err := synth.Write(filepath.Join(dir, "cohort"), c, synth.FormatNPY); err != nil {
		panic(err)
	}
	files, _ := filepath.Glob(filepath.Join(dir, "cohort", "*"))
	for _, f := range files {
		fmt.Println(filepath.Base(f))
	}
	fcFiles, _ := filepath.Glob(filepath.Join(dir, "cohort", "fc", "*"))
	fmt.Println(len(fcFiles), "functional matrices, first", filepath.Base(fcFiles[0]))
	// Output:
	// experiment.toml
	// fc
	// participants.tsv
	// planted.tsv
	// regions.txt
	// sc
	// 20 functional matrices, first sub-001_fc.npy
}
