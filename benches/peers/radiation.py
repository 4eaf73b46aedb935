"""The claims of `lingrav check` about the radiation of a file's bodies (`luminosity`,
`luminosity_average`, [claims.waveform], `momentum_flux`, `momentum_flux_average`), as
textbook formulas over a computer-algebra
library `cas` (SymEngine or SymPy: `diff`, `sqrt`, `sin`, `cos` and arithmetic).

Quadrupole order, G = c = 1, moments about the coordinate origin:

  bodies       each [[body]] a point mass m at x(t), or a rigid body with principal moments
               (I1, I2, I3) turned by `angle` about the unit `axis` (at the origin unless a
               position is given: then its point mass too), whose second moment is
               1/2 (I1 + I2 + I3) delta_ij - (R D R^T)_ij, D = diag(I1, I2, I3),
               R = cos a 1 + sin a [k]_x + (1 - cos a) k k^T (Rodrigues);
               [binary]: two point masses on the circular Kepler orbit of lingrav's
               parametrisation (`lingrav check --help`, src/problem/bodies.rs): M = m1 + m2,
               w = sqrt(M/a^3) (or 2 pi/P, a = (M P^2/(4 pi^2))^(1/3)), psi = w t + phase,
               relative orbit a (cos psi cos O - sin psi cos i sin O,
               cos psi sin O + sin psi cos i cos O, sin psi sin i), x1 = (m2/M) rel,
               x2 = -(m1/M) rel;
  quadrupole   I_ij = sum m x_i x_j (+ rigid moments), Q_ij = I_ij - 1/3 delta_ij I_kk;
  luminosity   L = 1/5 (d^3 Q_ij/dt^3)(d^3 Q_ij/dt^3), component
               `claimed L - (1/5) dddQ_ij dddQ_ij`;
  average      the time average of L, by the caller's `time_average` (the average of a sum
               of c exp(i w t) is the sum of the c with w = 0), component
               `claimed <L> - <(1/5) dddQ_ij dddQ_ij>`;
  waveform     h^TT = (2/r) Lambda(n) d^2 Q/dt^2 (t - r), Lambda the TT projector
               (P h P - 1/2 P tr(P h), P = 1 - n n), h_plus = 1/2 h^TT_ij (u_i u_j - v_i v_j),
               h_cross = 1/2 h^TT_ij (u_i v_j + v_i u_j) in the polar-angle basis
               u = e_theta, v = e_phi of n (on the z axis phi = 0: u = (n_z, 0, 0),
               v = (0, 1, 0)); each claimed polarization minus the formula's, at time
               t + distance (the formula's retarded time is then t), components
               `claimed h_plus - quadrupole h_plus, at time t + distance` and h_cross's;
  momentum     dP_i/dt = (2/63) d^4Q_iab d^3Q_ab + (16/45) eps_ipq d^3Q_pa d^3S_qa with the
               trace-free mass octupole Q_ijk of sum m x_i x_j x_k and the current quadrupole
               S_ij, the symmetric trace-free part of sum m x_i (x cross dx/dt)_j (point
               masses only: with a rigid body the claim is left without components), each
               claimed component minus the formula's; the average as for the luminosity.
"""

from linearized import Claim

AXES = {"x": "1,0,0", "+x": "1,0,0", "-x": "-1,0,0", "y": "0,1,0", "+y": "0,1,0",
        "-y": "0,-1,0", "z": "0,0,1", "+z": "0,0,1", "-z": "0,0,-1"}


def has_radiation_claims(doc):
    c = doc.get("claims") or {}
    return any(k in c for k in ("luminosity", "luminosity_average", "waveform",
                                "momentum_flux", "momentum_flux_average"))


def _rotation(cas, k, a):
    """Rodrigues' rotation by the angle a about the unit axis k."""
    c, s = cas.cos(a), cas.sin(a)
    cross = [[0, -k[2], k[1]], [k[2], 0, -k[0]], [-k[1], k[0], 0]]
    return [[(c if i == j else 0) + s * cross[i][j] + (1 - c) * k[i] * k[j]
             for j in range(3)] for i in range(3)]


