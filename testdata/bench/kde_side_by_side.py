#!/usr/bin/python3
"""Side-by-side timing and accuracy of the fixed-bandwidth KDE on a 2,048-point grid.

Times, interleaved in one session and repeated, for n = 10^3 ... 10^6 ages:
  - scipy.stats.gaussian_kde evaluated on the grid (a direct sum of every kernel at every point),
  - statsmodels KDEUnivariate.fit(fft=True) (linear binning and a circular FFT convolution),
  - the Go benchmark BenchmarkKDEOn2048/n=N of each Go test binary given (go test -c ./stats),
all with the same ages, the same bandwidth h and the same grid [min - 4h, max + 4h] (statsmodels:
cut = 4, gridsize = 2048). Then compares each Python result with the closed-form Gaussian kernel sum
at the grid ages for n = 10^3 and 10^4 (the Go results: TestBinnedMatchesClosedForm -v).

Not a CI step. Needs the Debian packages python3-scipy and python3-statsmodels:
    apt-get install python3-scipy python3-statsmodels
    go test -c -o /tmp/stats.test ./stats
    /usr/bin/python3 testdata/bench/kde_side_by_side.py --reps 7 after=/tmp/stats.test [before=/tmp/old.test]

The ages are those of quantileAges in stats/kdepad_test.go: the i-th is the normal quantile at
frac((i + 1/2)(sqrt(5) - 1)/2) of its pulse (a third at 202.4 +- 0.10 Ma, the rest at 201.5 +- 0.15 Ma);
h is Scott's rule 1.06 sigma n^(-1/5) with the mixture's sigma.
"""
import argparse
import os
import re
import statistics
import subprocess
import sys
import time

import numpy as np
import scipy
import scipy.special
import scipy.stats
import statsmodels
from statsmodels.nonparametric.kde import KDEUnivariate

GRID = 2048
NS = [1_000, 10_000, 100_000, 1_000_000]
SD = np.sqrt(0.01 / 3 + 2 * 0.0225 / 3 + 2 * 0.81 / 9)


def ages(n):
    i = np.arange(n, dtype=np.float64)
    u = np.mod((i + 0.5) * 0.6180339887498949, 1.0)
    z = np.sqrt(2.0) * scipy.special.erfinv(2 * u - 1)
    return np.where(np.arange(n) % 3 == 0, 202.4 + 0.10 * z, 201.5 + 0.15 * z)


def scott(n):
    return 1.06 * SD * n ** -0.2


def grid(x, h):
    return np.linspace(x.min() - 4 * h, x.max() + 4 * h, GRID)


def run_scipy(x, h):
    # gaussian_kde's bandwidth is a factor on the sample's standard deviation (ddof = 1).
    kde = scipy.stats.gaussian_kde(x, bw_method=h / np.std(x, ddof=1))
    g = grid(x, h)
    return g, kde(g)


def run_statsmodels(x, h):
    k = KDEUnivariate(x)
    k.fit(kernel="gau", bw=h, fft=True, gridsize=GRID, cut=4)
    return k.support, k.density


def per_call(fn, min_total):
    """Mean wall and process CPU seconds per call over a loop of at least min_total seconds of wall
    time (one call if it is longer)."""
    calls, t0, c0 = 0, time.perf_counter(), time.process_time()
    while True:
        fn()
        calls += 1
        el = time.perf_counter() - t0
        if el >= min_total:
            return el / calls, (time.process_time() - c0) / calls


def run_go(binary, n):
    out = subprocess.run(
        [binary, "-test.run", "^$", "-test.bench", f"^BenchmarkKDEOn2048$/^n={n}$", "-test.cpu", "1",
         "-test.benchtime", "0.5s"],
        cwd=os.path.dirname(os.path.abspath(binary)), capture_output=True, text=True, check=True).stdout
    m = re.search(r"n=%d\S*\s+\d+\s+([\d.]+) ns/op\s+([\d.]+) cpu-ms/op" % n, out)
    if not m:
        sys.exit(f"no benchmark line in {binary} output:\n{out}")
    return float(m.group(1)) * 1e-9, float(m.group(2)) * 1e-3


