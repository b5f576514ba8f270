#!/usr/bin/python3
"""Times float32 matrix products in PyTorch (Debian's python3-torch 1.13,
which multiplies with its own BLAS) on the shapes of the Go GEMM
benchmarks, for the ratio of the two in one session:

    cd <repo>
    go test ./suggest/detector/nn/ -run XXX -bench 'Gemm' -benchtime 5x -count 5
    /usr/bin/python3 suggest/detector/nn/compare_gemm.py --threads 2

Report the median GFLOP/s of each; the ratio is Go's over PyTorch's. Pass
--threads N to match the Go run's thread count (the -N suffix of the
benchmark name).
"""
import argparse
import statistics
import time

import torch

SHAPES = [(256, 4096, 1152), (32, 1152, 288)]  # m, n, k as in the Go benchmarks


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--threads", type=int, default=0)
    ap.add_argument("--repeat", type=int, default=25)
    args = ap.parse_args()
    if args.threads > 0:
        torch.set_num_threads(args.threads)
    torch.manual_seed(1)
    for m, n, k in SHAPES:
        a = torch.randn(m, k, dtype=torch.float32)
        b = torch.randn(k, n, dtype=torch.float32)
        torch.mm(a, b)  # warm up
        rates = []
        for _ in range(args.repeat):
            t = time.perf_counter()
            torch.mm(a, b)
            rates.append(2 * m * n * k / (time.perf_counter() - t) / 1e9)
        print(f"torch.mm {m}x{n}x{k}: median {statistics.median(rates):.1f} GFLOP/s "
              f"({torch.get_num_threads()} threads)")


if __name__ == "__main__":
    main()
