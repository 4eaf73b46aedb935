"""Outside check of `far_zone_order` about a background (spherical-type coordinates): the
falloff order, in the background's orthonormal frame, of every linearized field-equation
residual and every component of the covariant Lorenz divergence, computed with SymPy from the
definitions.

Method. The metric is g = gbar + e1 h; every quantity is carried as a pair (order 0, order 1
in e1), and products drop e1^2: the inverse g^-1 = gbar^-1 - e1 gbar^-1 h gbar^-1, the
Christoffel symbols from their definition, the Riemann tensor
R^a_bcd = d_c G^a_db - d_d G^a_cb + G^a_ce G^e_db - G^a_de G^e_cb, Ricci R_bd = R^a_bad, the
scalar, Einstein's tensor G_ab = R_ab - g_ab R / 2; the field residual is its order-1 part
(vacuum, no Lambda). The Lorenz divergence is gbar^{ma} (d_a hb_mn - G^l_am hb_ln - G^l_an hb_ml)
with hb = h - gbar (gbar^{ab} h_ab) / 2. Then the ray t = u + 1/e, r = 1/e (angles fixed
symbols); each coordinate's weight w_a is minus half the power of e in the leading term of
gbar_aa along the ray, and a component E_ab counts as E_ab e^(w_a + w_b) (a vector V_b as
V_b e^(w_b)). Along the ray every residual of the inputs used is a rational function of e, so
its order is the lowest power of e in its numerator minus that in its denominator
(coefficients simplified with SymPy's trigonometric rules), capped at max_order.

Input (stdin): JSON {"coordinates": [4 names], "radius": name, "parameters": [names],
"functions": [names], "defines": [[name, text], ...], "background": {"a.b": text},
"perturbation": {"a.b": text}, "max_order": K}. Output (stdout): JSON
{"weights": [...], "field": {"a.b": order}, "lorenz": {"b": order}} with a <= b in the
coordinates' order.
"""
import json
import sys

import sympy as sp


def parse(text, scope):
    return sp.sympify(text.replace("^", "**"), locals=scope)


def main():
    spec = json.load(sys.stdin)
    names = spec["coordinates"]
    X = [sp.Symbol(n, real=True) for n in names]
    scope = {n: x for n, x in zip(names, X)}
    scope["pi"] = sp.pi
    for name in spec["parameters"]:
        scope[name] = sp.Symbol(name, positive=True)
    for name in spec["functions"]:
        scope[name] = sp.Function(name)
    for name, text in spec["defines"]:
        scope[name] = parse(text, scope)

    def tensor(table):
        m = sp.zeros(4, 4)
        for key, text in table.items():
            a, b = (names.index(k) for k in key.split("."))
            m[a, b] = m[b, a] = parse(text, scope)
        return m

    g0 = tensor(spec["background"])
    h = tensor(spec["perturbation"])
    gi0 = sp.simplify(g0.inv())
    gi1 = -gi0 * h * gi0
    d = sp.diff

    def christoffel(ginv, dg):
        # G^a_bc = ginv^{ad} (d_b g_dc + d_c g_db - d_d g_bc) / 2 for the metric parts dg.
        return [[[sum(ginv[a, k] * (d(dg[k, c], X[b]) + d(dg[k, b], X[c]) - d(dg[b, c], X[k]))
                      for k in range(4)) / 2 for c in range(4)] for b in range(4)]
                for a in range(4)]

    G0 = christoffel(gi0, g0)
    # Order 1: the inverse's order-1 part with gbar's derivatives, gbar's inverse with h's.
    Ga = christoffel(gi1, g0)
    Gb = christoffel(gi0, h)
    G1 = [[[Ga[a][b][c] + Gb[a][b][c] for c in range(4)] for b in range(4)] for a in range(4)]
    R = range(4)

    def riemann_part(A, B, C):
        # d_c A^a_db - d_d A^a_cb + B^a_ce C^e_db - B^a_de C^e_cb, Ricci-contracted (a = c).
        ric = sp.zeros(4, 4)
        for b in R:
            for dd in range(b, 4):
                s = 0
                for a in R:
                    s += d(A[a][dd][b], X[a]) - d(A[a][a][b], X[dd])
                    for e in R:
                        s += B[a][a][e] * C[e][dd][b] - B[a][dd][e] * C[e][a][b]
                ric[b, dd] = ric[dd, b] = s
        return ric

    zero = [[[0] * 4 for _ in R] for _ in R]
    ric0 = riemann_part(G0, G0, G0)
    ric1 = riemann_part(G1, G1, G0) + riemann_part(zero, G0, G1)
    scal0 = sum(gi0[a, b] * ric0[a, b] for a in R for b in R)
    scal1 = sum(gi1[a, b] * ric0[a, b] + gi0[a, b] * ric1[a, b] for a in R for b in R)
    field = ric1 - h * scal0 / 2 - g0 * scal1 / 2
    trace = sum(gi0[a, b] * h[a, b] for a in R for b in R)
    hb = h - g0 * trace / 2
    lorenz = [sum(gi0[m, a] * (d(hb[m, n], X[a])
                               - sum(G0[l][a][m] * hb[l, n] + G0[l][a][n] * hb[m, l] for l in R))
                  for m in R for a in R) for n in R]

    u, e = sp.Symbol("u", real=True), sp.Symbol("e", positive=True)
    t, r = X[0], X[names.index(spec["radius"])]
    ray = {t: u + 1 / e, r: 1 / e}
    K = spec["max_order"]

    def lowest(expr):
        p = sp.Poly(sp.expand(expr), e)
        powers = [m[0] for m, c in zip(p.monoms(), p.coeffs())
                  if sp.simplify(sp.expand_trig(c)) != 0]
        return min(powers) if powers else None

    def valuation(expr):
        f = sp.together(sp.expand(sp.simplify(expr.subs(ray, simultaneous=True))))
        num, den = sp.fraction(f)
        lo = lowest(num)
        if lo is None:
            return None
        return lo - lowest(den)

    weights = []
    for a in R:
        v = valuation(g0[a, a])
        assert v is not None and v % 2 == 0 and v <= 0, (names[a], v)
        weights.append(-v // 2)

    def order(expr, w):
        v = valuation(expr)
        return K if v is None else min(v + w, K)

    out = {"weights": weights, "field": {}, "lorenz": {}}
    for a in R:
        for b in range(a, 4):
            key = names[a] + "." + names[b]
            out["field"][key] = order(field[a, b], weights[a] + weights[b])
    for b in R:
        out["lorenz"][names[b]] = order(lorenz[b], weights[b])
    json.dump(out, sys.stdout)


if __name__ == "__main__":
    main()