def fmt(ms):
    return f"{ms:.3g}" if ms < 1000 else f"{ms:,.0f}"


def exact(x, h, g):
    c = 1 / (len(x) * h * np.sqrt(2 * np.pi))
    out = np.empty(len(g))
    for s in range(0, len(g), 128):
        z = (g[s:s + 128, None] - x[None, :]) / h
        out[s:s + 128] = c * np.exp(-0.5 * z * z).sum(axis=1)
    return out


def errors(got, want):
    peak = want.max()
    e = np.abs(got - want)
    big = want >= 1e-3 * peak
    return e.max(), e.max() / peak, (e[big] / want[big]).max()


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--reps", type=int, default=5)
    ap.add_argument("go", nargs="*", help="label=path of a Go test binary of ./stats")
    a = ap.parse_args()
    gos = [s.split("=", 1) for s in a.go]
    print(f"scipy {scipy.__version__}, statsmodels {statsmodels.__version__}, numpy {np.__version__}, "
          f"python {sys.version.split()[0]}; nproc {os.cpu_count()}")
    data = {n: ages(n) for n in NS}
    times = {}
    loads = []
    for rep in range(a.reps):
        loads.append(os.getloadavg()[0])
        for n in NS:
            x, h = data[n], scott(n)
            times.setdefault(("statsmodels", n), []).append(per_call(lambda: run_statsmodels(x, h), 0.3))
            for label, path in gos:
                times.setdefault((f"go {label}", n), []).append(run_go(path, n))
            times.setdefault(("scipy", n), []).append(per_call(lambda: run_scipy(x, h), 0.3))
        print(f"rep {rep + 1}/{a.reps} done, load average {loads[-1]:.2f}", file=sys.stderr, flush=True)
    loads.append(os.getloadavg()[0])
    print(f"load average (1 min) at the start of each repetition and at the end: "
          f"{', '.join(f'{l:.2f}' for l in loads)}")
    print()
    impls = sorted({k[0] for k in times})
    for which, what in ((0, "wall time"), (1, "process CPU time")):
        print(f"Median {what} per call (min–max over the {a.reps} repetitions):")
        print()
        print("| n | " + " | ".join(impls) + " |")
        print("|---|" + "---|" * len(impls))
        for n in NS:
            cells = []
            for impl in impls:
                t = [v[which] * 1e3 for v in times[(impl, n)]]
                cells.append(f"{fmt(statistics.median(t))} ms ({fmt(min(t))}–{fmt(max(t))})")
            print(f"| {n:,} | " + " | ".join(cells) + " |")
        print()
    print()
    print("Accuracy against the closed-form Gaussian kernel sum at each implementation's grid ages:")
    print("| n | h (Ma) | implementation | max abs error | of the peak | max relative (f ≥ 1e-3 peak) |")
    print("|---|---|---|---|---|---|")
    for n in NS[:2]:
        x, h = data[n], scott(n)
        for name, fn in (("scipy", run_scipy), ("statsmodels", run_statsmodels)):
            g, f = fn(x, h)
            ab, rel_peak, rel = errors(np.asarray(f), exact(x, h, np.asarray(g)))
            print(f"| {n:,} | {h:.4g} | {name} | {ab:.2e} | {rel_peak:.2e} | {rel:.2e} |")
    for label, path in gos:
        out = subprocess.run([path, "-test.run", "^TestBinnedMatchesClosedForm$", "-test.v", "-test.short"],
                             cwd=os.path.dirname(os.path.abspath(path)), capture_output=True, text=True).stdout
        print(f"\ngo {label} (TestBinnedMatchesClosedForm):")
        for line in out.splitlines():
            if "max |f̂ − f|" in line:
                print("   ", line.strip())


if __name__ == "__main__":
    main()
