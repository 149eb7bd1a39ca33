package experiment_test

import (
	"fmt"
	"log"

	"github.com/skein-neuro/skein/experiment"
)

// A grid of two sweeps over one network becomes four models; the
// baseline stays as it is.
func ExampleExperiment_Expand() {
	exp, err := experiment.ParseExperiment([]byte(`
[cohort]
participants = "participants.tsv"
targets = ["score"]
[cohort.functional]
files = "fc/{participant_id}.tsv"

[[model]]
name = "ridge"
[model.ridge]

[[model]]
name = "net"
[model.network]
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 8}, {kind = "n2g", size = 16}]

[[sweep]]
model = "net"
key = "network.optimizer.rate"
values = [1e-3, 1e-2]

[[sweep]]
model = "net"
key = "network.epochs"
values = [40, 80]
`))
	if err != nil {
		log.Fatal(err)
	}
	expanded, variants, err := exp.Expand()
	if err != nil {
		log.Fatal(err)
	}
	for _, m := range expanded.Models {
		fmt.Println(m.Name)
	}
	fmt.Println(len(variants), "variants of", variants[0].Base)
	// Output:
	// ridge
	// net[rate=0.001,epochs=40]
	// net[rate=0.001,epochs=80]
	// net[rate=0.01,epochs=40]
	// net[rate=0.01,epochs=80]
	// 4 variants of net
}
