package report

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"
)

// The one render path of every plot rigwire draws: the soak report's
// figures (renderFigure) and monitor predict's --plot files
// (writeStack) are drawn by paint on a canvas of plotWidth, in the
// palette of palette.go, with the axes of axes.go.

// plotFormat is the format a plot file's extension names: "svg", "png"
// or "pdf"; false for any other.
func plotFormat(name string) (string, bool) {
	switch ext := strings.ToLower(filepath.Ext(name)); ext {
	case ".svg", ".png", ".pdf":
		return ext[1:], true
	}
	return "", false
}

// canvasFor is a canvas of w×h that encodes as format ("svg", "pdf";
// anything else is PNG).
func canvasFor(format string, w, h vg.Length) vg.CanvasWriterTo {
	switch format {
	case "svg":
		return vgsvg.New(w, h)
	case "pdf":
		return vgpdf.New(w, h)
	}
	return vgimg.PngCanvas{Canvas: vgimg.New(w, h)}
}

// paint draws on a canvas of format and size w×h and returns the encoded
// file. A panic inside the plotting library is turned into an error so
// that one odd plot never costs a whole report or command.
func paint(format string, w, h vg.Length, drawOn func(draw.Canvas)) (b []byte, err error) {
	defer recoverDrawing(&err)
	c := canvasFor(format, w, h)
	drawOn(draw.New(c))
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("encoding %s: %w", strings.ToUpper(format), err)
	}
	return buf.Bytes(), nil
}

// recoverDrawing turns a panic of the plotting library into *err.
func recoverDrawing(err *error) {
	if r := recover(); r != nil {
		*err = fmt.Errorf("drawing failed: %v", r)
	}
}

// render draws a report figure's plot as PNG: the plot above, its legend
// in a strip below.
func render(p *plot.Plot) ([]byte, error) { return renderFigure("png", p) }

func renderFigure(format string, p *plot.Plot) (b []byte, err error) {
	defer recoverDrawing(&err)
	b, err = paint(format, plotWidth, plotHeight+legendHeight(p), func(dc draw.Canvas) { drawFigure(p, dc) })
	if err != nil {
		return nil, err
	}
	return b, nil
}

// writeStack draws plots one above the other, each panelHeight high,
// their data areas aligned so that the panels share their x positions,
// and writes them to file in the format its extension names (.svg, .png
// or .pdf; PNG for any other).
func writeStack(file string, plots []*plot.Plot, panelHeight vg.Length) error {
	format, _ := plotFormat(file)
	b, err := paint(format, plotWidth, panelHeight*vg.Length(len(plots)), func(dc draw.Canvas) {
		grid := make([][]*plot.Plot, len(plots))
		for i, p := range plots {
			grid[i] = []*plot.Plot{p}
		}
		tiles := draw.Tiles{Rows: len(plots), Cols: 1, PadY: vg.Points(4), PadTop: vg.Points(2), PadBottom: vg.Points(2)}
		cs := plot.Align(grid, tiles, dc)
		for i, p := range plots {
			p.Draw(cs[i][0])
		}
	})
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	f, err := os.Create(file)
	if err != nil {
		return fmt.Errorf("writing plot: %w", err)
	}
	if _, err := f.Write(b); err != nil {
		f.Close()
		return fmt.Errorf("writing plot %s: %w", file, err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("writing plot %s: %w", file, err)
	}
	return nil
}
