#!/usr/bin/env python3
"""Times a general-purpose peer, pyamg's Ruge-Stueben AMG with CG acceleration, on the same
conservative 5-point axisymmetric operator that holdoff solves, in the same run.

Not run in CI. Usage (from the repository root):

    python3 benches/compare_pyamg.py [nodes ...]

It runs `holdoff bench` for each size (which prints holdoff's own timings, the fastest of three
runs, and exports the symmetric operator), loads the exported CSR arrays, solves to 1e-10
relative residual with pyamg single-threaded, also the fastest of three runs, and prints seconds
per unknown for both and their ratio.
"""
import os
import subprocess
import sys
import tempfile
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("MKL_NUM_THREADS", "1")

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
    out = subprocess.check_output(
        ["cargo", "run", "--release", "--quiet", "--", "bench", "--sizes", str(nodes), "--export", export_dir],
        text=True,
    )
    print(out, end="")
    rows = {}
    for line in out.splitlines():
        parts = line.split()
        if parts and parts[0] in ("ShortleyWeller", "Symmetric"):
            rows[parts[0]] = {"unknowns": int(parts[2]), "iter": int(parts[3]), "total": float(parts[8])}
    return rows


def load(export_dir):
    with open(os.path.join(export_dir, "shape.txt")) as f:
        n, nnz = map(int, f.read().split())
    indptr = np.fromfile(os.path.join(export_dir, "indptr.u32"), dtype="<u4").astype(np.int64)
    indices = np.fromfile(os.path.join(export_dir, "indices.u32"), dtype="<u4").astype(np.int64)
    data = np.fromfile(os.path.join(export_dir, "data.f64"), dtype="<f8")
    b = np.fromfile(os.path.join(export_dir, "rhs.f64"), dtype="<f8")
    return sp.csr_matrix((data, indices, indptr), shape=(n, n)), b


def main():
    sizes = [int(a) for a in sys.argv[1:]] or [250_000, 1_000_000]
    print("pyamg", pyamg.__version__)
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
            f"pyamg RS+CG: rows {n}, iterations {len(residuals) - 1}, relative residual {rel:.2e}, "
            f"setup {t1 - t0:.3f} s, solve {t2 - t1:.3f} s, total {pyamg_total:.3f} s"
        )
        for scheme, r in rows.items():
            ratio = (r["total"] / n) / (pyamg_total / n)
            print(f"  holdoff {scheme}: total {r['total']:.3f} s, time per unknown = {ratio:.2f} x pyamg's")


if __name__ == "__main__":
    main()
