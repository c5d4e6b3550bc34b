package report

import "image/color"

// The project's palette, defined once and used by every plot rigwire
// draws (the soak report's figures and monitor predict's --plot files,
// both drawn in this package).
// Our own selection: a dark teal, a brick red, an ochre and a slate grey,
// then a plum for a fifth series. They differ in lightness as well as in
// hue (teal and slate are dark, brick mid, ochre light), so that they stay
// apart for the common red–green colour-vision deficiencies and in
// greyscale print; the series that matter most (measured, predicted) also
// differ in dash pattern.
var (
	// Teal: what was measured, the main curve of a prediction plot.
	Teal = color.NRGBA{R: 0x0b, G: 0x5c, B: 0x63, A: 0xff}
	// Brick: the prediction, and the boundaries a plot warns of.
	Brick = color.NRGBA{R: 0xa4, G: 0x3a, B: 0x25, A: 0xff}
	// Ochre: a third series (the safety trip's own window, a third
	// direction or output).
	Ochre = color.NRGBA{R: 0xc2, G: 0x8a, B: 0x12, A: 0xff}
	// Slate: references, phase boundaries, samples set apart.
	Slate = color.NRGBA{R: 0x4e, G: 0x5a, B: 0x66, A: 0xff}
	// Plum: a fifth series.
	Plum = color.NRGBA{R: 0x6b, G: 0x3f, B: 0x6e, A: 0xff}
	// Ink: near-black for whiskers and outlines drawn over the series.
	Ink = color.NRGBA{R: 0x1c, G: 0x23, B: 0x29, A: 0xff}
	// Mist: a light grey for bars that lie outside the drawn range.
	Mist = color.NRGBA{R: 0xa9, G: 0xb1, B: 0xb8, A: 0xff}
)

// Palette is the order in which plots colour their series.
var Palette = []color.NRGBA{Teal, Brick, Ochre, Slate, Plum}

// Series returns the i-th series colour, cycling through Palette.
func Series(i int) color.NRGBA {
	if i < 0 {
		i = -i
	}
	return Palette[i%len(Palette)]
}

// Band returns c made translucent (alpha a of 255) for a shaded band.
func Band(c color.NRGBA, a uint8) color.NRGBA {
	c.A = a
	return c
}
