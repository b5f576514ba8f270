package nn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Worked by hand from the definition (Rezatofighi et al. 2019,
// Algorithm 1): two 2×2 squares overlapping in a 1×1 corner have I = 1,
// U = 7, C = 9, so GIoU = 1/7 − 2/9; two unit squares one unit apart have
// I = 0, U = 2, C = 3, so GIoU = −1/3; a box with itself has GIoU = 1.
func TestGIoUByHand(t *testing.T) {
	cases := []struct {
		p, t [4]float64
		giou float64
	}{
		{[4]float64{0, 0, 2, 2}, [4]float64{1, 1, 3, 3}, 1.0/7 - 2.0/9},
		{[4]float64{0, 0, 1, 1}, [4]float64{2, 0, 3, 1}, -1.0 / 3},
		{[4]float64{5, 6, 9, 12}, [4]float64{5, 6, 9, 12}, 1},
	}
	for _, c := range cases {
		loss, _ := GIoULoss(c.p, c.t)
		if math.Abs((1-loss)-c.giou) > 1e-6 {
			t.Errorf("GIoU(%v, %v) = %.9f, want %.9f", c.p, c.t, 1-loss, c.giou)
		}
	}
}

// The gradient against central finite differences (common practice) on
// random pairs that overlap, nest and lie apart.
func TestGIoUGradient(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for i := range 200 {
		p, tg := randBox(r), randBox(r)
		_, g := GIoULoss(p, tg)
		vals := p[:]
		checkGrad(t, "GIoU", g[:], vals, func() float64 {
			var q [4]float64
			copy(q[:], vals)
			l, _ := GIoULoss(q, tg)
			return l
		})
		if t.Failed() {
			t.Fatalf("pair %d: %v %v", i, p, tg)
		}
	}
}

func randBox(r *rand.Rand) [4]float64 {
	x, y := r.Float64()*20, r.Float64()*20
	return [4]float64{x, y, x + 1 + r.Float64()*15, y + 1 + r.Float64()*15}
}

// torchGIoU is the loss written in torch operations, gradients by
// autograd (PyTorch from Debian, python3-torch 1.13, which has no GIoU
// loss of its own), in float64.
const torchGIoU = `
import json, sys
import torch
pairs = json.load(open(sys.argv[1]))
out = []
for p, t in pairs:
    p = torch.tensor(p, dtype=torch.float64, requires_grad=True)
    t = torch.tensor(t, dtype=torch.float64)
    ap = (p[2] - p[0]) * (p[3] - p[1])
    at = (t[2] - t[0]) * (t[3] - t[1])
    iw = (torch.min(p[2], t[2]) - torch.max(p[0], t[0])).clamp(min=0)
    ih = (torch.min(p[3], t[3]) - torch.max(p[1], t[1])).clamp(min=0)
    inter = iw * ih
    union = ap + at - inter + 1e-7
    enc = (torch.max(p[2], t[2]) - torch.min(p[0], t[0])) * (torch.max(p[3], t[3]) - torch.min(p[1], t[1])) + 1e-7
    loss = 1 - (inter / union - (enc - union) / enc)
    loss.backward()
    out.append([loss.item()] + p.grad.tolist())
json.dump(out, open(sys.argv[2], "w"))
`

// TestGIoUAgainstPyTorch compares loss and gradient with PyTorch autograd
// within 1e-9 on random pairs.
func TestGIoUAgainstPyTorch(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	var pairs [][2][4]float64
	for range 100 {
		pairs = append(pairs, [2][4]float64{randBox(r), randBox(r)})
	}
	var want [][5]float64
	runPython(t, torchGIoU, pairs, &want)
	if len(want) != len(pairs) {
		t.Fatalf("PyTorch answered %d results for %d pairs", len(want), len(pairs))
	}
	for i, pr := range pairs {
		loss, g := GIoULoss(pr[0], pr[1])
		got := [5]float64{loss, g[0], g[1], g[2], g[3]}
		for j := range got {
			if math.Abs(got[j]-want[i][j]) > 1e-9 {
				t.Fatalf("pair %d %v: value %d is %.12g, PyTorch %.12g", i, pr, j, got[j], want[i][j])
			}
		}
	}
}
