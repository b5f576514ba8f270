package nn

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// torchScript computes the reference values with PyTorch from Debian
// (python3-torch 1.13, torch.nn.functional and torch.optim) for the cases in
// cases.json, in float32, and writes out.json. PyTorch has no CenterNet
// focal loss, so that case writes eq. 1 of "Objects as Points" in torch
// operations and takes the gradient from autograd.
const torchScript = `
import json, sys
import torch
import torch.nn.functional as F

def t(v, shape, grad=False):
    x = torch.tensor(v, dtype=torch.float32).reshape(shape)
    return x.requires_grad_(grad)

def flat(x):
    return x.detach().reshape(-1).tolist()

cases = json.load(open(sys.argv[1]))
out = []
for c in cases:
    k = c["kind"]
    if k == "conv":
        x = t(c["x"], c["xshape"], True)
        w = t(c["w"], c["wshape"], True)
        b = t(c["b"], [len(c["b"])], True) if c["b"] else None
        y = F.conv2d(x, w, b, stride=c["stride"], padding=c["pad"])
        y.backward(t(c["dy"], list(y.shape)))
        out.append({"y": flat(y), "yshape": list(y.shape), "dx": flat(x.grad),
                    "dw": flat(w.grad), "db": flat(b.grad) if b is not None else []})
    elif k == "bn":
        C = c["xshape"][1]
        x = t(c["x"], c["xshape"])
        rm, rv = t(c["rm"], [C]), t(c["rv"], [C])
        g, b = t(c["gamma"], [C]), t(c["beta"], [C])
        y = F.batch_norm(x, rm, rv, g, b, training=True, momentum=0.1, eps=1e-5)
        y2 = F.batch_norm(t(c["x2"], c["xshape"]), rm, rv, g, b, training=False, eps=1e-5)
        out.append({"y": flat(y), "rm": flat(rm), "rv": flat(rv), "y2": flat(y2)})
    elif k == "up":
        y = F.interpolate(t(c["x"], c["xshape"]), scale_factor=2, mode="nearest")
        out.append({"y": flat(y), "yshape": list(y.shape)})
    elif k == "focal":
        z = t(c["z"], c["shape"], True)
        gt = t(c["y"], c["shape"])
        p = torch.clamp(torch.sigmoid(z), min=1e-4, max=1 - 1e-4)
        pos = gt.eq(1).float()
        neg = 1 - pos
        pos_loss = torch.log(p) * torch.pow(1 - p, 2) * pos
        neg_loss = torch.log(1 - p) * torch.pow(p, 2) * torch.pow(1 - gt, 4) * neg
        loss = -(pos_loss.sum() + neg_loss.sum()) / max(pos.sum().item(), 1)
        loss.backward()
        out.append({"loss": loss.item(), "grad": flat(z.grad)})
    elif k == "adam":
        w = t(c["w"], [len(c["w"])], True)
        opt = torch.optim.Adam([w], lr=c["lr"], betas=(0.9, 0.999), eps=1e-8, weight_decay=c["wd"])
        for g in c["grads"]:
            opt.zero_grad()
            w.grad = t(g, [len(g)])
            opt.step()
        out.append({"w": flat(w)})
json.dump(out, open(sys.argv[2], "w"))
`

// needTorch returns the Debian Python if it can import torch; it skips the
// test otherwise, or fails it under CI, where reference checks must run.
func needTorch(t *testing.T) string {
	t.Helper()
	py := "/usr/bin/python3"
	// find_spec looks without importing, which takes seconds.
	probe := "import importlib.util, sys; sys.exit(importlib.util.find_spec('torch') is None)"
	if out, err := exec.Command(py, "-c", probe).CombinedOutput(); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install python3-torch for this check: %v\n%s", err, out)
		}
		t.Skipf("python3-torch is not installed: %v", err)
	}
	return py
}

// runTorch writes the cases, runs torchScript and decodes its answers.
func runTorch(t *testing.T, cases []map[string]any) []map[string]any {
	t.Helper()
	var res []map[string]any
	runPython(t, torchScript, cases, &res)
	if len(res) != len(cases) {
		t.Fatalf("PyTorch answered %d results for %d cases", len(res), len(cases))
	}
	return res
}

