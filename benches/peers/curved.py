"""The claims of `lingrav check` about a background, in any coordinates, as textbook formulas
over a computer-algebra library `cas` (SymEngine or SymPy: `diff` and arithmetic only).

A file is about a background when it has a [background] table, coordinates other than
t, x, y, z, a cosmological constant, a [background_source] or a [gauge_vector] (lingrav's
rule; a missing [background] is Minkowski in Cartesian coordinates). g = gbar + eps h and
T = Tbar + eps dT, every index down. The curvature is computed once, by forward mode in eps:
every quantity of the chain carried as a pair (value, d/deps value) at eps = 0,

  g^{-1}      (gbar^{-1}, -gbar^{-1} h gbar^{-1}),
  Gamma^a_bc  = 1/2 g^{ad} (d_b g_dc + d_c g_db - d_d g_bc),
  R^a_bcd     = d_c Gamma^a_bd - d_d Gamma^a_bc + Gamma^a_ce Gamma^e_bd - Gamma^a_de Gamma^e_bc
                (MTW's sign), R_bd = R^a_bad, R = g^{bd} R_bd, G_ab = R_ab - 1/2 g_ab R,

so that the value parts are the background's and the eps parts the linearized ones. That is
another route than lingrav's (which uses the Palatini identity with the background's covariant
derivative D), so an agreement means something. The claims, with lingrav's keys and
component names (`check --format json`):

  background           Gbar_ab + Lambda gbar_ab - 8 pi Tbar_ab (always asserted);
  source_conservation  (with [source] or [background_source]) the eps part of
                       g^{ma} D_a T_mn, D the covariant derivative of g;
  field_equations      dG_ab + Lambda h_ab - 8 pi dT_ab, dG the eps part of G_ab;
  gauge.lorenz         gbar^{ma} Dbar_a hbar_mn, hbar = h - 1/2 gbar gbar^{cd} h_cd;
  gauge.synchronous    h_{t mu} (t: the first coordinate);
  gauge.tt             h_{t mu}, gbar^{mu nu} h_{mu nu} and the Lorenz divergence;
  pure_gauge           when the background's Riemann tensor is proved zero (the caller's zero
                       test decides), the 20 independent components of the eps part of
                       R_abcd = g_ae R^e_bcd; else, with a [gauge_vector] xi_mu, the residual
                       h_ab - Dbar_a xi_b - Dbar_b xi_a (which can prove pure gauge, never
                       refute it); else no components (undecided, as lingrav).
"""

from linearized import COMPONENTS, Claim, riemann_independent, tensor

CARTESIAN = ["t", "x", "y", "z"]
GAUGES = ("lorenz", "tt", "synchronous")  # lingrav's order when a file has no [claims]


def is_curved(doc):
    """True for a file that lingrav checks about a background (see the module's doc)."""
    return (doc.get("coordinates", CARTESIAN) != CARTESIAN
            or any(k in doc for k in ("background", "background_source",
                                      "cosmological_constant", "gauge_vector")))


class Dual:
    """a + eps b with eps^2 = 0, over expressions of the library; zero products are skipped."""

    __slots__ = ("v", "d")

    def __init__(self, v, d=0):
        self.v, self.d = v, d

    def __add__(self, o):
        if not isinstance(o, Dual):
            return Dual(self.v + o, self.d)
        return Dual(self.v + o.v, self.d + o.d)

    __radd__ = __add__

    def __sub__(self, o):
        if not isinstance(o, Dual):
            return Dual(self.v - o, self.d)
        return Dual(self.v - o.v, self.d - o.d)

    def __neg__(self):
        return Dual(-self.v, -self.d)

    def __mul__(self, o):
        if not isinstance(o, Dual):
            return Dual(self.v * o, self.d * o)
        d = 0
        if self.v != 0 and o.d != 0:
            d = self.v * o.d
        if self.d != 0 and o.v != 0:
            d = d + self.d * o.v
        v = self.v * o.v if self.v != 0 and o.v != 0 else 0
        return Dual(v, d)

    __rmul__ = __mul__

    def is_zero(self):
        return self.v == 0 and self.d == 0


