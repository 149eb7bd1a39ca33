package data

import (
	"bytes"
	"fmt"
	"strings"
	"testing"

	"codeberg.org/sbinet/npyio"
	"gonum.org/v1/gonum/mat"
)

// benchP is a parcellation size common in the trade (a few hundred
// regions); common practice, no source.
const benchP = 400

func benchMatrix() *mat.Dense {
	m := mat.NewDense(benchP, benchP, nil)
	for i := range benchP {
		for j := range benchP {
			m.Set(i, j, float64((i*7+j*13)%200)/200-0.5)
		}
	}
	return m
}

func BenchmarkParseMatrixText(b *testing.B) {
	m := benchMatrix()
	var buf strings.Builder
	for i := range benchP {
		for j := range benchP {
			if j > 0 {
				buf.WriteByte('\t')
			}
			fmt.Fprintf(&buf, "%.6f", m.At(i, j))
		}
		buf.WriteByte('\n')
	}
	raw := []byte(buf.String())
	b.SetBytes(int64(len(raw)))
	for b.Loop() {
		if _, err := parseMatrixText("bench.tsv", raw); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkDecodeNPY(b *testing.B) {
	var buf bytes.Buffer
	if err := npyio.Write(&buf, benchMatrix()); err != nil {
		b.Fatal(err)
	}
	raw := buf.Bytes()
	b.SetBytes(int64(len(raw)))
	for b.Loop() {
		if _, err := decodeNPY("bench.npy", raw); err != nil {
			b.Fatal(err)
		}
	}
}
