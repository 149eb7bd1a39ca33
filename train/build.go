package train

import (
	"fmt"

	"github.com/skein-neuro/skein/model"
)

// buildModel makes the untrained model of a unit with its kind's New. A
// kind that learns class labels only (New nil) is an error naming it.
func buildModel(cfg ModelConfig, p, targets int, seed int64) (model.Regressor, error) {
	k, err := cfg.Spec()
	if err != nil {
		return nil, err
	}
	if k.New == nil {
		return nil, fmt.Errorf("model %q: kind %s learns class labels, not scores", cfg.Name, k.Name)
	}
	return k.New(cfg.Settings(), p, targets, seed)
}
