package figure

import (
	"bytes"
	"encoding/xml"
	"image/png"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/recorder"
)

// TestKeyLayout: a key takes as many columns as fit the width, never
// wider than it, and enough rows for every entry.
func TestKeyLayout(t *testing.T) {
	entries := func(n int, label string) Key {
		var k Key
		for i := range n {
			k = append(k, Entry{Label: label + strings.Repeat("x", i%3)})
		}
		return k
	}
	tests := []struct {
		name  string
		k     Key
		width vg.Length
	}{
		{"empty", nil, SingleColumn * vg.Inch},
		{"three in one column", entries(3, "least squares: 50.3 + 0.006·observed"), SingleColumn * vg.Inch},
		{"short labels, wide", entries(13, "r1 f1"), DoubleColumn * vg.Inch},
		{"label wider than the figure", entries(2, strings.Repeat("long label ", 40)), SingleColumn * vg.Inch},
	}
	for _, tt := range tests {
		cols, rows, colWidth, height := tt.k.Layout(tt.width)
		if len(tt.k) == 0 {
			if cols != 0 || rows != 0 || height != 0 {
				t.Errorf("%s: %d × %d, height %v, want nothing", tt.name, cols, rows, height)
			}
			continue
		}
		if cols < 1 || cols*rows < len(tt.k) || (cols > 1 && vg.Length(cols)*colWidth > tt.width) || height <= 0 {
			t.Errorf("%s: %d columns of %v × %d rows (height %v) for %d entries in %v", tt.name, cols, colWidth, rows, height, len(tt.k), tt.width)
		}
	}
}

// TestPanels draws one plot with a key as PNG and SVG: the PNG has the
// size in inches at DPI, the SVG the same size in points (72 to the inch)
// and all its text in FontFamily.
func TestPanels(t *testing.T) {
	p := NewPlot("title", "x", "y")
	l, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}})
	if err != nil {
		t.Fatal(err)
	}
	p.Add(l)
	var k Key
	k.Add("line", l)
	k.Add("line", l) // not repeated
	if len(k) != 1 {
		t.Fatalf("key of %d entries, want 1", len(k))
	}
	img, err := Panels(SingleColumn, 2.5, []*plot.Plot{p}, k)
	if err != nil {
		t.Fatal(err)
	}
	decoded, err := png.Decode(bytes.NewReader(img.PNG))
	if err != nil {
		t.Fatal(err)
	}
	if b := decoded.Bounds(); b.Dx() != int(SingleColumn*DPI) || b.Dy() != int(2.5*DPI) || img.Width != b.Dx() || img.Height != b.Dy() {
		t.Errorf("PNG %d × %d (Image says %d × %d), want %d × %d", b.Dx(), b.Dy(), img.Width, img.Height, int(SingleColumn*DPI), int(2.5*DPI))
	}
	var root struct {
		XMLName xml.Name
		Width   string `xml:"width,attr"`
		Height  string `xml:"height,attr"`
	}
	if err := xml.Unmarshal(img.SVG, &root); err != nil || root.XMLName.Local != "svg" || root.Width != "252pt" || root.Height != "180pt" {
		t.Errorf("SVG root %+v, %v; want svg of 252pt × 180pt", root, err)
	}
	svg := string(img.SVG)
	family := "font-family:" + strings.ReplaceAll(FontFamily, `"`, "'") + ";"
	if n, m := strings.Count(svg, "<text"), strings.Count(svg, family); n < 4 || n != m {
		t.Errorf("SVG: %d texts, %d in %s", n, m, FontFamily)
	}
}

// TestPadRange: the axis holds both ends with the margin; NaN and
// infinite ends are ignored.
func TestPadRange(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	tests := []struct {
		min, max, lo, hi, frac float64
		wantMin, wantMax       float64
	}{
		{0, 1, -0.5, 2, 0.1, -0.75, 2.25},
		{0, 1, 0.2, 0.8, 0, 0, 1},
		{2, 2, 2, 2, 0.5, 1.5, 2.5},
		{0, 1, nan, inf, 0.5, -0.5, 1.5},
	}
	for _, tt := range tests {
		p := NewPlot("", "", "")
		p.X.Min, p.X.Max = tt.min, tt.max
		PadRange(&p.X, tt.lo, tt.hi, tt.frac)
		if p.X.Min != tt.wantMin || p.X.Max != tt.wantMax {
			t.Errorf("PadRange([%g, %g], %g, %g, %g) = [%g, %g], want [%g, %g]", tt.min, tt.max, tt.lo, tt.hi, tt.frac, p.X.Min, p.X.Max, tt.wantMin, tt.wantMax)
		}
	}
}

// TestKeyBelowThePlot: the key's text is drawn in the strip under the
// plot, and the plot's own text (title, axis labels, ticks) above it, so
// that the key never covers data.
func TestKeyBelowThePlot(t *testing.T) {
	p := NewPlot("title", "x label", "y label")
	l, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}})
	if err != nil {
		t.Fatal(err)
	}
	p.Add(l)
	var k Key
	for _, label := range []string{"first entry", "second entry", "third entry"} {
		k.Add(label, l)
	}
	rec := new(recorder.Canvas)
	w, h := SingleColumn*vg.Inch, 3*vg.Inch
	dc := draw.Canvas{Canvas: rec, Rectangle: vg.Rectangle{Max: vg.Point{X: w, Y: h}}}
	DrawPanels(dc, []*plot.Plot{p}, k)
	_, _, _, strip := k.Layout(w - 2*vg.Points(4))
	keyTexts := 0
	for _, a := range rec.Actions {
		fs, ok := a.(*recorder.FillString)
		if !ok || fs.String == "y label" { // drawn rotated: its point is in rotated coordinates
			continue
		}
		inKey := strings.HasSuffix(fs.String, " entry")
		if inKey {
			keyTexts++
		}
		if inKey != (fs.Point.Y < strip) {
			t.Errorf("text %q at y = %v; the key's strip ends at %v", fs.String, fs.Point.Y, strip)
		}
	}
	if keyTexts != 3 {
		t.Errorf("%d key entries drawn, want 3", keyTexts)
	}
}
