#!/usr/bin/env python3
"""Judge lingrav's tensor layer with SymPy and mpmath (run by tests/sympy_tensor.rs).

Input: a JSON-lines file, one perturbation per line, written by the Rust test: the ten
component texts of h_{mu nu} in lingrav's input syntax, three points, what must vanish by
construction, and for each of the 20 independent Riemann components R_{abcd}, the 10 Einstein
components G_{mu nu} and the 4 Lorenz components V_nu: lingrav's canonical text, its zero
verdict (with witness point and certified enclosure when nonzero) and certified enclosures of
its value at the three points.

The independent route. Nothing here transcribes a linearized formula. With g = eta + eps*h:
- g^{-1}: SymPy inverts eta + eps*H for a symmetric matrix of symbols H (once), then H -> h;
- Gamma^a_{bc} = (1/2) g^{ad} (d_b g_{dc} + d_c g_{db} - d_d g_{bc});
- R^a_{bcd} = d_c Gamma^a_{bd} - d_d Gamma^a_{bc} + Gamma^a_{ce} Gamma^e_{bd}
  - Gamma^a_{de} Gamma^e_{bc}, and R_{abcd} = g_{ae} R^e_{bcd};
- R_{mn} = R^a_{man}, R = g^{mn} R_{mn}, G_{mn} = R_{mn} - (1/2) g_{mn} R;
- the linearized quantity is the coefficient of eps^1: d/d eps at eps = 0.
Every quantity is carried as a jet, its value and its d/d eps at eps = 0 (class Jet). Sums,
products and coordinate derivatives of jets follow the sum and product rules, so each jet is
exactly the first two terms of the eps-series of the full-metric quantity, without ever
forming the eps^2 terms that make the full expressions large. The Lorenz divergence comes
straight from its definition: hbar = h - (1/2) eta eta^{mn} h_{mn}, V_n = eta^{ma} d_a hbar_{mn}.

Rules. A disagreement is a contradiction, never something SymPy could not decide:
- Values. At every point SymPy's value (mpmath, 40 digits) must lie in lingrav's certified
  enclosure, and lingrav's f64 midpoint must be within 1e-9 * max(1, |value|) of it.
- Verdicts. "zero": SymPy's quantity must be numerically zero at the points and simplify to 0
  (the numerator over one denominator expands to 0, or does so once trig functions are
  written as exponentials, or sympy.simplify gives 0; 20 s each, 120 s in all). A quantity
  that is numerically zero but that SymPy cannot simplify is counted as unconfirmed, not as a
  disagreement. "nonzero": SymPy's value at lingrav's witness must lie in lingrav's certified
  enclosure there (which excludes 0). "undecided" is counted, with SymPy's own opinion.
- Construction. A quantity that must vanish by construction must be numerically zero in SymPy
  (else the generator or this route is wrong; SymPy failing to simplify it is counted as
  unconfirmed) and lingrav must not call it nonzero.
- Printer. lingrav's canonical text, read back into SymPy, must equal SymPy's quantity at the
  points to 1e-25 * max(1, |value|).

The summary line is `tensor cross-check: N perturbations, M components, K disagreements`.
Exit status 0 when there is no disagreement, 1 otherwise (each one listed), 2 on bad input.
"""

import json
import re
import signal
import sys
import time

import mpmath
import sympy as sp
from sympy.parsing.sympy_parser import parse_expr, rationalize, standard_transformations

DPS = 40
REL = 1e-9
PRINT_TOL = 1e-25
# Values of SymPy's quantities that are zero come out near 1e-38 at 40 digits.
ZERO_TOL = 1e-24
SLACK = 1e-25
# Budgets of one symbolic zero test and of all of them; running out counts as "unconfirmed",
# not as a disagreement. Typical tests take milliseconds.
SIMPLIFY_SECONDS = 20
SIMPLIFY_TOTAL_SECONDS = 120

COORDS = sp.symbols("t x y z", real=True)
NAMES = "txyz"
EPS = sp.Symbol("epsilon")
ETA = sp.diag(-1, 1, 1, 1)
HALF = sp.Rational(1, 2)


def _riemann_independent():
    """Pairs (A, B), A <= B, of the antisymmetric pairs tx ty tz xy xz yz, without (tz, xy)."""
    pairs = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)]
    out = set()
    for i, a in enumerate(pairs):
        for b in pairs[i:]:
            if (a, b) != ((0, 3), (1, 2)):
                out.add(a + b)
    return out


