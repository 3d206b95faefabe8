#!/usr/bin/env python3
"""Time rolloff's solver kernels next to what a numpy/scipy script author would write,
on the same N-section RC ladder, in one run, and write the ratios to
docs/performance.md (between the `compare:begin` / `compare:end` markers).

The ladder (R = 1 kOhm, C = 1 nF per section, 1 V through Rs = 1 Ohm, output open)
is built here as the N x N nodal matrices G and C with the source folded into a
Norton equivalent (the unknowns are v1 ... vN); rolloff solves its own modified
nodal system of the same circuit (N + 2 unknowns: n0 and the source current too).
Frequencies are log-spaced from 1 Hz to 1 MHz. Each Python method is timed as the
median of 5 repetitions, each repeating the sweep for at least 0.1 s (one warm-up
sweep first), single-threaded BLAS. The sums of |v(n1)| over one sweep are compared
between the two sides as a correctness check.

Python is needed only for this comparison, never for the tests.

    python3 benches/compare/compare.py            # sizes up to 1e5 sections
    python3 benches/compare/compare.py --big      # adds 1e6 sections (slow)
"""

import json
import os
import subprocess
import sys
import time

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import scipy.sparse as sp  # noqa: E402
import scipy.sparse.linalg as spla  # noqa: E402

R, C, RS = 1e3, 1e-9, 1.0
ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))


def ladder_gc(n):
    """G (sparse), C (diagonal vector), b for the Norton-folded ladder."""
    g, gs = 1.0 / R, 1.0 / (RS + R)
    main = np.full(n, 2.0 * g)
    main[0] = gs + g
    main[-1] = g
    off = np.full(n - 1, -g)
    G = sp.diags([off, main, off], [-1, 0, 1], format="csc")
    Cm = sp.identity(n, format="csc") * C
    b = np.zeros(n, dtype=complex)
    b[0] = gs
    return G, Cm, b


def freqs(points):
    return np.logspace(0.0, 6.0, points)


def timed(fn, min_s=0.1, reps=5):
    fn()
    out = []
    for _ in range(reps):
        start = time.perf_counter()
        count = 0
        while True:
            fn()
            count += 1
            if time.perf_counter() - start >= min_s:
                break
        out.append((time.perf_counter() - start) / count)
    out.sort()
    return out[len(out) // 2]


def numpy_batched(n, f):
    G, Cm, b = ladder_gc(n)
    Gd, Cd = G.toarray(), Cm.toarray()
    w = 2 * np.pi * f

    def run():
        Y = Gd[None, :, :] + 1j * w[:, None, None] * Cd[None, :, :]
        return np.linalg.solve(Y, np.broadcast_to(b, (len(w), n))[..., None])[..., 0]

    x = run()
    return timed(run) / len(f) * 1e6, float(np.abs(x[:, 0]).sum())


def scipy_spsolve(n, f):
    G, Cm, b = ladder_gc(n)
    w = 2 * np.pi * f

    def run():
        s = 0.0
        for wk in w:
            x = spla.spsolve((G + 1j * wk * Cm).tocsc(), b)
            s += abs(x[0])
        return s

    s = run()
    return timed(run) / len(f) * 1e6, s


def scipy_splu(n, f):
    G, Cm, b = ladder_gc(n)
    w = 2 * np.pi * f

    def run():
        s = 0.0
        for wk in w:
            x = spla.splu((G + 1j * wk * Cm).tocsc()).solve(b)
            s += abs(x[0])
        return s

    s = run()
    return timed(run) / len(f) * 1e6, s


def rolloff(specs):
    subprocess.run(
        ["cargo", "build", "--release", "--quiet", "--example", "ladder_points"],
        cwd=ROOT,
        check=True,
    )
    exe = os.path.join(ROOT, "target", "release", "examples", "ladder_points")
    out = subprocess.run([exe] + specs, cwd=ROOT, check=True, capture_output=True, text=True)
    res = {}
    for line in out.stdout.splitlines():
        d = json.loads(line)
        res[(d["kind"], d["sections"])] = (d["us_per_point"], d["checksum_n1"])
    return res


def fmt(us):
    if us >= 1000:
        return f"{us / 1000:.2f} ms"
    return f"{us:.2f} µs"


def main():
    big = "--big" in sys.argv
    dense_sizes = [(10, 1000), (50, 1000), (100, 200)]
    sparse_sizes = [(1000, 200), (10_000, 50), (100_000, 50)] + ([(1_000_000, 20)] if big else [])
    specs = [f"dense:{n}:{p}" for n, p in dense_sizes] + [f"sparse:{n}:{p}" for n, p in sparse_sizes]
    rust = rolloff(specs)
    lines = []
    lines.append(
        f"Measured by `benches/compare/compare.py` (numpy {np.__version__}, scipy {scipy.__version__}, "
        "single-threaded BLAS); rolloff kernels through `examples/ladder_points.rs`, release build. "
        "Per frequency point; ratio = Python time / rolloff time (above 1: rolloff is faster). "
        "Checksum = relative difference of the sums of |v(n1)| over one sweep."
    )
    lines.append("")
    lines.append("| sections | points | rolloff dense | numpy batched `solve` | ratio | checksum |")
    lines.append("|---:|---:|---:|---:|---:|---:|")
    for n, p in dense_sizes:
        f = freqs(p)
        t_np, s_np = numpy_batched(n, f)
        t_r, s_r = rust[("dense", n)]
        lines.append(
            f"| {n} | {p} | {fmt(t_r)} | {fmt(t_np)} | {t_np / t_r:.2f} | {abs(s_np - s_r) / abs(s_np):.1e} |"
        )
    lines.append("")
    lines.append(
        "| sections | points | rolloff sparse | scipy build + `spsolve` | ratio | scipy build + `splu` + solve | ratio | checksum |"
    )
    lines.append("|---:|---:|---:|---:|---:|---:|---:|---:|")
    for n, p in sparse_sizes:
        f = freqs(p)
        t_sp, s_sp = scipy_spsolve(n, f)
        t_lu, _ = scipy_splu(n, f)
        t_r, s_r = rust[("sparse", n)]
        lines.append(
            f"| {n} | {p} | {fmt(t_r)} | {fmt(t_sp)} | {t_sp / t_r:.1f} | {fmt(t_lu)} | {t_lu / t_r:.1f} | "
            f"{abs(s_sp - s_r) / abs(s_sp):.1e} |"
        )
    table = "\n".join(lines)
    print(table)
    path = os.path.join(ROOT, "docs", "performance.md")
    begin, end = "<!-- compare:begin -->", "<!-- compare:end -->"
    text = open(path, encoding="utf-8").read() if os.path.exists(path) else f"# Performance\n\n{begin}\n{end}\n"
    if begin not in text:
        text += f"\n{begin}\n{end}\n"
    head, rest = text.split(begin, 1)
    _, tail = rest.split(end, 1)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(f"{head}{begin}\n{table}\n{end}{tail}")


if __name__ == "__main__":
    main()
