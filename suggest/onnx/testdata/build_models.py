#!/usr/bin/python3
"""Builds the small ONNX detector models that the tests of package
suggest/onnx run.

Usage: /usr/bin/python3 build_models.py OUTDIR

Needs Debian 12's python3-onnx (1.12) and python3-numpy; nothing is
downloaded. Every model is made here from scratch with onnx.helper
(opset 13, IR version 8) and checked with
onnx.checker.check_model(full_check=True). The weights are fixed random
numbers (numpy's PCG64 generator, one seed per model), so the same bytes
come out on every run. The nets are untrained: their boxes and scores mean
nothing, but they are shaped like a detector's (boxes inside or near the
input, scores spread over 0..1), so a decoder that reads them the wrong
way round shows. Each head (a 1x1 convolution) is scaled on two fixed
calibration images made here (noise, and smooth blocks and gradients) so
that its logits have a set median and spread: each class score has median
0.15, so about half the candidates' best score is >= 0.25 (the scores
themselves span about 0.01 to 0.99).

All good models share one input and trunk:
  input "images" float32 NCHW [1, 3, 64, 96] (H = 64, W = 96: not square,
  so swapped axes show), values meant in 0..1;
  Conv 3->8 k3 s2 p1 + Relu -> [1, 8, 32, 48];
  Conv 8->16 k3 s2 p1 + Relu -> [1, 16, 16, 24]: N = 16 * 24 = 384 cells.
A cell (gx, gy) predicts, in input pixels,
  cx = 4 * (gx + sigmoid(a)), cy = 4 * (gy + sigmoid(b)),
  w = 48 * sigmoid(c), h = 32 * sigmoid(d)   (a, b, c, d: a 1x1 conv)
(the corner layouts get x0 = cx - w/2, y0 = cy - h/2, x1 = cx + w/2,
y1 = cy + h/2 from a fixed 1x1 convolution, so x1 > x0 and y1 > y0), and
C = 3 class scores sigmoid(conv); candidates are the cells in row-major
order (index = gy * 24 + gx).

Models (file: layout; outputs):
  centre_scores.onnx: centre-scores; "output0" [1, 384, 7] =
      cx, cy, w, h, then 3 class scores. metadata_props "names" =
      "{0: 'rover', 1: 'crate', 2: 'beacon'}".
  centre_scores_t.onnx: centre-scores, transposed; "output0" [1, 7, 384].
  centre_objectness.onnx: centre-objectness-scores; "output0" [1, 384, 8]
      = cx, cy, w, h, objectness, 3 class scores.
  corners_scores.onnx: corners-scores; "boxes" [1, 384, 4] (x0, y0, x1,
      y1), "scores" [1, 384, 3]. metadata_props "classes" =
      '["rover", "crate", "beacon"]' (JSON).
  corners_scores_ids.onnx: corners-scores with ids; "boxes" [1, 384, 4],
      "scores" [1, 384] (the best class score), "class_ids" [1, 384] int64
      (ArgMax; OpenCV 4.6's dnn runs it and hands the ids back as float32).
  detections.onnx: detections; "dets" [1, 24, 6] = x0, y0, x1, y1, score,
      class (a float 0, 1 or 2), one row per 16x16-pixel cell of a 4 x 6
      grid (a k4 s4 convolution of the trunk), as if already suppressed.
  Bad ones (layout "bad"):
  rank3_input.onnx: input "images" [3, 64, 96] (rank 3; Unsqueeze
      inside); output as centre_scores. OpenCV 4.6 cannot run it (it
      reads a 3-D array as an image); ONNX Runtime can.
  int_input.onnx: input "images" uint8 [1, 3, 64, 96] (Cast to float
      inside); output as centre_scores.
  dynamic_input.onnx: input "images" [1, 3, "height", "width"]; fully
      convolutional, runs at any size that is a multiple of 4 and gives
      "output0" [1, (height/4)*(width/4), 7] in the centre-scores layout
      (cx = 96 * sigmoid, cy = 64 * sigmoid: no grid, which would need the
      size). Its file is "bad" only for a runner that needs a fixed size.
  no_layout.onnx: one output "output0" [1, 7, 5, 5], which fits no layout.
The names are invented for our own demo scenario.

OUTDIR/models.json (written last) is a JSON array, one object per model in
the order above:
  {"file": "centre_scores.onnx",
   "layout": "centre-scores" | "centre-objectness-scores" |
             "corners-scores" | "detections" | "bad",
   "width": 96, "height": 64,          (the input's W and H)
   "input": {"name": "images", "dtype": "float32" | "uint8",
             "shape": [1, 3, 64, 96]}  (a symbolic dimension is a string),
   "outputs": [{"name": "output0", "dtype": "float32" | "int64",
                "shape": [1, 384, 7]}, ...]   (in the layout's order),
   "num_classes": 3,
   "transposed": false,                (true: [1, 4+C, N], not [1, N, 4+C])
   "names": ["rover", "crate", "beacon"] or null,  (class names stored in
             the file's metadata, decoded; null: none stored)
   "metadata": {"names": "..."},       (the metadata_props exactly)
   "note": "..."}                      (what is odd about it, or "")
"""

