"""Judge lingrav's radiation with SymPy and mpmath, independently.

Reads the JSON lines written by tests/sympy_radiation.rs. Each case holds seeded random
bodies (masses, trajectories in t; some rigid, with principal moments, an axis and an angle),
a direction given by polar angles, a distance, and lingrav's printed results. This script
rebuilds everything from the bodies, from the definitions (G = c = 1, moments about the
origin), sharing no code and no formula for the derived quantities with lingrav:

Bodies. A rigid body (mass m centred at c(t), principal moments I_a, rotation R(t) by the
angle about the unit axis) is replaced by seven point masses: mu_a = D0_a/2 at c +- R e_a,
D0_a = (I1 + I2 + I3)/2 - I_a, and m - 2 sum mu_a at c. Their moments about c are those of
any body reflection-symmetric in its principal planes up to the third (first and third
moments zero, second diag(D0) in the body frame), which is what lingrav assumes.

Moments, built exactly by SymPy and compared at three rational times (mpmath, 60 digits,
to 1e-40 relative):
    Q_ij = sum m (x_i x_j - delta_ij |x|^2/3),
    Q_ijk = STF sum m x_i x_j x_k (I_ijk - (delta_ij I_kaa + delta_ik I_jaa + delta_jk I_iaa)/5),
    S_ij = STF sum m x_i (x cross v)_j,
    L = (1/5) dddQ_ij dddQ_ij,   dJ_i/dt = -(2/5) eps_ijk ddQ_ja dddQ_ka.
lingrav's printed texts are evaluated by mpmath directly (no SymPy parse).

The far-zone field, from the linearized field hbar^ij = (4/R) int T^ij(t - R + n.x) d^3x to
first order in n.x, written with the moments of the momentum density only:
    int T^ij = (1/2) d^2/dt^2 sum m x_i x_j,
    int T^ij x^k = (1/2) d/dt (A_ijk + A_jik - A_kij),  A_ijk = sum m v_i x_j x_k,
(both from d_mu T^mu nu = 0), so
    hbar^ij = (2/R) [ddI_ij + n_k d^2/dt^2 (A_ijk + A_jik - A_kij)](t - R).
The time derivatives of these moments come from the points' exact derivatives (SymPy) by
Leibniz' rule at each time, and the projection with Lambda = P P - P P/2, P = 1 - n n, and
h_plus = h^TT_ij (u_i u_j - v_i v_j)/2, h_cross = h^TT_ij (u_i v_j + v_i u_j)/2,
n = (sin th cos ph, sin th sin ph, cos th), u = e_theta, v = e_phi, are done in numbers.
lingrav's h_plus, h_cross are the first term (the quadrupole); its h_plus_next,
h_cross_next the second (octupole and current quadrupole).

The linear momentum the waves carry, dP_i/dt = (R^2/(32 pi)) oint n_i dh^TT_ab/dt
dh^TT_ab/dt dOmega (the Isaacson flux; no time average, as lingrav prints the
instantaneous value), integrated numerically with mpmath at 60 digits: Gauss-Legendre in
cos(theta) (12 nodes) and the trapezoid rule in phi (24 nodes), exact for these polynomials
in n up to rounding; only the cross terms of the two orders survive by parity, so this is
lingrav's dP_i/dt with nothing neglected. Compared at the three times to 1e-25 of the energy
flux's scale.

A case with "closed_form": "fitchett" is lingrav's circular binary with symbolic masses and
separation; its dP must satisfy Fitchett 1983 (MNRAS 203, 1049; from memory):
|dP/dt| = (464/105) eta^2 (dm/M) (M/R)^(11/2), eta = m1 m2/M^2, dm = m1 - m2, compared
squared and simplified by SymPy, dP_z = 0, and the quadrature at the file's numbers.

Any disagreement: exit status 1 with the case and the quantity.
"""

import json
import re
import sys

import mpmath as mp
import sympy as sp

