package data

// Source says where a cohort's files are and how to read them: the
// [cohort] table of an experiment file. (Placeholder; the loader fills it.)
type Source struct {
	// Participants is the path of the participants table.
	Participants string `toml:"participants"`
}

// SetDefaults fills every unset field with its documented default.
func (s *Source) SetDefaults() {}

// Validate reports the first setting that cannot work, naming its key.
func (s Source) Validate() error { return nil }
