"""Outside check of `lingrav export`: every written value against mpmath.

Usage: python3 export_check.py SIDECAR.meta.json

Reads the sidecar (the problem's texts, parameter values, direction frame, columns and
per-column error bounds) and the data file beside it, recomputes every column at every row
with mpmath at 50 digits from the definitions written here (derivatives by mpmath.diff), and
checks |mpmath - written| <= error_bound (+ 1e-40 for mpmath's own error). Prints one JSON
line per column with the worst ratio |difference| / bound, and exits 1 on any violation.

The formulas are written from the textbook definitions, independently of lingrav:
hbar = h - (1/2) eta tr h; R_abcd = (1/2)(h_ad,bc + h_bc,ad - h_bd,ac - h_ac,bd) (MTW sign);
Ricci R_mn = eta^rs R_rmsn; G = R - (1/2) eta R; ADM alpha = 1 - h_tt/2, beta_i = h_ti,
gamma = delta + h, K_ij = -(1/2)(h_ij,t - h_tj,i - h_ti,j); Hamiltonian h_ij,ij - h_jj,kk -
16 pi T_tt; momentum K_ij,j - K_jj,i + 8 pi T_ti; Psi4 = (R(N,u,N,u) - R(N,v,N,v))/4
- i R(N,u,N,v)/2 with N = (1, -n); h_plus, h_cross from the TT projection in the basis u, v.
Arbitrary functions are not supported here (the test problems do not use them).
"""

import csv
import json
import math
import os
import re
import sys

import mpmath as mp

mp.mp.dps = 50
COORDS = ["t", "x", "y", "z"]
ETA = [-1, 1, 1, 1]
SYM = [(0, 0), (0, 1), (0, 2), (0, 3), (1, 1), (1, 2), (1, 3), (2, 2), (2, 3), (3, 3)]
SPATIAL_SYM = [(0, 0), (0, 1), (0, 2), (1, 1), (1, 2), (2, 2)]
PAIRS = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)]

NUM = re.compile(r"(?<![A-Za-z_0-9.])(\d+\.\d*(?:[eE][-+]?\d+)?|\d+(?:[eE][-+]?\d+)?|\.\d+(?:[eE][-+]?\d+)?)")


def to_python(text):
    """A lingrav expression as Python over mpmath: exact decimals, ^ as **."""
    text = NUM.sub(lambda m: "mpf('%s')" % m.group(1), text)
    return text.replace("^", "**")


FUNCS = {
    "mpf": mp.mpf, "sin": mp.sin, "cos": mp.cos, "tan": mp.tan, "exp": mp.exp,
    "log": mp.log, "sqrt": mp.sqrt, "sinh": mp.sinh, "cosh": mp.cosh, "tanh": mp.tanh,
    "pi": mp.pi,
}


def compile_texts(meta):
    prob = meta["problem"]
    defines = [(n, compile(to_python(t), n, "eval")) for n, t in prob["define"].items()]
    params = {n: mp.mpf(v) for n, v in prob["parameters"].items()}

    def tensor(texts):
        out = {}
        for key, text in (texts or {}).items():
            mu, nu = COORDS.index(key[0]), COORDS.index(key[1])
            code = compile(to_python(text), key, "eval")
            out[(mu, nu)] = code
            out[(nu, mu)] = code
        return out

    return defines, params, tensor(prob["perturbation"]), tensor(prob["source"])


def evaluator(defines, params, code):
    def f(t, x, y, z):
        ns = dict(FUNCS)
        ns.update(params)
        ns.update({"t": t, "x": x, "y": y, "z": z})
        # The sidecar's defines are a JSON object (order not kept): resolve each once the
        # names it uses are known.
        todo = list(defines)
        while todo:
            left = []
            for name, c in todo:
                try:
                    ns[name] = eval(c, ns)
                except NameError:
                    left.append((name, c))
            if len(left) == len(todo):
                raise NameError("defines that cannot be resolved: %s" % [n for n, _ in left])
            todo = left
        return eval(code, ns)

    return f