t = sp.Symbol("t", real=True)
LOCALS = {"pi": sp.pi, "sqrt": sp.sqrt, "sin": sp.sin, "cos": sp.cos, "exp": sp.exp, "t": t}
AX = "xyz"
TIMES = [sp.Rational(3, 7), sp.Rational(-5, 4), sp.Rational(13, 3)]
mp.mp.dps = 60


def read(text, extra=None):
    names = dict(LOCALS)
    if extra:
        names.update(extra)
    return sp.sympify(text.replace("^", "**"), locals=names)


NUMBER = re.compile(r"(?<![A-Za-z_0-9.])(\d+\.?\d*(?:[eE][-+]?\d+)?)")
MPMATH = {"sin": mp.sin, "cos": mp.cos, "sqrt": mp.sqrt, "exp": mp.exp, "pi": mp.pi}


def lingrav_at_times(text, values=None, shift=0):
    """lingrav's printed text evaluated at the TIMES by mpmath directly (its syntax is
    Python's with ^ for powers; every number literal made an exact mpf first), without SymPy:
    parsing large texts into SymPy trees is slow."""
    code = compile(NUMBER.sub(r"mpf('\1')", text).replace("^", "**"), "<lingrav>", "eval")
    out = []
    for t0 in TIMES:
        names = dict(MPMATH, mpf=mp.mpf, t=mp.mpf(t0.p) / t0.q + shift)
        for k, v in (values or {}).items():
            names[k] = mp.mpf(v.p) / v.q
        out.append(mp.mpf(eval(code, {"__builtins__": {}}, names)))
    return out


def at_times(e, subs=None):
    """The values of e at the TIMES, by mpmath at its working precision (lambdify: far
    faster than SymPy's evalf on large trees, and as exact up to rounding)."""
    if subs:
        e = e.subs(subs)
    f = sp.lambdify(t, e, modules="mpmath")
    return [mp.mpf(f(mp.mpf(t0.p) / t0.q)) for t0 in TIMES]


def rotation(axis, angle):
    """R = cos a 1 + sin a [k]_x + (1 - cos a) k k, as a SymPy matrix."""
    k = sp.Matrix(axis)
    kx = sp.Matrix([[0, -k[2], k[1]], [k[2], 0, -k[0]], [-k[1], k[0], 0]])
    return sp.cos(angle) * sp.eye(3) + sp.sin(angle) * kx + (1 - sp.cos(angle)) * k * k.T


def point_masses(bodies, extra=None):
    """(mass, position) of every point mass, rigid bodies replaced by seven."""
    out = []
    for b in bodies:
        m = read(b["mass"], extra)
        c = sp.Matrix([read(p, extra) for p in b["position"]])
        if "moments" not in b:
            out.append((m, c))
            continue
        moments = [read(x, extra) for x in b["moments"]]
        axis = [read(x, extra) for x in b.get("axis", ["0", "0", "1"])]
        rot = rotation(axis, read(b.get("angle", "0"), extra))
        half = sum(moments) / 2
        rest = m
        for a in range(3):
            mu = (half - moments[a]) / 2
            e = rot[:, a]
            out.append((mu, c + e))
            out.append((mu, c - e))
            rest -= 2 * mu
        out.append((rest, c))
    return out


def moments(points):
    """I_ij, I_ijk and J_ij = sum m x_i (x cross v)_j (SymPy, functions of t)."""
    I2 = sp.zeros(3, 3)
    I3 = {}
    J = sp.zeros(3, 3)
    for m, x in points:
        xv = x.cross(x.diff(t))
        for i in range(3):
            for j in range(3):
                I2[i, j] += m * x[i] * x[j]
                J[i, j] += m * x[i] * xv[j]
                for k in range(3):
                    I3[i, j, k] = I3.get((i, j, k), 0) + m * x[i] * x[j] * x[k]
    return I2, I3, J


def position_derivatives(points, subs=None, top=4):
    """For each point: its mass and d^p x/dt^p at each of the TIMES (p = 0..top), numbers."""
    out = []
    for m, x in points:
        mass = at_times(sp.sympify(m), subs)
        ders = []
        e = x
        for _ in range(top + 1):
            ders.append([at_times(e[i], subs) for i in range(3)])
            e = e.diff(t)
        out.append((mass, ders))
    return out