def dsum(items):
    """The sum of Duals (0 for none), skipping exact zeros."""
    out = Dual(0, 0)
    for x in items:
        if not x.is_zero():
            out = out + x
    return out


def inverse(cas, g):
    """gbar^{-1} of a symmetric 4x4: 1/g_aa for a diagonal metric, else cofactors over the
    determinant (Laplace expansion along the first row)."""
    n = range(4)
    if all(g[a][b] == 0 for a in n for b in n if a != b):
        return [[1 / g[a][a] if a == b else 0 for b in n] for a in n]

    def minor(rows, cols):
        if len(rows) == 1:
            return g[rows[0]][cols[0]]
        return sum((-1) ** j * g[rows[0]][c] * minor(rows[1:], cols[:j] + cols[j + 1:])
                   for j, c in enumerate(cols) if g[rows[0]][c] != 0)

    cof = [[(-1) ** (a + b) * minor([r for r in n if r != a], [c for c in n if c != b])
            for b in n] for a in n]
    det = sum(g[0][b] * cof[0][b] for b in n)
    return [[cof[b][a] / det for b in n] for a in n]


class Spacetime:
    """g = gbar + eps h in the coordinates `x`, with the chain of the module's doc, memoised."""

    def __init__(self, cas, x, gbar, h):
        self.cas, self.x = cas, x
        r = range(4)
        ginv = inverse(cas, gbar)
        dinv = [[-sum(ginv[a][c] * h[c][d] * ginv[d][b] for c in r for d in r
                      if ginv[a][c] != 0 and h[c][d] != 0 and ginv[d][b] != 0)
                 for b in r] for a in r]
        self.gbar, self.h, self.ginv_bar = gbar, h, ginv
        self.g = [[Dual(gbar[a][b], h[a][b]) for b in r] for a in r]
        self.ginv = [[Dual(ginv[a][b], dinv[a][b]) for b in r] for a in r]
        dg = [[[self.diff(self.g[a][b], c) for b in r] for a in r] for c in r]  # [c][a][b]
        low = [[[(dg[b][d][c] + dg[c][d][b] - dg[d][b][c]) * cas.Rational(1, 2)
                 for c in r] for b in r] for d in r]  # [d][b][c]
        self.gamma = [[[dsum(self.ginv[a][d] * low[d][b][c] for d in r)
                        for c in r] for b in r] for a in r]
        self._riemann = {}
        self._ricci = None

    def diff(self, q, i):
        x = self.x[i]
        return Dual(self.cas.diff(q.v, x) if q.v != 0 else 0,
                    self.cas.diff(q.d, x) if q.d != 0 else 0)

    def riemann_up(self, a, b, c, d, background=False):
        """R^a_bcd (a Dual; with `background`, of gbar alone: its eps part is 0)."""
        k = (a, b, c, d, background)
        if k not in self._riemann:
            gm = self.gamma
            if background:
                gm = [[[Dual(x.v) for x in row] for row in m] for m in gm]
            self._riemann[k] = (self.diff(gm[a][b][d], c) - self.diff(gm[a][b][c], d)
                                + dsum(gm[a][c][e] * gm[e][b][d] for e in range(4))
                                - dsum(gm[a][d][e] * gm[e][b][c] for e in range(4)))
        return self._riemann[k]

    def riemann_down(self, a, b, c, d, background=False):
        """R_abcd = g_ae R^e_bcd (a Dual; `background`: gbar's, in the value part)."""
        g = [[Dual(x.v) for x in row] for row in self.g] if background else self.g
        return dsum(g[a][e] * self.riemann_up(e, b, c, d, background) for e in range(4)
                    if not g[a][e].is_zero())

    def ricci(self):
        """R_bd = R^a_bad, written out through the connection (Duals)."""
        if self._ricci is None:
            r, gm = range(4), self.gamma
            out = [[None] * 4 for _ in r]
            for b, d in COMPONENTS:
                out[b][d] = out[d][b] = (
                    dsum(self.diff(gm[a][b][d], a) for a in r)
                    - dsum(self.diff(gm[a][a][b], d) for a in r)
                    + dsum(gm[a][a][e] * gm[e][b][d] for a in r for e in r)
                    - dsum(gm[a][d][e] * gm[e][a][b] for a in r for e in r))
            self._ricci = out
        return self._ricci

    def einstein(self):
        """G_ab = R_ab - 1/2 g_ab R (Duals)."""
        ric = self.ricci()
        r = range(4)
        scalar = dsum(self.ginv[a][b] * ric[a][b] for a in r for b in r)
        half = self.cas.Rational(1, 2)
        return [[ric[a][b] - self.g[a][b] * scalar * half for b in r] for a in r]

    def covariant_bar(self, t, i, m, n):
        """Dbar_i t_mn of a symmetric tensor t (plain expressions), with gbar's connection."""
        gm = self.gamma
        return (self.cas.diff(t[m][n], self.x[i])
                - sum(gm[e][i][m].v * t[e][n] for e in range(4) if gm[e][i][m].v != 0)
                - sum(gm[e][i][n].v * t[m][e] for e in range(4) if gm[e][i][n].v != 0))

    def trace(self, t):
        """gbar^{mn} t_mn."""
        r = range(4)
        return sum(self.ginv_bar[a][b] * t[a][b] for a in r for b in r
                   if self.ginv_bar[a][b] != 0)

    def lorenz(self):
        """gbar^{ma} Dbar_a hbar_mn for n = 0..3."""
        r = range(4)
        tr = self.trace(self.h)
        half = self.cas.Rational(1, 2)
        hbar = [[self.h[m][n] - half * self.gbar[m][n] * tr for n in r] for m in r]
        return [sum(self.ginv_bar[m][a] * self.covariant_bar(hbar, a, m, n)
                    for m in r for a in r if self.ginv_bar[m][a] != 0) for n in r]

    def conservation(self, tbar, dt):
        """The eps part of g^{ma} D_a T_mn, T = Tbar + eps dT."""
        r = range(4)
        t = [[Dual(tbar[a][b], dt[a][b]) for b in r] for a in r]
        gm = self.gamma
        out = []
        for n in r:
            acc = Dual(0, 0)
            for m in r:
                for a in r:
                    if self.ginv[m][a].is_zero():
                        continue
                    d = (self.diff(t[m][n], a)
                         - dsum(gm[e][a][m] * t[e][n] for e in r)
                         - dsum(gm[e][a][n] * t[m][e] for e in r))
                    acc = acc + self.ginv[m][a] * d
            out.append(acc.d)
        return out

    def gauge_residual(self, xi):
        """h_ab - Dbar_a xi_b - Dbar_b xi_a for the covector xi."""
        r = range(4)
        dxi = [[self.cas.diff(xi[b], self.x[a])
                - sum(self.gamma[e][a][b].v * xi[e] for e in r if self.gamma[e][a][b].v != 0)
                for b in r] for a in r]
        return [[self.h[a][b] - dxi[a][b] - dxi[b][a] for b in r] for a in r]