EXPECTED_INDICES = {
    "riemann": _riemann_independent(),
    "einstein": {(m, n) for m in range(4) for n in range(m, 4)},
    "lorenz": {(n,) for n in range(4)},
}

# ----- lingrav syntax to SymPy ------------------------------------------------------------

LOCALS = {
    **{n: c for n, c in zip(NAMES, COORDS)},
    **{f"d_{n}": (lambda c: lambda e: sp.diff(e, c))(c) for n, c in zip(NAMES, COORDS)},
    "sin": sp.sin,
    "cos": sp.cos,
    "tan": sp.tan,
    "exp": sp.exp,
    "log": sp.log,
    "sqrt": sp.sqrt,
    "sinh": sp.sinh,
    "cosh": sp.cosh,
    "tanh": sp.tanh,
    "pi": sp.pi,
    # lingrav prints coefficients in Q(sqrt 2, sqrt 3, i) with `i` for the imaginary unit.
    "i": sp.I,
}
TOKEN = re.compile(r"\s+|[A-Za-z_][A-Za-z_0-9]*|(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?|[-+*/^()]")


def to_sympy(text):
    """lingrav's syntax to SymPy. The syntax lingrav prints and the generator writes differs
    from Python's only in `^` (same precedence and right associativity as `**`, and a sign may
    open its right operand in both) and in exact decimals, which `rationalize` keeps exact.
    Every token is checked first, so no name can fall through to a SymPy global."""
    pos = 0
    while pos < len(text):
        m = TOKEN.match(text, pos)
        if not m:
            raise ValueError(f"unexpected character {text[pos]!r} at {pos} in {text!r}")
        tok = m.group(0)
        if tok[0].isalpha() or tok[0] == "_":
            if tok not in LOCALS:
                raise ValueError(f"unknown name {tok!r} in {text!r}")
        pos = m.end()
    if "**" in text:
        raise ValueError(f"`**` is not lingrav syntax: {text!r}")
    return parse_expr(
        text.replace("^", "**"),
        local_dict=dict(LOCALS),
        transformations=standard_transformations + (rationalize,),
    )


# ----- the first-order route ----------------------------------------------------------------


class Jet:
    """A quantity to first order in eps: its value and its d/d eps, both at eps = 0. Sums,
    products and coordinate derivatives of jets are the jets of sums, products and derivatives
    (product rule), so every quantity below is the eps-series of its full-metric self, cut
    after eps^1."""

    __slots__ = ("v", "d")

    def __init__(self, v, d=0):
        self.v = sp.sympify(v)
        self.d = sp.sympify(d)

    @staticmethod
    def of(e):
        """The jet of an expression in eps."""
        return Jet(e.subs(EPS, 0), sp.diff(e, EPS).subs(EPS, 0))

    def __add__(self, o):
        o = o if isinstance(o, Jet) else Jet(o)
        return Jet(self.v + o.v, self.d + o.d)

    __radd__ = __add__

    def __neg__(self):
        return Jet(-self.v, -self.d)

    def __sub__(self, o):
        return self + (-o)

    def __rsub__(self, o):
        return (-self) + o

    def __mul__(self, o):
        o = o if isinstance(o, Jet) else Jet(o)
        return Jet(self.v * o.v, self.v * o.d + self.d * o.v)

    __rmul__ = __mul__

    def diff(self, mu):
        return Jet(sp.diff(self.v, COORDS[mu]), sp.diff(self.d, COORDS[mu]))


def jsum(terms):
    acc = Jet(0)
    for t in terms:
        acc = acc + t
    return acc


_GENERIC_INVERSE = None


def inverse_jets(h):
    """The jets of (eta + eps*h)^{-1}: SymPy inverts eta + eps*H for a symmetric matrix of
    symbols H once, takes the jets of the entries, then H -> h."""
    global _GENERIC_INVERSE
    if _GENERIC_INVERSE is None:
        hs = sp.Matrix(4, 4, lambda i, j: sp.Symbol(f"H{min(i, j)}{max(i, j)}"))
        inv = (ETA + EPS * hs).inv(method="LU")
        _GENERIC_INVERSE = (hs, [[Jet.of(inv[i, j]) for j in range(4)] for i in range(4)])
    hs, inv = _GENERIC_INVERSE
    sub = {hs[i, j]: h[i, j] for i in range(4) for j in range(4)}
    return [[Jet(e.v.xreplace(sub), e.d.xreplace(sub)) for e in row] for row in inv]