def main(path):
    meta = json.load(open(path))
    data = os.path.join(os.path.dirname(path), meta["data"]["file"])
    rows = [[float(v) for v in r] for r in list(csv.reader(open(data)))[1:]]
    columns = meta["data"]["columns"]
    defines, params, h_code, t_code = compile_texts(meta)
    h_f = {k: evaluator(defines, params, c) for k, c in h_code.items()}
    t_f = {k: evaluator(defines, params, c) for k, c in t_code.items()}
    frame = None
    if meta.get("direction"):
        d = meta["direction"]
        frame = {k: [evaluator(defines, params, compile(to_python(s), k, "eval")) for s in d[k]] for k in ("n", "u", "v")}
    bounds = {}
    for q in meta["quantities"]:
        for c in q["columns"]:
            bounds[c["name"]] = c["error_bound"]
    worst = {}
    failures = 0
    for row in rows:
        p = [mp.mpf(v) for v in row[:4]]
        cache = {}

        def d(mu, nu, orders=(0, 0, 0, 0), src=False):
            table = t_f if src else h_f
            if (mu, nu) not in table:
                return mp.mpf(0)
            key = (src, min(mu, nu), max(mu, nu), orders)
            if key not in cache:
                f = table[(mu, nu)]
                cache[key] = f(*p) if sum(orders) == 0 else mp.diff(f, tuple(p), orders)
            return cache[key]

        def o(*axes):
            v = [0, 0, 0, 0]
            for a in axes:
                v[a] += 1
            return tuple(v)

        def riem(a, b, c, e):
            return (d(a, e, o(b, c)) + d(b, c, o(a, e)) - d(b, e, o(a, c)) - d(a, c, o(b, e))) / 2

        def ricci(m, n):
            return sum(ETA[s] * riem(s, m, s, n) for s in range(4))

        def kij(i, j, axis=None):
            a, b = i + 1, j + 1
            ex = () if axis is None else (axis,)
            return -(d(a, b, o(0, *ex)) - d(0, b, o(a, *ex)) - d(0, a, o(b, *ex))) / 2

        vals = {}
        for q in meta["quantities"]:
            name = q["quantity"]
            if name == "h":
                for m, n in SYM:
                    vals["h_" + COORDS[m] + COORDS[n]] = d(m, n)
            elif name == "hbar":
                tr = sum(ETA[r] * d(r, r) for r in range(4))
                for m, n in SYM:
                    vals["hbar_" + COORDS[m] + COORDS[n]] = d(m, n) - (ETA[m] * tr / 2 if m == n else 0)
            elif name == "dh":
                for r in range(4):
                    for m, n in SYM:
                        vals["d_%s_h_%s%s" % (COORDS[r], COORDS[m], COORDS[n])] = d(m, n, o(r))
            elif name == "riemann":
                for i, (a, b) in enumerate(PAIRS):
                    for c, e in PAIRS[i:]:
                        vals["R_" + "".join(COORDS[k] for k in (a, b, c, e))] = riem(a, b, c, e)
            elif name in ("ricci", "einstein"):
                rs = sum(ETA[s] * ricci(s, s) for s in range(4))
                for m, n in SYM:
                    v = ricci(m, n)
                    if name == "einstein" and m == n:
                        v -= ETA[m] * rs / 2
                    vals[("R_" if name == "ricci" else "G_") + COORDS[m] + COORDS[n]] = v
            elif name == "adm":
                vals["alpha"] = 1 - d(0, 0) / 2
                for i in range(3):
                    vals["beta_" + COORDS[i + 1]] = d(0, i + 1)
                for i, j in SPATIAL_SYM:
                    idx = COORDS[i + 1] + COORDS[j + 1]
                    vals["gamma_" + idx] = (1 if i == j else 0) + d(i + 1, j + 1)
                    vals["K_" + idx] = kij(i, j)
            elif name == "constraints":
                ham = sum(d(i, j, o(i, j)) for i in range(1, 4) for j in range(1, 4))
                ham -= sum(d(j, j, o(k, k)) for k in range(1, 4) for j in range(1, 4))
                ham -= 16 * mp.pi * d(0, 0, src=True)
                vals["H"] = ham
                for i in range(3):
                    m = sum(kij(i, j, j + 1) for j in range(3)) - sum(kij(j, j, i + 1) for j in range(3))
                    vals["M_" + COORDS[i + 1]] = m + 8 * mp.pi * d(0, i + 1, src=True)
            elif name in ("psi4", "hplus", "hcross"):
                n = [f(*p) for f in frame["n"]]
                u = [f(*p) for f in frame["u"]]
                v = [f(*p) for f in frame["v"]]
                if name == "psi4":
                    N, U, V = [1] + [-c for c in n], [0] + u, [0] + v

                    def contract(A, B, C, D):
                        return sum(A[a] * B[b] * C[c] * D[e] * riem(a, b, c, e)
                                   for a in range(4) for b in range(4) for c in range(4) for e in range(4)
                                   if A[a] and B[b] and C[c] and D[e] and a != b and c != e)

                    vals["psi4_re"] = (contract(N, U, N, U) - contract(N, V, N, V)) / 4
                    vals["psi4_im"] = -contract(N, U, N, V) / 2
                else:
                    P = [[(1 if i == j else 0) - n[i] * n[j] for j in range(3)] for i in range(3)]
                    H = [[d(i + 1, j + 1) for j in range(3)] for i in range(3)]
                    PH = [[sum(P[i][k] * H[k][j] for k in range(3)) for j in range(3)] for i in range(3)]
                    PHP = [[sum(PH[i][k] * P[k][j] for k in range(3)) for j in range(3)] for i in range(3)]
                    tr = sum(PH[i][i] for i in range(3))
                    TT = [[PHP[i][j] - P[i][j] * tr / 2 for j in range(3)] for i in range(3)]
                    if name == "hplus":
                        vals["h_plus"] = sum(TT[i][j] * (u[i] * u[j] - v[i] * v[j]) for i in range(3) for j in range(3)) / 2
                    else:
                        vals["h_cross"] = sum(TT[i][j] * (u[i] * v[j] + v[i] * u[j]) for i in range(3) for j in range(3)) / 2
        for k, name in enumerate(columns[4:]):
            exact = vals[name]
            written = row[4 + k]
            diff = abs(exact - mp.mpf(written))
            bound = bounds[name]
            ratio = float(diff / (mp.mpf(bound) + mp.mpf("1e-40")))
            worst[name] = max(worst.get(name, 0.0), ratio)
            if diff > mp.mpf(bound) + mp.mpf("1e-40"):
                failures += 1
                print(json.dumps({"violation": name, "point": row[:4], "written": written,
                                  "mpmath": mp.nstr(exact, 25), "bound": bound}))
    for name, r in worst.items():
        print(json.dumps({"column": name, "worst_ratio": r}))
    print(json.dumps({"rows": len(rows), "columns": len(columns) - 4, "violations": failures}))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
