package linear

// Config chooses one baseline and its settings: the sub-tables of a
// [[model]] entry of an experiment file. Exactly one field is set.
// (Placeholder; the baselines work fills it.)
type Config struct {
	Mean *MeanConfig `toml:"mean"`
}

// MeanConfig configures the mean predictor, which has no settings.
type MeanConfig struct{}
