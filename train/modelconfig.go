package train

import (
	"fmt"

	"github.com/skein-neuro/skein/model/graphnet"
	"github.com/skein-neuro/skein/model/linear"
)

// ModelConfig names one model of an experiment and chooses its kind: the
// name plus exactly one kind table, for example [model.ridge] or
// [model.network].
type ModelConfig struct {
	Name    string           `toml:"name"`
	Network *graphnet.Config `toml:"network,omitempty"`
	linear.Config
}

// Kind returns the key of the model's kind table: "network", or a
// baseline's ("mean", "ridge", "kernel_ridge", "cpm").
func (m ModelConfig) Kind() string {
	if m.Network != nil {
		return "network"
	}
	return m.Config.Kind()
}

// SetDefaults fills every unset field of the chosen kind with its default.
func (m *ModelConfig) SetDefaults() {
	if m.Network != nil {
		m.Network.SetDefaults()
	}
	m.Config.SetDefaults()
}

// Validate reports the first setting that cannot work, naming its key.
func (m ModelConfig) Validate() error {
	if m.Network == nil {
		return m.Config.Validate()
	}
	if k := m.Config.Kind(); k != "" {
		return fmt.Errorf("tables model.network and model.%s are both set; choose one", k)
	}
	return m.Network.Validate()
}
