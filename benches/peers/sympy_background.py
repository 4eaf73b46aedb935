"""How long SymPy takes for the field equations of the worked files about a background, and
how that compares with `lingrav check` on the same files.

For each file: read the TOML, build gbar, Tbar, Lambda, h and dT in SymPy, compute
dG = d/deps G[gbar + eps h] at eps = 0 by forward mode in eps (route A of
checks-backgrounds.md, section 0: every quantity of Gamma -> Riemann -> Ricci -> Einstein
carried as (value, d/deps value), inverse metric gbar^-1 - eps gbar^-1 h gbar^-1), the
residual E = dG + Lambda h - 8 pi dT, and decide E == 0 by that section's zero test
(tan -> sin/cos, expand_trig, sin/cos of each argument -> its half-angle tangent, cancel).
Only the field equations are timed on the SymPy side (lingrav's time includes every claim,
the background's equations and the audit, so the ratio is in SymPy's favour). lingrav: the
release binary, whole process, best of 5 runs.

Usage: python3 benches/peers/sympy_background.py [--bin PATH] [FILE...]
  (--bin defaults to $CARGO_TARGET_DIR/release/lingrav or target/release/lingrav: build it
  first with cargo build --release)
  (files default to every worked/*.toml with a [background] table)
Prints one line per file: name, lingrav ms, SymPy s, ratio SymPy/lingrav, and whether the
verdicts (E == 0 or not) agree; exit 1 on a disagreement. Needs Python 3.11+ and SymPy.
"""

import argparse
import json
import os
import re
import subprocess
import sys
import time
import tomllib
from pathlib import Path

t_import = time.perf_counter()
import sympy as sp  # noqa: E402

IMPORT_SECONDS = time.perf_counter() - t_import
ROOT = Path(__file__).resolve().parents[2]
NUMBER = re.compile(r"(?<![\w.])(\d+\.?\d*(?:[eE][+-]?\d+)?|\.\d+(?:[eE][+-]?\d+)?)")
PRIMED = re.compile(r"([A-Za-z_]\w*)('+)\s*\(")
FUNCTIONS = ("sin", "cos", "tan", "exp", "log", "sqrt", "sinh", "cosh", "tanh")


def translate(text):
    text = NUMBER.sub(lambda m: f"__exact('{m.group(1)}')", text)
    text = PRIMED.sub(lambda m: f"__prime_{m.group(1)}_{len(m.group(2))}(", text)
    return text.replace("^", "**")


class Names(dict):
    """Coordinates, parameters, functions, defines; d_a_b(...) and F''(...)."""

    def __init__(self, coords):
        super().__init__({str(c): c for c in coords})
        self.update({f: getattr(sp, f) for f in FUNCTIONS})
        self.update({"pi": sp.pi, "__exact": sp.Rational})
        self.coords = {str(c): c for c in coords}

    def __missing__(self, key):
        if key.startswith("d_"):
            vs = [self.coords[v] for v in key[2:].split("_")]
            return lambda f: sp.diff(f, *vs)
        if key.startswith("__prime_"):
            name, n = key[len("__prime_"):].rsplit("_", 1)
            f = self[name]
            u = sp.Dummy("u")
            return lambda a: sp.diff(f(u), u, int(n)).subs(u, a)
        raise KeyError(key)

    def evaluate(self, text):
        return sp.sympify(eval(translate(str(text)), {"__builtins__": {}}, self))


def table(ns, tab, names):
    z = sp.Integer(0)
    a = [[z] * 4 for _ in range(4)]
    for key, val in (tab or {}).items():
        if isinstance(val, dict):  # dotted keys: {a: {b: text}}
            for k2, text in val.items():
                m, n = names.index(key), names.index(k2)
                a[m][n] = a[n][m] = ns.evaluate(text)
        else:
            m, n = names.index(key[0]), names.index(key[1])
            a[m][n] = a[n][m] = ns.evaluate(val)
    return a


