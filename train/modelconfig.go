package train

import (
	"fmt"
	"reflect"
	"strings"

	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/model/graphnet"
	"github.com/skein-neuro/skein/model/linear"
)

// ModelConfig names one model of an experiment and chooses its kind: the
// name plus exactly one kind table, for example [model.ridge] or
// [model.network].
//
// Each kind table is a pointer field, here or in an embedded struct such
// as linear.Config, whose toml key is the name of a kind registered with
// model.Register and whose type is that kind's model.Settings. Adding a
// kind takes one such field; everything else about the kind is looked up
// in the registry by that key (Spec).
type ModelConfig struct {
	Name    string           `toml:"name"`
	Network *graphnet.Config `toml:"network,omitempty"`
	linear.Config
}

// kindTable is one kind table of a ModelConfig: its key and, when it is
// set, its settings.
type kindTable struct {
	key      string
	settings reflect.Value // a pointer, nil when the table is not set
}

// tables returns the kind tables of m in field order, set or not.
func (m ModelConfig) tables() []kindTable {
	var out []kindTable
	var walk func(v reflect.Value)
	walk = func(v reflect.Value) {
		for i := range v.NumField() {
			f := v.Type().Field(i)
			switch {
			case f.Anonymous && f.Type.Kind() == reflect.Struct:
				walk(v.Field(i))
			case f.Type.Kind() == reflect.Pointer:
				key, _, _ := strings.Cut(f.Tag.Get("toml"), ",")
				out = append(out, kindTable{key: key, settings: v.Field(i)})
			}
		}
	}
	walk(reflect.ValueOf(m))
	return out
}

// set returns the keys and the settings of the kind tables that are set,
// in field order.
func (m ModelConfig) set() (keys []string, settings []reflect.Value) {
	for _, t := range m.tables() {
		if !t.settings.IsNil() {
			keys = append(keys, t.key)
			settings = append(settings, t.settings)
		}
	}
	return keys, settings
}

// Kind returns the key of the model's kind table, such as "network" or
// "ridge": the name of its registered kind. It returns "" when no table
// is set and the first when more than one is; Validate reports both.
func (m ModelConfig) Kind() string {
	keys, _ := m.set()
	if len(keys) == 0 {
		return ""
	}
	return keys[0]
}

// Settings returns the model's kind table, the value that the kind's New
// receives; nil when no table is set.
func (m ModelConfig) Settings() model.Settings {
	_, settings := m.set()
	if len(settings) == 0 {
		return nil
	}
	s, _ := settings[0].Interface().(model.Settings)
	return s
}

// ImportanceViews names the input views of the model's edge importance
// maps (model.Kind.ImportanceViews): EdgeImportance gives one map per view
// and target, view after view. nil means one map per target, as for a
// model whose kind is unknown.
func (m ModelConfig) ImportanceViews() []string {
	k, err := m.Spec()
	if err != nil {
		return nil
	}
	return k.Views(m.Settings())
}

// Spec returns the registered kind of the model's table. It is an error
// to set no kind table or more than one, or a table whose key no kind is
// registered under (model.ErrUnknownKind).
func (m ModelConfig) Spec() (model.Kind, error) {
	keys, settings := m.set()
	switch len(keys) {
	case 0:
		var all []string
		for _, t := range m.tables() {
			all = append(all, "[model."+t.key+"]")
		}
		return model.Kind{}, fmt.Errorf("no kind table is set; add one of %s or %s",
			strings.Join(all[:len(all)-1], ", "), all[len(all)-1])
	case 1:
	case 2:
		return model.Kind{}, fmt.Errorf("tables model.%s and model.%s are both set; choose one", keys[0], keys[1])
	default:
		return model.Kind{}, fmt.Errorf("tables model.%s are all set; choose one", strings.Join(keys, " and model."))
	}
	k, err := model.Lookup(keys[0])
	if err != nil {
		return model.Kind{}, fmt.Errorf("table model.%s: %w", keys[0], err)
	}
	if _, ok := settings[0].Interface().(model.Settings); !ok {
		return model.Kind{}, fmt.Errorf("table model.%s: %s is not a model.Settings", keys[0], settings[0].Type())
	}
	return k, nil
}

// Inputs reports which connectomes the model learns from (model.Kind.Inputs);
// false and false for a kind that reads none and for a model whose kind
// table is missing or unknown. A model that learns from both fuses
// structure with function.
func (m ModelConfig) Inputs() (functional, structural bool) {
	k, err := m.Spec()
	if err != nil || k.Inputs == nil {
		return false, false
	}
	return k.Inputs(m.Settings())
}

// SetDefaults fills every unset field of the chosen kind with its default.
func (m *ModelConfig) SetDefaults() {
	_, settings := m.set()
	for _, s := range settings {
		if s, ok := s.Interface().(model.Settings); ok {
			s.SetDefaults()
		}
	}
}

// Validate reports the first setting that cannot work, naming its key:
// no kind table or more than one, an unregistered kind, or a setting its
// kind's Validate refuses.
func (m ModelConfig) Validate() error {
	if _, err := m.Spec(); err != nil {
		return err
	}
	return m.Settings().Validate()
}
