package report

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// DPI is the resolution of the PNG figures: a figure of w × h inches is
// w·DPI × h·DPI pixels. The SVG beside each PNG has the same size in
// inches.
const DPI = 150

// Figure widths in inches, as journals set them: one column, and the
// full width of a two-column page.
const (
	SingleColumn = 3.5
	DoubleColumn = 7.0
)

// Font sizes of the figures in points: titles and axis labels, then tick
// labels and keys. Journals ask for 7–9 pt at the printed size (common
// practice, no source).
const (
	fontSize      = 9
	smallFontSize = 8
)

// FontFamily is the CSS font list of the report page and of the SVG
// figures: Liberation Sans, the sans-serif font every figure is drawn
// with (gonum.org/v1/plot ships it), then Arial, whose metrics it shares,
// and the generic sans-serif.
const FontFamily = `"Liberation Sans", Arial, Helvetica, sans-serif`

// sans is the figures' typeface.
var sans = font.Font{Typeface: "Liberation", Variant: "Sans"}

// sansAt returns the figures' typeface at size points.
func sansAt(size float64) font.Font {
	f := sans
	f.Size = vg.Points(size)
	return f
}

// newPlot returns a plot with a grid and the figures' fonts.
func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	paperFonts(p)
	p.Add(newGrid())
	return p
}

// paperFonts sets every text of p in the figures' typeface: the title
// and axis labels at fontSize, tick labels at smallFontSize.
func paperFonts(p *plot.Plot) {
	p.Title.TextStyle.Font = sansAt(fontSize)
	p.Title.Padding = vg.Points(4)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font = sansAt(fontSize)
		a.Tick.Label.Font = sansAt(smallFontSize)
	}
}

// A keyEntry is one entry of a figure's key: a label and the thumbnails
// that draw its style.
type keyEntry struct {
	label  string
	thumbs []plot.Thumbnailer
}

// A key explains the lines and marks of a figure. It is drawn below the
// plots, never over the data, in as many columns as fit the figure's
// width.
type key []keyEntry

// add adds an entry; a label already in the key is not repeated.
func (k *key) add(label string, thumbs ...plot.Thumbnailer) {
	for _, e := range *k {
		if e.label == label {
			return
		}
	}
	*k = append(*k, keyEntry{label, thumbs})
}

// keyThumb is the width of a key's thumbnails.
const keyThumb = vg.Length(16)

// legend returns a gonum legend in the key's style holding entries.
func (k key) legend(entries []keyEntry) plot.Legend {
	l := plot.NewLegend()
	l.TextStyle.Font = sansAt(smallFontSize)
	l.Top, l.Left = true, true
	l.ThumbnailWidth = keyThumb
	l.Padding = vg.Points(2)
	for _, e := range entries {
		l.Add(e.label, e.thumbs...)
	}
	return l
}

// layout returns the number of columns and rows of the key in a width of
// w, the width of a column, and the height the key takes.
func (k key) layout(w vg.Length) (cols, rows int, colWidth, height vg.Length) {
	if len(k) == 0 {
		return 0, 0, 0, 0
	}
	l := k.legend(nil)
	gap := vg.Points(12)
	for _, e := range k {
		colWidth = max(colWidth, keyThumb+l.TextStyle.Width(" "+e.label)+gap)
	}
	cols = max(1, min(len(k), int(float64(w)/float64(colWidth))))
	rows = (len(k) + cols - 1) / cols
	entry := l.TextStyle.Rectangle("Mg").Max.Y
	height = vg.Length(rows)*(entry+l.Padding) + vg.Points(6)
	return cols, rows, colWidth, height
}

// draw draws the key in c, column by column from the top left.
func (k key) draw(c draw.Canvas) {
	w := c.Max.X - c.Min.X
	cols, rows, colWidth, _ := k.layout(w)
	for col := range cols {
		lo := col * rows
		if lo >= len(k) {
			break
		}
		l := k.legend(k[lo:min(lo+rows, len(k))])
		x := c.Min.X + vg.Length(col)*colWidth
		l.Draw(draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{Min: vg.Point{X: x, Y: c.Min.Y}, Max: vg.Point{X: x + colWidth, Y: c.Max.Y - vg.Points(2)}}})
	}
}

// drawPanels draws plots side by side, aligned, with the key under them.
func drawPanels(dc draw.Canvas, row []*plot.Plot, k key) {
	pad := vg.Points(4)
	_, _, _, kh := k.layout(dc.Max.X - dc.Min.X - 2*pad)
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
		k.draw(draw.Crop(dc, 2*pad, -pad, 0, -(dc.Max.Y - dc.Min.Y - kh)))
	}
}

// rendered is a figure drawn as PNG and SVG.
type rendered struct {
	png, svg      []byte
	width, height int // of the PNG, in pixels
}

// render draws on a w × h inch white canvas twice, as PNG at DPI and as
// SVG whose text names FontFamily.
func render(w, h float64, draw func(dc draw.Canvas)) (rendered, error) {
	width, height := vg.Length(w)*vg.Inch, vg.Length(h)*vg.Inch
	c := vgimg.NewWith(vgimg.UseWH(width, height), vgimg.UseDPI(DPI), vgimg.UseBackgroundColor(color.White))
	draw(drawCanvas(c))
	var out rendered
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: c}).WriteTo(&buf); err != nil {
		return out, err
	}
	b := c.Image().Bounds()
	out.png, out.width, out.height = buf.Bytes(), b.Dx(), b.Dy()

	s := vgsvg.New(width, height)
	bg := drawCanvas(s)
	bg.SetColor(color.White)
	bg.Fill(bg.Rectangle.Path())
	draw(bg)
	var sb bytes.Buffer
	if _, err := s.WriteTo(&sb); err != nil {
		return out, err
	}
	out.svg = svgFonts(sb.Bytes())
	return out, nil
}

func drawCanvas(c vg.CanvasSizer) draw.Canvas { return draw.New(c) }

// svgFonts makes the SVG's text fall back from Liberation Sans to the
// other fonts of FontFamily on machines without it.
func svgFonts(svg []byte) []byte {
	family := strings.ReplaceAll(FontFamily, `"`, "'")
	return bytes.ReplaceAll(svg, []byte("font-family:Liberation Sans;"), []byte("font-family:"+family+";"))
}

// figure renders plots side by side with their key below as a Figure of
// w × h inches.
func figure(file, section, title, caption string, w, h float64, row []*plot.Plot, k key) (Figure, error) {
	img, err := render(w, h, func(dc draw.Canvas) { drawPanels(dc, row, k) })
	if err != nil {
		return Figure{}, fmt.Errorf("figure %s: %w", file, err)
	}
	return img.figure(file, section, title, caption), nil
}

// figure makes img a Figure.
func (img rendered) figure(file, section, title, caption string) Figure {
	return Figure{File: file, Section: section, Title: title, Caption: caption, Width: img.width, Height: img.height, PNG: img.png, SVG: img.svg}
}

// padRange widens the range of a to hold lo and hi (the ends of
// intervals or whiskers) with a margin of frac of the range on each side,
// so that nothing drawn is cut by the frame.
func padRange(a *plot.Axis, lo, hi, frac float64) {
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
