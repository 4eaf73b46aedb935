"""What the peer scripts share: lingrav's expression language read into a computer-algebra
library, tensors read from a file's tables, and the claims of `lingrav check` about flat
space in Cartesian coordinates as textbook formulas over it.

Used by benches/check_sympy.py (SymPy) and benches/peers/symengine_check.py (SymEngine), and
by the other shared modules (curved.py for files about a background or in other coordinates,
radiation.py for the radiation of a file's bodies). Everything here takes the library as a
module `cas` with `diff`, `pi` and the elementary functions under their usual names, which both
provide, so the scripts differ only in how they build arbitrary functions and decide zero.

  field equations   G1_mn = R1_mn - 1/2 eta_mn R1 (minus 8 pi T_mn with a source), with
                    R1_mn = 1/2 (d_s d_m h^s_n + d_s d_n h^s_m - d_m d_n h - box h_mn);
  Lorenz gauge      d^m hbar_mn, hbar = h - 1/2 eta h;
  TT gauge          h_tm, h_ii, d_i h_ij;   synchronous: h_tm;
  pure gauge        the 20 independent components of the linearized Riemann tensor,
                    R_abcd = 1/2 (d_b d_c h_ad + d_a d_d h_bc - d_a d_c h_bd - d_b d_d h_ac);
  with a source     its conservation d^m T_mn.

Component names and claim keys are lingrav's (`check --format json`), so verdicts can be
compared component by component.
"""

import re
from collections import namedtuple

COORDS_NAMES = "t x y z"
ETA = (-1, 1, 1, 1)
NAMES = "txyz"
PAIRS = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)]
COMPONENTS = [(m, n) for m in range(4) for n in range(m, 4)]
FUNCTIONS = ("sin", "cos", "tan", "exp", "log", "sqrt", "sinh", "cosh", "tanh", "atan", "atan2")

# --- lingrav syntax -> Python over the library ------------------------------------------------

NUMBER = re.compile(r"(?<![\w.])(\d+\.?\d*(?:[eE][+-]?\d+)?|\.\d+(?:[eE][+-]?\d+)?)")
PRIMED = re.compile(r"([A-Za-z_]\w*)('+)\s*\(")


def translate(text):
    """`^` is `**`, every number `__exact('1.5e-3')`, `Q''(a)` `__prime_Q_2(a)`."""
    text = NUMBER.sub(lambda m: f"__exact('{m.group(1)}')", text)
    text = PRIMED.sub(lambda m: f"__prime_{m.group(1)}_{len(m.group(2))}(", text)
    return text.replace("^", "**")


def top_level_terms(py):
    """py split at its top-level binary + and - (signs kept with the terms), so that a sum of
    thousands of terms does not exhaust Python's parser recursion."""
    terms, depth, start, prev = [], 0, 0, ""
    for i, ch in enumerate(py):
        if ch in "([":
            depth += 1
        elif ch in ")]":
            depth -= 1
        elif ch in "+-" and depth == 0 and (prev.isalnum() or prev in ")_'"):
            terms.append(py[start:i])
            start = i
        if not ch.isspace():
            prev = ch
    terms.append(py[start:])
    return [t for t in terms if t.strip()]


class Namespace(dict):
    """Name lookup for eval: coordinates, functions, pi, then whatever the caller adds
    (parameters, arbitrary functions, defines), and the d_... and primed operators.

    exact(text) makes an exact number; prime(f, n, a) the n-th derivative of f at a. `d_r_th`
    differentiates by the coordinates r and th, whatever the coordinates are called."""

    def __init__(self, cas, coords, exact, prime):
        super().__init__({str(c): c for c in coords})
        self.update({name: getattr(cas, name) for name in FUNCTIONS})
        self["abs"] = cas.Abs
        self["pi"] = cas.pi
        self["__exact"] = exact
        self.cas, self.prime = cas, prime
        self.coords = {str(c): c for c in coords}
        self.functions = {}

    def __missing__(self, key):
        if key.startswith("d_") and all(v in self.coords for v in key[2:].split("_")):
            variables = [self.coords[v] for v in key[2:].split("_")]
            return lambda f: self.cas.diff(f, *variables)
        if key.startswith("__prime_"):
            name, n = key[len("__prime_"):].rsplit("_", 1)
            f = self.functions[name]
            return lambda a: self.prime(f, int(n), a)
        raise KeyError(key)

    def evaluate(self, text):
        """The library's expression for a text of lingrav's language (a TOML number is read
        as the exact decimal it is written as)."""
        py = translate(str(text))
        terms = top_level_terms(py)
        if len(terms) < 100:
            return self.cas.sympify(eval(py, {"__builtins__": {}}, self))
        return self.cas.Add(*[eval(t.strip(), {"__builtins__": {}}, self) for t in terms])


def component_key(key, names=NAMES):
    """(m, n), m <= n, of a component key in the coordinates `names`: `a.b`, or `ab` when every
    coordinate name is one letter (lingrav's rule)."""
    if "." in key:
        a, b = key.split(".", 1)
    elif all(len(c) == 1 for c in names) and len(key) == 2:
        a, b = key
    else:
        raise ValueError(f"component key {key!r} names no two of the coordinates {list(names)}")
    m, n = list(names).index(a), list(names).index(b)
    return (m, n) if m <= n else (n, m)