class Perturbation:
    """The curvature of g = eta + eps*h from the full-metric definitions, as jets in eps."""

    def __init__(self, h):
        self.h = h
        g = [[Jet.of(ETA[i, j] + EPS * h[i, j]) for j in range(4)] for i in range(4)]
        gi = inverse_jets(h)
        self.g, self.ginv = g, gi
        # dg[k][i][j] = d_k g_ij
        dg = [[[g[i][j].diff(k) for j in range(4)] for i in range(4)] for k in range(4)]
        self.gamma = [
            [
                [
                    HALF * jsum(gi[a][k] * (dg[b][k][c] + dg[c][k][b] - dg[k][b][c]) for k in range(4))
                    for c in range(4)
                ]
                for b in range(4)
            ]
            for a in range(4)
        ]
        self._rup = {}

    def riemann_up(self, a, b, c, dd):
        """R^a_{bcd} = d_c Gamma^a_{bd} - d_d Gamma^a_{bc} + Gamma^a_{ce} Gamma^e_{bd}
        - Gamma^a_{de} Gamma^e_{bc}."""
        key = (a, b, c, dd)
        if key not in self._rup:
            G = self.gamma
            e = G[a][b][dd].diff(c) - G[a][b][c].diff(dd)
            e = e + jsum(G[a][c][k] * G[k][b][dd] - G[a][dd][k] * G[k][b][c] for k in range(4))
            self._rup[key] = e
        return self._rup[key]

    def riemann_down(self, a, b, c, dd):
        """The eps^1 coefficient of R_{abcd} = g_{ae} R^e_{bcd}."""
        return jsum(self.g[a][k] * self.riemann_up(k, b, c, dd) for k in range(4)).d

    def einstein(self):
        """The eps^1 coefficients of G_{mn} = R_{mn} - (1/2) g_{mn} g^{ab} R_{ab}, with
        R_{mn} = R^a_{man}."""
        ricci = {
            (m, n): jsum(self.riemann_up(a, m, a, n) for a in range(4)) for m in range(4) for n in range(4)
        }
        scalar = jsum(self.ginv[m][n] * ricci[m, n] for m in range(4) for n in range(4))
        return {(m, n): (ricci[m, n] - HALF * self.g[m][n] * scalar).d for (m, n) in ricci}

    def lorenz(self):
        """V_n = eta^{ma} d_a hbar_{mn}, hbar = h - (1/2) eta eta^{mn} h_{mn}: linear in h
        by definition, so straight from it."""
        h = self.h
        trace = sum(ETA[m, n] * h[m, n] for m in range(4) for n in range(4))
        hbar = h - HALF * ETA * trace
        return [
            sum(ETA[m, a] * sp.diff(hbar[m, n], COORDS[a]) for m in range(4) for a in range(4))
            for n in range(4)
        ]


# ----- numbers -----------------------------------------------------------------------------


class Evaluator:
    """Values of one expression at points, with mpmath at DPS digits."""

    def __init__(self, e):
        self.f = sp.lambdify(COORDS, e, modules="mpmath")

    def at(self, point):
        args = [mpmath.mpf(point.get(n, 0.5)) for n in NAMES]
        return mpmath.mpc(self.f(*args))


def inside(v, enc):
    """True if the complex value v lies in lingrav's certified enclosure (with a tiny slack for
    mpmath's own rounding)."""
    s = SLACK * max(1, abs(v))
    (rlo, rhi), (ilo, ihi) = enc["re"], enc["im"]
    return rlo - s <= v.real <= rhi + s and ilo - s <= v.imag <= ihi + s


class OutOfTime(Exception):
    pass


def _out_of_time(signum, frame):
    raise OutOfTime()


def numerator_expands_to_zero(e):
    """Over one denominator (kept factored), the expanded numerator is 0: decides rational
    functions, and sums of products of exponentials once those are written as exp."""
    num, _ = sp.fraction(sp.together(e))
    return sp.expand(num) == 0