class Names:
    """lingrav's component names in the coordinates `names` (covariant frame): indices joined
    (`tx`) when every name is one letter, else with dots (`t.ph`)."""

    def __init__(self, names):
        self.names = list(names)
        self.joined = all(len(c) == 1 for c in names)

    def index(self, *idx):
        parts = [self.names[i] for i in idx]
        return "".join(parts) if self.joined else ".".join(parts)

    def after_mu(self, n):
        return f"{{mu {self.names[n]}}}"


def equations(cas, fr, einstein, lam, metric, source, labels):
    """[(name, G_ab + Lambda g_ab - 8 pi T_ab)] for the ten components, named
    `G_k + Lambda*g_k - 8*pi*T_k` with the terms there are, `labels` giving (G, g, T):
    the background's equations and the linearized ones alike."""
    big, small, src = labels
    out = []
    for a, b in COMPONENTS:
        k = fr.index(a, b)
        name, e = f"{big}_{k}", einstein[a][b]
        if lam != 0:
            name, e = name + f" + Lambda*{small}_{k}", e + lam * metric[a][b]
        if source is not None:
            name, e = name + f" - 8*pi*{src}_{k}", e - 8 * cas.pi * source[a][b]
        out.append((name, e))
    return out


def claims_components(doc, ns, cas, coords, is_flat):
    """[Claim] for a file about a background, lingrav's order: background, source
    conservation, field equations, gauges, pure gauge. `ns` is the file's Namespace (defines
    read); is_flat(exprs) says whether the caller's zero test proves every expr 0 (the
    background's Riemann tensor, for the pure-gauge route)."""
    names = doc.get("coordinates", CARTESIAN)
    fr = Names(names)
    zero = cas.Integer(0)
    r = range(4)
    if "background" in doc:
        gbar = tensor(ns, doc["background"], zero, names)
    else:
        gbar = [[cas.Integer(-1 if a == 0 else 1) if a == b else zero for b in r] for a in r]
    h = tensor(ns, doc.get("perturbation", {}), zero, names)
    dt = tensor(ns, doc["source"], zero, names) if "source" in doc else None
    tbar = tensor(ns, doc["background_source"], zero, names) \
        if "background_source" in doc else None
    lam = ns.evaluate(doc["cosmological_constant"]) if "cosmological_constant" in doc \
        else zero
    xi = None
    if "gauge_vector" in doc:
        xi = [zero] * 4
        for key, text in doc["gauge_vector"].items():
            xi[names.index(key)] = ns.evaluate(text)
    st = Spacetime(cas, coords, gbar, h)
    claims = doc.get("claims")
    if claims is None:
        claims = {"field_equations": True, "gauge": list(GAUGES), "pure_gauge": True}
    out = []
    g = st.einstein()
    value = [[x.v for x in row] for row in g]
    out.append(Claim("background", True,
                     equations(cas, fr, value, lam, gbar, tbar, ("Gbar", "gbar", "Tbar"))))
    if dt is not None or tbar is not None:
        none = [[zero] * 4 for _ in r]
        cons = st.conservation(tbar or none, dt or none)
        out.append(Claim("source_conservation", True,
                         [(f"D^mu T_{fr.after_mu(n)}", e) for n, e in enumerate(cons)]))
    if "field_equations" in claims:
        first = [[x.d for x in row] for row in g]
        out.append(Claim("field_equations", claims["field_equations"],
                         equations(cas, fr, first, lam, h, dt, ("dG", "h", "dT"))))
    lorenz = None
    for gauge in claims.get("gauge", []):
        if gauge not in GAUGES:
            raise ValueError(f"unknown gauge {gauge}")
        comps = []
        if gauge in ("tt", "synchronous"):
            comps = [(f"h_{fr.index(0, m)}", h[0][m]) for m in r]
        if gauge == "tt":
            comps.append(("gbar^{mu nu} h_{mu nu}", st.trace(h)))
        if gauge in ("tt", "lorenz"):
            lorenz = lorenz or st.lorenz()
            comps += [(f"D^mu hbar_{fr.after_mu(n)}", e) for n, e in enumerate(lorenz)]
        out.append(Claim(f"gauge.{gauge}", True, comps))
    if "pure_gauge" in claims:
        idx = riemann_independent()
        if is_flat([st.riemann_down(*i, background=True).v for i in idx]):
            comps = [("R_" + fr.index(*i), st.riemann_down(*i).d) for i in idx]
            out.append(Claim("pure_gauge", claims["pure_gauge"], comps))
        elif xi is not None:
            res = st.gauge_residual(xi)
            comps = []
            for a, b in COMPONENTS:
                na, nb = names[a], names[b]
                comps.append((f"h_{fr.index(a, b)} - D_{na} xi_{nb} - D_{nb} xi_{na}",
                              res[a][b]))
            out.append(Claim("pure_gauge", claims["pure_gauge"], comps, refutable=False))
        else:
            out.append(Claim("pure_gauge", claims["pure_gauge"], [], why=(
                "the background's Riemann tensor is not proved zero and there is no "
                "[gauge_vector]")))
    return out
