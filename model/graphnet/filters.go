package graphnet

import (
	"fmt"
	"strings"
)

// Filters are the first-layer filters of one branch of a network: Weights[c]
// is the length-p filter of output channel c over the regions, averaged over
// the layer's input channels. Array names the weight array they come from
// (an edge-to-edge layer's row filter, an edge-to-node layer's weight).
type Filters struct {
	Branch  int
	Array   string
	Weights [][]float64 // channels × p
}

// FirstLayerFilters returns the first-layer filters of every branch whose
// first layer holds one weight per region (shape O × C × p); other
// branches are left out.
func (n *Network) FirstLayerFilters() []Filters {
	var out []Filters
	for _, prm := range n.params {
		var b int
		if _, err := fmt.Sscanf(prm.name, "branch%d.layer0.", &b); err != nil {
			continue
		}
		if !strings.HasSuffix(prm.name, ".row") && !strings.HasSuffix(prm.name, ".weight") {
			continue
		}
		if len(prm.shape) != 3 || prm.shape[2] != n.p {
			continue
		}
		o, c, p := prm.shape[0], prm.shape[1], prm.shape[2]
		w := make([]float64, o*c*p)
		switch d := prm.value.Data().(type) {
		case []float32:
			for i, v := range d {
				w[i] = float64(v)
			}
		case []float64:
			copy(w, d)
		}
		f := Filters{Branch: b, Array: prm.name, Weights: make([][]float64, o)}
		for ch := range o {
			row := make([]float64, p)
			for in := range c {
				for r := range p {
					row[r] += w[(ch*c+in)*p+r] / float64(c)
				}
			}
			f.Weights[ch] = row
		}
		out = append(out, f)
	}
	return out
}