SIMPLIFIERS = (
    ("numerator", numerator_expands_to_zero),
    ("exp-numerator", lambda e: numerator_expands_to_zero(e.rewrite(sp.exp))),
    ("simplify", lambda e: sp.simplify(e) == 0),
)


_simplify_left = [SIMPLIFY_TOTAL_SECONDS]


def sym_zero(e):
    """True if SymPy simplifies e to 0 within its budget; False if it does not (which proves
    nothing). Expanding over a common denominator comes first: plain sp.expand also expands
    the powers in denominators and can take minutes where this takes milliseconds."""
    if e == 0:
        return True
    budget = min(SIMPLIFY_SECONDS, int(_simplify_left[0]))
    if budget <= 0:
        return False
    started = time.monotonic()
    signal.signal(signal.SIGALRM, _out_of_time)
    signal.alarm(budget)
    try:
        return any(test(e) for _, test in SIMPLIFIERS)
    except OutOfTime:
        return False
    finally:
        signal.alarm(0)
        _simplify_left[0] -= time.monotonic() - started


def encl(enc):
    return f"re {enc['re']} im {enc['im']}"


def clip(text, n=600):
    return text if len(text) <= n else f"{text[:n]}... ({len(text)} chars)"


def fmt(v):
    if abs(v.imag) <= 1e-30 * max(1, abs(v.real)):
        return mpmath.nstr(v.real, 17)
    return mpmath.nstr(v, 17)


# ----- judging -------------------------------------------------------------------------------


class Judge:
    def __init__(self):
        self.cases = 0
        self.components = 0
        self.values = 0
        self.printed = 0
        self.verdicts = {"zero": 0, "nonzero": 0, "undecided": 0}
        self.confirmed_zero = 0
        self.unconfirmed_zero = []
        self.undecided = []
        self.disagreements = []

    def fail(self, case, comp, what):
        """Records a disagreement about one component (comp) or a whole perturbation (None)."""
        name = f"{comp['quantity']}_{''.join(NAMES[i] for i in comp['index'])}" if comp else "-"
        self.disagreements.append((case, name, comp, what))

    def component(self, case, comp, q, points, expect_zero):
        self.components += 1
        label = comp["verdict"]["label"]
        self.verdicts[label] = self.verdicts.get(label, 0) + 1
        ev = Evaluator(q)
        vals = [ev.at(p) for p in points]

        # Values at the points.
        for p, v, enc in zip(points, vals, comp["values"]):
            self.values += 1
            if enc is None:
                self.fail(case, comp, f"lingrav gave no value at {p}; SymPy: {fmt(v)}")
                continue
            if not inside(v, enc):
                self.fail(case, comp, f"at {p}: SymPy {fmt(v)} is outside lingrav's enclosure {encl(enc)}")
            mid = mpmath.mpc(*enc["f64"])
            if abs(mid - v) > REL * max(1, abs(v)):
                self.fail(case, comp, f"at {p}: lingrav's f64 value {enc['f64']} vs SymPy {fmt(v)}")

        # The printer: lingrav's canonical text, read back, is the same function.
        self.printed += 1
        try:
            canon = to_sympy(comp["canon"])
        except Exception as err:  # any failure to read it back is the printer's fault
            self.fail(case, comp, f"SymPy cannot read lingrav's canonical text: {err}")
            canon = None
        if canon is not None:
            cv = Evaluator(canon)
            for p, v in zip(points, vals):
                c = cv.at(p)
                if abs(c - v) > PRINT_TOL * max(1, abs(v)):
                    self.fail(case, comp, f"at {p}: canonical text gives {fmt(c)}, SymPy {fmt(v)}")

        numerically_zero = all(abs(v) <= ZERO_TOL for v in vals)
        symbolic = None  # computed at most once

        def proved_zero():
            nonlocal symbolic
            if symbolic is None:
                symbolic = sym_zero(q)
            return symbolic

        # The verdict.
        if label == "zero":
            if not numerically_zero:
                self.fail(case, comp, f"lingrav says zero; SymPy's values: {[fmt(v) for v in vals]}")
            elif proved_zero():
                self.confirmed_zero += 1
            else:
                self.unconfirmed_zero.append(f"{case['id']} {comp['quantity']} {comp['index']}")
        elif label == "nonzero":
            w = comp["verdict"]["witness"]
            enc = comp["verdict"]["value"]
            v = ev.at(w)
            if abs(v) <= ZERO_TOL:
                self.fail(case, comp, f"lingrav says nonzero at {w}; SymPy's value there: {fmt(v)}")
            elif not inside(v, enc):
                self.fail(case, comp, f"witness {w}: SymPy {fmt(v)} is outside lingrav's enclosure {encl(enc)}")
        elif label == "undecided":
            opinion = "nonzero" if not numerically_zero else ("zero" if proved_zero() else "undecided")
            self.undecided.append(f"{case['id']} {comp['quantity']} {comp['index']}: SymPy says {opinion}")
        else:
            self.fail(case, comp, f"unknown verdict label {label!r}")

        # The construction.
        if expect_zero:
            if not numerically_zero:
                self.fail(case, comp, f"zero by construction, but SymPy's values are {[fmt(v) for v in vals]}")
            elif label != "zero" and not proved_zero():
                self.unconfirmed_zero.append(f"{case['id']} {comp['quantity']} {comp['index']} (zero by construction)")
            if label == "nonzero":
                self.fail(case, comp, "zero by construction, but lingrav says nonzero")

    def case(self, case):
        self.cases += 1
        h = sp.zeros(4, 4)
        for m in range(4):
            for n in range(m, 4):
                e = to_sympy(case["h"][NAMES[m] + NAMES[n]])
                h[m, n] = e
                h[n, m] = e
        pert = Perturbation(h)
        einstein = None
        lorenz = None
        points = case["points"]
        indices = {}
        for comp in case["components"]:
            indices.setdefault(comp["quantity"], set()).add(tuple(comp["index"]))
        for quantity, expected in EXPECTED_INDICES.items():
            got = indices.get(quantity, set())
            if got != expected:
                missing, extra = sorted(expected - got), sorted(got - expected)
                self.fail(case, None, f"{quantity} components: missing {missing}, unexpected {extra}")
        for comp in case["components"]:
            idx = comp["index"]
            quantity = comp["quantity"]
            if quantity == "riemann":
                q = pert.riemann_down(*idx)
            elif quantity == "einstein":
                einstein = einstein or pert.einstein()
                q = einstein[tuple(idx)]
            elif quantity == "lorenz":
                lorenz = lorenz or pert.lorenz()
                q = lorenz[idx[0]]
            else:
                raise ValueError(f"unknown quantity {quantity!r}")
            self.component(case, comp, q, points, case["expect"].get(quantity) == "zero")


