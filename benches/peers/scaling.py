#!/usr/bin/env python3
"""Writes the scaling series of the engine benchmark (issue 10) as lingrav problem files.

Four families, each file with its claims, so that `lingrav check` and
benches/peers/symengine_check.py decide the same things and can be timed side by side:

  waves_N{8,16,32}.toml      a sum of N oblique monochromatic plane waves in TT gauge. Each
                             travels along a rational unit vector n and carries both
                             polarizations in the basis (u, v); (u, v, n) is the rational
                             orthonormal frame of the rotation of a small integer quaternion,
                             so e_plus = u u - v v and e_cross = u v + v u are exact. Amplitudes
                             are parameters a_k, b_k; frequencies are k w. Claims: vacuum field
                             equations, Lorenz and TT gauge hold, not pure gauge.
  lpole_l{02,...,12}.toml    the exact static l-pole field along z: h_tt = 2 Phi,
                             h_ij = 2 Phi delta_ij with Phi = m r^-(2l+1) r^l P_l(z/r), an exterior
                             solid harmonic, written as m S_l(x, y, z)/r^(2l+1) with
                             S_l = r^l P_l(z/r) a polynomial in z and x^2 + y^2 + z^2. Claims:
                             vacuum field equations and Lorenz gauge hold, not pure gauge.
  gauge_poly_d{04,...,24}.toml  pure gauge h = d_mu xi_nu + d_nu xi_mu, each xi_mu a seeded
                             random polynomial of degree d in t, x, y, z (every monomial of
                             degree <= d present with probability 1/2, integer coefficients in
                             [-3, 3] without 0). Claims: pure gauge, vacuum field equations.
  schw_gauge_k{02,...,16}.toml  pure gauge about Schwarzschild in t, r, th, ph:
                             h_ab = D_a xi_b + D_b xi_a = d_a xi_b + d_b xi_a - 2 Gamma^c_ab xi_c
                             with the background's Christoffel symbols written out, each xi_mu
                             a seeded sum of k terms c t^a r^b cos(th)^p sin(ph)^q (a in 0..2,
                             b in -2..2, p in 0..3, q in 0..2, c in [-3, 3] without 0). Claims:
                             the background is vacuum, the linearized equations about it hold,
                             pure gauge by the file's vector holds, Lorenz gauge (fails).

Usage:  python3 benches/peers/scaling.py OUTDIR [--seed N]     (prints the files written)
"""

import argparse
import itertools
import random
import sys
from fractions import Fraction
from math import comb, gcd
from pathlib import Path

WAVES = (8, 16, 32)
POLES = (2, 4, 6, 8, 10, 12)
DEGREES = (4, 8, 12, 16, 20, 24)
GAUGE_TERMS = (2, 4, 8, 16)
AXES = "xyz"


def frac(q):
    """A Fraction as lingrav text: 3, -3/5."""
    return str(q.numerator) if q.denominator == 1 else f"{q.numerator}/{q.denominator}"


def signed_sum(terms):
    """'c1*e1 + c2*e2 - ...' from (Fraction, text) pairs, zero coefficients dropped."""
    out = ""
    for c, e in terms:
        if c == 0:
            continue
        mag = abs(c)
        body = frac(mag) if e == "1" else e if mag == 1 else f"{frac(mag)}*{e}"
        out += (" - " if c < 0 else " + ") + body if out else ("-" if c < 0 else "") + body
    return out or "0"


# --- N oblique plane waves -------------------------------------------------------------------


def frame(a, b, c, d):
    """(u, v, n): the columns of the rotation matrix of the quaternion (a, b, c, d), a right-
    handed rational orthonormal frame."""
    s = a * a + b * b + c * c + d * d
    m = [[a * a + b * b - c * c - d * d, 2 * (b * c - a * d), 2 * (b * d + a * c)],
         [2 * (b * c + a * d), a * a - b * b + c * c - d * d, 2 * (c * d - a * b)],
         [2 * (b * d - a * c), 2 * (c * d + a * b), a * a - b * b - c * c + d * d]]
    return tuple(tuple(Fraction(m[i][j], s) for i in range(3)) for j in range(3))


def directions(count, rng):
    """count frames with distinct oblique propagation directions (no zero component of n)."""
    seen, frames = set(), []
    quats = [q for q in itertools.product(range(-3, 4), repeat=4)
             if q[0] > 0 and gcd(*q) == 1]
    rng.shuffle(quats)
    for q in quats:
        u, v, n = frame(*q)
        if n in seen or any(c == 0 for c in n):
            continue
        seen.add(n)
        frames.append((u, v, n))
        if len(frames) == count:
            return frames
    raise ValueError("not enough directions")


