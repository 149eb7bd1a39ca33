package train

import (
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet"
)

// buildModel makes the untrained model of a unit.
func buildModel(cfg ModelConfig, p, targets int, seed int64) (model.Regressor, error) {
	if cfg.Network != nil {
		return graphnet.New(*cfg.Network, p, targets, seed)
	}
	return cfg.Config.New(targets, seed)
}
