package synth_test

import (
	"fmt"

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
