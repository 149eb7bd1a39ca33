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
// importance.
func init() {
	model.Register(model.Kind{
		Name: kindNetwork,
		Importance: model.Importance{
			Method:      "gradient × input",
			Description: "Gradient × input saliency of the test participants, summed over branches",
		},
		New: func(s model.Settings, p, targets int, seed int64) (model.Regressor, error) {
			c, ok := s.(*Config)
			if !ok {
				return nil, fmt.Errorf("graphnet: kind %s takes settings of type %T, not %T", kindNetwork, c, s)
			}
			n, err := New(*c, p, targets, seed)
			if err != nil {
				return nil, err
			}
			return n, nil
		},
		Load: func(dir string) (model.Regressor, error) {
			n, err := Load(dir)
			if err != nil {
				return nil, err
			}
			return n, nil
		},
		EdgeScaling: func(s model.Settings) (functional, structural bool) {
			if c, ok := s.(*Config); ok {
				return c.EdgeScaling()
			}
			return false, false
		},
		Describe: func(s model.Settings) string {
			c, ok := s.(*Config)
			if !ok {
				return ""
			}
			return fmt.Sprintf("%d branches, up to %d epochs", len(c.Branches), *c.Epochs)
		},
	})
}
