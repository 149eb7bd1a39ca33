package graphnet

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestSaveLoadPredict(t *testing.T) {
	const p = 6
	ps, y := plantedCohort(20, p, 0.5, 4)
	for _, dtype := range []DType{Float32, Float64} {
		cfg := testConfig(dtype,
			BranchConfig{Layers: layers(e2e(2), e2n(3), n2g(4))},
			BranchConfig{Input: "propagated", Operator: "normalized-laplacian", Layers: layers(gconv(3), n2g(4))},
			BranchConfig{Views: []Input{InputFunctional, InputStructural}, Layers: layers(edge(3), e2n(2), n2g(4))})
		cfg.Head = []int{3}
		net, err := New(cfg, p, 1, 5)
		if err != nil {
			t.Fatal(err)
		}
		if err := net.Fit(context.Background(), dataset(ps, y, 0, 14), dataset(ps, y, 14, 20)); err != nil {
			t.Fatal(err)
		}
		net.Fitted = json.RawMessage(`{"score_mean":[1.5]}`)
		dir := t.TempDir()
		if err := net.Save(dir); err != nil {
			t.Fatal(err)
		}
		back, err := Load(dir)
		if err != nil {
			t.Fatal(err)
		}
		want, _ := net.Predict(ps)
		got, err := back.Predict(ps)
		if err != nil {
			t.Fatal(err)
		}
		if !mat.Equal(got, want) {
			t.Errorf("%s: predictions differ after Save and Load", dtype)
		}
		var compact bytes.Buffer
		if err := json.Compact(&compact, back.Fitted); err != nil || compact.String() != `{"score_mean":[1.5]}` {
			t.Errorf("%s: Fitted = %s", dtype, back.Fitted)
		}
		hw, hg := net.History(), back.History()
		if len(hw) != len(hg) || hg[0].TrainLoss != hw[0].TrainLoss || hg[0].ValidLoss != hw[0].ValidLoss {
			t.Errorf("%s: history differs after Save and Load", dtype)
		}
	}
}

func TestLoadErrors(t *testing.T) {
	cfg := testConfig("float64", BranchConfig{Layers: layers(e2n(2), n2g(3))})
	net, _ := New(cfg, 4, 1, 1)
	saved := t.TempDir()
	if err := net.Save(saved); err != nil {
		t.Fatal(err)
	}
	manifest, _ := os.ReadFile(filepath.Join(saved, manifestFile))
	weights, _ := os.ReadFile(filepath.Join(saved, weightsFile))
	tests := []struct {
		name              string
		manifest, weights []byte
		want              string
	}{
		{"not json", []byte("{format"), weights, "manifest.json: not a JSON manifest"},
		{"other format", []byte(`{"format":"other","version":1}`), weights, `format "other", want "skein-graphnet"`},
		{"unknown version", []byte(strings.Replace(string(manifest), `"version": 1`, `"version": 7`, 1)), weights, "format version 7, this skein reads version 1"},
		{"unknown key", []byte(strings.Replace(string(manifest), `"version": 1`, `"version": 1, "extra": 2`, 1)), weights, `manifest.json: json: unknown field "extra"`},
		{"bad config", []byte(strings.Replace(string(manifest), `"kind": "e2n"`, `"kind": "e2x"`, 1)), weights, `manifest.json: want "e2e", "e2n", "edge", "graph_conv", "n2g" or "dropout", found "e2x"`},
		{"corrupt weights", manifest, weights[:len(weights)/2], "weights.npz: not a NumPy .npz archive"},
		{"missing weights", manifest, nil, "weights.npz"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dir := t.TempDir()
			os.WriteFile(filepath.Join(dir, manifestFile), tt.manifest, 0o644)
			if tt.weights != nil {
				os.WriteFile(filepath.Join(dir, weightsFile), tt.weights, 0o644)
			}
			_, err := Load(dir)
			if err == nil || !strings.Contains(err.Error(), tt.want) {
				t.Fatalf("got error %v, want one containing %q", err, tt.want)
			}
		})
	}
}
