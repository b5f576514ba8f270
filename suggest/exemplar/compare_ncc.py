#!/usr/bin/python3
"""Times OpenCV's matchTemplate (TM_CCOEFF_NORMED) on the input of
BenchmarkNCC12MPOneScale: a 4000x3000 float32 gray plane, a 64x64 template.

Run both in one session, on the same machine, one after the other:

    cd <repo>
    mkdir -p /tmp/nccdump
    NCC_DUMP=/tmp/nccdump go test ./suggest/exemplar/ -run XXX \
        -bench NCC12MPOneScale -benchtime 5x -count 5
    /usr/bin/python3 suggest/exemplar/compare_ncc.py /tmp/nccdump

Without a directory the script makes its own noise of the same size (the
timing does not depend on the values). The ratio is the median ns/op of
the Go benchmark divided by the median printed here (goal <= 2). Pass
--threads N to pin OpenCV's thread count to the Go run's GOMAXPROCS (the
-N suffix of the benchmark name); by default OpenCV uses all cores, as Go does.
Needs Debian's python3-opencv (4.6) and python3-numpy.
"""
import argparse
import os
import statistics
import sys
import time

import cv2
import numpy as np

W, H, TW, TH = 4000, 3000, 64, 64


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("dump", nargs="?", help="directory NCC_DUMP wrote")
    ap.add_argument("--runs", type=int, default=15)
    ap.add_argument("--threads", type=int, default=-1)
    ap.add_argument("--go-ns", type=float, help="Go median ns/op, to print the ratio")
    a = ap.parse_args()
    if a.threads >= 0:
        cv2.setNumThreads(a.threads)
    if a.dump:
        img = np.fromfile(os.path.join(a.dump, "image.f32"), dtype="<f4").reshape(H, W)
        tpl = np.fromfile(os.path.join(a.dump, "template.f32"), dtype="<f4").reshape(TH, TW)
    else:
        rng = np.random.default_rng(1)
        img = (rng.random((H, W)) * 255).astype(np.float32)
        tpl = img[1000:1000 + TH, 1000:1000 + TW].copy()
    cv2.matchTemplate(img, tpl, cv2.TM_CCOEFF_NORMED)  # warm-up
    times = []
    for _ in range(a.runs):
        t0 = time.perf_counter()
        out = cv2.matchTemplate(img, tpl, cv2.TM_CCOEFF_NORMED)
        times.append(time.perf_counter() - t0)
    med = statistics.median(times)
    print(f"opencv {cv2.__version__} threads={cv2.getNumThreads()} "
          f"matchTemplate {W}x{H} / {TW}x{TH}: median {med:.4f} s over {a.runs} runs "
          f"(peak {float(out.max()):.4f})")
    if a.go_ns:
        print(f"ratio ours/OpenCV = {a.go_ns / 1e9 / med:.2f}")


if __name__ == "__main__":
    sys.exit(main())
