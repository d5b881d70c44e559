#!/usr/bin/env python3
"""Times a general-purpose peer, pyamg's Ruge-Stueben AMG with CG acceleration, on the same
conservative 5-point axisymmetric operator that holdoff solves, in the same run.

Not run in CI. Usage (from the repository root):

    python3 benches/compare_pyamg.py [--threads N[,N...]] [--bin PATH] [nodes ...]

It runs `holdoff bench` for each size (which prints holdoff's own timings, the fastest of three
runs, the machine's triad bandwidth and the V-cycle's share of it, and exports the symmetric
operator), loads the exported operator and right-hand side (Matrix Market files), solves to
1e-10 relative residual with pyamg, also the fastest of three runs, and prints seconds per
unknown for both and their ratio. Both sides run on the same thread count N (default 1):
holdoff through RAYON_NUM_THREADS, numpy/scipy through OMP_NUM_THREADS, OPENBLAS_NUM_THREADS
and MKL_NUM_THREADS, all set to N before anything starts, and both printed. With several
thread counts (`--threads 1,2`) each count runs in its own process (the thread variables must
be set before numpy loads) and a table of all of them closes the run, with the machine load
before and after. `--bin PATH` runs an already built holdoff executable instead of
`cargo run --release`.
"""
import os
import subprocess
import sys
import tempfile
import time


def options_from_argv():
    args = sys.argv[1:]
    counts = ["1"]
    if "--threads" in args:
        i = args.index("--threads")
        counts = args[i + 1].split(",") if i + 1 < len(args) else []
        if not counts or not all(c.isdigit() and int(c) >= 1 for c in counts):
            sys.exit("--threads: expected whole numbers of at least 1, separated by commas")
        del args[i : i + 2]
    binary = None
    if "--bin" in args:
        i = args.index("--bin")
        if i + 1 >= len(args) or not os.path.isfile(args[i + 1]):
            sys.exit("--bin: expected the path of a holdoff executable")
        binary = os.path.abspath(args[i + 1])
        del args[i : i + 2]
    return counts, binary, args


COUNTS, BINARY, SIZE_ARGS = options_from_argv()
THREADS = COUNTS[0]
PINNED = ("RAYON_NUM_THREADS", "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
# A summary line for the closing table when several thread counts run.
TAG = "compare-pyamg-row"


def load_average():
    try:
        with open("/proc/loadavg") as f:
            return " ".join(f.read().split()[:3])
    except OSError:
        return "unknown"


def several_counts():
    """Runs this script once per thread count and prints the table of all rows."""
    rows = []
    print(f"load average (1, 5, 15 min) before: {load_average()}")
    for n in COUNTS:
        command = [sys.executable, os.path.abspath(__file__), "--threads", n]
        if BINARY:
            command += ["--bin", BINARY]
        out = subprocess.check_output(command + SIZE_ARGS, text=True)
        for line in out.splitlines():
            if line.startswith(TAG):
                rows.append(line.split()[1:])
            else:
                print(line)
    print(f"load average (1, 5, 15 min) after: {load_average()}")
    head = ("threads", "rows", "scheme", "iter", "holdoff s", "pyamg iter", "pyamg s", "ratio", "% triad")
    print(" ".join(f"{h:>14}" for h in head))
    for r in rows:
        print(" ".join(f"{v:>14}" for v in r))
    print("ratio: holdoff's seconds per unknown (assembly + setup + solve) over pyamg's "
          "(setup + solve), the same thread count on both sides; % triad: the V-cycle's "
          "estimated bytes over its time, against the triad measured by holdoff bench")


if len(COUNTS) > 1:
    several_counts()
    sys.exit(0)

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
            rows[parts[0]] = {
                "unknowns": int(parts[2]),
                "iter": int(parts[3]),
                "total": float(parts[8]),
                "triad": parts[-1],
            }
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
    print(f"load average (1, 5, 15 min) at the start: {load_average()}")
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
            print(
                TAG,
                THREADS,
                n,
                scheme,
                r["iter"],
                f"{r['total']:.3f}",
                len(residuals) - 1,
                f"{pyamg_total:.3f}",
                f"{ratio:.3f}",
                r["triad"],
            )
    print(f"load average (1, 5, 15 min) at the end: {load_average()}")


if __name__ == "__main__":
    main()
