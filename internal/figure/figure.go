// Package figure draws skein's figures in one style with
// gonum.org/v1/plot: sized for a journal column, in one sans-serif font
// that the report page shares, with keys under the data, as PNG and SVG.
package figure

import (
	"bytes"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// DPI is the resolution of the PNG images: a figure of w × h inches is
// w·DPI × h·DPI pixels. The SVG beside each PNG has the same size in
// inches.
const DPI = 150

// Figure widths in inches, as journals set them: one column, and the
// full width of a two-column page.
const (
	SingleColumn = 3.5
	DoubleColumn = 7.0
)

// Font sizes in points: titles and axis labels, then tick labels and
// keys. Journals ask for 7–9 pt at the printed size (common practice, no
// source).
const (
	FontSize      = 9
	SmallFontSize = 8
)

// FontFamily is the CSS font list of the report page and of the SVG
// figures: Liberation Sans, the sans-serif font every figure is drawn
// with (gonum.org/v1/plot ships it), then Arial, whose metrics it shares,
// and the generic sans-serif.
const FontFamily = `"Liberation Sans", Arial, Helvetica, sans-serif`

// Font returns the figures' typeface, Liberation Sans, at size points.
func Font(size float64) font.Font {
	return font.Font{Typeface: "Liberation", Variant: "Sans", Size: vg.Points(size)}
}

var colorGrid = color.RGBA{R: 0xdd, G: 0xdd, B: 0xdd, A: 0xff}

// NewPlot returns a plot with light grid lines and the figures' fonts
// (Style).
func NewPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	Style(p)
	g := plotter.NewGrid()
	g.Vertical.Color = colorGrid
	g.Horizontal.Color = colorGrid
	p.Add(g)
	return p
}

// Style sets every text of p in the figures' typeface: the title and
// axis labels at FontSize, tick labels at SmallFontSize.
func Style(p *plot.Plot) {
	p.Title.TextStyle.Font = Font(FontSize)
	p.Title.Padding = vg.Points(4)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font = Font(FontSize)
		a.Tick.Label.Font = Font(SmallFontSize)
	}
}

// An Entry is one entry of a key: a label and the thumbnails that draw
// its style.
type Entry struct {
	Label  string
	Thumbs []plot.Thumbnailer
}

// A Key explains the lines and marks of a figure. Panels draws it below
// the plots, never over the data, in as many columns as fit the figure's
// width.
type Key []Entry

// Add adds an entry; a label already in the key is not repeated.
func (k *Key) Add(label string, thumbs ...plot.Thumbnailer) {
	for _, e := range *k {
		if e.Label == label {
			return
		}
	}
	*k = append(*k, Entry{label, thumbs})
}

// thumbWidth is the width of a key's thumbnails.
const thumbWidth = vg.Length(16)

// legend returns a gonum legend in the key's style holding entries.
func legend(entries []Entry) plot.Legend {
	l := plot.NewLegend()
	l.TextStyle.Font = Font(SmallFontSize)
	l.Top, l.Left = true, true
	l.ThumbnailWidth = thumbWidth
	l.Padding = vg.Points(2)
	for _, e := range entries {
		l.Add(e.Label, e.Thumbs...)
	}
	return l
}

// Layout returns the number of columns and rows of the key in a width of
// w, the width of a column, and the height the key takes; all zero for an
// empty key.
func (k Key) Layout(w vg.Length) (cols, rows int, colWidth, height vg.Length) {
	if len(k) == 0 {
		return 0, 0, 0, 0
	}
	l := legend(nil)
	gap := vg.Points(12)
	for _, e := range k {
		colWidth = max(colWidth, thumbWidth+l.TextStyle.Width(" "+e.Label)+gap)
	}
	cols = max(1, min(len(k), int(float64(w)/float64(colWidth))))
	rows = (len(k) + cols - 1) / cols
	entry := l.TextStyle.Rectangle("Mg").Max.Y
	height = vg.Length(rows)*(entry+l.Padding) + vg.Points(6)
	return cols, rows, colWidth, height
}

