package project

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"strings"
	"testing"
)

// shapelyIoU computes the IoU of each pair of boxes as areas of shapely
// polygons (Debian 12's python3-shapely, 1.8.5): the reference library for
// planar geometry, outside this project.
const shapelyIoU = `
import json, sys
from shapely.geometry import box
out = []
for a, b in json.load(sys.stdin):
    pa, pb = box(*a), box(*b)
    u = pa.union(pb).area
    out.append(pa.intersection(pb).area / u if u > 0 else 0.0)
print(json.dumps(out))
`

// TestIoUAgainstShapely compares Box.IoU with shapely on random pairs,
// including disjoint, touching, nested and fractional boxes.
func TestIoUAgainstShapely(t *testing.T) {
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import shapely").Run(); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install python3-shapely for this check: %v", err)
		}
		t.Skip("python3-shapely is not installed (make test installs it)")
	}
	r := rand.New(rand.NewPCG(5, 9))
	randBox := func() Box {
		x, y := r.Float64()*100, r.Float64()*100
		return Box{x, y, x + 0.5 + r.Float64()*60, y + 0.5 + r.Float64()*60}
	}
	var pairs [][2][4]float64
	var boxes [][2]Box
	for i := 0; i < 500; i++ {
		a, b := randBox(), randBox()
		switch i % 5 {
		case 1: // touching on the right edge
			b = Box{a.X1, a.Y0, a.X1 + 10, a.Y1}
		case 2: // nested
			b = Box{a.X0 + a.Width()/4, a.Y0 + a.Height()/4, a.X1 - a.Width()/4, a.Y1 - a.Height()/4}
		case 3: // on the integer grid
			a = Box{math.Floor(a.X0), math.Floor(a.Y0), math.Ceil(a.X1), math.Ceil(a.Y1)}
		}
		boxes = append(boxes, [2]Box{a, b})
		pairs = append(pairs, [2][4]float64{{a.X0, a.Y0, a.X1, a.Y1}, {b.X0, b.Y0, b.X1, b.Y1}})
	}
	in, _ := json.Marshal(pairs)
	cmd := exec.Command(py, "-c", shapelyIoU)
	cmd.Stdin = strings.NewReader(string(in))
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("running shapely: %v", err)
	}
	var want []float64
	if err := json.Unmarshal(out, &want); err != nil || len(want) != len(boxes) {
		t.Fatalf("shapely output %q: %v", out, err)
	}
	for i, p := range boxes {
		if got := p[0].IoU(p[1]); math.Abs(got-want[i]) > 1e-9 {
			t.Errorf("IoU(%v, %v) = %.12f, shapely %.12f", p[0], p[1], got, want[i])
		}
	}
}
