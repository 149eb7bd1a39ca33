package graphnet

import (
	"fmt"

	"github.com/skein-neuro/skein/model"
)

// kindNetwork is the name of the networks' kind: the key of their table
// in an experiment file.
const kindNetwork = "network"

// Networks register themselves as a kind of model: not a baseline,
// fitting all score columns together, saved, with gradient × input edge
// importance. New builds an Ensemble when model.network.ensemble > 1 and a
// Network otherwise; Load reads either. NewClassifier builds a Classifier
// (one network or an ensemble) for a label, and LoadClassifier reads it.
func init() {
	model.Register(model.Kind{
		Name: kindNetwork,
		Importance: model.Importance{
			Method:      "gradient × input",
			Description: "Gradient × input saliency of the test participants",
		},
		ClassImportance: model.Importance{
			Method:      "gradient × input",
			Description: "Gradient × input saliency of the decision value (log-odds, or centred logit) of the test participants",
		},
		ImportanceViews: func(s model.Settings) []string {
			if c, ok := s.(*Config); ok {
				return c.ImportanceViews()
			}
			return nil
		},
		New: func(s model.Settings, p, targets int, seed int64) (model.Regressor, error) {
			c, ok := s.(*Config)
			if !ok {
				return nil, fmt.Errorf("graphnet: kind %s takes settings of type %T, not %T", kindNetwork, c, s)
			}
			if c.Ensemble != nil && *c.Ensemble > 1 {
				e, err := NewEnsemble(*c, p, targets, seed)
				if err != nil {
					return nil, err
				}
				return e, nil
			}
			n, err := New(*c, p, targets, seed)
			if err != nil {
				return nil, err
			}
			return n, nil
		},
		Load: loadSaved,
		NewClassifier: func(s model.Settings, p, classes int, seed int64) (model.Classifier, error) {
			c, ok := s.(*Config)
			if !ok {
				return nil, fmt.Errorf("graphnet: kind %s takes settings of type %T, not %T", kindNetwork, c, s)
			}
			cl, err := NewClassifier(*c, p, classes, seed)
			if err != nil {
				return nil, err
			}
			return cl, nil
		},
		LoadClassifier: func(dir string) (model.Classifier, error) {
			c, err := LoadClassifier(dir)
			if err != nil {
				return nil, err
			}
			return c, nil
		},
		EdgeScaling: func(s model.Settings) (functional, structural bool) {
			if c, ok := s.(*Config); ok {
				return c.EdgeScaling()
			}
			return false, false
		},
		Inputs: func(s model.Settings) (functional, structural bool) {
			if c, ok := s.(*Config); ok {
				return c.Inputs()
			}
			return false, false
		},
		Describe: func(s model.Settings) string {
			c, ok := s.(*Config)
			if !ok {
				return ""
			}
			if c.Ensemble != nil && *c.Ensemble > 1 {
				return fmt.Sprintf("%s, up to %d epochs, mean of %d networks", branches(len(c.Branches)), *c.Epochs, *c.Ensemble)
			}
			return fmt.Sprintf("%s, up to %d epochs", branches(len(c.Branches)), *c.Epochs)
		},
	})
}

// branches says how many branches a network has, in words.
func branches(n int) string {
	if n == 1 {
		return "1 branch"
	}
	return fmt.Sprintf("%d branches", n)
}