import json
import os
import sys

import numpy as np
import onnx
from onnx import TensorProto, helper, numpy_helper

H, W = 64, 96  # input height and width
C = 3  # classes
GH, GW = H // 4, W // 4  # trunk grid: 16 x 24
N = GH * GW  # 384 candidates
NAMES = ["rover", "crate", "beacon"]


def calibration_images():
    """Two fixed images in 0..1, [2, 3, H, W]: uniform noise, and smooth
    blocks and gradients (more like a photograph). The heads are scaled on
    these, so that the scores spread over 0..1 on inputs of either kind."""
    rng = np.random.default_rng(1000)
    noise = rng.random((3, H, W))
    yy, xx = np.mgrid[0:H, 0:W] / np.array([H, W]).reshape(2, 1, 1)
    smooth = np.stack([xx, yy, 0.5 + 0.5 * np.sin(6 * xx + 4 * yy)])
    for _ in range(6):
        x0, y0 = rng.integers(0, W - 16), rng.integers(0, H - 12)
        smooth[:, y0:y0 + rng.integers(8, 24), x0:x0 + rng.integers(12, 32)] = rng.random((3, 1, 1))
    return np.stack([noise, smooth]).astype(np.float32)


def conv2d(x, w, b, stride, pad):
    """Plain 2-D convolution in numpy, [B, Cin, H, W] -> [B, Cout, H', W'],
    as ONNX Conv (cross-correlation, symmetric zero padding)."""
    k = w.shape[-1]
    x = np.pad(x, ((0, 0), (0, 0), (pad, pad), (pad, pad)))
    win = np.lib.stride_tricks.sliding_window_view(x, (k, k), axis=(2, 3))[:, :, ::stride, ::stride]
    return (np.einsum("bchwij,ocij->bohw", win, w, optimize=True) + b.reshape(1, -1, 1, 1)).astype(np.float32)


CALIB = calibration_images()