def moment_derivatives(ders, n, q):
    """At time number q: d^n/dt^n of I_ij = sum m x_i x_j and of
    C_ijk = A_ijk + A_jik - A_kij, A_ijk = sum m v_i x_j x_k (Leibniz' rule on the points'
    exact derivatives)."""
    from math import comb, factorial

    I = [[mp.mpf(0)] * 3 for _ in range(3)]
    A = {(i, j, k): mp.mpf(0) for i in range(3) for j in range(3) for k in range(3)}
    for mass, d in ders:
        m = mass[q]
        x = lambda p, i: d[p][i][q]
        for i in range(3):
            for j in range(3):
                I[i][j] += m * sum(comb(n, a) * x(a, i) * x(n - a, j) for a in range(n + 1))
                for k in range(3):
                    A[i, j, k] += m * sum(
                        factorial(n) // (factorial(a) * factorial(b) * factorial(n - a - b))
                        * x(a + 1, i) * x(b, j) * x(n - a - b, k)
                        for a in range(n + 1)
                        for b in range(n + 1 - a)
                    )
    C = {(i, j, k): A[i, j, k] + A[j, i, k] - A[k, i, j] for (i, j, k) in A}
    return I, C


def stf3(I3):
    tr = [sum(I3[a, a, k] for a in range(3)) for k in range(3)]
    d = lambda a, b: 1 if a == b else 0
    return {
        (i, j, k): I3[i, j, k] - (d(i, j) * tr[k] + d(i, k) * tr[j] + d(j, k) * tr[i]) / 5
        for i in range(3)
        for j in range(3)
        for k in range(3)
    }


def basis(th, ph):
    n = sp.Matrix([sp.sin(th) * sp.cos(ph), sp.sin(th) * sp.sin(ph), sp.cos(th)])
    u = sp.Matrix([sp.cos(th) * sp.cos(ph), sp.cos(th) * sp.sin(ph), -sp.sin(th)])
    v = sp.Matrix([-sp.sin(ph), sp.cos(ph), 0])
    return n, u, v


def tt_polarizations(n, u, v, S):
    """h_plus, h_cross of Lambda(n) S (mpmath numbers): P S P - P tr(P S)/2, P = 1 - n n,
    contracted with (u u - v v)/2 and (u v + v u)/2."""
    P = [[(1 if i == j else 0) - n[i] * n[j] for j in range(3)] for i in range(3)]
    PS = [[sum(P[i][a] * S[a][j] for a in range(3)) for j in range(3)] for i in range(3)]
    PSP = [[sum(PS[i][a] * P[a][j] for a in range(3)) for j in range(3)] for i in range(3)]
    tr = sum(PS[a][a] for a in range(3))
    T = [[PSP[i][j] - P[i][j] * tr / 2 for j in range(3)] for i in range(3)]
    plus = sum(T[i][j] * (u[i] * u[j] - v[i] * v[j]) for i in range(3) for j in range(3)) / 2
    cross = sum(T[i][j] * (u[i] * v[j] + v[i] * u[j]) for i in range(3) for j in range(3)) / 2
    return plus, cross


