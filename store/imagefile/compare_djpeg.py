#!/usr/bin/python3
"""Times libjpeg-turbo's own decoder, djpeg (Debian libjpeg-turbo-progs),
on the 12 MP JPEG that BenchmarkDecode12MP writes into $BENCH_DATA:

    BENCH_DATA=/tmp/d go test ./store/imagefile -run '^$' \
        -bench 'Decode12MP/boxwright-full' -benchtime 3x
    /usr/bin/python3 store/imagefile/compare_djpeg.py --scale 1/8 --runs 9 /tmp/d

One untimed warm-up, then one "seconds X" line per timed run. A run is the
whole djpeg process writing PPM to /dev/null, its start (about 1 ms here)
included; `make bench` puts the median beside ours.
"""
import argparse
import os
import shutil
import subprocess
import sys
import time


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("dir")
    ap.add_argument("--runs", type=int, default=9)
    ap.add_argument("--scale", default="1/1")
    a = ap.parse_args()
    djpeg = shutil.which("djpeg")
    if djpeg is None:
        sys.exit("compare_djpeg: djpeg is not installed (Debian libjpeg-turbo-progs)")
    path = os.path.join(a.dir, "12mp.jpg")
    if not os.path.exists(path):
        sys.exit(f"compare_djpeg: {path} is missing: run BenchmarkDecode12MP with BENCH_DATA={a.dir} first")
    cmd = [djpeg, "-scale", a.scale, "-ppm", "-outfile", os.devnull, path]
    subprocess.run(cmd, check=True)
    for _ in range(a.runs):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True)
        print(f"seconds {time.perf_counter() - t0:.6f}")


if __name__ == "__main__":
    main()