// runPython runs a reference script with the Debian Python that has
// torch: the script reads cases as JSON from its first argument and writes
// its answers as JSON to its second, which are decoded into out.
func runPython(t *testing.T, script string, cases, out any) {
	t.Helper()
	py := needTorch(t)
	dir := t.TempDir()
	in, res, file := filepath.Join(dir, "cases.json"), filepath.Join(dir, "out.json"), filepath.Join(dir, "ref.py")
	data, err := json.Marshal(cases)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(in, data, 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(file, []byte(script), 0o600); err != nil {
		t.Fatal(err)
	}
	if msg, err := exec.Command(py, file, in, res).CombinedOutput(); err != nil {
		t.Fatalf("running the reference: %v\n%s", err, msg)
	}
	data, err = os.ReadFile(res)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(data, out); err != nil {
		t.Fatalf("the reference's answer: %v", err)
	}
}

func rand32(r *rand.Rand, n int, scale, offset float64) []float32 {
	s := make([]float32, n)
	for i := range s {
		s[i] = float32((r.Float64()*2-1)*scale + offset)
	}
	return s
}

// f64s widens float32 values for JSON, exactly.
func f64s(v []float32) []float64 {
	s := make([]float64, len(v))
	for i, x := range v {
		s[i] = float64(x)
	}
	return s
}

func floats(t *testing.T, v any) []float64 {
	t.Helper()
	list, ok := v.([]any)
	if !ok {
		t.Fatalf("PyTorch result %T is not a list", v)
	}
	s := make([]float64, len(list))
	for i, x := range list {
		s[i] = x.(float64)
	}
	return s
}

// near compares within 1e-4, relative for values above 1 (long sums).
func near(t *testing.T, what string, got []float32, want []float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Errorf("%s: %d values, PyTorch %d", what, len(got), len(want))
		return
	}
	worst := 0.0
	for i := range got {
		d := math.Abs(float64(got[i])-want[i]) / max(1, math.Abs(want[i]))
		worst = max(worst, d)
		if d > 1e-4 || math.IsNaN(float64(got[i])) {
			t.Errorf("%s[%d] = %v, PyTorch %v", what, i, got[i], want[i])
			return
		}
	}
	t.Logf("%s: %d values, worst difference %.2g", what, len(got), worst)
}