def exact_quantities(points, th, ph, R):
    """The values at the TIMES of every quantity lingrav prints, from the definitions (the
    moments by SymPy, exactly, then evaluated; the TT projection of the field numerically)."""
    I2, I3, J = moments(points)
    Q = I2 - sp.eye(3) * I2.trace() / 3
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
    O = stf3(I3)
    for i in range(3):
        for j in range(i, 3):
            for k in range(j, 3):
                want[f"Q_{AX[i]}{AX[j]}{AX[k]}"] = O[i, j, k]
    S = (J + J.T) / 2 - sp.eye(3) * J.trace() / 3
    for i in range(3):
        for j in range(i, 3):
            want[f"S_{AX[i]}{AX[j]}"] = S[i, j]
    values = {key: at_times(e) for key, e in want.items()}
    # hbar^ij(t + R) = (2/R) [ddI_ij + n_k d^2/dt^2 (A_ijk + A_jik - A_kij)](t): lingrav's
    # fields at t + R, which meet these at t.
    n, u, v = (
        [mp.mpf(sp.N(c, 70)) for c in vec]
        for vec in (
            (sp.sin(th) * sp.cos(ph), sp.sin(th) * sp.sin(ph), sp.cos(th)),
            (sp.cos(th) * sp.cos(ph), sp.cos(th) * sp.sin(ph), -sp.sin(th)),
            (-sp.sin(ph), sp.cos(ph), 0),
        )
    )
    R = mp.mpf(sp.N(R, 70))
    ders = position_derivatives(points)
    fields = {"h_plus": [], "h_cross": [], "h_plus_next": [], "h_cross_next": []}
    for q in range(len(TIMES)):
        I, C = moment_derivatives(ders, 2, q)
        S2 = [[2 * I[i][j] / R for j in range(3)] for i in range(3)]
        S3 = [
            [2 * sum(n[k] * C[i, j, k] for k in range(3)) / R for j in range(3)]
            for i in range(3)
        ]
        for (pk, ck), S in [(("h_plus", "h_cross"), S2), (("h_plus_next", "h_cross_next"), S3)]:
            plus, cross = tt_polarizations(n, u, v, S)
            fields[pk].append(plus)
            fields[ck].append(cross)
    return values, fields, ders


def legendre_nodes(count):
    """Gauss-Legendre nodes and weights on [-1, 1] at mpmath's precision."""
    nodes = []
    for k in range(count):
        x = mp.cos(mp.pi * (k + mp.mpf(3) / 4) / (count + mp.mpf(1) / 2))
        for _ in range(100):
            p0, p1 = mp.mpf(1), x
            for m in range(2, count + 1):
                p0, p1 = p1, ((2 * m - 1) * x * p1 - (m - 1) * p0) / m
            dp = count * (x * p1 - p0) / (x * x - 1)
            step = p1 / dp
            x -= step
            if abs(step) < mp.mpf(10) ** (-mp.mp.dps + 2):
                break
        nodes.append((x, 2 / ((1 - x * x) * dp * dp)))
    return nodes


NODES = legendre_nodes(12)
PHIS = 24


def momentum_by_quadrature(ders):
    """For each of the TIMES (source time): (R^2/(32 pi)) oint n_i dh_ab/dt dh_ab/dt dOmega
    and the scale (R^2/(32 pi)) oint dh_ab/dt dh_ab/dt dOmega, with R = 1 (R cancels)."""
    # dhbar_ij/dt = 4 [(1/2) d^3 I_ij + (1/2) n_k d^3 (A_ijk + A_jik - A_kij)].
    out = []
    for q in range(len(TIMES)):
        I, C = moment_derivatives(ders, 3, q)
        lead = [[2 * I[i][j] for j in range(3)] for i in range(3)]
        out.append(sphere(lead, {key: 2 * c for key, c in C.items()}))
    return out


def sphere(lead, comb):
    """The quadrature for the values at one time."""
    flux = [mp.mpf(0)] * 3
    scale = mp.mpf(0)
    for x, wx in NODES:
        s = mp.sqrt(1 - x * x)
        for q in range(PHIS):
            ph = 2 * mp.pi * q / PHIS
            n = [s * mp.cos(ph), s * mp.sin(ph), x]
            H = mp.matrix(3, 3)
            for i in range(3):
                for j in range(3):
                    H[i, j] = lead[i][j] + sum(n[k] * comb[i, j, k] for k in range(3))
            P = mp.matrix(3, 3)
            for i in range(3):
                for j in range(3):
                    P[i, j] = (1 if i == j else 0) - n[i] * n[j]
            PH = P * H
            T = PH * P - P * sum(PH[a, a] for a in range(3)) / 2
            sq = sum(T[a, b] ** 2 for a in range(3) for b in range(3))
            w = wx * 2 * mp.pi / PHIS / (32 * mp.pi)
            scale += w * sq
            for i in range(3):
                flux[i] += w * n[i] * sq
    return flux, scale