def waves_file(count, rng):
    lines = [f"# {count} oblique TT plane waves with both polarizations; written by "
             "benches/peers/scaling.py.",
             f'name = "sum of {count} oblique plane waves"', "", "[parameters]", "w = 1.3"]
    for k in range(1, count + 1):
        lines.append(f"a{k} = {rng.randint(1, 9)}.0e-3")
        lines.append(f"b{k} = {rng.randint(1, 9)}.0e-3")
    lines += ["", "[define]"]
    comps = {(i, j): [] for i in range(3) for j in range(i, 3)}
    for k, (u, v, n) in enumerate(directions(count, rng), start=1):
        along = signed_sum([(n[i], AXES[i]) for i in range(3)])
        freq = "w" if k == 1 else f"{k}*w"
        lines.append(f"phase{k} = '{freq}*(t - ({along}))'")
        lines.append(f"hp{k} = 'a{k}*cos(phase{k})'")
        lines.append(f"hc{k} = 'b{k}*sin(phase{k})'")
        for i, j in comps:
            plus = u[i] * u[j] - v[i] * v[j]
            cross = u[i] * v[j] + v[i] * u[j]
            comps[(i, j)] += [(plus, f"hp{k}"), (cross, f"hc{k}")]
    lines += ["", "[perturbation]"]
    lines += [f"{AXES[i]}{AXES[j]} = '{signed_sum(terms)}'" for (i, j), terms in comps.items()]
    lines += ["", "[claims]", "field_equations = true", 'gauge = ["lorenz", "tt"]',
              "pure_gauge = false", ""]
    return "\n".join(lines)


# --- exact l-pole fields -----------------------------------------------------------------------