def field_residual(doc):
    names = doc.get("coordinates", ["t", "x", "y", "z"])
    X = sp.symbols(names, real=True)
    ns = Names(X)
    for p in doc.get("parameters", {}):
        ns[p] = sp.Symbol(p, real=True)
    for f in doc.get("functions", {}):
        ns[f] = sp.Function(f)
    for d, text in doc.get("define", {}).items():
        ns[d] = ns.evaluate(text)
    g = sp.Matrix(table(ns, doc.get("background"), names))
    h = sp.Matrix(table(ns, doc.get("perturbation"), names))
    dt = sp.Matrix(table(ns, doc.get("source"), names))
    lam = ns.evaluate(doc.get("cosmological_constant", 0))
    r = range(4)
    # Forward mode: (value, eps-derivative) pairs.
    gi = sp.simplify(g.inv())
    dgi = -gi * h * gi
    dg = [[[sp.diff(g[a, b], X[c]) for b in r] for a in r] for c in r]
    ddh = [[[sp.diff(h[a, b], X[c]) for b in r] for a in r] for c in r]

    def low(d, b, c, D):
        return (D[b][d][c] + D[c][d][b] - D[d][b][c]) / 2

    G0 = [[[sum(gi[a, d] * low(d, b, c, dg) for d in r) for c in r] for b in r] for a in r]
    G1 = [[[sum(gi[a, d] * low(d, b, c, ddh) + dgi[a, d] * low(d, b, c, dg) for d in r)
            for c in r] for b in r] for a in r]

    def ricci(G):
        # R_bd = d_a G^a_bd - d_d G^a_ab + G^a_ae G^e_bd - G^a_de G^e_ab, first order in eps.
        R = [[0] * 4 for _ in r]
        for b in r:
            for d in r:
                v0 = 0
                v1 = 0
                for a in r:
                    v0 += sp.diff(G[0][a][b][d], X[a]) - sp.diff(G[0][a][a][b], X[d])
                    v1 += sp.diff(G[1][a][b][d], X[a]) - sp.diff(G[1][a][a][b], X[d])
                    for e in r:
                        v0 += G[0][a][a][e] * G[0][e][b][d] - G[0][a][d][e] * G[0][e][a][b]
                        v1 += (G[1][a][a][e] * G[0][e][b][d] + G[0][a][a][e] * G[1][e][b][d]
                               - G[1][a][d][e] * G[0][e][a][b] - G[0][a][d][e] * G[1][e][a][b])
                R[b][d] = (v0, v1)
        return R

    R = ricci((G0, G1))
    s0 = sum(gi[a, b] * R[a][b][0] for a in r for b in r)
    s1 = sum(gi[a, b] * R[a][b][1] + dgi[a, b] * R[a][b][0] for a in r for b in r)
    E = {}
    for a in r:
        for b in range(a, 4):
            dG = R[a][b][1] - (h[a, b] * s0 + g[a, b] * s1) / 2
            E[(names[a], names[b])] = dG + lam * h[a, b] - 8 * sp.pi * dt[a, b]
    return E


def is_zero(e):
    e = sp.expand_trig(e.rewrite(sp.cos) if e.has(sp.tan) else e)
    trig = [a for a in e.atoms(sp.sin, sp.cos)]
    subs = {}
    for i, arg in enumerate(sorted({a.args[0] for a in trig}, key=str)):
        T = sp.Symbol(f"T{i}")
        subs[sp.sin(arg)] = 2 * T / (1 + T**2)
        subs[sp.cos(arg)] = (1 - T**2) / (1 + T**2)
    if subs:
        e = e.xreplace(subs)
    return sp.cancel(sp.together(e)) == 0


def lingrav_ms(binary, path):
    best = None
    status = None
    for _ in range(5):
        t0 = time.perf_counter()
        out = subprocess.run([binary, "check", "--format", "json", str(path)],
                             capture_output=True, text=True)
        dt = time.perf_counter() - t0
        best = dt if best is None else min(best, dt)
        claims = json.loads(out.stdout)["claims"]
        status = next(c["status"] for c in claims if c["key"] == "field_equations")
    return best * 1e3, status


def main():
    ap = argparse.ArgumentParser()
    target = Path(os.environ.get("CARGO_TARGET_DIR", ROOT / "target"))
    ap.add_argument("--bin", default=str(target / "release/lingrav"))
    ap.add_argument("files", nargs="*")
    args = ap.parse_args()
    files = [Path(f) for f in args.files] or sorted(
        p for p in (ROOT / "worked").glob("*.toml") if "\n[background]" in p.read_text())
    print(f"import sympy: {IMPORT_SECONDS:.2f} s (not counted); SymPy {sp.__version__}")
    print(f"{'file':42} {'lingrav ms':>10} {'SymPy s':>8} {'ratio':>7}  verdicts")
    bad = 0
    for path in files:
        doc = tomllib.loads(path.read_text())
        t0 = time.perf_counter()
        E = field_residual(doc)
        zero = all(is_zero(e) for e in E.values())
        sympy_s = time.perf_counter() - t0
        ms, status = lingrav_ms(args.bin, path)
        agree = (status == "holds") == zero
        bad += not agree
        print(f"{path.name:42} {ms:10.1f} {sympy_s:8.2f} {sympy_s * 1e3 / ms:7.0f}  "
              f"{'agree' if agree else 'MISMATCH'} (E == 0: {zero}, lingrav {status})",
              flush=True)
    sys.exit(1 if bad else 0)


if __name__ == "__main__":
    main()
