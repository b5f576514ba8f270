#!/usr/bin/python3
"""Times OpenCV's matchTemplate (TM_CCOEFF_NORMED) on the inputs the Go
benchmarks of this package write, for the `make bench` table:

  --mode one-scale    BenchmarkNCC12MPOneScale: one 64x64 template over a
                      4000x3000 float32 gray plane (image.f32, template.f32).
  --mode five-scales  BenchmarkSearch12MPFiveScales: the exhaustive search
                      OpenCV offers, matchTemplate of the template resized to
                      each of five scales over the full-resolution plane
                      (image.f32, template.f32, scales.json); the resizes
                      (cv2.INTER_AREA to shrink, cv2.INTER_LINEAR to enlarge,
                      the interpolations our Resize uses) and the five maps
                      are timed as one operation.

Usage (BENCH_DATA is the folder the Go benchmark wrote):

    BENCH_DATA=DIR go test ./suggest/exemplar/ -run '^$' \\
        -bench '^BenchmarkNCC12MPOneScale$' -benchtime 3x
    /usr/bin/python3 suggest/exemplar/compare_ncc.py --mode one-scale \\
        --runs 5 --threads 2 DIR

One untimed warm-up, then one line "seconds X" per timed run. --threads N
pins OpenCV's thread count to the Go run's GOMAXPROCS. Needs Debian's
python3-opencv (4.6) and python3-numpy; exits non-zero without them.
"""
import argparse
import json
import os
import sys
import time

try:
    import cv2
    import numpy as np
except ImportError as e:
    sys.exit(f"compare_ncc.py: needs python3-opencv and python3-numpy: {e}")


def raw(path, shape):
    a = np.fromfile(path, dtype="<f4")
    if a.size != shape[0] * shape[1]:
        sys.exit(f"compare_ncc.py: {path}: {a.size} float32 values, want {shape[0]}x{shape[1]}")
    return a.reshape(shape)


def one_scale(d):
    img = raw(os.path.join(d, "image.f32"), (3000, 4000))
    tpl = raw(os.path.join(d, "template.f32"), (64, 64))

    def op():
        return float(cv2.matchTemplate(img, tpl, cv2.TM_CCOEFF_NORMED).max())
    return op, "matchTemplate 4000x3000 / 64x64"


def five_scales(d):
    with open(os.path.join(d, "scales.json")) as f:
        c = json.load(f)
    img = raw(os.path.join(d, "image.f32"), (c["height"], c["width"]))
    tw, th = c["template"]
    tpl = raw(os.path.join(d, "template.f32"), (th, tw))
    sizes = [tuple(s) for s in c["sizes"]]

    def op():
        best = -1.0
        for w, h in sizes:
            if (w, h) == (tw, th):
                t = tpl
            else:
                interp = cv2.INTER_AREA if w < tw else cv2.INTER_LINEAR
                t = cv2.resize(tpl, (w, h), interpolation=interp)
            best = max(best, float(cv2.matchTemplate(img, t, cv2.TM_CCOEFF_NORMED).max()))
        return best
    return op, f"matchTemplate {c['width']}x{c['height']} at scales {c['scales']} (templates {sizes})"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("dir", help="the folder BENCH_DATA named for the Go benchmark")
    ap.add_argument("--mode", choices=["one-scale", "five-scales"], default="one-scale")
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--threads", type=int, default=-1)
    a = ap.parse_args()
    if a.threads >= 0:
        cv2.setNumThreads(a.threads)
    op, what = (one_scale if a.mode == "one-scale" else five_scales)(a.dir)
    peak = op()  # warm-up
    print(f"opencv {cv2.__version__} threads={cv2.getNumThreads()} {what}, peak {peak:.4f}")
    for _ in range(a.runs):
        t0 = time.perf_counter()
        op()
        print(f"seconds {time.perf_counter() - t0:.6f}", flush=True)


if __name__ == "__main__":
    sys.exit(main())
