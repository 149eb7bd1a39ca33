package graphnet

// Config is a network's architecture and training settings: the
// [model.network] table of an experiment file.
// (Placeholder; the network work fills it.)
type Config struct{}

// SetDefaults fills every unset field with its documented default.
func (c *Config) SetDefaults() {}

// Validate reports the first setting that cannot work, naming its key.
func (c Config) Validate() error { return nil }
