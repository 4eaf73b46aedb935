"""`lingrav export` against NumPy evaluating SymPy-lambdified expressions (issue 10, item 4).

The peer: SymPy builds the same quantity (h, or the 20 independent Riemann components, from
the textbook formula, benches/peers/linearized.py) for a worked file without arbitrary
functions, `lambdify(..., "numpy", cse=True)` compiles it, and NumPy evaluates it on the same
grid `lingrav export --grid --points N` uses (spatial, at the centre's t). Only that
evaluation is timed (best of 5), not SymPy's algebra. lingrav: the whole `export` process
(parse, algebra for the sidecar, certified values with their bounds, the audit rows, writing
the .npy file), best of 5, at N and at N/2 points per axis. Printed: NumPy's time per value;
NumPy's time per value when it also writes the same table (t, x, y, z, then the columns) with
np.save and syncs the file, as lingrav does (the like-for-like export);
lingrav's whole process per value; lingrav's time per added value, (T(N) - T(N/2)) over the
values added, which leaves out what does not grow with the points (start-up, parsing, the
sidecar's algebra, the 64 audit rows) but still includes writing the file, which NumPy's
does not; the ratio NumPy/lingrav of the per-value times (above 1: lingrav faster; whole
process, then per added value); and lingrav's CPU time per value (user + sys over its
threads, best of 5; on a loaded machine it says more than the wall time). lingrav's values
carry certified bounds; NumPy's do not.

Usage: python3 benches/export_numpy.py [--points N] [FILE ...]   (default: oblique_wave,
linear_wave_testbed, static_mass; N = 32). Needs a release build (cargo build --release),
SymPy and NumPy; the binary is looked for under $CARGO_TARGET_DIR, else target/.
"""

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
import tomllib
from pathlib import Path

import numpy as np
import sympy as sp

sys.path.insert(0, str(Path(__file__).resolve().parent / "peers"))
from linearized import COORDS_NAMES, Linearized, Namespace, riemann_independent, tensor  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
COORDS = sp.symbols(COORDS_NAMES, real=True)


def build(path):
    doc = tomllib.loads(path.read_text())
    if doc.get("functions"):
        raise SystemExit(f"{path.name}: arbitrary functions are not supported by this benchmark")
    ns = Namespace(sp, COORDS, sp.Rational, None)
    for name, value in doc.get("parameters", {}).items():
        ns[name] = sp.Rational(repr(value))
    for name, text in doc.get("define", {}).items():
        ns[name] = ns.evaluate(text)
    return doc, tensor(ns, doc.get("perturbation", {}), sp.Integer(0))


def grid(doc, n):
    g = doc.get("grid", {})
    center = g.get("center", [0.3, 0.4, 0.5, 0.6])
    width = g.get("width", 0.2)
    axes = [c + (np.arange(n) - (n - 1) / 2) * (width / (n - 1)) for c in center[1:]]
    x, y, z = np.meshgrid(*axes, indexing="ij")
    return center[0], x.ravel(), y.ravel(), z.ravel()


def best(f, k=5):
    times = []
    for _ in range(k):
        t0 = time.perf_counter()
        f()
        times.append(time.perf_counter() - t0)
    return min(times)


def best_process(cmd, k=5):
    """Best wall time and best CPU time (user + sys, all threads) of `cmd` over k runs."""
    walls, cpus = [], []
    for _ in range(k):
        r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True)
        walls.append(time.perf_counter() - t0)
        r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(r1.ru_utime - r0.ru_utime + r1.ru_stime - r0.ru_stime)
    return min(walls), min(cpus)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--points", type=int, default=32)
    ap.add_argument("files", nargs="*", default=["oblique_wave.toml", "linear_wave_testbed.toml", "static_mass.toml"])
    a = ap.parse_args()
    exe = Path(os.environ.get("CARGO_TARGET_DIR", ROOT / "target")) / "release" / "lingrav"
    print("| file | quantity | values | NumPy ns/value | NumPy and np.save ns/value | lingrav ns/value, "
          "whole process (bounds included) | lingrav ns per added value | NumPy/lingrav, whole / added "
          "| (NumPy and np.save)/lingrav per added value | lingrav CPU ns/value |")
    print("| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
    for name in a.files:
        path = ROOT / "worked" / name if not Path(name).exists() else Path(name)
        doc, h = build(path)
        lin = Linearized(h, sp, COORDS)
        for q in ["h", "riemann"]:
            if q == "h":
                exprs = [h[m][n] for m in range(4) for n in range(m, 4)]
            else:
                exprs = [lin.riemann(*idx) for idx in riemann_independent()]
            f = sp.lambdify(COORDS, exprs, "numpy", cse=True)
            t, x, y, z = grid(doc, a.points)
            rows = x.size

            def run_numpy():
                out = f(t, x, y, z)
                return [np.broadcast_to(np.asarray(v, dtype=float), x.shape) for v in out]

            tn = best(run_numpy)

            # The same values as a file: the table lingrav writes (t, x, y, z, then the
            # columns), saved as .npy and synced, as lingrav's file is.
            def run_numpy_file(d):
                cols = [np.broadcast_to(np.float64(t), x.shape), x, y, z] + run_numpy()
                path = Path(d) / "n.npy"
                np.save(path, np.column_stack(cols))
                fd = os.open(path, os.O_RDONLY)
                os.fsync(fd)
                os.close(fd)

            with tempfile.TemporaryDirectory() as d:
                tf = best(lambda: run_numpy_file(d))
            def lingrav(n):
                with tempfile.TemporaryDirectory() as d:
                    cmd = [str(exe), "export", str(path), "-q", q, "--grid", "--points", str(n),
                           "--out", str(Path(d) / "o.npy"), "--force"]
                    return best_process(cmd)

            tl, cpu = lingrav(a.points)
            half = a.points // 2
            th, _ = lingrav(half)
            values = rows * len(exprs)
            added = values - half**3 * len(exprs)
            per_added = (tl - th) / added
            print(f"| {path.name} | {q} | {values} | {1e9 * tn / values:.1f} | {1e9 * tf / values:.1f} "
                  f"| {1e9 * tl / values:.1f} | {1e9 * per_added:.1f} "
                  f"| {tn / tl:.2f} / {tn / values / per_added:.2f} | {tf / values / per_added:.2f} "
                  f"| {1e9 * cpu / values:.1f} |")


if __name__ == "__main__":
    main()