def tensor(ns, table, zero, names=NAMES):
    """A symmetric 4x4 from a [perturbation], [source], [background] or [background_source]
    table; TOML reads a dotted key `t.ph` as the table {t: {ph: ...}}."""
    a = [[zero] * 4 for _ in range(4)]
    for key, text in table.items():
        inner = text.items() if isinstance(text, dict) else [(None, text)]
        for key2, t in inner:
            m, n = component_key(key if key2 is None else f"{key}.{key2}", names)
            a[m][n] = a[n][m] = ns.evaluate(t)
    return a


# --- linearized gravity, textbook formulas -------------------------------------------------


class Linearized:
    def __init__(self, h, cas, coords):
        self.h, self.cas, self.coords = h, cas, coords
        self.trace = sum(ETA[m] * h[m][m] for m in range(4))
        self._d = {}

    def d(self, f_key, f, *idx):
        """Memoised partial derivatives of a named expression."""
        k = (f_key, tuple(sorted(idx)))
        if k not in self._d:
            self._d[k] = self.cas.diff(f, *[self.coords[i] for i in idx])
        return self._d[k]

    def dh(self, m, n, *idx):
        m, n = min(m, n), max(m, n)
        return self.d(("h", m, n), self.h[m][n], *idx)

    def ricci(self):
        r = [[None] * 4 for _ in range(4)]
        for m, n in COMPONENTS:
            acc = 0
            for s in range(4):
                acc += ETA[s] * (self.dh(s, n, s, m) + self.dh(s, m, s, n) - self.dh(m, n, s, s))
            acc -= self.d("trace", self.trace, m, n)
            r[m][n] = r[n][m] = acc / 2
        return r

    def einstein(self):
        r = self.ricci()
        scalar = sum(ETA[m] * r[m][m] for m in range(4))
        return [[r[m][n] - (ETA[m] * scalar / 2 if m == n else 0) for n in range(4)]
                for m in range(4)]

    def lorenz(self):
        out = []
        for n in range(4):
            acc = 0
            for m in range(4):
                hbar = self.h[m][n] - (ETA[m] * self.trace / 2 if m == n else 0)
                acc += ETA[m] * self.cas.diff(hbar, self.coords[m])
            out.append(acc)
        return out

    def riemann(self, a, b, c, d):
        return (self.dh(a, d, b, c) + self.dh(b, c, a, d)
                - self.dh(b, d, a, c) - self.dh(a, c, b, d)) / 2


def riemann_independent():
    out = []
    for i, p in enumerate(PAIRS):
        for q in PAIRS[i:]:
            if p == (0, 3) and q == (1, 2):
                continue  # fixed by the cyclic identity
            out.append(p + q)
    return out


def claims_components(doc, h, source, cas, coords):
    """(key, expect_zero, [(name, expr)]) for each claim of the file, lingrav's order."""
    lin = Linearized(h, cas, coords)
    claims = doc.get("claims")
    if claims is None:
        claims = {"field_equations": True, "gauge": ["lorenz", "tt", "synchronous"],
                  "pure_gauge": True}
    out = []
    if source is not None:
        comps = [(f"d^mu T_mu{NAMES[n]}",
                  sum(ETA[m] * cas.diff(source[m][n], coords[m]) for m in range(4)))
                 for n in range(4)]
        out.append(("source_conservation", True, comps))
    if "field_equations" in claims:
        g = lin.einstein()
        comps = []
        for m, n in COMPONENTS:
            e = g[m][n]
            if source is not None:
                e = e - 8 * cas.pi * source[m][n]
            ij = NAMES[m] + NAMES[n]
            comps.append((f"G_{ij} - 8*pi*T_{ij}" if source is not None else f"G_{ij}", e))
        out.append(("field_equations", claims["field_equations"], comps))
    for gauge in claims.get("gauge", []):
        if gauge == "lorenz":
            comps = [(f"d^mu hbar_mu{NAMES[n]}", e) for n, e in enumerate(lin.lorenz())]
        elif gauge in ("tt", "synchronous"):
            comps = [(f"h_t{NAMES[m]}", h[0][m]) for m in range(4)]
            if gauge == "tt":
                comps.append(("h_xx + h_yy + h_zz", h[1][1] + h[2][2] + h[3][3]))
                comps += [(f"d_i h_i{NAMES[j]}",
                           sum(cas.diff(h[i][j], coords[i]) for i in range(1, 4)))
                          for j in range(1, 4)]
        else:
            raise ValueError(f"unknown gauge {gauge}")
        out.append((f"gauge.{gauge}", True, comps))
    if "pure_gauge" in claims:
        comps = [("R_" + "".join(NAMES[i] for i in idx), lin.riemann(*idx))
                 for idx in riemann_independent()]
        out.append(("pure_gauge", claims["pure_gauge"], comps))
    return out


# A claim of the curved and radiation routes: its key, whether its components are asserted
# to vanish, [(name, expr)], whether a nonzero component refutes it (not for a gauge vector:
# h = D xi + D xi for another xi stays possible), and why it has no components (the claim is
# then undecided).
Claim = namedtuple("Claim", "key expect_zero components refutable why", defaults=(True, None))


def status(verdicts, expect_zero, refutable=True):
    """lingrav's rule: a vanishing claim holds when every component is zero; a claim written
    `= false` holds when one is nonzero; a claim that a nonzero component cannot refute is
    then undecided, and one without components is undecided."""
    if not verdicts:
        return "undecided"
    if any(v == "nonzero" for v in verdicts):
        if not refutable:
            return "undecided"
        return "fails" if expect_zero else "holds"
    if all(v == "zero" for v in verdicts):
        return "holds" if expect_zero else "fails"
    return "undecided"
