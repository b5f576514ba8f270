package canvas

import (
	"math"
	"testing"

	"boxwright/project"
)

func TestFitCentresAndFills(t *testing.T) {
	// A 1280×960 image in an 800×800 view: the width limits, scale 0.625,
	// the image is 600 tall and sits 100 from the top. (Plain arithmetic.)
	tr := Fit(1280, 960, 800, 800)
	if tr.Scale != 0.625 || tr.OffsetX != 0 || tr.OffsetY != 100 {
		t.Fatalf("Fit = %+v", tr)
	}
	b := tr.BoxToScreen(project.Box{X0: 0, Y0: 0, X1: 1280, Y1: 960})
	if b != (project.Box{X0: 0, Y0: 100, X1: 800, Y1: 700}) {
		t.Errorf("whole image on screen = %v", b)
	}
	if (Fit(0, 10, 10, 10) != Transform{}) || (Fit(10, 10, 10, -1) != Transform{}) {
		t.Errorf("degenerate sizes should give the zero transform")
	}
}

func TestTransformRoundTripAtOddScales(t *testing.T) {
	for _, tr := range []Transform{Fit(1280, 960, 1013, 777), Fit(37, 4001, 640, 480), {Scale: 1 / 3.0, OffsetX: -17.25, OffsetY: 9.5}, {Scale: 32, OffsetX: -40961, OffsetY: 3}} {
		for _, p := range [][2]float64{{0, 0}, {0.5, 0.5}, {1279.75, 959.25}, {-3, 1e4}} {
			sx, sy := tr.ToScreen(p[0], p[1])
			x, y := tr.ToImage(sx, sy)
			if math.Abs(x-p[0]) > 1e-9 || math.Abs(y-p[1]) > 1e-9 {
				t.Errorf("%+v: %v -> (%g,%g) -> (%g,%g)", tr, p, sx, sy, x, y)
			}
		}
	}
}
