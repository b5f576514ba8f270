package onnxexport

import (
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"image"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"google.golang.org/protobuf/proto"

	"boxwright/assets/demo"
	"boxwright/project"
	"boxwright/suggest/detector"
	"boxwright/suggest/detector/nn"
	"boxwright/suggest/onnx"
	"boxwright/suggest/onnx/onnxpb"
)

const py = "/usr/bin/python3"

// needReference skips unless Debian's python3-onnx (1.12) and
// python3-opencv (4.6) are installed; CI must have them.
func needReference(t *testing.T) {
	t.Helper()
	if err := exec.Command(py, "-c", "import onnx, cv2, numpy").Run(); err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("CI must install python3-onnx and python3-opencv for this check: %v", err)
		}
		t.Skip("python3-onnx or python3-opencv is not installed")
	}
}

// reference checks the file with the ONNX project's own checker
// (onnx.checker.check_model with full_check, which also runs strict shape
// inference), reads it back with onnx.load, and runs it with OpenCV 4.6's
// dnn module (cv2.dnn.readNetFromONNX), an ONNX importer and runtime
// written apart from this project. The input and the four outputs travel
// as raw little-endian float32 files.
const reference = `
import json, sys
import numpy as np
import onnx, cv2
model, tensor, h, w, out = sys.argv[1], sys.argv[2], int(sys.argv[3]), int(sys.argv[4]), sys.argv[5]
m = onnx.load(model)
onnx.checker.check_model(m, full_check=True)
dims = lambda vi: [d.dim_value for d in vi.type.tensor_type.shape.dim]
info = {"ir": m.ir_version, "opsets": [[o.domain, o.version] for o in m.opset_import],
        "producer": m.producer_name, "doc": m.doc_string,
        "metadata": {p.key: p.value for p in m.metadata_props},
        "ops": sorted({n.op_type for n in m.graph.node}),
        "initializers": [i.name for i in m.graph.initializer],
        "inputs": [[i.name, dims(i)] for i in m.graph.input],
        "outputs": [[o.name, dims(o)] for o in m.graph.output], "shapes": {}, "resize": []}
# Each Resize node, run by the ONNX project's own reference implementation
# of the operator (the code its backend test data is made with) on a small
# random array, must repeat every pixel in a 2x2 block (nn.Upsample2x).
from onnx import numpy_helper
from onnx.backend.test.case.node.resize import interpolate_nd, nearest_coeffs
inits = {i.name: numpy_helper.to_array(i) for i in m.graph.initializer}
for n in m.graph.node:
    if n.op_type != "Resize":
        continue
    a = {x.name: onnx.helper.get_attribute_value(x) for x in n.attribute}
    a = {k: v.decode() if isinstance(v, bytes) else v for k, v in a.items()}
    x = np.random.RandomState(1).rand(1, 2, 3, 5).astype(np.float32)
    mode = a.pop("nearest_mode", "round_prefer_floor")
    ok = a.pop("mode", "nearest") == "nearest" and not a.keys() - {"coordinate_transformation_mode"}
    if ok:
        y = interpolate_nd(x, lambda r: nearest_coeffs(r, mode=mode), scale_factors=list(inits[n.input[2]]), **a)
        ok = bool(np.array_equal(y, x.repeat(2, axis=2).repeat(2, axis=3)))
    info["resize"].append([n.name, ok])
if tensor:
    net = cv2.dnn.readNetFromONNX(model)
    net.setInput(np.fromfile(tensor, dtype="<f4").reshape(1, 3, h, w), "image")
    names = [o.name for o in m.graph.output]
    for n, v in zip(names, net.forward(names)):
        info["shapes"][n] = list(v.shape)
        np.ascontiguousarray(v, dtype="<f4").tofile(out + "/" + n + ".f32")
print(json.dumps(info))
`