def lpole_file(l):
    # r^l P_l(z/r) = 2^-l sum_k (-1)^k C(l,k) C(2l-2k,l) z^(l-2k) r^(2k), with r^2 = s.
    terms = []
    for k in range(l // 2 + 1):
        c = Fraction((-1) ** k * comb(l, k) * comb(2 * l - 2 * k, l), 2 ** l)
        zpart = {0: "", 1: "z"}.get(l - 2 * k, f"z^{l - 2 * k}")
        spart = {0: "", 1: "s"}.get(k, f"s^{k}")
        terms.append((c, "*".join(p for p in (zpart, spart) if p) or "1"))
    return "\n".join([
        f"# The exact static {l}-pole field along z (an exterior solid harmonic); written by",
        "# benches/peers/scaling.py. Phi = m r^-(2l+1) r^l P_l(z/r) is harmonic for r > 0.",
        f'name = "exact {l}-pole field along z"', "", "[parameters]", "m = 0.01", "",
        "[define]", "s = 'x^2 + y^2 + z^2'", "r = 'sqrt(x^2 + y^2 + z^2)'",
        f"S = '{signed_sum(terms)}'", f"Phi = 'm*S/r^{2 * l + 1}'", "",
        "[perturbation]", "tt = '2*Phi'", "xx = '2*Phi'", "yy = '2*Phi'", "zz = '2*Phi'", "",
        "[claims]", "field_equations = true", 'gauge = ["lorenz"]', "pure_gauge = false", ""])


# --- polynomial pure gauge ----------------------------------------------------------------------


def monomial(exps):
    parts = [v if e == 1 else f"{v}^{e}" for v, e in zip("txyz", exps) if e]
    return "*".join(parts) or "1"


def polynomial(degree, rng):
    terms = []
    for total in range(degree + 1):
        for a in range(total + 1):
            for b in range(total - a + 1):
                for c in range(total - a - b + 1):
                    if rng.random() < 0.5:
                        coeff = rng.choice([-3, -2, -1, 1, 2, 3])
                        terms.append((Fraction(coeff), monomial((a, b, c, total - a - b - c))))
    return signed_sum(terms)


def gauge_file(degree, rng):
    lines = [f"# Pure gauge from a random polynomial gauge vector of degree {degree}; written by",
             "# benches/peers/scaling.py. h = d_mu xi_nu + d_nu xi_mu, so the linearized Riemann",
             "# tensor and the linearized Einstein tensor vanish.",
             f'name = "pure gauge from a degree-{degree} polynomial gauge vector"', "",
             "[define]"]
    lines += [f"xi_{v} = '{polynomial(degree, rng)}'" for v in "txyz"]
    lines += ["", "[perturbation]"]
    for i, a in enumerate("txyz"):
        for b in "txyz"[i:]:
            lines.append(f"{a}{b} = '2*d_{a}(xi_{a})'" if a == b
                         else f"{a}{b} = 'd_{a}(xi_{b}) + d_{b}(xi_{a})'")
    lines += ["", "[claims]", "field_equations = true", "pure_gauge = true", ""]
    return "\n".join(lines)


def schwarzschild_term(rng):
    c = rng.choice([-3, -2, -1, 1, 2, 3])
    a, b, p, q = rng.randint(0, 2), rng.randint(-2, 2), rng.randint(0, 3), rng.randint(0, 2)
    parts = [str(c)]
    parts += [f"t^{a}"] if a else []
    parts += [f"r^{b}" if b > 0 else f"r^({b})"] if b else []
    parts += [f"cos(th)^{p}"] if p else []
    parts += [f"sin(ph)^{q}"] if q else []
    return "*".join(parts)


def schwarzschild_gauge_file(k, rng):
    xi = {n: " + ".join(schwarzschild_term(rng) for _ in range(k)) for n in ("xt", "xr", "xth", "xph")}
    lines = [f"# Pure gauge about Schwarzschild from a random gauge vector, {k} terms per component;",
             "# written by benches/peers/scaling.py. h_ab = d_a xi_b + d_b xi_a - 2 Gamma^c_ab xi_c.",
             f'name = "pure gauge about Schwarzschild, {k} terms per component"',
             'coordinates = ["t", "r", "th", "ph"]', "", "[parameters]", "M = 1.0", "",
             "[define]", "f = '1 - 2*M/r'"]
    lines += [f"{n} = '{v}'" for n, v in xi.items()]
    lines += ["", "[background]", "t.t = '-f'", "r.r = '1/f'", "th.th = 'r^2'",
              "ph.ph = 'r^2*sin(th)^2'", "", "[perturbation]",
              "t.t = '2*d_t(xt) - 2*M*f/r^2*xr'",
              "t.r = 'd_t(xr) + d_r(xt) - 2*M/(r^2*f)*xt'",
              "t.th = 'd_t(xth) + d_th(xt)'",
              "t.ph = 'd_t(xph) + d_ph(xt)'",
              "r.r = '2*d_r(xr) + 2*M/(r^2*f)*xr'",
              "r.th = 'd_r(xth) + d_th(xr) - 2/r*xth'",
              "r.ph = 'd_r(xph) + d_ph(xr) - 2/r*xph'",
              "th.th = '2*d_th(xth) + 2*r*f*xr'",
              "th.ph = 'd_th(xph) + d_ph(xth) - 2*cos(th)/sin(th)*xph'",
              "ph.ph = '2*d_ph(xph) + 2*r*f*sin(th)^2*xr + 2*sin(th)*cos(th)*xth'",
              "", "[gauge_vector]", "t = 'xt'", "r = 'xr'", "th = 'xth'", "ph = 'xph'",
              "", "[domain]", "r = [3, 40]", "th = [0.2, 2.9]",
              "", "[claims]", "field_equations = true", 'gauge = ["lorenz"]', "pure_gauge = true", ""]
    return "\n".join(lines)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("outdir", type=Path, help="directory for the problem files (created)")
    ap.add_argument("--seed", type=int, default=20261202, help="seed of the random choices")
    args = ap.parse_args()
    args.outdir.mkdir(parents=True, exist_ok=True)
    files = {}
    for n in WAVES:
        files[f"waves_N{n:02}.toml"] = waves_file(n, random.Random(args.seed + n))
    for l in POLES:
        files[f"lpole_l{l:02}.toml"] = lpole_file(l)
    for d in DEGREES:
        files[f"gauge_poly_d{d:02}.toml"] = gauge_file(d, random.Random(args.seed + 1000 + d))
    for k in GAUGE_TERMS:
        files[f"schw_gauge_k{k:02}.toml"] = schwarzschild_gauge_file(k, random.Random(args.seed + 2000 + k))
    for name, text in files.items():
        (args.outdir / name).write_text(text)
        print(args.outdir / name)
    return 0


if __name__ == "__main__":
    sys.exit(main())
