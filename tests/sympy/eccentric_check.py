"""Judge lingrav's radiation of eccentric binaries with SymPy and mpmath, independently.

Reads the JSON lines written by tests/sympy_eccentric.rs: each case is a [binary] with masses
m1, m2, semimajor axis a, eccentricity e (a number or a parameter), inclination, node and
argument of periapsis, the file's parameter values, a direction by polar angles, a distance,
and lingrav's printed results. This script rebuilds them from the Kepler orbit in the
eccentric anomaly E, sharing no code with lingrav (G = c = 1):

    relative orbit in its plane  X = a (cos E - e),  Y = a sqrt(1 - e^2) sin E,
    turned into space by R = Rz(node) Rx(inclination) Rz(phase),
    x1 = (m2/M) (x1 - x2),  x2 = -(m1/M) (x1 - x2),  M = m1 + m2,
    n t = E - e sin E,  so d/dt = n/(1 - e cos E) d/dE,  n = sqrt(M/a^3),
    Q_ij = sum m (x_i x_j - delta_ij |x|^2/3),  L = (1/5) dddQ_ij dddQ_ij,
    h^TT = (2/R) Lambda(n) ddQ,  h_plus = h^TT:(u u - v v)/2,  h_cross = h^TT:(u v + v u)/2,
    n = (sin th cos ph, sin th sin ph, cos th), u = e_theta, v = e_phi.

L, h_plus and h_cross are compared at four values of E to 1e-30 relative (mpmath, 50 digits;
lingrav's texts read by SymPy). The orbit average <L> = (1/(2 pi)) int L (1 - e cos E) dE is
computed by mpmath quadrature and compared with lingrav's exact average and with Peters &
Mathews (1963): (32/5) mu^2 M^3/a^5 (1 + 73/24 e^2 + 37/96 e^4)/(1 - e^2)^(7/2), to 1e-25.

Any disagreement: exit status 1 with the case and the quantity.
"""

import json
import sys

import mpmath as mp
import sympy as sp

mp.mp.dps = 50
E = sp.Symbol("E", real=True)


def parse(text, names):
    local = {"pi": sp.pi, "sqrt": sp.sqrt, "sin": sp.sin, "cos": sp.cos, "exp": sp.exp}
    local.update(names)
    return sp.sympify(text.replace("^", "**"), locals=local)


def main(path):
    bad = 0
    count = 0
    for line in open(path):
        case = json.loads(line)
        names = {k: sp.Symbol(k, real=True) for k in case["parameters"]}
        names[case["anomaly"]] = E
        values = {names[k]: sp.Rational(v) for k, v in case["parameters"].items()}
        # At the file's parameter values (exact rationals) from the start: the orbit stays a
        # function of E, and SymPy differentiates small expressions.
        m1, m2, a, e = (parse(case[k], names).subs(values) for k in ("m1", "m2", "a", "e"))
        inc, node, peri = (
            parse(case[k], names).subs(values) for k in ("inclination", "node", "phase")
        )
        M = m1 + m2
        n = sp.sqrt(M / a**3)

        def rz(w):
            return sp.Matrix([[sp.cos(w), -sp.sin(w), 0], [sp.sin(w), sp.cos(w), 0], [0, 0, 1]])

        rx = sp.Matrix([[1, 0, 0], [0, sp.cos(inc), -sp.sin(inc)], [0, sp.sin(inc), sp.cos(inc)]])
        rot = rz(node) * rx * rz(peri)
        rel = rot * sp.Matrix([a * (sp.cos(E) - e), a * sp.sqrt(1 - e**2) * sp.sin(E), 0])
        bodies = [(m1, m2 / M * rel), (m2, -m1 / M * rel)]
        Q = sp.zeros(3, 3)
        for m, x in bodies:
            r2 = (x.T * x)[0]
            Q += m * (x * x.T - sp.eye(3) * r2 / 3)

        def ddt(f):
            return n / (1 - e * sp.cos(E)) * sp.diff(f, E)

        Q2 = Q.applyfunc(lambda f: ddt(ddt(f)))
        Q3 = Q2.applyfunc(ddt)
        L = sum(Q3[i, j] ** 2 for i in range(3) for j in range(3)) / 5
        th, ph = parse(case["theta"], names), parse(case["phi"], names)
        dist = parse(case["distance"], names).subs(values)
        nv = sp.Matrix([sp.sin(th) * sp.cos(ph), sp.sin(th) * sp.sin(ph), sp.cos(th)])
        u = sp.Matrix([sp.cos(th) * sp.cos(ph), sp.cos(th) * sp.sin(ph), -sp.sin(th)])
        v = sp.Matrix([-sp.sin(ph), sp.cos(ph), 0])
        P = sp.eye(3) - nv * nv.T
        got = case["quantities"]
        want = {"L": L}
        # h^TT = (2/R) (P ddQ P - P tr(P ddQ)/2); its contractions with the basis.
        htt = (P * Q2 * P - P * (P * Q2).trace() / 2) * 2 / dist
        want["h_plus"] = ((u.T * htt * u)[0] - (v.T * htt * v)[0]) / 2
        want["h_cross"] = ((u.T * htt * v)[0] + (v.T * htt * u)[0]) / 2
        for name, w in want.items():
            ours = sp.lambdify(E, w, "mpmath", cse=True)
            mine = sp.lambdify(E, parse(got[name], names).subs(values), "mpmath", cse=True)
            for e_val in ["3/10", "17/10", "4", "-11/5"]:
                x, y = ours(mp.mpf(e_val)), mine(mp.mpf(e_val))
                count += 1
                if abs(x - y) > mp.mpf("1e-30") * max(abs(x), mp.mpf("1e-300")):
                    print(f"case {case['case']}: {name} at E = {e_val}: sympy {x}, lingrav {y}")
                    bad += 1
        # The average over one orbit, by quadrature, against lingrav's and Peters & Mathews'.
        lnum = sp.lambdify(E, L * (1 - e * sp.cos(E)), "mpmath", cse=True)
        quad = mp.quad(lnum, [0, mp.pi / 2, mp.pi, 3 * mp.pi / 2, 2 * mp.pi]) / (2 * mp.pi)
        mu = m1 * m2 / M
        pm = sp.Rational(32, 5) * mu**2 * M**3 / a**5 * (
            1 + sp.Rational(73, 24) * e**2 + sp.Rational(37, 96) * e**4
        ) / (1 - e**2) ** sp.Rational(7, 2)
        for label, val in [
            ("lingrav <L>", parse(case["average_L"], names).subs(values)),
            ("Peters-Mathews", pm),
        ]:
            x = mp.mpf(str(sp.N(val, 60)))
            count += 1
            if abs(x - quad) > mp.mpf("1e-25") * abs(quad):
                print(f"case {case['case']}: {label} {x}, quadrature {quad}")
                bad += 1
    print(f"{count} comparisons, {bad} disagreements")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
