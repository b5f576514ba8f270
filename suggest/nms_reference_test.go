package suggest

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"slices"
	"strings"
	"testing"

	"boxwright/project"
)

// opencvNMS runs cv2.dnn.NMSBoxes (OpenCV 4.6.0, Debian 12's
// python3-opencv) on each case: the reference implementation of greedy
// non-maximum suppression, outside this project. It takes boxes as
// [x, y, width, height] in continuous coordinates (area = width*height, no
// +1), keeps scores > score_threshold and suppresses IoU > nms_threshold,
// the same rule as torchvision.ops.nms. It computes the IoU in float32, so
// the cases keep every IoU away from the threshold, and scores are
// multiples of 1/64, exact in float32, so that ties stay ties.
const opencvNMS = `
import json, sys
import cv2, numpy as np
out = []
for c in json.load(sys.stdin):
    keep = cv2.dnn.NMSBoxes(c["boxes"], c["scores"], 0.0, c["iou"]) if c["boxes"] else []
    out.append([int(i) for i in np.array(keep).flatten()])
print(json.dumps(out))
`

// TestNMSAgainstOpenCV compares NMS with OpenCV on random cases, many with
// tied scores and heavily overlapping boxes.
func TestNMSAgainstOpenCV(t *testing.T) {
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import cv2").Run(); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install python3-opencv for this check: %v", err)
		}
		t.Skip("python3-opencv is not installed")
	}
	type pyCase struct {
		Boxes  [][4]float64 `json:"boxes"`
		Scores []float64    `json:"scores"`
		IoU    float64      `json:"iou"`
	}
	r := rand.New(rand.NewPCG(7, 11))
	grid := func(v float64) float64 { return math.Round(v*8) / 8 } // exact in float32
	var cases []pyCase
	var boxes [][]project.Box
	for len(cases) < 400 {
		n := r.IntN(40)
		span := 5 + r.Float64()*100 // small spans crowd the boxes together
		var bs []project.Box
		var c pyCase
		for range n {
			x, y := grid(r.Float64()*span), grid(r.Float64()*span)
			w, h := grid(0.125+r.Float64()*40), grid(0.125+r.Float64()*40)
			w, h = max(w, 0.125), max(h, 0.125)
			bs = append(bs, project.Box{X0: x, Y0: y, X1: x + w, Y1: y + h})
			c.Boxes = append(c.Boxes, [4]float64{x, y, w, h})
			c.Scores = append(c.Scores, float64(1+r.IntN(64))/64)
		}
		c.IoU = 0.05 + 0.9*r.Float64()
		if len(cases)%10 == 0 {
			c.IoU = 0.5 // a threshold people use
		}
		near := false
		for i := range bs {
			for j := range i {
				if math.Abs(bs[i].IoU(bs[j])-c.IoU) < 1e-5 {
					near = true
				}
			}
		}
		if near {
			continue
		}
		cases = append(cases, c)
		boxes = append(boxes, bs)
	}
	in, _ := json.Marshal(cases)
	cmd := exec.Command(py, "-c", opencvNMS)
	cmd.Stdin = strings.NewReader(string(in))
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("running OpenCV: %v", err)
	}
	var want [][]int
	if err := json.Unmarshal(out, &want); err != nil || len(want) != len(cases) {
		t.Fatalf("OpenCV output %.200q: %v", out, err)
	}
	suppressed := 0
	for i, c := range cases {
		got := NMS(boxes[i], c.Scores, c.IoU)
		if len(got) == 0 {
			got = []int{}
		}
		if !slices.Equal(got, want[i]) {
			t.Errorf("case %d (%d boxes, IoU %.4f): NMS = %v, OpenCV %v", i, len(c.Boxes), c.IoU, got, want[i])
		}
		suppressed += len(c.Boxes) - len(want[i])
	}
	t.Logf("%d cases, %d boxes suppressed", len(cases), suppressed)
	if suppressed < 1000 {
		t.Errorf("only %d boxes suppressed in all cases; the check needs more overlap", suppressed)
	}
}