class Graph:
    """Collects nodes and initializers; names every tensor uniquely."""

    def __init__(self, seed):
        self.rng = np.random.default_rng(seed)
        self.val = {"images": CALIB}  # tensor name -> its value on the calibration images
        self.nodes = []
        self.inits = []
        self.count = 0

    def name(self, base):
        self.count += 1
        return "%s_%d" % (base, self.count)

    def const(self, array, base="c"):
        n = self.name(base)
        self.inits.append(numpy_helper.from_array(array, n))
        return n

    def op(self, op_type, inputs, out=None, **attrs):
        out = out or self.name(op_type.lower())
        self.nodes.append(helper.make_node(op_type, inputs, [out], name=self.name("n_" + op_type.lower()), **attrs))
        return out

    def conv(self, x, cin, cout, k=3, stride=1, gain=1.0, bias=0.0, out=None):
        fan_in = cin * k * k
        w = (self.rng.standard_normal((cout, cin, k, k)) * gain * np.sqrt(2.0 / fan_in)).astype(np.float32)
        b = (bias + 0.1 * self.rng.standard_normal(cout)).astype(np.float32)
        p = (k - 1) // 2 if stride != k else 0
        return self.conv_wb(x, w, b, stride, p, out)

    def conv_wb(self, x, w, b, stride, p, out=None):
        k = w.shape[-1]
        y = self.op("Conv", [x, self.const(w, "w"), self.const(b, "b")], out,
                    kernel_shape=[k, k], strides=[stride, stride], pads=[p, p, p, p])
        if x in self.val:
            self.val[y] = conv2d(self.val[x], w, b, stride, p)
        return y

    def relu(self, x):
        y = self.op("Relu", [x])
        self.val[y] = np.maximum(self.val[x], 0)
        return y

    def head(self, f, cout, centre, spread=1.5):
        """A 1x1 convolution whose outputs, over the calibration images,
        have median centre and a spread (interquartile range / 1.35) of
        spread: so the scores come out spread over 0..1 for any seed."""
        x = self.val[f]
        w = self.rng.standard_normal((cout, x.shape[1], 1, 1)).astype(np.float32)
        z = conv2d(x, w, np.zeros(cout, np.float32), 1, 0)
        z = z.transpose(1, 0, 2, 3).reshape(cout, -1)
        q1, med, q3 = np.quantile(z, [0.25, 0.5, 0.75], axis=1)
        # Rounded to 1/1024, so that another BLAS's last-bit differences in
        # the calibration do not change the weights.
        gain = np.round(1024 * spread * 1.35 / np.maximum(q3 - q1, 1e-6)) / 1024
        w = (w * gain.reshape(cout, 1, 1, 1)).astype(np.float32)
        b = (np.round(1024 * (centre - med * gain)) / 1024).astype(np.float32)
        return self.conv_wb(f, w, b, 1, 0)

    def trunk(self, x):
        return self.relu(self.conv(self.relu(self.conv(x, 3, 8, stride=2)), 8, 16, stride=2))

    def centre_boxes(self, f, gh, gw, cell, size_w, size_h, grid=True):
        """[1, 4, gh, gw]: cx, cy, w, h in input pixels."""
        s = self.op("Sigmoid", [self.head(f, 4, 0.0, spread=1.0)])
        if grid:
            gx, gy = np.meshgrid(np.arange(gw, dtype=np.float32), np.arange(gh, dtype=np.float32))
            g = np.zeros((1, 4, gh, gw), np.float32)
            g[0, 0], g[0, 1] = gx, gy
            s = self.op("Add", [s, self.const(g, "grid")])
            scale = np.array([cell, cell, size_w, size_h], np.float32)
        else:
            scale = np.array([size_w, size_h, size_w / 2, size_h / 2], np.float32)
        return self.op("Mul", [s, self.const(scale.reshape(1, 4, 1, 1), "scale")])

    def corners(self, cs):
        """A fixed 1x1 convolution from cx, cy, w, h to x0, y0, x1, y1."""
        m = np.array([[1, 0, -0.5, 0], [0, 1, 0, -0.5], [1, 0, 0.5, 0], [0, 1, 0, 0.5]], np.float32)
        return self.op("Conv", [cs, self.const(m.reshape(4, 4, 1, 1), "corners")], kernel_shape=[1, 1])

    def scores(self, f, cout, median=0.15):
        """Sigmoid scores whose median over the calibration images is
        median."""
        return self.op("Sigmoid", [self.head(f, cout, np.log(median / (1 - median)))])

    def flat(self, x, channels, n):
        return self.op("Reshape", [x, self.const(np.array([1, channels, n], np.int64), "shape")])

    def rows(self, x, out):
        """[1, K, n] -> [1, n, K]."""
        return self.op("Transpose", [x], out, perm=[0, 2, 1])


def vi(name, dtype, shape):
    return helper.make_tensor_value_info(name, dtype, shape)


def model(g, name, inputs, outputs, metadata=None):
    graph = helper.make_graph(g.nodes, name, inputs, outputs, g.inits)
    m = helper.make_model(graph, producer_name="boxwright-testdata", producer_version="1",
                          opset_imports=[helper.make_opsetid("", 13)])
    m.ir_version = 8
    for k, v in (metadata or {}).items():
        p = m.metadata_props.add()
        p.key, p.value = k, v
    onnx.checker.check_model(m, full_check=True)
    return m


