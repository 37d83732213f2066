package report

import (
	"fmt"
	"math"
)

// puOr is the 11-class ColorBrewer "PuOr" diverging scheme (Brewer, Harrower
// & The Pennsylvania State University, ColorBrewer 2.0, colorbrewer2.org;
// Apache-2.0 licensed colour specifications), listed from the dark orange
// end to the dark purple end. ColorBrewer marks PuOr as colour-blind safe.
// The hex values are from memory of the published table.
var puOr = [11][3]uint8{
	{0x7f, 0x3b, 0x08}, {0xb3, 0x58, 0x06}, {0xe0, 0x82, 0x14}, {0xfd, 0xb8, 0x63},
	{0xfe, 0xe0, 0xb6}, {0xf7, 0xf7, 0xf7}, {0xd8, 0xda, 0xeb}, {0xb2, 0xab, 0xd2},
	{0x80, 0x73, 0xac}, {0x54, 0x27, 0x88}, {0x2d, 0x00, 0x4b},
}

// Colour returns the map colour for a deviation devMM against a symmetric
// scale of ±spanMM: orange shades for positive deviations (on the normal
// side, "high"), purple shades for negative ones ("low"), near-white at
// zero. Values beyond the span take the darkest class.
func Colour(devMM, spanMM float64) [3]uint8 {
	if math.IsNaN(devMM) || spanMM <= 0 {
		return [3]uint8{0xbd, 0xbd, 0xbd}
	}
	// 11 classes over [-span, +span]: class 5 is centred on zero.
	f := devMM / spanMM // -1..1
	k := 5 - int(math.Round(f*5))
	if k < 0 {
		k = 0
	}
	if k > 10 {
		k = 10
	}
	return puOr[k]
}

// Hex formats a colour as #rrggbb.
func Hex(c [3]uint8) string { return fmt.Sprintf("#%02x%02x%02x", c[0], c[1], c[2]) }