def bodies(doc, ns, cas):
    """[(mass, [x, y, z], second moment 3x3 or None)] of the file's [binary] and [[body]]."""
    out = []
    if "binary" in doc:
        b = {k: ns.evaluate(v) for k, v in doc["binary"].items()}
        if "eccentricity" in b and b["eccentricity"] != 0:
            raise ValueError("[binary] with a nonzero eccentricity (lingrav refuses it)")
        m1, m2 = b["m1"], b["m2"]
        big = m1 + m2
        t = ns.coords["t"]
        if "semimajor_axis" in b:
            a = b["semimajor_axis"]
            w = cas.sqrt(big / a**3)
        else:
            w = 2 * cas.pi / b["period"]
            a = (big * b["period"] ** 2 / (4 * cas.pi**2)) ** cas.Rational(1, 3)
        psi = w * t + b.get("phase", 0)
        inc, node = b.get("inclination", 0), b.get("node", 0)
        cp, sp = cas.cos(psi), cas.sin(psi)
        rel = [a * (cp * cas.cos(node) - sp * cas.cos(inc) * cas.sin(node)),
               a * (cp * cas.sin(node) + sp * cas.cos(inc) * cas.cos(node)),
               a * sp * cas.sin(inc)]
        out.append((m1, [m2 / big * c for c in rel], None))
        out.append((m2, [-m1 / big * c for c in rel], None))
    for body in doc.get("body", []):
        mass = ns.evaluate(body["mass"])
        pos = [ns.evaluate(p) for p in body.get("position", ["0", "0", "0"])]
        moment = None
        if "moments" in body:
            d = [ns.evaluate(x) for x in body["moments"]]
            k = [ns.evaluate(x) for x in body.get("axis", ["0", "0", "1"])]
            rot = _rotation(cas, k, ns.evaluate(body.get("angle", "0")))
            half_trace = (d[0] + d[1] + d[2]) / 2
            moment = [[(half_trace if i == j else 0)
                       - sum(rot[i][a] * rot[j][a] * d[a] for a in range(3))
                       for j in range(3)] for i in range(3)]
        out.append((mass, pos, moment))
    return out


def trace_free_quadrupole(cas, masses):
    """Q_ij of the bodies."""
    r = range(3)
    q = [[sum(m * x[i] * x[j] for m, x, _ in masses) for j in r] for i in r]
    for _, _, moment in masses:
        if moment is not None:
            q = [[q[i][j] + moment[i][j] for j in r] for i in r]
    tr = q[0][0] + q[1][1] + q[2][2]
    return [[q[i][j] - (tr / 3 if i == j else 0) for j in r] for i in r]


def octupole_and_current(cas, masses, t):
    """(Q_ijk, S_ij) of point masses, or None when a body is rigid."""
    if any(moment is not None for _, _, moment in masses):
        return None
    r = range(3)
    i3 = [[[sum(m * x[i] * x[j] * x[k] for m, x, _ in masses) for k in r] for j in r]
          for i in r]
    tr = [i3[0][0][k] + i3[1][1][k] + i3[2][2][k] for k in r]
    oct_ = [[[i3[i][j][k] - ((tr[k] if i == j else 0) + (tr[j] if i == k else 0)
                             + (tr[i] if j == k else 0)) / 5
              for k in r] for j in r] for i in r]
    cur = [[0] * 3 for _ in r]
    for m, x, _ in masses:
        v = [cas.diff(c, t) for c in x]
        cross = [x[1] * v[2] - x[2] * v[1], x[2] * v[0] - x[0] * v[2], x[0] * v[1] - x[1] * v[0]]
        for i in r:
            for j in r:
                cur[i][j] += m * x[i] * cross[j]
    sym = [[(cur[i][j] + cur[j][i]) / 2 for j in r] for i in r]
    jtr = sym[0][0] + sym[1][1] + sym[2][2]
    return oct_, [[sym[i][j] - (jtr / 3 if i == j else 0) for j in r] for i in r]


def direction(text, ns, cas):
    """(n, u, v) of a direction: `theta=..,phi=..`, an axis (`z`, `-x`), a vector `a,b,c`
    (taken as written: lingrav requires it to be a unit vector) or `radial`."""
    text = text.strip()
    if "=" in text:
        angles = dict(piece.split("=", 1) for piece in text.split(","))
        th, ph = ns.evaluate(angles["theta"].strip()), ns.evaluate(angles["phi"].strip())
        st, ct, sp, cp = cas.sin(th), cas.cos(th), cas.sin(ph), cas.cos(ph)
        return [st * cp, st * sp, ct], [ct * cp, ct * sp, -st], [-sp, cp, 0]
    if text == "radial":
        m = [ns.coords[c] for c in "xyz"]
        norm = cas.sqrt(m[0] ** 2 + m[1] ** 2 + m[2] ** 2)
    else:
        m = [ns.evaluate(c) for c in AXES.get(text, text).split(",")]
        norm = 1
    n = [c / norm for c in m]
    rho2 = m[0] ** 2 + m[1] ** 2
    if cas.expand(rho2) == 0:
        return n, [m[2] / norm, 0, 0], [0, 1, 0]
    rho = cas.sqrt(rho2)
    return (n, [m[2] * m[0] / (rho * norm), m[2] * m[1] / (rho * norm), -rho / norm],
            [-m[1] / rho, m[0] / rho, 0])