def compare_exact(case, want, got, shift=0):
    """lingrav's texts at the TIMES (plus `shift`: its fields at the observer's time t + R)
    against the values of the definitions at the TIMES."""
    bad = 0
    for key, b in want.items():
        if key not in got:
            print(f"case {case}: lingrav lacks {key}")
            bad += 1
            continue
        g = lingrav_at_times(got[key], shift=shift)
        for t0, x, y in zip(TIMES, g, b):
            scale = max(abs(y), mp.mpf(10) ** -30)
            if abs(x - y) > scale * mp.mpf(10) ** -40:
                print(f"case {case}: {key} at t = {t0}: lingrav {x} against {y}")
                bad += 1
    return bad


def compare_flux(case, ders, got, subs=None):
    bad = 0
    quadrature = momentum_by_quadrature(ders)
    values = {str(k): v for k, v in (subs or {}).items()}
    for i in range(3):
        lingrav = lingrav_at_times(got[f"dP_{AX[i]}/dt"], values)
        for t0, a, (flux, scale) in zip(TIMES, lingrav, quadrature):
            if abs(a - flux[i]) > scale * mp.mpf(10) ** -25:
                print(
                    f"case {case}: dP_{AX[i]}/dt at t = {t0}: lingrav {a}, "
                    f"quadrature {flux[i]} (scale {scale})"
                )
                bad += 1
    return bad


def fitchett(c):
    """lingrav's recoil of a circular binary against Fitchett's closed form."""
    m1, m2, R = sp.symbols("m1 m2 R", positive=True)
    extra = {"m1": m1, "m2": m2, "R": R}
    got = c["quantities"]
    dp = [read(got[f"dP_{a}/dt"], extra) for a in AX]
    M = m1 + m2
    eta = m1 * m2 / M**2
    closed = sp.Rational(464, 105) * eta**2 * ((m1 - m2) / M) * (M / R) ** sp.Rational(11, 2)
    bad = 0
    if sp.simplify(dp[0] ** 2 + dp[1] ** 2 - closed**2) != 0:
        print(f"fitchett: |dP/dt|^2 = {sp.simplify(dp[0]**2 + dp[1]**2)}, want {closed**2}")
        bad += 1
    if sp.simplify(dp[2]) != 0:
        print(f"fitchett: dP_z/dt = {dp[2]}")
        bad += 1
    # The binary built here (Kepler: w^2 = M/R^3, the centre of mass at the origin), its
    # moments by SymPy and the quadrature of its field at the file's numbers.
    w = sp.sqrt(M / R**3)
    rel = sp.Matrix([R * sp.cos(w * t), R * sp.sin(w * t), 0])
    points = [(m1, m2 / M * rel), (m2, -m1 / M * rel)]
    subs = {sp.Symbol(k, positive=True): sp.nsimplify(v) for k, v in c["parameters"].items()}
    bad += compare_flux("fitchett", position_derivatives(points, subs), got, subs)
    return bad


def main(path):
    cases = [json.loads(line) for line in open(path) if line.strip()]
    bad = 0
    judged = 0
    for c in cases:
        if c.get("closed_form") == "fitchett":
            bad += fitchett(c)
            judged += 1
            continue
        points = point_masses(c["bodies"])
        th, ph, R = read(c["theta"]), read(c["phi"]), read(c["distance"])
        want, fields, ders = exact_quantities(points, th, ph, R)
        got = c["quantities"]
        bad += compare_exact(c["case"], want, got)
        bad += compare_exact(c["case"], fields, got, shift=mp.mpf(sp.N(R, 70)))
        bad += compare_flux(c["case"], ders, got)
        judged += len(want) + len(fields) + 3
    print(f"sympy radiation check: {len(cases)} cases, {judged} quantities, {bad} disagreements")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
