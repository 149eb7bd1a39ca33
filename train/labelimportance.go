package train

import (
	"errors"
	"fmt"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// A LabelMap is one edge importance map of a classifier fitted to a label
// (model.ClassInterpreter), computed on the test participants of a fold
// whose label is known.
type LabelMap struct {
	// Label names the label (data.Cohort.Labels).
	Label string
	// Class is the index of the class whose decision value the map
	// explains (model.ExplainedClass): 1, the positive class, for a
	// binary label, whose map is of the log-odds of class 1; each class
	// of a label of more classes, whose maps are of the centred logits.
	Class int
	// View indexes the model's importance views
	// (ModelConfig.ImportanceViews); 0 for a model of one view.
	View int
	// Map is p × p and symmetric.
	Map *mat.Dense
}

// classImportance returns the edge importance maps of ci, the classifier
// of label l of K classes, on the fold's test participants ps whose label
// is known, as LabelMaps in the order the classifier gives them (view,
// then class). For a model that learns from standardized edges it is
// measured from the standardized zero matrix, as for the scores
// (edgeImportance). It returns nil, nil when ps is too few for the
// importance measure (model.ErrTooFewToExplain).
func (fd *foldData) classImportance(ci model.ClassInterpreter, l, K int, ps []*data.Participant) ([]LabelMap, error) {
	var maps []*mat.Dense
	var err error
	if fd.scaler == nil {
		maps, err = ci.EdgeImportance(ps)
	} else {
		ri, ok := ci.(model.ReferenceClassInterpreter)
		if !ok {
			return nil, fmt.Errorf("%T learns from standardized edges but is not a model.ReferenceClassInterpreter", ci)
		}
		ref, rerr := fd.scaler.Reference(&data.Cohort{Participants: ps})
		if rerr != nil {
			return nil, rerr
		}
		maps, err = ri.EdgeImportanceFrom(ps, ref.Participants)
	}
	switch {
	case errors.Is(err, model.ErrTooFewToExplain):
		return nil, nil
	case err != nil:
		return nil, err
	}
	C := model.ExplainedClasses(K)
	if len(maps)%C != 0 {
		return nil, fmt.Errorf("%d importance maps for %d decision values", len(maps), C)
	}
	out := make([]LabelMap, len(maps))
	for k, m := range maps {
		out[k] = LabelMap{Label: fd.labelName[l], Class: model.ExplainedClass(K, k%C), View: k / C, Map: m}
	}
	return out, nil
}
