package train

import (
	"github.com/skein-neuro/skein/model"
)

// buildModel makes the untrained model of a unit.
func buildModel(cfg ModelConfig, p, targets int, seed int64) (model.Regressor, error) {
	return cfg.Config.New(targets, seed)
}
