package imagefile

import (
	"image"
	"image/color"
	"strings"
	"testing"
)

// letters maps the six pixels of a 3×2 test image to distinct grey levels.
var letters = map[byte]uint8{'A': 10, 'B': 20, 'C': 30, 'D': 40, 'E': 50, 'F': 60}

// grid builds a grey image from rows of letters.
func grid(rows ...string) *image.Gray {
	m := image.NewGray(image.Rect(0, 0, len(rows[0]), len(rows)))
	for y, r := range rows {
		for x := range len(r) {
			m.SetGray(x, y, color.Gray{letters[r[x]]})
		}
	}
	return m
}

// orientationLayouts is how the stored image
//
//	A B C
//	D E F
//
// must be displayed under each orientation. Source: CIPA DC-008-2019 (Exif
// 2.32), tag Orientation, which gives for each value where the stored 0th
// row and 0th column are shown: 1 top/left, 2 top/right, 3 bottom/right, 4
// bottom/left, 5 left/top, 6 right/top, 7 right/bottom, 8 left/bottom.
// Stored row 0 is ABC and stored column 0 is AD.
var orientationLayouts = map[int][]string{
	1: {"ABC", "DEF"},
	2: {"CBA", "FED"},
	3: {"FED", "CBA"},
	4: {"DEF", "ABC"},
	5: {"AD", "BE", "CF"},
	6: {"DA", "EB", "FC"},
	7: {"FC", "EB", "DA"},
	8: {"CF", "BE", "AD"},
}

func TestOrientationLayoutsFollowTheStandard(t *testing.T) {
	// Check the table itself against the standard's row/column wording.
	where := map[int][2]string{ // 0th row, 0th column
		1: {"top", "left"}, 2: {"top", "right"}, 3: {"bottom", "right"}, 4: {"bottom", "left"},
		5: {"left", "top"}, 6: {"right", "top"}, 7: {"right", "bottom"}, 8: {"left", "bottom"},
	}
	for o, rows := range orientationLayouts {
		// on reports whether letter l lies along the named side.
		on := func(l byte, side string) bool {
			for y, r := range rows {
				x := strings.IndexByte(r, l)
				if x < 0 {
					continue
				}
				switch side {
				case "top":
					return y == 0
				case "bottom":
					return y == len(rows)-1
				case "left":
					return x == 0
				case "right":
					return x == len(r)-1
				}
			}
			return false
		}
		// The stored row ABC lies along one side, the stored column AD
		// along the other; together they fix the whole layout.
		for _, l := range []byte("ABC") {
			if !on(l, where[o][0]) {
				t.Errorf("orientation %d: %c is not on the %s side", o, l, where[o][0])
			}
		}
		for _, l := range []byte("AD") {
			if !on(l, where[o][1]) {
				t.Errorf("orientation %d: %c is not on the %s side", o, l, where[o][1])
			}
		}
	}
}

func TestOrientAll8(t *testing.T) {
	stored := grid("ABC", "DEF")
	// The same picture in other pixel types, and as a sub-image whose
	// bounds do not start at the origin.
	rgba := image.NewRGBA(stored.Rect)
	nrgba64 := image.NewNRGBA64(stored.Rect)
	ycc := image.NewYCbCr(stored.Rect, image.YCbCrSubsampleRatio444)
	big := image.NewGray(image.Rect(0, 0, 7, 5))
	for y := 0; y < 2; y++ {
		for x := 0; x < 3; x++ {
			c := stored.GrayAt(x, y)
			rgba.Set(x, y, c)
			nrgba64.Set(x, y, c)
			ycc.Y[ycc.YOffset(x, y)] = c.Y
			ycc.Cb[ycc.COffset(x, y)] = 128
			ycc.Cr[ycc.COffset(x, y)] = 128
			big.SetGray(x+2, y+1, c)
		}
	}
	inputs := map[string]image.Image{
		"gray": stored, "rgba": rgba, "nrgba64": nrgba64, "ycbcr": ycc,
		"subimage": big.SubImage(image.Rect(2, 1, 5, 3)),
	}
	for name, in := range inputs {
		for o := 1; o <= 8; o++ {
			got := Orient(in, o)
			want := grid(orientationLayouts[o]...)
			if got.Bounds().Size() != want.Rect.Size() {
				t.Fatalf("%s, orientation %d: size %v, want %v", name, o, got.Bounds().Size(), want.Rect.Size())
			}
			gb := got.Bounds()
			for y := 0; y < want.Rect.Dy(); y++ {
				for x := 0; x < want.Rect.Dx(); x++ {
					g := color.GrayModel.Convert(got.At(gb.Min.X+x, gb.Min.Y+y)).(color.Gray)
					if g != want.GrayAt(x, y) {
						t.Errorf("%s, orientation %d: pixel (%d,%d) = %d, want %d", name, o, x, y, g.Y, want.GrayAt(x, y).Y)
					}
				}
			}
		}
	}
}

func TestOrientOutOfRange(t *testing.T) {
	m := grid("AB")
	for _, o := range []int{-1, 0, 1, 9} {
		if Orient(m, o) != image.Image(m) {
			t.Errorf("orientation %d changed the image", o)
		}
	}
	empty := image.NewRGBA(image.Rect(0, 0, 0, 0))
	if got := Orient(empty, 6); !got.Bounds().Empty() {
		t.Errorf("empty image became %v", got.Bounds())
	}
}
