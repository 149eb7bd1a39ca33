package report

import (
	"fmt"

	"gonum.org/v1/plot"

	"github.com/skein-neuro/skein/internal/figure"
)

// DPI is the resolution of the PNG figures: a figure of w × h inches is
// w·DPI × h·DPI pixels. Every figure is one or two journal columns wide
// (3.5 or 7 in) and drawn in Liberation Sans at 8–9 pt, the first font of
// the page's CSS.
const DPI = figure.DPI

// drawFigure renders plots side by side with their key below as a Figure
// of w × h inches.
func drawFigure(file, section, title, caption string, w, h float64, row []*plot.Plot, k figure.Key) (Figure, error) {
	img, err := figure.Panels(w, h, row, k)
	if err != nil {
		return Figure{}, fmt.Errorf("figure %s: %w", file, err)
	}
	return fromImage(img, file, section, title, caption), nil
}

// fromImage makes img a Figure.
func fromImage(img figure.Image, file, section, title, caption string) Figure {
	return Figure{File: file, Section: section, Title: title, Caption: caption, Width: img.Width, Height: img.Height, PNG: img.PNG, SVG: img.SVG}
}