def polarizations(cas, n, u, v, s):
    """(h_plus, h_cross) of the TT part along n of the symmetric 3x3 s."""
    r = range(3)
    p = [[(1 if i == j else 0) - n[i] * n[j] for j in r] for i in r]
    ps = [[sum(p[i][k] * s[k][j] for k in r) for j in r] for i in r]
    psp = [[sum(ps[i][k] * p[k][j] for k in r) for j in r] for i in r]
    tr = ps[0][0] + ps[1][1] + ps[2][2]
    tt = [[psp[i][j] - p[i][j] * tr / 2 for j in r] for i in r]
    plus = sum(tt[i][j] * (u[i] * u[j] - v[i] * v[j]) for i in r for j in r) / 2
    cross = sum(tt[i][j] * (u[i] * v[j] + v[i] * u[j]) for i in r for j in r) / 2
    return plus, cross


def claims_components(doc, ns, cas, time_average):
    """[Claim] for the file's radiation claims, lingrav's order. time_average(expr, t) returns
    (average, None), or (None, why) when expr is no sum of c exp(i w t); None: the peer has
    no time average (the claim is then left without components, and said so)."""
    claims = doc.get("claims") or {}
    t = ns.coords["t"]
    masses = bodies(doc, ns, cas)
    q = trace_free_quadrupole(cas, masses)
    r = range(3)

    def dt(k):
        return [[cas.diff(q[i][j], t, k) for j in r] for i in r]

    out = []
    if "luminosity" in claims or "luminosity_average" in claims:
        q3 = dt(3)
        lum = sum(q3[i][j] ** 2 for i in r for j in r) / 5
        if "luminosity" in claims:
            out.append(Claim("luminosity", True, [
                ("claimed L - (1/5) dddQ_ij dddQ_ij", ns.evaluate(claims["luminosity"]) - lum)]))
        if "luminosity_average" in claims:
            avg, why = time_average(lum, t) if time_average else (None, "peer missing")
            comps = [] if avg is None else [("claimed <L> - <(1/5) dddQ_ij dddQ_ij>",
                                             ns.evaluate(claims["luminosity_average"]) - avg)]
            out.append(Claim("luminosity_average", True, comps, why=why))
    if "waveform" in claims:
        w = claims["waveform"]
        n, u, v = direction(w["direction"], ns, cas)
        dist = ns.evaluate(w["distance"])
        q2 = dt(2)
        s = [[2 / dist * q2[i][j] for j in r] for i in r]  # at retarded time t: field at t + r
        formula = polarizations(cas, n, u, v, s)
        comps = []
        for name, f in zip(("h_plus", "h_cross"), formula):
            claimed = ns.evaluate(w[name]).subs({t: t + dist})
            comps.append((f"claimed {name} - quadrupole {name}, at time t + distance",
                          claimed - f))
        out.append(Claim("waveform", True, comps))
    if "momentum_flux" in claims or "momentum_flux_average" in claims:
        moments = octupole_and_current(cas, masses, t)
        flux = None
        if moments is not None:
            oct_, cur = moments
            q3 = dt(3)
            o4 = [[[cas.diff(oct_[i][a][b], t, 4) for b in r] for a in r] for i in r]
            s3 = [[cas.diff(cur[i][j], t, 3) for j in r] for i in r]
            flux = []
            for i in r:
                j, k = (i + 1) % 3, (i + 2) % 3
                mass = sum(o4[i][a][b] * q3[a][b] for a in r for b in r)
                current = sum(q3[j][a] * s3[k][a] - q3[k][a] * s3[j][a] for a in r)
                flux.append(mass * 2 / 63 + current * 16 / 45)
        axes = "xyz"
        if "momentum_flux" in claims:
            comps = [] if flux is None else [
                (f"claimed dP_{axes[i]}/dt - formula dP_{axes[i]}/dt",
                 ns.evaluate(claims["momentum_flux"][i]) - flux[i]) for i in r]
            out.append(Claim("momentum_flux", True, comps,
                             why=None if flux is not None else "peer missing: a rigid body"))
        if "momentum_flux_average" in claims:
            comps, why = [], None if flux is not None else "peer missing: a rigid body"
            for i in r if flux is not None else ():
                avg, why = time_average(flux[i], t) if time_average else (None, "peer missing")
                if avg is None:
                    comps = []
                    break
                comps.append((f"claimed <dP_{axes[i]}/dt> - <formula dP_{axes[i]}/dt>",
                              ns.evaluate(claims["momentum_flux_average"][i]) - avg))
            out.append(Claim("momentum_flux_average", True, comps, why=why))
    return out
