package formats

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"boxwright/project"
)

// writtenTol is how close a box read back from a written file is to the
// box written: computed pixel values are rounded to 1e-PixelDecimals px
// (centre-normalised ones finer, to 1e-CentrePixelDecimals px), plus
// float64 slack on reading.
var writtenTol = math.Pow10(-PixelDecimals) + 1e-9

// A box whose numbers are short decimals is written with short decimals in
// every layout that computes from it (issue 15: exported JSON said
// 38.42999999999995), and reads back within the stated precision. The box
// [10.77, 0.14, 49.2, 30.3] on a 1000×500 image, in float64 (Python 3.11's
// repr, which prints the shortest round-trip form as Go does):
// 49.2−10.77 = 38.43000000000001, (49.2−10.77)·(30.3−0.14) =
// 1159.0488000000003, 0.14+1 = 1.1400000000000001, (10.77+49.2)/2/1000 =
// 0.029984999999999998, (0.14+30.3)/2/500 = 0.030440000000000002,
// 38.43/1000 = 0.038430000000000006. Worked by hand in decimals:
// corner/size [10.77, 0.14, 38.43, 30.16], area 38.43·30.16 = 1159.0488;
// per-image XML xmin 11.77, ymin 1.14, xmax 49.2, ymax 30.3;
// centre-normalised 0.029985 0.03044 0.03843 0.06032.
func TestWrittenNumbersHaveNoFloatNoise(t *testing.T) {
	b := project.Box{X0: 10.77, Y0: 0.14, X1: 49.2, Y1: 30.3}
	if w := b.X1 - b.X0; fmtNum(w) == "38.43" {
		t.Fatalf("the example has no noise to remove: width is %v", w)
	}
	rec := ImageRecord{Name: "a.jpg", Width: 1000, Height: 500, Boxes: []BoxRecord{{Class: "buoy", Box: b}}}

	var js bytes.Buffer
	if err := WriteCornerJSON(&js, &Dataset{Classes: []string{"buoy"}, Images: []ImageRecord{rec}}); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(js.String(), `"bbox": [10.77, 0.14, 38.43, 30.16], "area": 1159.0488,`) {
		t.Errorf("corner/size JSON:\n%s", js.String())
	}
	var xm bytes.Buffer
	if err := WriteImageXML(&xm, rec); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"<xmin>11.77</xmin>", "<ymin>1.14</ymin>", "<xmax>49.2</xmax>", "<ymax>30.3</ymax>"} {
		if !strings.Contains(xm.String(), want) {
			t.Errorf("per-image XML lacks %s:\n%s", want, xm.String())
		}
	}
	var tx bytes.Buffer
	if err := WriteCentreText(&tx, rec, []string{"buoy"}); err != nil {
		t.Fatal(err)
	}
	if got, want := tx.String(), "0 0.029985 0.03044 0.03843 0.06032\n"; got != want {
		t.Errorf("centre-normalised text %q, want %q", got, want)
	}

	// Read back: within the stated precision of the box written.
	ds, err := ReadCornerJSON(bytes.NewReader(js.Bytes()), "a.json")
	if err != nil {
		t.Fatal(err)
	}
	xr, err := ReadImageXML(bytes.NewReader(xm.Bytes()), "a.xml")
	if err != nil {
		t.Fatal(err)
	}
	tr, err := ReadCentreText(bytes.NewReader(tx.Bytes()), "a.txt", 1000, 500, []string{"buoy"})
	if err != nil {
		t.Fatal(err)
	}
	for name, got := range map[string]project.Box{"json": ds.Images[0].Boxes[0].Box, "xml": xr.Boxes[0].Box, "txt": tr[0].Box} {
		if !boxesClose(got, b, writtenTol) {
			t.Errorf("%s read back %v, wrote %v (tolerance %g px)", name, got, b, writtenTol)
		}
	}
}

// roundDecimals gives the float64 nearest the rounded decimal, so its
// shortest form has no more decimals than asked for; values too large for
// the decimals keep theirs.
func TestRoundDecimals(t *testing.T) {
	for _, c := range []struct {
		v    float64
		d    int
		want string
	}{
		{38.42999999999995, 6, "38.43"},
		{1000.01 - 1000, 6, "0.01"},
		{0.1 - 1 + 1, 6, "0.1"},
		{-1e-9, 6, "0"},
		{123.4567896, 6, "123.45679"},
		{1e300, 6, "1e+300"},
		{0.060046875000000004, 10, "0.060046875"},
		{0.06057291666666676, normalisedDecimals(960), "0.0605729166667"}, // from the demo export: a width X1−X0 of 58.15 px over 960
	} {
		if got := fmtNum(roundDecimals(c.v, c.d)); got != c.want {
			t.Errorf("roundDecimals(%v, %d) = %s, want %s", c.v, c.d, got, c.want)
		}
	}
	if normalisedDecimals(640) != CentrePixelDecimals+3 || normalisedDecimals(4032) != CentrePixelDecimals+4 {
		t.Errorf("normalisedDecimals: %d for 640, %d for 4032", normalisedDecimals(640), normalisedDecimals(4032))
	}
}

// A box narrower than the written precision is still written, with its
// exact side, and reads back (the rounding must not make it 0).
func TestTinyBoxesStillWritten(t *testing.T) {
	if got := roundSide(3e-9, 0, 3e-9); got != 3e-9 {
		t.Errorf("roundSide(3e-9) = %v", got)
	}
	if got := roundSide(49.2-10.77, 10.77, 49.2); got != 38.43 {
		t.Errorf("roundSide(49.2-10.77) = %v, want 38.43", got)
	}
	// Found by fuzzing: a real side finer than PixelDecimals was written
	// as 1e-6, moving the corner by 3e-7 px.
	if got := roundSide(7e-7, 0, 7e-7); got != 7e-7 {
		t.Errorf("roundSide(7e-7) = %v, want 7e-7", got)
	}
	// Away from the origin the same side carries the noise of its corners
	// and is still rounded only by that much.
	if w := (1000 + 7e-7) - 1000; roundSide(w, 1000, 1000+7e-7) != w {
		t.Errorf("roundSide(%v) near 1000 changed a real side", w)
	}
}