// Draw draws the key in c, column by column from the top left.
func (k Key) Draw(c draw.Canvas) {
	cols, rows, colWidth, _ := k.Layout(c.Max.X - c.Min.X)
	for col := range cols {
		lo := col * rows
		if lo >= len(k) {
			break
		}
		l := legend(k[lo:min(lo+rows, len(k))])
		x := c.Min.X + vg.Length(col)*colWidth
		l.Draw(draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{
			Min: vg.Point{X: x, Y: c.Min.Y}, Max: vg.Point{X: x + colWidth, Y: c.Max.Y - vg.Points(2)}}})
	}
}

// DrawPanels draws plots side by side, aligned, with the key under them.
func DrawPanels(dc draw.Canvas, row []*plot.Plot, k Key) {
	pad := vg.Points(4)
	_, _, _, kh := k.Layout(dc.Max.X - dc.Min.X - 2*pad)
	area := draw.Crop(dc, 0, 0, kh, 0)
	if len(row) == 1 {
		row[0].Draw(draw.Crop(area, pad, -pad, pad, -pad))
	} else {
		tiles := draw.Tiles{Rows: 1, Cols: len(row), PadX: vg.Millimeter * 5, PadTop: pad, PadBottom: pad, PadLeft: pad, PadRight: 2 * pad}
		canvases := plot.Align([][]*plot.Plot{row}, tiles, area)
		for j, p := range row {
			p.Draw(canvases[0][j])
		}
	}
	if kh > 0 {
		k.Draw(draw.Crop(dc, 2*pad, -pad, 0, -(dc.Max.Y - dc.Min.Y - kh)))
	}
}

// An Image is a figure drawn as PNG and as SVG.
type Image struct {
	PNG, SVG      []byte
	Width, Height int // of the PNG, in pixels
}

// Render draws on a w × h inch white canvas twice, as PNG at DPI and as
// SVG whose text falls back from Liberation Sans to the rest of
// FontFamily.
func Render(w, h float64, drawFn func(dc draw.Canvas)) (Image, error) {
	width, height := vg.Length(w)*vg.Inch, vg.Length(h)*vg.Inch
	c := vgimg.NewWith(vgimg.UseWH(width, height), vgimg.UseDPI(DPI), vgimg.UseBackgroundColor(color.White))
	drawFn(draw.New(c))
	var img Image
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: c}).WriteTo(&buf); err != nil {
		return img, err
	}
	b := c.Image().Bounds()
	img.PNG, img.Width, img.Height = buf.Bytes(), b.Dx(), b.Dy()

	s := vgsvg.New(width, height)
	dc := draw.New(s)
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	drawFn(dc)
	var sb bytes.Buffer
	if _, err := s.WriteTo(&sb); err != nil {
		return img, err
	}
	family := strings.ReplaceAll(FontFamily, `"`, "'")
	img.SVG = bytes.ReplaceAll(sb.Bytes(), []byte("font-family:Liberation Sans;"), []byte("font-family:"+family+";"))
	return img, nil
}

// Panels renders plots side by side with their key below (DrawPanels) as
// an Image of w × h inches.
func Panels(w, h float64, row []*plot.Plot, k Key) (Image, error) {
	return Render(w, h, func(dc draw.Canvas) { DrawPanels(dc, row, k) })
}

// PadRange widens the range of a to hold lo and hi (the ends of intervals
// or whiskers; NaN and infinite ends are ignored) with a margin of frac of
// the range on each side, so that nothing drawn is cut by the frame. An
// empty range gets the margin of a range one unit wide.
func PadRange(a *plot.Axis, lo, hi, frac float64) {
	if !math.IsInf(lo, 0) && !math.IsNaN(lo) {
		a.Min = math.Min(a.Min, lo)
	}
	if !math.IsInf(hi, 0) && !math.IsNaN(hi) {
		a.Max = math.Max(a.Max, hi)
	}
	span := a.Max - a.Min
	if span <= 0 || math.IsInf(span, 0) || math.IsNaN(span) {
		span = 1
	}
	a.Min -= frac * span
	a.Max += frac * span
}