type refInfo struct {
	IR          int               `json:"ir"`
	Opsets      [][]any           `json:"opsets"`
	Producer    string            `json:"producer"`
	Doc         string            `json:"doc"`
	Metadata    map[string]string `json:"metadata"`
	Ops         []string          `json:"ops"`
	Inits       []string          `json:"initializers"`
	Inputs      [][]any           `json:"inputs"`
	Outputs     [][]any           `json:"outputs"`
	Shapes      map[string][]int  `json:"shapes"`
	Resize      [][]any           `json:"resize"`
	outs        map[string][]float32
	elapsedSecs float64
}

// runReference checks file and, when input is not nil, runs it on input
// (1×3×h×w) with OpenCV.
func runReference(t *testing.T, file []byte, input []float32, h, w int) refInfo {
	t.Helper()
	dir := t.TempDir()
	model := filepath.Join(dir, "model.onnx")
	if err := os.WriteFile(model, file, 0o644); err != nil {
		t.Fatal(err)
	}
	tensor := ""
	if input != nil {
		tensor = filepath.Join(dir, "image.f32")
		if err := os.WriteFile(tensor, f32Bytes(input), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	start := time.Now()
	cmd := exec.Command(py, "-c", reference, model, tensor, strconv.Itoa(h), strconv.Itoa(w), dir)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference run: %v\n%s", err, stderr.String())
	}
	var info refInfo
	if err := json.Unmarshal(out, &info); err != nil {
		t.Fatalf("reference output %.300q: %v", out, err)
	}
	info.elapsedSecs = time.Since(start).Seconds()
	info.outs = map[string][]float32{}
	for name := range info.Shapes {
		b, err := os.ReadFile(filepath.Join(dir, name+".f32"))
		if err != nil {
			t.Fatal(err)
		}
		info.outs[name] = f32From(b)
	}
	return info
}

func f32Bytes(v []float32) []byte {
	b := make([]byte, 4*len(v))
	for i, f := range v {
		binary.LittleEndian.PutUint32(b[4*i:], math.Float32bits(f))
	}
	return b
}

func f32From(b []byte) []float32 {
	v := make([]float32, len(b)/4)
	for i := range v {
		v[i] = math.Float32frombits(binary.LittleEndian.Uint32(b[4*i:]))
	}
	return v
}

// randomModel is an untrained network for the demo's classes with seeded
// random weights, batch-norm scales, shifts and running statistics far
// from the identity (so that a runtime that skipped or misread batch norm
// would show), and a box head scaled so that some raw log-distances fall
// outside the ±6 clamp on both sides. The first class's head has zero
// weights, so that its heat map is one value everywhere: every cell but
// the first ties with an earlier neighbour, which tests the tie rule (a
// 3×3 max-pool test alone would call every cell a peak).
func randomModel(seed uint64) *detector.Model {
	net := detector.NewNet(len(demo.Classes), seed)
	r := rand.New(rand.NewPCG(seed, 77))
	for _, p := range net.State() {
		switch {
		case strings.HasSuffix(p.Name, ".bn.weight"):
			fill(p.W, func() float64 { return 0.5 + r.Float64() })
		case strings.HasSuffix(p.Name, ".bn.bias"):
			fill(p.W, func() float64 { return 0.3 * r.NormFloat64() })
		case strings.HasSuffix(p.Name, ".running_mean"):
			fill(p.W, func() float64 { return 0.5 * r.NormFloat64() })
		case strings.HasSuffix(p.Name, ".running_var"):
			fill(p.W, func() float64 { return 0.3 + 2.7*r.Float64() })
		case p.Name == "heat.bias":
			fill(p.W, func() float64 { return -1 + r.NormFloat64() })
		case p.Name == "heat.weight":
			clear(p.W[:p.Shape[1]]) // Out×In×1×1: the first class's row
		case p.Name == "box.weight":
			for i := range p.W {
				p.W[i] *= 4
			}
		case p.Name == "box.bias":
			fill(p.W, func() float64 { return 3 * r.NormFloat64() })
		}
	}
	return &detector.Model{Net: net, Classes: append([]string(nil), demo.Classes...), InputSize: 256}
}

func fill(w []float32, f func() float64) {
	for i := range w {
		w[i] = float32(f())
	}
}

// demoSample renders a demo image (invented by assets/demo) of w×h pixels
// and prepares it as the model's own pass does.
func demoSample(seed int64, w, h, long int) (image.Image, detector.Sample) {
	img := demo.Generate(demo.Config{Seed: seed, Images: 1, Width: w, Height: h}).Render(0)
	s, _ := detector.PrepareImage(img, nil, nil, long)
	return img, s
}

// TestExportPassesONNXChecker: the ONNX project's checker accepts the file
// (full check: structure, operator schemas of opset 13 and strict shape
// inference against the declared shapes), onnx.load reads back the opset,
// IR version, metadata, names and shapes Export writes, and the ONNX
// project's reference Resize, given the file's attributes, repeats pixels
// as nn.Upsample2x does (OpenCV 4.6 reads only the mode of a Resize, so
// the comparisons with it cannot tell coordinate modes apart).
func TestExportPassesONNXChecker(t *testing.T) {
	needReference(t)
	m := randomModel(1)
	b, err := Export(m, "harbour-v2", 256, 192)
	if err != nil {
		t.Fatal(err)
	}
	info := runReference(t, b, nil, 0, 0)
	if info.IR != 8 || len(info.Opsets) != 1 || info.Opsets[0][0] != "" || info.Opsets[0][1] != float64(13) {
		t.Errorf("IR %d, opsets %v; want IR 8 and opset 13 of the default domain only", info.IR, info.Opsets)
	}
	var classes []string
	if err := json.Unmarshal([]byte(info.Metadata["classes"]), &classes); err != nil || !slices.Equal(classes, demo.Classes) {
		t.Errorf("metadata classes %q (%v), want %v", info.Metadata["classes"], err, demo.Classes)
	}
	if info.Metadata["boxwright.architecture"] != detector.Architecture || info.Metadata["boxwright.input_size"] != "256" {
		t.Errorf("metadata %v", info.Metadata)
	}
	if info.Producer != "Boxwright" || !strings.Contains(info.Doc, "harbour-v2") {
		t.Errorf("producer %q, doc %q", info.Producer, info.Doc)
	}
	h, w := 192/4, 256/4
	wantIO := func(got [][]any, want ...[]any) {
		t.Helper()
		gb, _ := json.Marshal(got)
		wb, _ := json.Marshal(want)
		if string(gb) != string(wb) {
			t.Errorf("got %s, want %s", gb, wb)
		}
	}
	wantIO(info.Inputs, []any{"image", []int{1, 3, 192, 256}})
	wantIO(info.Outputs, []any{"boxes", []int{1, h * w, 4}}, []any{"scores", []int{1, h * w, 4}},
		[]any{"heat_logits", []int{1, 4, h, w}}, []any{"box_log_distances", []int{1, 4, h, w}})
	resize, _ := json.Marshal(info.Resize)
	if string(resize) != `[["up1",true],["up2",true]]` {
		t.Errorf("Resize nodes checked with the ONNX reference implementation: %s, want up1 and up2 both a 2×2 repeat", resize)
	}
	for _, p := range m.Net.State() {
		if !slices.Contains(info.Inits, p.Name) {
			t.Errorf("no initializer %q", p.Name)
		}
	}
	standard := []string{"Add", "BatchNormalization", "Cast", "Conv", "Equal", "Exp", "Greater", "Less", "Max", "MaxPool", "Mul",
		"Pad", "Relu", "Reshape", "Resize", "Sigmoid", "Slice", "Sub", "Transpose"}
	for _, op := range info.Ops {
		if !slices.Contains(standard, op) {
			t.Errorf("operator %s is not in the package's list", op)
		}
	}
	t.Logf("operators: %s; %d initializers; %d bytes; reference %.1f s", strings.Join(info.Ops, ", "), len(info.Inits), len(b), info.elapsedSecs)
}

// TestExportMatchesOpenCVRandomNet runs an exported untrained network with
// random weights and batch-norm statistics on a letterboxed demo image.
func TestExportMatchesOpenCVRandomNet(t *testing.T) {
	needReference(t)
	m := randomModel(3)
	_, s := demoSample(11, 600, 400, m.InputSize) // 256×171 on a 256×192 frame: 21 black rows
	st := compareWithOpenCV(t, m, s)
	if st.clippedHigh == 0 || st.clippedLow == 0 {
		t.Errorf("the box head gave %d raw values above 6 and %d below −6: the clamp is not exercised", st.clippedHigh, st.clippedLow)
	}
	if h, w := s.H/detector.Stride, s.W/detector.Stride; st.tieBroken < h*w-1 {
		t.Errorf("%d cells lost a tie to an earlier equal neighbour, want at least the %d of the flat class", st.tieBroken, h*w-1)
	}
}

// TestExportMatchesOpenCVTrainedNet does the same for a briefly trained
// model (its batch-norm statistics come from training).
func TestExportMatchesOpenCVTrainedNet(t *testing.T) {
	needReference(t)
	sc := demo.Generate(demo.Config{Seed: 21, Images: 4, Width: 320, Height: 256})
	ts := detector.TrainingSet{Classes: demo.Classes}
	imgs := map[int64]image.Image{}
	for i, f := range sc.Frames {
		ex := detector.Example{Image: project.Image{ID: int64(i + 1), Path: f.Name, Width: 320, Height: 256}}
		for _, o := range f.Truth {
			ex.Boxes = append(ex.Boxes, o.Box)
			ex.Classes = append(ex.Classes, slices.Index(demo.Classes, o.Class))
		}
		imgs[ex.Image.ID] = sc.Render(i)
		ts.Train = append(ts.Train, ex)
	}
	start := time.Now()
	res, err := detector.Train(context.Background(), ts, detector.TrainOptions{Epochs: 8, Seed: 5, InputSize: 160,
		Augment: detector.Augment{FlipH: true, Crop: 96},
		Load: func(_ context.Context, im project.Image) (image.Image, error) {
			if img, ok := imgs[im.ID]; ok {
				return img, nil
			}
			return nil, errors.New("no such image")
		}})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("training: %.1f s, loss %.3f → %.3f", time.Since(start).Seconds(), res.Epochs[0].Loss, res.Epochs[len(res.Epochs)-1].Loss)
	moved := false
	for _, p := range res.Model.Net.State() {
		if strings.HasSuffix(p.Name, ".running_mean") && slices.ContainsFunc(p.W, func(v float32) bool { return v != 0 }) {
			moved = true
		}
	}
	if !moved {
		t.Fatal("training left the batch-norm statistics at their start")
	}
	_, s := demoSample(22, 320, 256, res.Model.InputSize)
	compareWithOpenCV(t, res.Model, s)
}

type compareStats struct {
	clippedHigh, clippedLow, tieBroken, peaks int
}

// compareWithOpenCV exports m for s's frame, runs it with OpenCV on s's
// pixels and compares:
//   - heat_logits and box_log_distances with Boxwright's own Net.Forward:
//     |a − b| ≤ 1e-4·max(1, |b|) (absolute below 1, relative above);
//   - boxes with detector.Decode's formula applied to OpenCV's own
//     box_log_distances, within 1e-3 input pixels, for every cell;
//   - scores with the sigmoid of OpenCV's own heat_logits at detector
//     Decode's peaks (else 0), within 1e-5, for every cell and class;
//   - and the detections detector.Decode itself reads from OpenCV's raw
//     maps with those read from boxes and scores.
//
// Taking the decoding's input from OpenCV separates the check of the
// decoding graph from that of the network's arithmetic.
func compareWithOpenCV(t *testing.T, m *detector.Model, s detector.Sample) compareStats {
	t.Helper()
	var st compareStats
	b, err := Export(m, "check", s.W, s.H)
	if err != nil {
		t.Fatal(err)
	}
	start := time.Now()
	out := m.Net.Forward(nn.New[float32](1, 3, s.H, s.W, slices.Clone(s.Pixels)), false)
	goSecs := time.Since(start).Seconds()
	ref := runReference(t, b, s.Pixels, s.H, s.W)
	c, h, w := len(m.Classes), s.H/detector.Stride, s.W/detector.Stride
	hw := h * w
	wantShape := map[string][]int{"boxes": {1, hw, 4}, "scores": {1, hw, c}, "heat_logits": {1, c, h, w}, "box_log_distances": {1, 4, h, w}}
	for name, shape := range wantShape {
		if !slices.Equal(ref.Shapes[name], shape) {
			t.Fatalf("OpenCV's %s has shape %v, want %v", name, ref.Shapes[name], shape)
		}
	}
	heat, dist := ref.outs["heat_logits"], ref.outs["box_log_distances"]

	// The network: OpenCV 4.6 against Net.Forward.
	for _, raw := range []struct {
		name      string
		got, want []float32
	}{{"heat_logits", heat, out.Heat.Data}, {"box_log_distances", dist, out.Box.Data}} {
		var maxAbs, maxRel, maxMag float64
		for i, v := range raw.got {
			d := math.Abs(float64(v) - float64(raw.want[i]))
			maxAbs = max(maxAbs, d)
			maxRel = max(maxRel, d/max(1, math.Abs(float64(raw.want[i]))))
			maxMag = max(maxMag, math.Abs(float64(raw.want[i])))
		}
		t.Logf("%s: largest |value| %.3g, max |OpenCV − Forward| %.3g, max difference / max(1, |value|) %.3g", raw.name, maxMag, maxAbs, maxRel)
		if maxRel > 1e-4 {
			t.Errorf("%s: OpenCV differs from Net.Forward by %.3g (relative to max(1, |value|)); want ≤ 1e-4", raw.name, maxRel)
		}
	}

	// Boxes: detector.Decode's formula on OpenCV's raw distances.
	boxes := ref.outs["boxes"]
	var maxBox float64
	for j := range hw {
		ax, ay := (float64(j%w)+0.5)*detector.Stride, (float64(j/w)+0.5)*detector.Stride
		var d [4]float64
		for k := range 4 {
			v := float64(dist[k*hw+j])
			switch {
			case v > 6:
				st.clippedHigh++
			case v < -6:
				st.clippedLow++
			}
			d[k] = detector.Stride * math.Exp(max(-6, min(6, v)))
		}
		want := [4]float64{ax - d[0], ay - d[1], ax + d[2], ay + d[3]}
		for k := range 4 {
			maxBox = max(maxBox, math.Abs(float64(boxes[4*j+k])-want[k]))
		}
	}
	t.Logf("boxes: max difference %.3g px (%d raw values clamped high, %d low)", maxBox, st.clippedHigh, st.clippedLow)
	if maxBox > 1e-3 {
		t.Errorf("boxes differ from detector.Decode's by up to %.3g px; want ≤ 1e-3", maxBox)
	}

	// Scores: detector.Decode's sigmoid and peak rule on OpenCV's logits.
	prob := make([]float32, len(heat))
	for i, v := range heat {
		prob[i] = float32(1 / (1 + math.Exp(-float64(v)))) // as Model.DetectImage
	}
	scores := ref.outs["scores"]
	var maxScore float64
	var nearTies int
	for k := range c {
		p := prob[k*hw : (k+1)*hw]
		for j := range hw {
			x, y := j%w, j/w
			peak, tie := isPeak(p, w, h, x, y)
			if tie {
				st.tieBroken++
			}
			want := 0.0
			if peak {
				want = float64(p[j])
				st.peaks++
			}
			got := float64(scores[j*c+k])
			if d := math.Abs(got - want); d > 1e-5 {
				if nearTie(p, w, h, x, y) {
					nearTies++ // a neighbour within 2 float32 steps: the runtimes' sigmoids may order them apart
					continue
				}
				t.Errorf("class %d cell (%d, %d): score %v, want %v (peak %v)", k, x, y, got, want, peak)
			} else {
				maxScore = max(maxScore, d)
			}
		}
	}
	t.Logf("scores: %d peaks of %d cells×classes, %d ties broken by reading order, %d near-ties set aside, max difference %.3g; Go forward %.2f s, reference %.1f s",
		st.peaks, c*hw, st.tieBroken, nearTies, maxScore, goSecs, ref.elapsedSecs)
	if nearTies > 3 {
		t.Errorf("%d near-tie disagreements: more than float32 rounding explains", nearTies)
	}

	// The detections detector.Decode reads, against those in the file's
	// outputs (every peak above 0, class by class in reading order, then
	// best first, as Decode orders them).
	if nearTies == 0 {
		want := detector.Decode(prob, dist, c, h, w, 0, math.SmallestNonzeroFloat32)
		var got []detector.Detection
		for k := range c {
			for j := range hw {
				if v := scores[j*c+k]; v > 0 {
					got = append(got, detector.Detection{Class: k, Score: float64(v),
						Box: project.Box{X0: float64(boxes[4*j]), Y0: float64(boxes[4*j+1]), X1: float64(boxes[4*j+2]), Y1: float64(boxes[4*j+3])}})
				}
			}
		}
		sort.SliceStable(got, func(a, b int) bool { return got[a].Score > got[b].Score })
		if len(got) != len(want) {
			t.Fatalf("%d detections from the file's outputs, detector.Decode %d", len(got), len(want))
		}
		for i := range want {
			g, d := got[i], want[i]
			if g.Class != d.Class || math.Abs(g.Score-d.Score) > 1e-5 || math.Abs(g.Box.X0-d.Box.X0) > 1e-3 || math.Abs(g.Box.Y0-d.Box.Y0) > 1e-3 ||
				math.Abs(g.Box.X1-d.Box.X1) > 1e-3 || math.Abs(g.Box.Y1-d.Box.Y1) > 1e-3 {
				t.Fatalf("detection %d: file %+v, detector.Decode %+v", i, g, d)
			}
		}
		t.Logf("detections: %d, the same as detector.Decode's", len(want))
	}
	return st
}

// isPeak is detector.Decode's peak rule (targets.go): no neighbour in the
// 3×3 window higher, and no equal one earlier in reading order. tie
// reports a cell that is the window's maximum but loses to an equal
// earlier neighbour.
func isPeak(p []float32, w, h, x, y int) (peak, tie bool) {
	v := p[y*w+x]
	peak = true
	for yy := max(0, y-1); yy <= min(h-1, y+1); yy++ {
		for xx := max(0, x-1); xx <= min(w-1, x+1); xx++ {
			q := p[yy*w+xx]
			if q > v {
				return false, false
			}
			if q == v && yy*w+xx < y*w+x {
				peak, tie = false, true
			}
		}
	}
	return peak, tie
}

func nearTie(p []float32, w, h, x, y int) bool {
	v := p[y*w+x]
	for yy := max(0, y-1); yy <= min(h-1, y+1); yy++ {
		for xx := max(0, x-1); xx <= min(w-1, x+1); xx++ {
			if (yy != y || xx != x) && math.Abs(float64(p[yy*w+xx])-float64(v)) <= 2*ulp(v) {
				return true
			}
		}
	}
	return false
}

func ulp(v float32) float64 {
	return float64(math.Nextafter32(v, float32(math.Inf(1))) - v)
}

// TestExportRefusesBadInput: what cannot be exported is refused with
// ErrInvalid and a message naming the model and what to do.
func TestExportRefusesBadInput(t *testing.T) {
	good := func() *detector.Model { return randomModel(1) }
	cases := []struct {
		name   string
		model  *detector.Model
		mname  string
		w, h   int
		expect string
	}{
		{"not a multiple of 32", good(), "m1", 250, 192, `model "m1": export frame 250×192: each side must be a positive multiple of 32`},
		{"zero height", good(), "m1", 256, 0, "positive multiple of 32"},
		{"negative", good(), "m1", -32, 64, "positive multiple of 32"},
		{"too large", good(), "m1", 32768, 64, "up to 16384"},
		{"no model", nil, "m1", 256, 192, `model "m1" has no network`},
		{"no network", &detector.Model{Classes: []string{"a"}, InputSize: 256}, "m1", 256, 192, `model "m1" has no network`},
		{"no classes", &detector.Model{Net: detector.NewNet(1, 1), InputSize: 256}, "m2", 256, 192, `model "m2" has no classes`},
		{"classes not the network's", &detector.Model{Net: detector.NewNet(2, 1), Classes: []string{"a"}, InputSize: 256}, "m3", 256, 192, `model "m3" names 1 classes but its network predicts 2`},
		{"repeated class", &detector.Model{Net: detector.NewNet(2, 1), Classes: []string{"a", "a"}, InputSize: 256}, "m4", 256, 192, `model "m4": class 2 ("a") is empty or repeated`},
		{"no input size", &detector.Model{Net: detector.NewNet(1, 1), Classes: []string{"a"}}, "m5", 256, 192, `model "m5" has no input size`},
		{"no name", good(), "", 256, 192, "has no name"},
	}
	for _, c := range cases {
		b, err := Export(c.model, c.mname, c.w, c.h)
		if err == nil || b != nil {
			t.Errorf("%s: Export gave %d bytes and error %v", c.name, len(b), err)
			continue
		}
		if !errors.Is(err, project.ErrInvalid) || !strings.Contains(err.Error(), c.expect) {
			t.Errorf("%s: error %q (ErrInvalid %v), want it to contain %q", c.name, err, errors.Is(err, project.ErrInvalid), c.expect)
		}
	}
}

// TestDescribe: the description is valid, survives a write and a read,
// says what Boxwright's own pass does, and its normalisation formula
// ((v·Scale − Mean)/Std, onnx.Input's definition) applied to an image's
// pixels and to the padding gives detector.PrepareImage's tensor.
func TestDescribe(t *testing.T) {
	m := randomModel(1)
	img, s := demoSample(3, 96, 64, 96) // scale 1: 96×64 on a 96×64 frame
	fw, fh := Frame(m, 600, 400)
	if fw != 256 || fh != 192 {
		t.Errorf("Frame(600×400) at input size 256 = %d×%d, want 256×192", fw, fh)
	}
	d := Describe(m, fw, fh)
	path := filepath.Join(t.TempDir(), "model.onnx")
	if err := d.Write(onnx.DescriptionPath(path)); err != nil {
		t.Fatal(err)
	}
	back, err := onnx.ReadDescription(onnx.DescriptionPath(path))
	if err != nil {
		t.Fatal(err)
	}
	in := back.Input
	if in.Width != 256 || in.Height != 192 || in.Resize != "letterbox" || in.Align != "top-left" || *in.Pad != 0 || in.Channels != "rgb" || in.Name != "image" {
		t.Errorf("input %+v", in)
	}
	if back.Output.Layout != onnx.LayoutCornersScores || !slices.Equal(back.Output.Tensors, []string{"boxes", "scores"}) || !back.Output.MultiLabel || back.Output.Normalised {
		t.Errorf("output %+v", back.Output)
	}
	if !slices.Equal(back.Classes, demo.Classes) || back.MinScore != 0.3 || back.NMSIoU != 0.5 || back.MaxDetections != 100 {
		t.Errorf("classes %v, min score %v, NMS %v, max %d", back.Classes, back.MinScore, back.NMSIoU, back.MaxDetections)
	}
	// The normalisation, on a frame the image fills exactly.
	small := &detector.Model{Net: m.Net, Classes: m.Classes, InputSize: 96}
	dd := Describe(small, s.W, s.H)
	rgba := img.(*image.RGBA)
	var maxDiff float64
	for y := range s.H {
		for x := range s.W {
			p := rgba.Pix[y*rgba.Stride+4*x:]
			for ch := range 3 {
				want := (float64(p[ch])*dd.Input.Scale - dd.Input.Mean[ch]) / dd.Input.Std[ch]
				maxDiff = max(maxDiff, math.Abs(float64(s.Pixels[(ch*s.H+y)*s.W+x])-want))
			}
		}
	}
	// The padding, on the letterboxed frame.
	_, padded := demoSample(3, 600, 400, 256)
	for ch := range 3 {
		want := (*d.Input.Pad*d.Input.Scale - d.Input.Mean[ch]) / d.Input.Std[ch]
		got := padded.Pixels[(ch*padded.H+padded.H-1)*padded.W]
		maxDiff = max(maxDiff, math.Abs(float64(got)-want))
	}
	if maxDiff > 1e-5 {
		t.Errorf("Describe's normalisation differs from PrepareImage's by %.3g", maxDiff)
	}
}

// TestExportStructure reads the file back with the Go types of onnx.proto
// (no Python needed): version, opset, outputs in order, metadata, and every
// weight and batch-norm statistic stored under its parameter name with its
// shape and exact values.
func TestExportStructure(t *testing.T) {
	m := randomModel(2)
	b, err := Export(m, "harbour-v3", 128, 96)
	if err != nil {
		t.Fatal(err)
	}
	var mp onnxpb.ModelProto
	if err := proto.Unmarshal(b, &mp); err != nil {
		t.Fatal(err)
	}
	if mp.GetIrVersion() != 8 || len(mp.GetOpsetImport()) != 1 || mp.GetOpsetImport()[0].GetDomain() != "" || mp.GetOpsetImport()[0].GetVersion() != 13 {
		t.Errorf("IR %d, opsets %v", mp.GetIrVersion(), mp.GetOpsetImport())
	}
	if mp.GetProducerName() != "Boxwright" || mp.GetGraph().GetName() != "harbour-v3" {
		t.Errorf("producer %q, graph %q", mp.GetProducerName(), mp.GetGraph().GetName())
	}
	var outs []string
	for _, o := range mp.GetGraph().GetOutput() {
		outs = append(outs, o.GetName())
	}
	if !slices.Equal(outs, []string{"boxes", "scores", "heat_logits", "box_log_distances"}) {
		t.Errorf("outputs %v", outs)
	}
	meta := map[string]string{}
	for _, p := range mp.GetMetadataProps() {
		meta[p.GetKey()] = p.GetValue()
	}
	if meta["classes"] != `["sailboat","motorboat","buoy","kayak"]` || meta["boxwright.architecture"] != detector.Architecture {
		t.Errorf("metadata %v", meta)
	}
	inits := map[string]*onnxpb.TensorProto{}
	for _, in := range mp.GetGraph().GetInitializer() {
		inits[in.GetName()] = in
	}
	for _, p := range m.Net.State() {
		in := inits[p.Name]
		if in == nil {
			t.Errorf("no initializer %s", p.Name)
			continue
		}
		dims := make([]int64, len(p.Shape))
		for i, d := range p.Shape {
			dims[i] = int64(d)
		}
		if !slices.Equal(in.GetDims(), dims) || in.GetDataType() != int32(onnxpb.TensorProto_FLOAT) || !slices.Equal(f32From(in.GetRawData()), p.W) {
			t.Errorf("initializer %s: dims %v type %d, or its values differ from the parameter's", p.Name, in.GetDims(), in.GetDataType())
		}
	}
}