def main(argv):
    if len(argv) != 2:
        print("usage: tensor_check.py CORPUS.jsonl", file=sys.stderr)
        return 2
    mpmath.mp.dps = DPS
    started = time.monotonic()
    try:
        with open(argv[1], encoding="utf-8") as f:
            cases = [json.loads(line) for line in f if line.strip()]
    except (OSError, ValueError) as err:
        print(f"tensor_check.py: cannot read {argv[1]}: {err}", file=sys.stderr)
        return 2
    judge = Judge()
    for case in cases:
        t0 = time.monotonic()
        try:
            judge.case(case)
        except ValueError as err:
            print(f"tensor_check.py: {case.get('id')}: {err}", file=sys.stderr)
            return 2
        print(f"  {case['id']}: {time.monotonic() - t0:.1f} s")

    for case, name, comp, what in judge.disagreements:
        print(f"DISAGREEMENT {case['id']} ({case['kind']}) {name}: {what}")
        if comp is not None:
            print(f"    lingrav canonical text: {clip(comp['canon'])}")
            print(f"    lingrav verdict: {json.dumps(comp['verdict'])}")
        print(f"    h: {json.dumps(case['h'])}")
    for u in judge.undecided:
        print(f"  lingrav undecided: {u}")
    for u in judge.unconfirmed_zero:
        print(f"  numerically zero, but SymPy cannot simplify it to 0: {u}")
    v = judge.verdicts
    print(
        f"verdicts: {v['zero']} zero ({judge.confirmed_zero} simplified to 0 by SymPy), {v['nonzero']} nonzero "
        f"(witness inside lingrav's enclosure), {v['undecided']} undecided; {judge.values} values and "
        f"{judge.printed} canonical texts compared; {time.monotonic() - started:.1f} s"
    )
    print(
        f"tensor cross-check: {judge.cases} perturbations, {judge.components} components, "
        f"{len(judge.disagreements)} disagreements"
    )
    return 1 if judge.disagreements else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
