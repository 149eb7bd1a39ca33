package train

import (
	"github.com/skein-neuro/skein/model"
)

// buildModel makes the untrained model of a unit with its kind's New.
func buildModel(cfg ModelConfig, p, targets int, seed int64) (model.Regressor, error) {
	k, err := cfg.Spec()
	if err != nil {
		return nil, err
	}
	return k.New(cfg.Settings(), p, targets, seed)
}
