package graphnet

import (
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"
)

func TestConfigFromTOML(t *testing.T) {
	text := `
merge = "product"
head = [64, 32]
slope = 0.1
dtype = "float64"
epochs = 50
batch_size = 8
patience = 5

[loss]
abs = 0.5
huber = 1.0
delta = 0.5

[optimizer]
kind = "sgd"
rate = 0.01
momentum = 0.8
clip_norm = 5.0
schedule = "cosine"

[[branch]]
input = "functional"
layers = [{kind = "e2e", channels = 32}, {kind = "e2n", channels = 64}, {kind = "dropout", rate = 0.5}, {kind = "n2g", size = 128}]

[[branch]]
input = "propagated"
operator = "scaled-laplacian"
propagate = "left"
layers = [{kind = "graph_conv", size = 16, activation = "none"}, {kind = "n2g", size = 128}]

[[branch]]
views = ["functional", "structural"]
layers = [{kind = "edge", size = 8}, {kind = "e2n", channels = 16}, {kind = "n2g", size = 128}]
`
	var c Config
	dec := toml.NewDecoder(strings.NewReader(text))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&c); err != nil {
		t.Fatal(err)
	}
	c.SetDefaults()
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	if *c.Loss.Squared != 1 || *c.Loss.Abs != 0.5 || *c.Optimizer.Beta1 != 0.9 || *c.Patience != 5 {
		t.Errorf("defaults or values wrong: %+v", c)
	}
	if _, err := New(c, 10, 2, 1); err != nil {
		t.Errorf("New: %v", err)
	}
}

