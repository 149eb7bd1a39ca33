package experiment

import (
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/train"
)

// TestWriteClassesCSV: one line per participant, label and class; the
// predicted class of a binary label is the positive one from the
// threshold up (a probability equal to it included), of more classes the
// most probable, the first on a tie (the contract of
// eval.PredictedClasses).
func TestWriteClassesCSV(t *testing.T) {
	tests := []struct {
		name      string
		label     train.FittedLabel
		proba     []float64 // 2 participants × K
		threshold float64
		want      string
	}{
		{"binary at 0.4", train.FittedLabel{Name: "dx", Classes: []string{"control", "patient"}}, []float64{0.6, 0.4, 0.61, 0.39}, 0.4,
			"s1,m,dx,control,0.6,patient\ns1,m,dx,patient,0.4,patient\ns2,m,dx,control,0.61,control\ns2,m,dx,patient,0.39,control\n"},
		{"three classes", train.FittedLabel{Name: "sub", Classes: []string{"a", "b", "c"}}, []float64{0.2, 0.4, 0.4, 0.5, 0.25, 0.25}, 0.9,
			"s1,m,sub,a,0.2,b\ns1,m,sub,b,0.4,b\ns1,m,sub,c,0.4,b\ns2,m,sub,a,0.5,a\ns2,m,sub,b,0.25,a\ns2,m,sub,c,0.25,a\n"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			K := len(tt.label.Classes)
			p := &Predicted{
				Model:     &train.SavedModel{Fitted: train.Fitted{Model: "m"}},
				Cohort:    &data.Cohort{Participants: []*data.Participant{{ID: "s1"}, {ID: "s2"}}},
				Labels:    []train.FittedLabel{tt.label},
				Proba:     []*mat.Dense{mat.NewDense(2, K, tt.proba)},
				Threshold: tt.threshold,
			}
			var b strings.Builder
			if err := p.WriteClassesCSV(&b); err != nil {
				t.Fatal(err)
			}
			if want := "participant_id,model,target,class,probability,predicted_class\n" + tt.want; b.String() != want {
				t.Errorf("wrote\n%s\nwant\n%s", b.String(), want)
			}
		})
	}
}