def images_in(dtype=TensorProto.FLOAT, shape=(1, 3, H, W)):
    return vi("images", dtype, list(shape))


def centre_scores_graph(seed, prologue=None, transposed=False, objectness=False, n=N):
    """prologue(g), if given, adds the nodes that turn "images" into a
    float32 [1, 3, H, W] tensor and returns its name."""
    g = Graph(seed)
    x = "images"
    if prologue:
        x = prologue(g)
        g.val[x] = CALIB
    f = g.trunk(x)
    parts = [g.centre_boxes(f, GH, GW, 4, W / 2, H / 2)]
    if objectness:  # objectness * class score: median near 0.15
        parts.append(g.scores(f, 1, median=0.7))
        parts.append(g.scores(f, C, median=0.22))
    else:
        parts.append(g.scores(f, C))
    k = 4 + (1 if objectness else 0) + C
    cat = g.op("Concat", parts, axis=1)
    if transposed:
        g.op("Reshape", [cat, g.const(np.array([1, k, n], np.int64), "shape")], "output0")
        return g, [vi("output0", TensorProto.FLOAT, [1, k, n])]
    g.rows(g.flat(cat, k, n), "output0")
    return g, [vi("output0", TensorProto.FLOAT, [1, n, k])]


def build_all():
    """Returns [(file, onnx model, models.json entry)]."""
    out = []

    def entry(file, layout, m, transposed=False, names=None, note=""):
        inp = m.graph.input[0]
        dims = lambda t: [d.dim_param if d.dim_param else d.dim_value for d in t.type.tensor_type.shape.dim]
        dtype = lambda t: onnx.mapping.TENSOR_TYPE_TO_NP_TYPE[t.type.tensor_type.elem_type].name
        shape = dims(inp)
        return {
            "file": file, "layout": layout,
            "width": shape[-1], "height": shape[-2],
            "input": {"name": inp.name, "dtype": dtype(inp), "shape": shape},
            "outputs": [{"name": o.name, "dtype": dtype(o), "shape": dims(o)} for o in m.graph.output],
            "num_classes": C, "transposed": transposed, "names": names,
            "metadata": {p.key: p.value for p in m.metadata_props}, "note": note,
        }

    def add(file, layout, m, **kw):
        out.append((file, m, entry(file, layout, m, **kw)))

    # centre-scores, with Python-dict names in the metadata.
    g, outs = centre_scores_graph(1)
    names_dict = "{" + ", ".join("%d: '%s'" % (i, n) for i, n in enumerate(NAMES)) + "}"
    add("centre_scores.onnx", "centre-scores",
        model(g, "centre_scores", [images_in()], outs, {"names": names_dict}), names=NAMES)

    g, outs = centre_scores_graph(2, transposed=True)
    add("centre_scores_t.onnx", "centre-scores", model(g, "centre_scores_t", [images_in()], outs),
        transposed=True)

    g, outs = centre_scores_graph(3, objectness=True)
    add("centre_objectness.onnx", "centre-objectness-scores",
        model(g, "centre_objectness", [images_in()], outs))

    # corners-scores: boxes [1, N, 4], scores [1, N, C].
    g = Graph(4)
    f = g.trunk("images")
    g.rows(g.flat(g.corners(g.centre_boxes(f, GH, GW, 4, W / 2, H / 2)), 4, N), "boxes")
    g.rows(g.flat(g.scores(f, C), C, N), "scores")
    add("corners_scores.onnx", "corners-scores",
        model(g, "corners_scores", [images_in()],
              [vi("boxes", TensorProto.FLOAT, [1, N, 4]), vi("scores", TensorProto.FLOAT, [1, N, C])],
              {"classes": json.dumps(NAMES)}), names=NAMES)

    # corners-scores with ids: boxes [1, N, 4], scores [1, N], class_ids [1, N] int64.
    g = Graph(5)
    f = g.trunk("images")
    g.rows(g.flat(g.corners(g.centre_boxes(f, GH, GW, 4, W / 2, H / 2)), 4, N), "boxes")
    s = g.flat(g.scores(f, C), C, N)  # [1, C, N]
    g.op("ReduceMax", [s], "scores", axes=[1], keepdims=0)
    g.op("ArgMax", [s], "class_ids", axis=1, keepdims=0)
    add("corners_scores_ids.onnx", "corners-scores",
        model(g, "corners_scores_ids", [images_in()],
              [vi("boxes", TensorProto.FLOAT, [1, N, 4]), vi("scores", TensorProto.FLOAT, [1, N]),
               vi("class_ids", TensorProto.INT64, [1, N])]),
        note="class_ids is int64 in the file; OpenCV 4.6's dnn returns it as float32")

    # detections: [1, K, 6], one row per cell of a 4 x 6 grid of 16 x 16 pixels.
    g = Graph(6)
    f = g.trunk("images")
    dh, dw = GH // 4, GW // 4
    k = dh * dw  # 24
    f4 = g.relu(g.conv(f, 16, 16, k=4, stride=4))
    box = g.corners(g.centre_boxes(f4, dh, dw, 16, W / 2, H / 2))
    score = g.scores(f4, 1, median=0.4)
    cls = g.op("Cast", [g.op("ArgMax", [g.head(f4, C, 0.0)], axis=1, keepdims=1)],
               to=TensorProto.FLOAT)
    g.rows(g.flat(g.op("Concat", [box, score, cls], axis=1), 6, k), "dets")
    add("detections.onnx", "detections",
        model(g, "detections", [images_in()], [vi("dets", TensorProto.FLOAT, [1, k, 6])]))

    # Bad: a rank-3 input (Unsqueeze inside so that the model still runs).
    g, outs = centre_scores_graph(
        7, prologue=lambda g: g.op("Unsqueeze", ["images", g.const(np.array([0], np.int64), "axes")]))
    add("rank3_input.onnx", "bad", model(g, "rank3_input", [images_in(shape=(3, H, W))], outs),
        note="input rank 3")

    # Bad: a uint8 input (Cast inside).
    g, outs = centre_scores_graph(8, prologue=lambda g: g.op("Cast", ["images"], to=TensorProto.FLOAT))
    add("int_input.onnx", "bad", model(g, "int_input", [images_in(TensorProto.UINT8)], outs),
        note="uint8 input")

    # Bad for a fixed-size runner: symbolic height and width.
    g = Graph(9)
    f = g.trunk("images")
    parts = [g.centre_boxes(f, 0, 0, 0, W, H, grid=False), g.scores(f, C)]
    cat = g.op("Concat", parts, axis=1)  # [1, 7, h/4, w/4]
    flat = g.op("Reshape", [cat, g.const(np.array([1, 4 + C, -1], np.int64), "shape")])
    g.rows(flat, "output0")
    add("dynamic_input.onnx", "bad",
        model(g, "dynamic_input", [images_in(shape=(1, 3, "height", "width"))],
              [vi("output0", TensorProto.FLOAT, [1, "n", 4 + C])]),
        note="symbolic input height and width; runs at multiples of 4, output centre-scores [1, (h/4)*(w/4), 7]")

    # Bad: an output that fits no layout.
    g = Graph(10)
    f = g.trunk("images")
    g.op("AveragePool", [g.head(f, 7, 0.0)], "output0", kernel_shape=[4, 4], strides=[3, 5])
    add("no_layout.onnx", "bad",
        model(g, "no_layout", [images_in()], [vi("output0", TensorProto.FLOAT, [1, 7, 5, 5])]),
        note="output [1, 7, 5, 5] fits no layout")
    return out


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: build_models.py OUTDIR")
    outdir = sys.argv[1]
    os.makedirs(outdir, exist_ok=True)
    entries = []
    for file, m, e in build_all():
        with open(os.path.join(outdir, file), "wb") as fh:
            fh.write(m.SerializeToString())
        entries.append(e)
    with open(os.path.join(outdir, "models.json"), "w") as fh:
        json.dump(entries, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
