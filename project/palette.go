package project

import (
	"fmt"
	"image/color"
)

// Palette is the sequence of class colours given to new classes in order.
// It is the eight-colour set of Okabe & Ito ("Color Universal Design", 2008),
// chosen to stay distinguishable for the common forms of colour-vision
// deficiency, with black replaced by a light grey so that boxes show on dark
// images; neighbours in the sequence differ strongly in hue or lightness.
var Palette = []color.NRGBA{
	{0xE6, 0x9F, 0x00, 0xFF}, // orange
	{0x56, 0xB4, 0xE9, 0xFF}, // sky blue
	{0x00, 0x9E, 0x73, 0xFF}, // bluish green
	{0xF0, 0xE4, 0x42, 0xFF}, // yellow
	{0x00, 0x72, 0xB2, 0xFF}, // blue
	{0xD5, 0x5E, 0x00, 0xFF}, // vermilion
	{0xCC, 0x79, 0xA7, 0xFF}, // reddish purple
	{0xDD, 0xDD, 0xDD, 0xFF}, // light grey
}

// PaletteColor returns the colour for the i-th class, cycling the palette.
func PaletteColor(i int) color.NRGBA {
	if i < 0 {
		i = -i
	}
	return Palette[i%len(Palette)]
}

// ParseColor reads "#rrggbb".
func ParseColor(s string) (color.NRGBA, error) {
	var r, g, b uint8
	if len(s) != 7 || s[0] != '#' {
		return color.NRGBA{}, fmt.Errorf("colour %q is not of the form #rrggbb", s)
	}
	if _, err := fmt.Sscanf(s, "#%02x%02x%02x", &r, &g, &b); err != nil {
		return color.NRGBA{}, fmt.Errorf("colour %q is not of the form #rrggbb", s)
	}
	return color.NRGBA{r, g, b, 0xff}, nil
}

// FormatColor writes "#rrggbb".
func FormatColor(c color.NRGBA) string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }
