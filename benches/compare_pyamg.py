#!/usr/bin/env python3
"""Times a general-purpose peer, pyamg's Ruge-Stueben AMG with CG acceleration, on the same
conservative 5-point axisymmetric operator that holdoff solves, in the same run.

Not run in CI. Usage (from the repository root):

    python3 benches/compare_pyamg.py [--threads N] [--bin PATH] [nodes ...]

It runs `holdoff bench` for each size (which prints holdoff's own timings, the fastest of three
runs, and exports the symmetric operator), loads the exported operator and right-hand side (Matrix Market files), solves to 1e-10
relative residual with pyamg, also the fastest of three runs, and prints seconds per unknown for
both and their ratio. Both sides run on the same thread count N (default 1): holdoff through
RAYON_NUM_THREADS, numpy/scipy through OMP_NUM_THREADS, OPENBLAS_NUM_THREADS and
MKL_NUM_THREADS, all set to N here before anything starts, and both printed. `--bin PATH` runs
an already built holdoff executable instead of `cargo run --release`.
"""
import os
import subprocess
import sys
import tempfile
import time


def options_from_argv():
    args = sys.argv[1:]
    n = "1"
    if "--threads" in args:
        i = args.index("--threads")
        if i + 1 >= len(args) or not args[i + 1].isdigit() or int(args[i + 1]) < 1:
            sys.exit("--threads: expected a whole number of at least 1")
        n = args[i + 1]
        del args[i : i + 2]
    binary = None
    if "--bin" in args:
        i = args.index("--bin")
        if i + 1 >= len(args) or not os.path.isfile(args[i + 1]):
            sys.exit("--bin: expected the path of a holdoff executable")
        binary = os.path.abspath(args[i + 1])
        del args[i : i + 2]
    return n, binary, args


THREADS, BINARY, SIZE_ARGS = options_from_argv()
PINNED = ("RAYON_NUM_THREADS", "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
for var in PINNED:
    os.environ[var] = THREADS

try:
    import numpy as np
    import pyamg
    import scipy.sparse as sp
except ImportError:
    subprocess.check_call([sys.executable, "-m", "pip", "install", "--quiet", "pyamg", "scipy", "numpy"])
    import numpy as np
    import pyamg
    import scipy.sparse as sp


def holdoff_bench(nodes, export_dir):
    command = [BINARY] if BINARY else ["cargo", "run", "--release", "--quiet", "--"]
    out = subprocess.check_output(
        command + ["bench", "--sizes", str(nodes), "--export", export_dir],
        text=True,
        env=os.environ.copy(),
    )
    print(out, end="")
    rows = {}
    for line in out.splitlines():
        parts = line.split()
        if parts and parts[0] in ("ShortleyWeller", "Symmetric"):
            rows[parts[0]] = {"unknowns": int(parts[2]), "iter": int(parts[3]), "total": float(parts[8])}
    return rows


def load(export_dir):
    import scipy.io

    a = scipy.io.mmread(os.path.join(export_dir, "operator.mtx")).tocsr()
    b = np.asarray(scipy.io.mmread(os.path.join(export_dir, "rhs.mtx"))).ravel()
    return a, b


def main():
    sizes = [int(a) for a in SIZE_ARGS] or [250_000, 1_000_000]
    print("pyamg", pyamg.__version__)
    print("threads, both sides: " + ", ".join(f"{v}={os.environ[v]}" for v in PINNED))
    for nodes in sizes:
        with tempfile.TemporaryDirectory() as d:
            rows = holdoff_bench(nodes, d)
            a, b = load(d)
        best = None
        for _ in range(3):
            t0 = time.perf_counter()
            ml = pyamg.ruge_stuben_solver(a)
            t1 = time.perf_counter()
            residuals = []
            x = ml.solve(b, tol=1e-10, accel="cg", residuals=residuals)
            t2 = time.perf_counter()
            if best is None or t2 - t0 < best[2] - best[0]:
                best = (t0, t1, t2, x, residuals)
        t0, t1, t2, x, residuals = best
        rel = np.linalg.norm(b - a @ x) / np.linalg.norm(b)
        n = a.shape[0]
        pyamg_total = t2 - t0
        print(
            f"pyamg RS+CG ({THREADS} thread(s)): rows {n}, iterations {len(residuals) - 1}, relative residual {rel:.2e}, "
            f"setup {t1 - t0:.3f} s, solve {t2 - t1:.3f} s, total {pyamg_total:.3f} s"
        )
        for scheme, r in rows.items():
            ratio = (r["total"] / n) / (pyamg_total / n)
            print(
                f"  holdoff {scheme} ({THREADS} thread(s)): total {r['total']:.3f} s, "
                f"time per unknown = {ratio:.2f} x pyamg's"
            )


if __name__ == "__main__":
    main()
