package eval

import (
	"bytes"
	"math"
	"strings"
	"testing"
)

func TestNullScoresRoundTrip(t *testing.T) {
	in := []NullScores{{Model: "m,1", Target: "t", Permutation: 3, Scores: Scores{N: 5, Missing: 1, Bins: 10}}}
	for _, m := range Metrics() {
		in[0].Set(m, 0.1+1/3.0)
	}
	in[0].NMI = math.NaN()
	var raw bytes.Buffer
	if err := WriteNullScores(&raw, in); err != nil {
		t.Fatal(err)
	}
	text := raw.String()
	out, err := ReadNullScores(&raw, "x.csv")
	if err != nil || len(out) != 1 || out[0].Pearson != in[0].Pearson || !math.IsNaN(out[0].NMI) || out[0].Model != "m,1" || out[0].N != 5 {
		t.Fatalf("round trip: %v, %+v", err, out)
	}
	bad := strings.Replace(text, ",3,5,", ",three,5,", 1)
	if _, err := ReadNullScores(strings.NewReader(bad), "x.csv"); err == nil || !strings.Contains(err.Error(), "x.csv:2: column 3 (permutation)") {
		t.Errorf("bad permutation cell: %v", err)
	}
}
