#!/usr/bin/python3
"""Reference for the tests of package suggest/onnx: runs a model with
OpenCV's dnn module (cv2.dnn.readNetFromONNX, Debian 12's python3-opencv
4.6, a runtime outside this project) and decodes its outputs in numpy,
independently of the Go decoder.

Usage: /usr/bin/python3 reference.py SPEC.json   (prints JSON to stdout;
a bad spec or a model OpenCV cannot run: a message on stderr, exit 1)

SPEC.json:
  {"model": "path/to/model.onnx",
   "input": "path/to/input.f32",   raw little-endian float32, [1, 3, H, W]
   "height": H, "width": W,
   "layout": "centre-scores" | "centre-objectness-scores" |
             "corners-scores" | "detections",
   "tensors": ["output0"],          output names in the layout's order:
             centre-*: [one tensor, [1, N, K] or transposed [1, K, N]
             (told apart by K = 4 + C, or 5 + C, on the last axis)];
             corners-scores: ["boxes" [1, N, 4], "scores" [1, N, C]] or
             ["boxes", "scores" [1, N], "class_ids" [1, N]];
             detections: [one tensor [1, K, 6]];
   "num_classes": C,
   "min_score": s,                  keep scores >= s
   "nms_iou": t,                    per-class NMS at IoU t; t <= 0: none
   "max_candidates": m,             (optional, default 30000)
   "max_detections": k,
   "multi_label": false,            true: every class >= s of a candidate
   "letterbox": {"scale": r, ("scale_x", "scale_y": per axis, default r) "pad_x": px, "pad_y": py,   (optional:
                 "image_width": iw, "image_height": ih}}  default 1, 0,
                                                           0, W, H)

Output:
  {"outputs": {"output0": {"shape": [1, 384, 7], "data": [flat floats]}},
   "detections": [{"class": k, "score": s, "box": [x0, y0, x1, y1]}, ...]}
  "outputs" holds every tensor named in "tensors" as OpenCV computed it
  (float32 values written as float64; int64 outputs such as class ids come
  back from OpenCV 4.6 as float32), flat in row-major order, with the
  shape declared in the model when it is static and has as many values,
  else OpenCV's shape.

The decoding, step by step (in float64, from the float32 outputs):
  1. Candidates, in candidate order (candidate i, then class k ascending):
     centre-scores: box = (cx - w/2, cy - h/2, cx + w/2, cy + h/2), score
       of class k = column 4 + k;
     centre-objectness-scores: the same box, score = objectness (column 4)
       * class score (column 5 + k);
     corners-scores: box as given; scores [1, N, C] as above, or with
       class ids: score and class as given (the class id rounded);
     detections: box, score and class (rounded) as given.
     Best class only (the first of equal bests, as numpy's argmax) unless
     multi_label, then every class; kept if score >= min_score.
  2. The best max_candidates (default 30000) of them: a stable sort by score,
     descending (ties keep candidate order).
  3. Back to image pixels: x = (x_in - pad_x) / scale, y = (y_in - pad_y)
     / scale, clamped to [0, image_width] x [0, image_height]; boxes under
     1 px wide or high after clamping are dropped.
  4. If nms_iou > 0: per class, cv2.dnn.NMSBoxes(boxes as [x, y, w, h],
     scores, score_threshold 0, nms_threshold nms_iou) (it keeps scores > 0
     and suppresses IoU > nms_iou, in float32).
  5. The survivors sorted by score, descending, stably (ties in the order
     of step 2), and the first max_detections kept.
"""

import json
import sys

import cv2
import numpy as np
import onnx

LAYOUTS = ("centre-scores", "centre-objectness-scores", "corners-scores", "detections")


MAX_CANDIDATES = 30000  # common practice for dense detectors


def fail(msg):
    sys.stderr.write("reference.py: %s\n" % msg)
    sys.exit(1)


def run(spec):
    h, w = int(spec["height"]), int(spec["width"])
    x = np.fromfile(spec["input"], dtype="<f4")
    if x.size != 3 * h * w:
        fail("%s: %d float32 values, want 1*3*%d*%d = %d" % (spec["input"], x.size, h, w, 3 * h * w))
    x = x.reshape(1, 3, h, w)
    model = onnx.load(spec["model"])
    declared = {}
    for o in model.graph.output:
        dims = [d.dim_value if d.HasField("dim_value") else None for d in o.type.tensor_type.shape.dim]
        declared[o.name] = dims
    names = list(spec["tensors"])
    for n in names:
        if n not in declared:
            fail("%s has no output %r (outputs: %s)" % (spec["model"], n, ", ".join(declared)))
    net = cv2.dnn.readNetFromONNX(spec["model"])
    net.setInput(x)
    try:
        blobs = net.forward(names)
    except cv2.error as e:
        fail("OpenCV cannot run %s: %s" % (spec["model"], e))
    out = {}
    for n, b in zip(names, blobs):
        shape = list(b.shape)
        d = declared[n]
        if d and None not in d and int(np.prod(d)) == b.size:
            shape = d
        out[n] = np.asarray(b, dtype=np.float64).reshape(shape)
    return out