func TestConfigValidate(t *testing.T) {
	std := func() BranchConfig { return BranchConfig{Layers: layers(e2e(4), e2n(8), n2g(16))} }
	tests := []struct {
		name string
		edit func(c *Config)
		p    int // > 0: check for this p with New
		want string
	}{
		{"no branch", func(c *Config) { c.Branches = nil }, 0, "at least one [[model.network.branch]]"},
		{"unknown kind", func(c *Config) { c.Branches[0].Layers[1].Kind = "e2x" }, 0, `model.network.branch[0].layers[1] (e2x): kind: want`},
		{"e2n after n2g", func(c *Config) { c.Branches[0].Layers = layers(n2g(8), e2n(4)) }, 0, "model.network.branch[0].layers[1] (e2n): needs an edge input"},
		{"graph_conv after e2e", func(c *Config) { c.Branches[0].Layers = layers(e2e(4), gconv(4)) }, 0, "model.network.branch[0].layers[1] (graph_conv): needs node features"},
		{"n2g after n2g", func(c *Config) { c.Branches[0].Layers = layers(e2n(4), n2g(8), n2g(4)) }, 0, "model.network.branch[0].layers[2] (n2g): needs edge or node features"},
		{"zero channels", func(c *Config) { c.Branches[0].Layers[0].Channels = 0 }, 0, "model.network.branch[0].layers[0] (e2e): channels: want at least 1, found 0"},
		{"size on e2e", func(c *Config) { c.Branches[0].Layers[0].Size = 3 }, 0, "layers[0] (e2e): only the keys channels and activation apply"},
		{"dropout rate", func(c *Config) { c.Branches[0].Layers = layers(LayerConfig{Kind: LayerDropout, Rate: 1}, e2n(2)) }, 0, "layers[0] (dropout): rate: want a rate in [0, 1), found 1"},
		{"bad activation", func(c *Config) { c.Branches[0].Layers[2].Activation = "tanh" }, 0, `layers[2] (n2g): activation: want "leaky_relu" or "none", found "tanh"`},
		{"product of different sizes", func(c *Config) {
			c.Merge = "product"
			c.Branches = append(c.Branches, BranchConfig{Layers: layers(e2n(8), n2g(12))})
		}, 0, `model.network.branch[1].layers[1] (n2g): merge = "product" needs every branch to end in the same number of features; branch[0] ends in 16, this branch in 12`},
		{"product of node and graph", func(c *Config) {
			c.Merge = "product"
			c.Branches = append(c.Branches, BranchConfig{Layers: layers(e2n(2))})
		}, 0, "branch[0] ends in 16, this branch in 2·p"},
		{"unknown input", func(c *Config) { c.Branches[0].Input = "diffusion" }, 0, `model.network.branch[0].input: want "functional", "structural", "propagated" or "product", found "diffusion"`},
		{"unknown operator", func(c *Config) { c.Branches[0].Input = "propagated"; c.Branches[0].Operator = "heat" }, 0, `model.network.branch[0].operator: want "identity", "laplacian", "normalized-laplacian", "renormalized-adjacency" or "scaled-laplacian", found "heat"`},
		{"operator unused", func(c *Config) { c.Branches[0].Operator = "laplacian" }, 0, "model.network.branch[0].operator: \"laplacian\" is set but the branch uses no operator"},
		{"bad propagate", func(c *Config) { c.Branches[0].Input = "propagated"; c.Branches[0].Propagate = "right" }, 0, `model.network.branch[0].propagate: want "left" or "both", found "right"`},
		{"no layers", func(c *Config) { c.Branches[0].Layers = nil }, 0, "model.network.branch[0].layers: want at least one layer"},
		{"merge", func(c *Config) { c.Merge = "sum" }, 0, `model.network.merge: want "concat" or "product", found "sum"`},
		{"head size", func(c *Config) { c.Head = []int{8, 0} }, 0, "model.network.head[1]: want a positive layer size, found 0"},
		{"slope", func(c *Config) { c.Slope = new(-1.0) }, 0, "model.network.slope: want a slope in [0, 1), found -1"},
		{"dtype", func(c *Config) { c.DType = "float16" }, 0, `model.network.dtype: want "float32" or "float64", found "float16"`},
		{"epochs", func(c *Config) { c.Epochs = new(-1) }, 0, "model.network.epochs: want at least 1, found -1"},
		{"patience", func(c *Config) { c.Patience = new(-2) }, 0, "model.network.patience: want 0 or more epochs, found -2"},
		{"loss weights zero", func(c *Config) { c.Loss.Abs = new(0.0); c.Loss.Squared = new(0.0) }, 0, "model.network.loss: the weights abs, squared and huber are all 0"},
		{"huber delta", func(c *Config) { c.Loss.Delta = new(0.0) }, 0, "model.network.loss.delta: want a finite threshold > 0, found 0"},
		{"optimizer kind", func(c *Config) { c.Optimizer.Kind = "adam" }, 0, `model.network.optimizer.kind: want "adamw" or "sgd", found "adam"`},
		{"rate", func(c *Config) { c.Optimizer.Rate = new(-1.0) }, 0, "model.network.optimizer.rate: want a finite learning rate > 0, found -1"},
		{"momentum", func(c *Config) { c.Optimizer.Momentum = new(1.0) }, 0, "model.network.optimizer.momentum: want a value in [0, 1), found 1"},
		{"beta1", func(c *Config) { c.Optimizer.Beta1 = new(1.0) }, 0, "model.network.optimizer.beta1: want a value in [0, 1), found 1"},
		{"beta2", func(c *Config) { c.Optimizer.Beta2 = new(-0.5) }, 0, "model.network.optimizer.beta2: want a value in [0, 1), found -0.5"},
		{"betas zero", func(c *Config) { c.Optimizer.Beta1, c.Optimizer.Beta2 = new(0.0), new(0.0) }, 0, ""},
		{"step epochs", func(c *Config) { c.Optimizer.StepEpochs = new(0) }, 0, "model.network.optimizer.step_epochs: want at least 1, found 0"},
		{"schedule", func(c *Config) { c.Optimizer.Schedule = "linear" }, 0, `model.network.optimizer.schedule: want "constant", "step" or "cosine", found "linear"`},
		{"min rate", func(c *Config) { c.Optimizer.MinRate = 1 }, 0, "model.network.optimizer.min_rate: want a value in [0, rate = 0.001], found 1"},
		{"input and views", func(c *Config) { c.Branches[0].Views = []Input{InputFunctional, InputStructural} }, 0, `model.network.branch[0].input: "functional" is set together with views`},
		{"view twice", func(c *Config) {
			c.Branches[0].Input, c.Branches[0].Views = "", []Input{InputStructural, InputStructural}
		}, 0, `model.network.branch[0].views[1]: "structural" is listed twice`},
		{"unknown view", func(c *Config) { c.Branches[0].Input, c.Branches[0].Views = "", []Input{"diffusion"} }, 0, `model.network.branch[0].views[0]: want "functional", "structural", "propagated" or "product", found "diffusion"`},
		{"negative screen", func(c *Config) { c.Branches[0].Screen = -1 }, 0, `model.network.branch[0].screen: want a number of edges ≥ 0, found -1`},
		{"propagate without a propagated view", func(c *Config) {
			c.Branches[0].Input, c.Branches[0].Views, c.Branches[0].Propagate = "", []Input{InputFunctional, InputStructural}, PropagateLeft
		}, 0, "model.network.branch[0].propagate: is set but no input or view is \"propagated\""},
		{"views with edge layer", func(c *Config) {
			c.Branches[0].Input, c.Branches[0].Views = "", []Input{InputFunctional, InputStructural, InputPropagated}
			c.Branches[0].Layers = layers(edge(4), edge(3), e2e(2), e2n(4), n2g(8))
		}, 7, ""},
		{"graph_conv on two views", func(c *Config) {
			c.Branches[0].Input, c.Branches[0].Views = "", []Input{InputFunctional, InputStructural}
			c.Branches[0].Layers = layers(gconv(4), n2g(8))
		}, 0, "model.network.branch[0].layers[0] (graph_conv): needs node features (an e2n or graph_conv layer, or the one-channel branch input), found the output of an edge layer with 2 channels"},
		{"graph_conv after a one-channel edge layer", func(c *Config) {
			c.Branches[0].Input, c.Branches[0].Views = "", []Input{InputFunctional, InputStructural}
			c.Branches[0].Layers = layers(edge(1), gconv(4), n2g(8))
		}, 6, ""},
		{"edge after e2n", func(c *Config) { c.Branches[0].Layers = layers(e2n(4), edge(2), n2g(8)) }, 0, "model.network.branch[0].layers[1] (edge): needs an edge input"},
		{"edge without size", func(c *Config) { c.Branches[0].Layers = layers(LayerConfig{Kind: LayerEdge}, n2g(8)) }, 0, "model.network.branch[0].layers[0] (edge): size: want at least 1 output channel, found 0"},
		{"edge with channels", func(c *Config) { c.Branches[0].Layers = layers(LayerConfig{Kind: LayerEdge, Channels: 3}, n2g(8)) }, 5, ""},
		{"edge with size and channels", func(c *Config) {
			c.Branches[0].Layers = layers(LayerConfig{Kind: LayerEdge, Size: 3, Channels: 3}, n2g(8))
		}, 0, "(edge): set size or channels (the number of output channels), not both"},
		{"edge with rate", func(c *Config) {
			c.Branches[0].Layers = layers(LayerConfig{Kind: LayerEdge, Size: 3, Rate: 0.1}, n2g(8))
		}, 0, "(edge): only the keys size (or channels) and activation apply"},
		{"valid", func(c *Config) {}, 0, ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := Config{Branches: []BranchConfig{std()}}
			c.SetDefaults()
			tt.edit(&c)
			c.SetDefaults()
			var err error
			if tt.p > 0 {
				_, err = New(c, tt.p, 1, 1)
			} else {
				err = c.Validate()
			}
			if tt.want == "" {
				if err != nil {
					t.Fatalf("unexpected error %v", err)
				}
				return
			}
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("got error %v, want one containing %q", err, tt.want)
			}
		})
	}
}

