"""Judge lingrav's TT projections with SymPy, independently.

Reads the JSON lines written by tests/sympy_tt.rs. Each case holds a direction as the user
typed it, a symmetric 3x3 amplitude S, and lingrav's printed results: the unit vector n, the
default polarization basis (u, v), h^TT = Lambda S and h_plus, h_cross. This script rebuilds
everything from the direction text and S with SymPy, from the definitions

    P_ij = delta_ij - n_i n_j,  Lambda_ij,kl = P_ik P_jl - 1/2 P_ij P_kl,
    h_plus = 1/2 h^TT_ij (u_i u_j - v_i v_j),  h_cross = 1/2 h^TT_ij (u_i v_j + v_i u_j),

with the documented default basis (u = e_theta, v = e_phi of n's polar angles, phi = 0 on the
z axis), and checks lingrav's texts against it. It also checks the projector's laws on
lingrav's result: transverse, traceless, left unchanged by a second projection.

Equality: the expanded difference is 0 (exact), or else it is below 1e-40 at 60 digits (at
three rational points for the symbolic angles): the two counts are reported separately. A
larger difference anywhere is a disagreement: exit status 1, with the case and the entry.
"""

import json
import re
import sys

import sympy as sp

th, ph = sp.symbols("th ph", real=True)
LOCALS = {"pi": sp.pi, "sqrt": sp.sqrt, "sin": sp.sin, "cos": sp.cos, "th": th, "ph": ph}


# Cases with symbolic angles are judged at three rational points: every expression is read
# with the symbols replaced (expanding products of symbolic trigonometric functions is slow).
CURRENT = {}


def expr(text):
    e = sp.sympify(text.replace("^", "**"), locals=LOCALS)
    return sp.N(e.subs(CURRENT), 60) if CURRENT else e


exact = 0
numeric_only = 0
POINTS = [{th: sp.Rational(3, 7), ph: sp.Rational(-5, 4)}, {th: sp.Rational(11, 5), ph: sp.Rational(2, 9)}, {th: sp.Rational(-1, 3), ph: sp.Rational(7, 3)}]


def equal(a, b):
    """Exact when the expanded difference is 0, else at 60 digits; a difference above 1e-40
    is a disagreement."""
    global exact, numeric_only
    d = sp.sympify(a - b)
    # At a point of a symbolic case the values are trigonometric numbers: go numeric at once.
    if not CURRENT:
        d = sp.expand(d)
        if d == 0:
            exact += 1
            return True
    v = sp.N(d, 60)
    if not (abs(v) < sp.Float("1e-40")):
        return False
    numeric_only += 1
    return True


def direction(case):
    text = case["direction"].strip()
    if text.startswith("theta") or text.startswith("phi"):
        parts = dict(p.split("=", 1) for p in text.split(","))
        t, f = expr(parts["theta"]), expr(parts["phi"])
        n = sp.Matrix([sp.sin(t) * sp.cos(f), sp.sin(t) * sp.sin(f), sp.cos(t)])
        u = sp.Matrix([sp.cos(t) * sp.cos(f), sp.cos(t) * sp.sin(f), -sp.sin(t)])
        v = sp.Matrix([-sp.sin(f), sp.cos(f), 0])
        return n, u, v
    m = sp.Matrix([expr(p) for p in text.split(",")])
    if case["normalize"]:
        m = m / sp.sqrt(m.dot(m))
    n = m
    rho2 = sp.simplify(n[0] ** 2 + n[1] ** 2)
    if rho2 == 0:
        u = sp.Matrix([n[2], 0, 0])
        v = sp.Matrix([0, 1, 0])
    else:
        rho = sp.sqrt(rho2)
        u = sp.Matrix([n[2] * n[0] / rho, n[2] * n[1] / rho, -rho])
        v = sp.Matrix([-n[1] / rho, n[0] / rho, 0])
    return n, u, v


def project(n, s):
    p = sp.eye(3) - n * n.T
    tr = (p * s).trace()
    return p * s * p - p * tr / 2


def judge(case, cid, bad):
    """Checks one case; returns how many comparisons it made."""
    compared = 0
    n, u, v = direction(case)
    s = sp.Matrix(case["S"])
    tt = project(n, s)

    def check(label, mine, theirs):
        nonlocal compared
        compared += 1
        if not equal(expr(mine) if isinstance(mine, str) else mine, theirs):
            bad.append(f"{cid}: {label}: lingrav {mine} vs sympy {theirs}")

    for i in range(3):
        check(f"n_{i}", case["n"][i], n[i])
        check(f"u_{i}", case["u"][i], u[i])
        check(f"v_{i}", case["v"][i], v[i])
    mine = sp.Matrix([[expr(case["tt"][i][j]) for j in range(3)] for i in range(3)])
    for i in range(3):
        for j in range(3):
            check(f"tt_{i}{j}", mine[i, j], tt[i, j])
    # The projector's laws on lingrav's own result.
    for i in range(3):
        check(f"transverse_{i}", (mine * n)[i], 0)
    check("traceless", mine.trace(), 0)
    again = project(n, mine)
    for i in range(3):
        for j in range(i, 3):
            check(f"idempotent_{i}{j}", again[i, j], mine[i, j])
    plus = sum(mine[i, j] * (u[i] * u[j] - v[i] * v[j]) for i in range(3) for j in range(3)) / 2
    cross = sum(mine[i, j] * (u[i] * v[j] + v[i] * u[j]) for i in range(3) for j in range(3)) / 2
    check("h_plus", case["plus"], plus)
    check("h_cross", case["cross"], cross)
    # lingrav's basis is orthonormal and right-handed with its n.
    ul = sp.Matrix([expr(x) for x in case["u"]])
    vl = sp.Matrix([expr(x) for x in case["v"]])
    nl = sp.Matrix([expr(x) for x in case["n"]])
    check("u.u", ul.dot(ul), 1)
    check("v.v", vl.dot(vl), 1)
    check("u.n", ul.dot(nl), 0)
    check("u.v", ul.dot(vl), 0)
    for i in range(3):
        check(f"(u x v)_{i}", ul.cross(vl)[i], nl[i])
    return compared


def main(path):
    global CURRENT
    cases = [json.loads(line) for line in open(path) if line.strip()]
    bad = []
    compared = 0
    for case in cases:
        symbolic = re.search(r"\b(th|ph)\b", case["direction"]) is not None
        for k, pt in enumerate(POINTS if symbolic else [{}]):
            CURRENT = pt
            cid = case["id"] + (f" at point {k}" if symbolic else "")
            compared += judge(case, cid, bad)
    for b in bad:
        print("DISAGREE", b)
    print(
        f"sympy tt check: {len(cases)} cases, {compared} comparisons, {len(bad)} disagreements "
        f"({exact} equal exactly, {numeric_only} to 60 digits)"
    )
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
