"""Judge lingrav's quadrupole radiation with SymPy, independently.

Reads the JSON lines written by tests/sympy_radiation.rs. Each case holds seeded random
bodies (masses, trajectories in t), a direction given by polar angles, a distance, and
lingrav's printed results. This script rebuilds everything from the bodies with SymPy, from
the definitions (G = c = 1, moments about the origin):

    Q_ij = sum m (x_i x_j - delta_ij |x|^2/3),   L = (1/5) dddQ_ij dddQ_ij,
    dJ_i/dt = -(2/5) eps_ijk ddQ_ja dddQ_ka,
    h^TT_ij = (2/R) Lambda_ij,kl(n) ddQ_kl(t - R),  Lambda = P P - P P/2, P = 1 - n n,
    h_plus = h^TT_ij (u_i u_j - v_i v_j)/2,  h_cross = h^TT_ij (u_i v_j + v_i u_j)/2,

with n = (sin th cos ph, sin th sin ph, cos th), u = e_theta, v = e_phi. Each of lingrav's
texts must agree at three rational times to 1e-40 relative (60 digits); any larger difference
is a disagreement: exit status 1 with the case and the quantity.
"""

import json
import sys

import sympy as sp

t = sp.Symbol("t", real=True)
LOCALS = {"pi": sp.pi, "sqrt": sp.sqrt, "sin": sp.sin, "cos": sp.cos, "exp": sp.exp, "t": t}
AX = "xyz"


def read(text):
    return sp.sympify(text.replace("^", "**"), locals=LOCALS)


def main(path):
    cases = [json.loads(line) for line in open(path) if line.strip()]
    bad = 0
    judged = 0
    for c in cases:
        masses = [read(b["mass"]) for b in c["bodies"]]
        xs = [[read(p) for p in b["position"]] for b in c["bodies"]]
        I = sp.Matrix(3, 3, lambda i, j: sum(m * x[i] * x[j] for m, x in zip(masses, xs)))
        Q = I - sp.eye(3) * I.trace() / 3
        d2 = Q.diff(t, 2)
        d3 = Q.diff(t, 3)
        want = {}
        for i in range(3):
            for j in range(i, 3):
                want[f"Q_{AX[i]}{AX[j]}"] = Q[i, j]
        want["L"] = sum(d3[i, j] ** 2 for i in range(3) for j in range(3)) / 5
        for i in range(3):
            j, k = (i + 1) % 3, (i + 2) % 3
            want[f"dJ_{AX[i]}/dt"] = -sp.Rational(2, 5) * sum(
                d2[j, a] * d3[k, a] - d2[k, a] * d3[j, a] for a in range(3)
            )
        th, ph = read(c["theta"]), read(c["phi"])
        R = read(c["distance"])
        n = sp.Matrix([sp.sin(th) * sp.cos(ph), sp.sin(th) * sp.sin(ph), sp.cos(th)])
        u = sp.Matrix([sp.cos(th) * sp.cos(ph), sp.cos(th) * sp.sin(ph), -sp.sin(th)])
        v = sp.Matrix([-sp.sin(ph), sp.cos(ph), 0])
        P = sp.eye(3) - n * n.T
        S = d2.subs(t, t - R) * 2 / R
        TT = P * S * P - P * (P * S).trace() / 2
        want["h_plus"] = sum(TT[i, j] * (u[i] * u[j] - v[i] * v[j]) for i in range(3) for j in range(3)) / 2
        want["h_cross"] = sum(TT[i, j] * (u[i] * v[j] + v[i] * u[j]) for i in range(3) for j in range(3)) / 2
        got = c["quantities"]
        missing = sorted(set(want) - set(got))
        if missing:
            print(f"case {c['case']}: lingrav lacks {missing}")
            bad += 1
            continue
        for key, w in want.items():
            g = read(got[key])
            for t0 in [sp.Rational(3, 7), sp.Rational(-5, 4), sp.Rational(13, 3)]:
                a = sp.N(g.subs(t, t0), 60)
                b = sp.N(w.subs(t, t0), 60)
                scale = max(abs(b), sp.Float(1e-30, 60))
                if abs(a - b) > scale * sp.Float(1e-40, 60):
                    print(f"case {c['case']}: {key} at t = {t0}: lingrav {a} against {b}")
                    bad += 1
            judged += 1
    print(f"sympy radiation check: {len(cases)} cases, {judged} quantities, {bad} disagreements")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