// TestEdgeScalingViews: every view of a branch asks for the
// standardization of its matrix, as the same input of a branch would.
func TestEdgeScalingViews(t *testing.T) {
	tests := []struct {
		name                   string
		branches               []BranchConfig
		functional, structural bool
	}{
		{"functional and structural views", []BranchConfig{{Views: []Input{InputFunctional, InputStructural}, Layers: layers(edge(2), n2g(2))}}, true, true},
		{"structural view alone", []BranchConfig{{Views: []Input{InputStructural}, Layers: layers(n2g(2))}}, false, true},
		{"structural and propagated views: the operator keeps S raw", []BranchConfig{{Views: []Input{InputStructural, InputPropagated}, Layers: layers(n2g(2))}}, true, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := Config{Branches: tt.branches}
			c.SetDefaults()
			if err := c.Validate(); err != nil {
				t.Fatal(err)
			}
			f, s := c.EdgeScaling()
			if f != tt.functional || s != tt.structural {
				t.Errorf("EdgeScaling() = %v, %v, want %v, %v", f, s, tt.functional, tt.structural)
			}
		})
	}
}

func TestConfigJSONRoundTrip(t *testing.T) {
	c := testConfig("float32", BranchConfig{Input: "propagated", Layers: layers(gconv(4), n2g(8))})
	c.Optimizer.Beta1 = new(0.0) // a 0 that the default must not replace
	net, err := New(c, 5, 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := net.Save(dir); err != nil {
		t.Fatal(err)
	}
	back, err := Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	if got := back.Config(); got.Branches[0].Operator != "renormalized-adjacency" || *got.Slope != 0.2 || got.Optimizer.Kind != "adamw" || *got.Optimizer.Beta1 != 0 {
		t.Errorf("config after Save and Load: %+v", got)
	}
}
