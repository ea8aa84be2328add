#!/usr/bin/python3
"""Times the benchmark convolutions of model/internal/cpu in PyTorch, side by side.

Reference: Debian python3-torch 1.13.1 (oneDNN). The shapes match
BenchmarkConv3x3Forward and BenchmarkConv3x3ForwardBackward in
model/internal/cpu/conv_bench_test.go: 3x3 kernel, stride 1, zero padding 1,
float32, bias; forward+backward computes the input, weight and bias gradients
and counts 3x the forward FLOPs. Also SGEMM 1024^3 (torch.mm).

Run on two threads with glibc's allocator kept from returning memory (first-touch
page faults are costly on small VMs):

  MALLOC_MMAP_THRESHOLD_=4000000000 MALLOC_TRIM_THRESHOLD_=4000000000 \\
      /usr/bin/python3 testdata/cpu/conv/bench_torch.py

Prints GFLOP/s over wall-clock time and GFLOP per CPU-second (process CPU time),
the best of several repetitions.
"""
import time

import torch
import torch.nn.functional as F

SHAPES = [(1, 3, 128, 256, 32), (1, 32, 64, 128, 64), (1, 64, 32, 64, 128), (4, 32, 64, 128, 64)]


def timeit(fn, flops, min_time=1.0, reps=3):
    fn()
    best_wall, best_cpu = 0.0, 0.0
    for _ in range(reps):
        n = 0
        w0, c0 = time.perf_counter(), time.process_time()
        while True:
            fn()
            n += 1
            w, c = time.perf_counter() - w0, time.process_time() - c0
            if w >= min_time:
                break
        best_wall = max(best_wall, flops * n / w / 1e9)
        best_cpu = max(best_cpu, flops * n / max(c, 1e-9) / 1e9)
    return best_wall, best_cpu


def main():
    torch.set_num_threads(2)
    torch.manual_seed(0)
    print("torch", torch.__version__, "threads", torch.get_num_threads())
    for n, cin, h, w, cout in SHAPES:
        x = torch.rand(n, cin, h, w) * 2 - 1
        wt = (torch.rand(cout, cin, 3, 3) * 2 - 1)
        b = torch.rand(cout) * 2 - 1
        flops = 2.0 * n * cout * h * w * cin * 9
        with torch.no_grad():
            fw = timeit(lambda: F.conv2d(x, wt, b, padding=1), flops)
        xg = x.clone().requires_grad_(True)
        wg = wt.clone().requires_grad_(True)
        bg = b.clone().requires_grad_(True)
        dy = torch.rand(n, cout, h, w) * 2 - 1

        def step():
            y = F.conv2d(xg, wg, bg, padding=1)
            torch.autograd.grad(y, [xg, wg, bg], dy)

        fb = timeit(step, 3 * flops)
        name = "%dx%dx%dx%d-%d" % (n, cin, h, w, cout)
        print("conv3x3 %-18s forward %7.1f GFLOP/s %7.1f GFLOP/cpu-s   forward+backward %7.1f GFLOP/s %7.1f GFLOP/cpu-s"
              % (name, fw[0], fw[1], fb[0], fb[1]))
    a = torch.rand(1024, 1024)
    bm = torch.rand(1024, 1024)
    c = torch.empty(1024, 1024)
    mm = timeit(lambda: torch.mm(a, bm, out=c), 2.0 * 1024 ** 3)
    print("sgemm 1024                            %7.1f GFLOP/s %7.1f GFLOP/cpu-s" % mm)


if __name__ == "__main__":
    main()