// TestAgainstPyTorch runs Conv2D (forward and backward), BatchNorm2D (train,
// running statistics after the step, eval), Upsample2x, the focal loss and
// Adam on random float32 inputs and compares them with PyTorch 1.13 within
// 1e-4. Source: PyTorch (python3-torch from Debian).
func TestAgainstPyTorch(t *testing.T) {
	r := rand.New(rand.NewPCG(20, 1))
	var cases []map[string]any
	var checks []func(res map[string]any)

	type convCase struct {
		in, out, k, s, p, n, h, w int
		bias                      bool
	}
	for _, c := range []convCase{
		{3, 8, 3, 1, 1, 2, 13, 11, true},
		{5, 7, 3, 2, 1, 2, 16, 15, false},
		{4, 6, 1, 1, 0, 1, 9, 10, true},
		{3, 4, 5, 2, 2, 2, 11, 12, true},
		{16, 12, 3, 2, 0, 1, 10, 9, true},
		{2, 3, 7, 2, 3, 1, 20, 17, false},
	} {
		l := NewConv2D[float32]("conv", c.in, c.out, c.k, c.s, c.p, c.bias, r)
		var b []float32
		if c.bias {
			b = rand32(r, c.out, 0.5, 0)
			copy(l.Bias.W, b)
		}
		x := New(c.n, c.in, c.h, c.w, rand32(r, c.n*c.in*c.h*c.w, 1, 0))
		y := l.Forward(x, true)
		dy := New(y.N, y.C, y.H, y.W, rand32(r, y.Len(), 1, 0))
		dx := l.Backward(dy)
		cases = append(cases, map[string]any{"kind": "conv", "x": f64s(x.Data), "xshape": x.Shape(),
			"w": f64s(l.Weight.W), "wshape": l.Weight.Shape, "b": f64s(b), "stride": c.s, "pad": c.p, "dy": f64s(dy.Data)})
		checks = append(checks, func(res map[string]any) {
			name := fmt.Sprintf("Conv2D %d→%d k%d s%d p%d", c.in, c.out, c.k, c.s, c.p)
			if ys := floats(t, res["yshape"]); int(ys[2]) != y.H || int(ys[3]) != y.W {
				t.Errorf("%s: output %v, PyTorch %v", name, y.Shape(), ys)
			}
			near(t, name+" y", y.Data, floats(t, res["y"]))
			near(t, name+" dx", dx.Data, floats(t, res["dx"]))
			near(t, name+" dw", l.Weight.G, floats(t, res["dw"]))
			if c.bias {
				near(t, name+" db", l.Bias.G, floats(t, res["db"]))
			}
		})
	}

	{
		const n, c, h, w = 3, 4, 5, 6
		bn := NewBatchNorm2D[float32]("bn", c)
		copy(bn.Gamma.W, rand32(r, c, 0.5, 1))
		copy(bn.Beta.W, rand32(r, c, 0.5, 0))
		copy(bn.RunningMean.W, rand32(r, c, 1, 0))
		copy(bn.RunningVar.W, rand32(r, c, 0.5, 1))
		x := New(n, c, h, w, rand32(r, n*c*h*w, 2, 1.5)) // off-centre, so the statistics matter
		x2 := New(n, c, h, w, rand32(r, n*c*h*w, 2, 1.5))
		cases = append(cases, map[string]any{"kind": "bn", "x": f64s(x.Data), "x2": f64s(x2.Data), "xshape": x.Shape(),
			"rm": f64s(bn.RunningMean.W), "rv": f64s(bn.RunningVar.W), "gamma": f64s(bn.Gamma.W), "beta": f64s(bn.Beta.W)})
		y := bn.Forward(x, true)
		rm, rv := append([]float32(nil), bn.RunningMean.W...), append([]float32(nil), bn.RunningVar.W...)
		y2 := bn.Forward(x2, false)
		checks = append(checks, func(res map[string]any) {
			near(t, "BatchNorm2D train y", y.Data, floats(t, res["y"]))
			near(t, "BatchNorm2D running mean", rm, floats(t, res["rm"]))
			near(t, "BatchNorm2D running var", rv, floats(t, res["rv"]))
			near(t, "BatchNorm2D eval y", y2.Data, floats(t, res["y2"]))
		})
	}

	{
		x := New(2, 3, 5, 7, rand32(r, 2*3*5*7, 1, 0))
		y := (&Upsample2x[float32]{}).Forward(x, false)
		cases = append(cases, map[string]any{"kind": "up", "x": f64s(x.Data), "xshape": x.Shape()})
		checks = append(checks, func(res map[string]any) {
			near(t, "Upsample2x", y.Data, floats(t, res["y"]))
		})
	}

	for _, scale := range []float64{3, 12} { // 12 reaches the clamp
		shape := [4]int{2, 3, 8, 9}
		z := New(shape[0], shape[1], shape[2], shape[3], rand32(r, 2*3*8*9, scale, -1))
		y := Like(z)
		for i := range y.Data {
			switch r.IntN(10) {
			case 0:
				y.Data[i] = 1
			case 1, 2, 3:
				y.Data[i] = r.Float32()
			}
		}
		loss, g := FocalLoss(z, y)
		cases = append(cases, map[string]any{"kind": "focal", "z": f64s(z.Data), "y": f64s(y.Data), "shape": shape})
		checks = append(checks, func(res map[string]any) {
			near(t, "FocalLoss", []float32{float32(loss)}, []float64{res["loss"].(float64)})
			near(t, "FocalLoss grad", g.Data, floats(t, res["grad"]))
		})
	}

	for _, wd := range []float64{0, 0.01} {
		p := &Param[float32]{Name: "w", Shape: []int{50}, W: rand32(r, 50, 1, 0), G: make([]float32, 50)}
		w0 := append([]float32(nil), p.W...)
		opt := NewAdam[float32](0.01)
		opt.WeightDecay = wd
		var grads [][]float64
		for range 5 {
			g := rand32(r, 50, 1, 0.2)
			grads = append(grads, f64s(g))
			opt.ZeroGrad([]*Param[float32]{p})
			copy(p.G, g)
			opt.Step([]*Param[float32]{p})
		}
		cases = append(cases, map[string]any{"kind": "adam", "w": f64s(w0), "lr": 0.01, "wd": wd, "grads": grads})
		checks = append(checks, func(res map[string]any) {
			near(t, "Adam w", p.W, floats(t, res["w"]))
		})
	}

	res := runTorch(t, cases)
	for i, check := range checks {
		check(res[i])
	}
}
