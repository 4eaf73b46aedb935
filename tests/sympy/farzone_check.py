"""Outside check of `far_zone_order` (issue 13): the falloff order of every Lorenz and
field-equation residual of a problem file at fixed retarded time, computed with SymPy from the
definitions (hbar = h - eta tr(h)/2, d^mu hbar_{mu nu}, the linearized Einstein tensor from the
linearized Ricci tensor R_mn = (d_a d_m h^a_n + d_a d_n h^a_m - d_m d_n h - box h_mn)/2), then
the ray t = u + rho, (x, y, z) = rho*(2, 3, 6)/7 and a series in e = 1/rho.

Input (stdin): JSON {"parameters": {...}, "defines": [[name, text], ...], "perturbation":
{"tt": text, ...}, "max_order": K}. Output (stdout): JSON {component name: order}, where order
is the power k of the leading term e^k, or K when the residual is O(e^K). Along the ray each
residual is a rational function of e, so the order is the lowest power of e in its numerator
minus that in its denominator (coefficients simplified with SymPy's trigonometric rules).
"""
import json
import sys

import sympy as sp

t, x, y, z = sp.symbols("t x y z", real=True)
X = [t, x, y, z]
NAMES = "txyz"
ETA = sp.diag(-1, 1, 1, 1)


def parse(text, scope):
    return sp.sympify(text.replace("^", "**"), locals=scope)


def main():
    spec = json.load(sys.stdin)
    scope = {"t": t, "x": x, "y": y, "z": z, "pi": sp.pi}
    for name in spec["parameters"]:
        scope[name] = sp.Symbol(name, positive=True)
    # Defines may come in any order: each is parsed with the others as plain symbols, then
    # substituted until none is left.
    defines = {sp.Symbol(name): parse(text, scope) for name, text in spec["defines"]}
    for _ in range(len(defines) + 1):
        defines = {k: v.xreplace(defines) for k, v in defines.items()}
    for k, v in defines.items():
        scope[k.name] = v
    h = sp.zeros(4, 4)
    for key, text in spec["perturbation"].items():
        i, j = NAMES.index(key[0]), NAMES.index(key[1])
        h[i, j] = h[j, i] = parse(text, scope)
    trace = sum(ETA[a, a] * h[a, a] for a in range(4))
    hbar = h - ETA * trace / 2
    lorenz = [sp.expand(sum(ETA[m, m] * sp.diff(hbar[m, n], X[m]) for m in range(4)))
              for n in range(4)]
    up = ETA * h  # h^a_n (eta is its own inverse)
    dd = [[[[sp.diff(h[m, n], X[a], X[b]) for n in range(4)] for m in range(4)]
           for b in range(4)] for a in range(4)]
    dtrace = [[sp.diff(trace, X[a], X[b]) for b in range(4)] for a in range(4)]
    ricci = sp.zeros(4, 4)
    for m in range(4):
        for n in range(m, 4):
            s = 0
            for a in range(4):
                s += ETA[a, a] * (dd[a][m][a][n] + dd[a][n][a][m] - dd[a][a][m][n])
            ricci[m, n] = ricci[n, m] = (s - dtrace[m][n]) / 2
    rscalar = sum(ETA[a, a] * ricci[a, a] for a in range(4))
    einstein = ricci - ETA * rscalar / 2
    u, e = sp.Symbol("u", real=True), sp.Symbol("e", positive=True)
    ray = {t: u + 1 / e, x: sp.Rational(2, 7) / e, y: sp.Rational(3, 7) / e,
           z: sp.Rational(6, 7) / e}
    K = spec["max_order"]

    def lowest(poly_expr):
        """The lowest power of e with a coefficient that is not identically 0."""
        p = sp.Poly(sp.expand(poly_expr), e)
        powers = [m[0] for m, c in zip(p.monoms(), p.coeffs())
                  if sp.simplify(sp.expand_trig(c)) != 0]
        return min(powers) if powers else None

    def order(expr):
        # Along the ray every residual is a rational function of e (sqrt(x^2 + y^2 + z^2) =
        # 1/e exactly for e > 0; functions of t - r are functions of u alone).
        f = sp.together(sp.expand(expr.subs(ray)))
        num, den = sp.fraction(f)
        lo = lowest(num)
        if lo is None:
            return K
        return min(lo - lowest(den), K)

    out = {}
    for n in range(4):
        out["d^mu hbar_mu" + NAMES[n]] = order(lorenz[n])
    for m in range(4):
        for n in range(m, 4):
            out["G_" + NAMES[m] + NAMES[n]] = order(einstein[m, n])
    json.dump(out, sys.stdout)


if __name__ == "__main__":
    main()