def candidates(spec, t):
    """Returns boxes [M, 4], scores [M], classes [M], in candidate order."""
    layout, c = spec["layout"], int(spec["num_classes"])
    multi = bool(spec.get("multi_label", False))
    ts = [t[n] for n in spec["tensors"]]
    if layout in ("centre-scores", "centre-objectness-scores"):
        k = 4 + c + (1 if layout == "centre-objectness-scores" else 0)
        a = ts[0].reshape(ts[0].shape[-2], ts[0].shape[-1])
        if a.shape[1] != k:
            if a.shape[0] != k:
                fail("output %s: shape %s has no axis of %d" % (spec["tensors"][0], list(ts[0].shape), k))
            a = a.T
        cx, cy, bw, bh = a[:, 0], a[:, 1], a[:, 2], a[:, 3]
        boxes = np.stack([cx - bw / 2, cy - bh / 2, cx + bw / 2, cy + bh / 2], axis=1)
        cls = a[:, 4:] if k == 4 + c else a[:, 4:5] * a[:, 5:]
    elif layout == "corners-scores":
        boxes = ts[0].reshape(-1, 4)
        if len(ts) == 3:
            return boxes, ts[1].reshape(-1), np.rint(ts[2].reshape(-1)).astype(np.int64)
        cls = ts[1].reshape(boxes.shape[0], c)
    elif layout == "detections":
        d = ts[0].reshape(-1, 6)
        return d[:, :4], d[:, 4], np.rint(d[:, 5]).astype(np.int64)
    else:
        fail("layout %r: use one of %s" % (layout, ", ".join(LAYOUTS)))
    if multi:
        m = cls.shape[0]
        return (np.repeat(boxes, c, axis=0), cls.reshape(-1), np.tile(np.arange(c), m))
    best = np.argmax(cls, axis=1)
    return boxes, cls[np.arange(cls.shape[0]), best], best


def decode(spec, t):
    boxes, scores, classes = candidates(spec, t)
    keep = scores >= float(spec["min_score"])
    boxes, scores, classes = boxes[keep], scores[keep], classes[keep]
    order = np.argsort(-scores, kind="stable")[: int(spec.get("max_candidates", MAX_CANDIDATES))]
    boxes, scores, classes = boxes[order], scores[order], classes[order]
    lb = spec.get("letterbox") or {}
    r = float(lb.get("scale", 1.0))
    rx, ry = float(lb.get("scale_x", r)), float(lb.get("scale_y", r))
    px, py = float(lb.get("pad_x", 0.0)), float(lb.get("pad_y", 0.0))
    iw, ih = float(lb.get("image_width", spec["width"])), float(lb.get("image_height", spec["height"]))
    b = np.empty_like(boxes)
    b[:, 0] = np.clip((boxes[:, 0] - px) / rx, 0, iw)
    b[:, 2] = np.clip((boxes[:, 2] - px) / rx, 0, iw)
    b[:, 1] = np.clip((boxes[:, 1] - py) / ry, 0, ih)
    b[:, 3] = np.clip((boxes[:, 3] - py) / ry, 0, ih)
    big = ((b[:, 2] - b[:, 0]) >= 1) & ((b[:, 3] - b[:, 1]) >= 1)
    b, scores, classes = b[big], scores[big], classes[big]
    idx = np.arange(len(scores))
    t_nms = float(spec["nms_iou"])
    if t_nms > 0:
        kept = []
        for k in sorted(set(classes.tolist())):
            sel = idx[classes == k]
            xywh = [[float(v[0]), float(v[1]), float(v[2] - v[0]), float(v[3] - v[1])] for v in b[sel]]
            res = cv2.dnn.NMSBoxes(xywh, [float(s) for s in scores[sel]], 0.0, t_nms)
            kept.extend(int(sel[i]) for i in np.array(res).flatten())
        idx = np.array(sorted(kept), dtype=np.int64)
    idx = idx[np.argsort(-scores[idx], kind="stable")][: int(spec["max_detections"])]
    return [{"class": int(classes[i]), "score": float(scores[i]), "box": [float(v) for v in b[i]]} for i in idx]


def main():
    if len(sys.argv) != 2:
        fail("usage: reference.py SPEC.json")
    with open(sys.argv[1]) as fh:
        spec = json.load(fh)
    t = run(spec)
    res = {
        "outputs": {n: {"shape": list(a.shape), "data": a.reshape(-1).tolist()} for n, a in t.items()},
        "detections": decode(spec, t),
    }
    json.dump(res, sys.stdout)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
