package eval

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// benchRows invents predictions of models × 10 repeats × 5 folds for n
// participants.
func benchRows(n, models int) []Prediction {
	src := rand.New(rand.NewPCG(1, 1))
	var rows []Prediction
	for m := range models {
		for r := range 10 {
			for i := range n {
				obs := 100 + 15*src.NormFloat64()
				rows = append(rows, Prediction{
					ParticipantID: fmt.Sprintf("sub-%04d", i), Model: fmt.Sprintf("m%d", m), Target: "memory",
					Repeat: r, Fold: i % 5, Observed: obs, Predicted: obs + 10*src.NormFloat64(),
				})
			}
		}
	}
	return rows
}

func BenchmarkScore(b *testing.B) {
	for _, n := range []int{100, 1000, 10000} {
		rows := benchRows(n, 1)[:n]
		obs, pred := obsOf(rows), predOf(rows)
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			for b.Loop() {
				Score(obs, pred, 0)
			}
		})
	}
}

// One permutation of a run is summarized pooled only; a run of 4 models on
// 500 participants has 20000 rows.
func BenchmarkSummarize(b *testing.B) {
	rows := benchRows(500, 4)
	for _, perFold := range []bool{false, true} {
		b.Run(fmt.Sprintf("perFold=%v", perFold), func(b *testing.B) {
			for b.Loop() {
				Summarize(rows, 0, perFold)
			}
		})
	}
}

func BenchmarkBootstrapCI(b *testing.B) {
	rows := benchRows(500, 1)
	for _, m := range []Metric{MetricPearson, MetricMAE} {
		b.Run(string(m), func(b *testing.B) {
			for b.Loop() {
				if _, err := BootstrapCI(rows, m, 0, 1000, 0.95, rand.New(rand.NewPCG(2, 2))); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// E[I] of ten equal-frequency bins a side, the extra work AMI and the
// chance level of NMI add to Score.
func BenchmarkExpectedMILabels(b *testing.B) {
	for _, n := range []int{100, 1000, 10000} {
		rows := benchRows(n, 1)[:n]
		a := EqualFrequencyBins(obsOf(rows), DefaultBins)
		p := EqualFrequencyBins(predOf(rows), DefaultBins)
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			for b.Loop() {
				ExpectedMILabels(a, p)
			}
		})
	}
}
