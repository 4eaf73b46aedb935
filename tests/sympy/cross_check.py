#!/usr/bin/env python3
"""Judge lingrav's claims on a corpus with SymPy and mpmath (run by tests/sympy_cross.rs).

Input: a JSON-lines file, one case per line, written by the Rust test: the texts `lhs` and
`rhs` in lingrav's input syntax, lingrav's canonical texts (`canon_lhs`, `canon_diff`,
`canon_deriv`), lingrav's verdict on lhs - rhs (with its witness point and certified
enclosure when nonzero), and certified enclosures of five values at each of a few points.

Rules. The texts are converted to SymPy by a parser of lingrav's syntax (not by string
replacement), so `^`, exact decimals such as `7e-25`, primes `F'(u)` and operators `d_x_y(f)`
mean exactly what they mean to lingrav. Then:

- Numbers. Values are computed with mpmath at 60 digits; any check that would fail on such a
  value is redone with SymPy's evalf, which raises its precision until the value has 30
  correct digits, so cancellation (cosh(100)^2 - sinh(100)^2) cannot fake a disagreement.
- Verdict. SymPy's own verdict on lhs - rhs is "nonzero" when its value at some random point
  is clearly nonzero; otherwise "zero" when a symbolic simplification reaches 0 within the
  per-case time budget; otherwise "undecided" (counted, never a disagreement). A disagreement
  is a contradiction only: lingrav says zero and SymPy's value is clearly nonzero; lingrav
  says nonzero but SymPy's value at lingrav's own witness is not clearly nonzero or lies
  outside lingrav's certified enclosure; or SymPy proves zero what lingrav certifies nonzero.
- Values. At every point, SymPy's value must lie in lingrav's certified enclosure, and the
  midpoint lingrav reports as its f64 value must be within a relative 1e-9. A midpoint off by
  more than that inside a correct but wide enclosure is counted as "imprecise", not as a
  disagreement. SymPy also evaluates lingrav's printed canonical texts, which must equal the
  originals (a printing bug shows up here).

Arbitrary functions get the same concrete samples as on the Rust side.
Exit status 0 when there is no disagreement, 1 otherwise (with every disagreeing case listed),
2 on bad input.
"""

import argparse
import json
import random
import signal
import sys
import time
from fractions import Fraction

import mpmath
import sympy

DPS = 60
REL = 1e-9
# A symbol that a point leaves out (it cancelled on lingrav's side) gets this value.
DEFAULT_VALUE = 0.7
# evalf's precision ceiling (bits) and time budget (s) for one precise value.
MAXN = 4000
# Below this size relative to its terms, a precise value is taken as zero: when cancellation
# exceeds evalf's ceiling it returns a meaningless tiny number rather than exactly 0.
ZERO_REL = mpmath.mpf(10) ** -300
PRECISE_BUDGET = 20.0
SYMBOLS = ["x", "y", "z", "t", "omega", "k", "kx", "ky", "m"]
SAMPLE_VAR = "u"
SAMPLES = {"F": "exp(-u^2/3)", "G": "sin(u)/(u^2 + 2)"}
BUILTINS = {
    "sin": sympy.sin,
    "cos": sympy.cos,
    "tan": sympy.tan,
    "exp": sympy.exp,
    "log": sympy.log,
    "sqrt": sympy.sqrt,
    "sinh": sympy.sinh,
    "cosh": sympy.cosh,
    "tanh": sympy.tanh,
}

_symbols = {}


def sym(name):
    if name not in _symbols:
        _symbols[name] = sympy.Symbol(name, real=True)
    return _symbols[name]


# ----- lingrav syntax to SymPy ------------------------------------------------------------


class SyntaxErr(Exception):
    pass


def tokenize(src):
    toks = []
    i = 0
    n = len(src)
    while i < n:
        c = src[i]
        if c.isspace():
            i += 1
        elif c.isdigit() or c == ".":
            j = i
            while j < n and (src[j].isdigit() or src[j] == "."):
                j += 1
            if j < n and src[j] in "eE":
                k = j + 1
                if k < n and src[k] in "+-":
                    k += 1
                if k < n and src[k].isdigit():
                    while k < n and src[k].isdigit():
                        k += 1
                    j = k
            toks.append(("num", src[i:j]))
            i = j
        elif c.isalpha() or c == "_":
            j = i
            while j < n and (src[j].isalnum() or src[j] == "_"):
                j += 1
            name = src[i:j]
            primes = 0
            while j < n and src[j] == "'":
                primes += 1
                j += 1
            toks.append(("name", (name, primes)))
            i = j
        elif c in "+-*/^()":
            toks.append(("op", c))
            i += 1
        else:
            raise SyntaxErr(f"unexpected {c!r} in {src!r}")
    toks.append(("end", None))
    return toks


class Parser:
    """Pratt parser with lingrav's precedence: + - < * / < unary sign < ^ (right)."""

    def __init__(self, src):
        self.src = src
        self.toks = tokenize(src)
        self.pos = 0

    def peek(self):
        return self.toks[self.pos]

    def take(self):
        t = self.toks[self.pos]
        self.pos += 1
        return t

    def expect(self, kind, val=None):
        t = self.take()
        if t[0] != kind or (val is not None and t[1] != val):
            raise SyntaxErr(f"expected {val or kind} at token {self.pos} of {self.src!r}")
        return t

    def parse(self):
        e = self.sum()
        self.expect("end")
        return e

    def sum(self):
        e = self.product()
        while self.peek() in (("op", "+"), ("op", "-")):
            op = self.take()[1]
            r = self.product()
            e = e + r if op == "+" else e - r
        return e

    def product(self):
        e = self.unary()
        while self.peek() in (("op", "*"), ("op", "/")):
            op = self.take()[1]
            r = self.unary()
            e = e * r if op == "*" else e / r
        return e

    def unary(self):
        if self.peek() == ("op", "-"):
            self.take()
            return -self.unary()
        if self.peek() == ("op", "+"):
            self.take()
            return self.unary()
        return self.power()

    def power(self):
        base = self.primary()
        if self.peek() == ("op", "^"):
            self.take()
            return sympy.Pow(base, self.exponent())
        return base

    def exponent(self):
        # A sign may open the right operand of ^: 2^-3, x^-y^2 = x^(-(y^2)).
        if self.peek() == ("op", "-"):
            self.take()
            return -self.exponent()
        if self.peek() == ("op", "+"):
            self.take()
            return self.exponent()
        return self.power()

    def primary(self):
        kind, val = self.take()
        if kind == "num":
            return sympy.Rational(Fraction(val).numerator, Fraction(val).denominator)
        if kind == "op" and val == "(":
            e = self.sum()
            self.expect("op", ")")
            return e
        if kind == "name":
            name, primes = val
            if self.peek() == ("op", "("):
                self.take()
                arg = self.sum()
                self.expect("op", ")")
                return self.call(name, primes, arg)
            if primes:
                raise SyntaxErr(f"primes without a call in {self.src!r}")
            if name == "pi":
                return sympy.pi
            if name == "i":
                return sympy.I
            return sym(name)
        raise SyntaxErr(f"unexpected token {val!r} in {self.src!r}")

    def call(self, name, primes, arg):
        if name.startswith("d_"):
            return sympy.diff(arg, *[sym(v) for v in name[2:].split("_")])
        if name in BUILTINS:
            return BUILTINS[name](arg)
        f = sympy.Function(name)
        if primes == 0:
            return f(arg)
        xi = sympy.Dummy("xi")
        return sympy.Subs(sympy.Derivative(f(xi), (xi, primes)), xi, arg)


def to_sympy(text):
    return Parser(text).parse()


# ----- numeric evaluation -----------------------------------------------------------------

_sample_lambdas = None


def sample_lambdas():
    global _sample_lambdas
    if _sample_lambdas is None:
        u = sym(SAMPLE_VAR)
        _sample_lambdas = {sympy.Function(n): sympy.Lambda(u, to_sympy(t)) for n, t in SAMPLES.items()}
    return _sample_lambdas


def concrete(e):
    """`e` with every arbitrary function replaced by its sample, derivatives done."""
    for f, lam in sample_lambdas().items():
        e = e.replace(f, lam)
    return e.doit()


class Numeric:
    """Values of a SymPy expression at points, two ways.

    `at`: fast, with mpmath at DPS digits. Catastrophic cancellation can defeat any fixed
    precision (cosh(100)^2 - sinh(100)^2 needs 90 digits just to see the 1), so every check
    that would fail on a fast value is redone with `precise`: SymPy's evalf, which raises its
    working precision until the result has 30 correct digits (or is zero to that accuracy).
    """

    def __init__(self, e):
        self.expr = concrete(e)
        self.syms = sorted(self.expr.free_symbols, key=lambda s: s.name)
        self.fn = sympy.lambdify(self.syms, self.expr, modules="mpmath")

    def at(self, point):
        args = [mpmath.mpf(point.get(s.name, DEFAULT_VALUE)) for s in self.syms]
        try:
            return mpmath.mpc(self.fn(*args))
        except (ZeroDivisionError, ValueError, OverflowError):
            return None

    def precise(self, point, budget=PRECISE_BUDGET):
        subs = {s: sympy.Rational(point.get(s.name, DEFAULT_VALUE)) for s in self.syms}
        signal.signal(signal.SIGALRM, _alarm)
        signal.setitimer(signal.ITIMER_REAL, budget)
        try:
            v = self.expr.evalf(30, subs=subs, maxn=MAXN)
            re, im = v.as_real_imag()
            return mpmath.mpc(mpmath.mpf(sympy.Float(re, 30)), mpmath.mpf(sympy.Float(im, 30)))
        except Timeout:
            return None
        except (TypeError, ValueError, ZeroDivisionError):
            return None
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)


def clearly_nonzero(v, scale):
    """At DPS digits: far above the rounding noise of terms of size `scale`."""
    return v is not None and abs(v) > mpmath.mpf(10) ** -(DPS - 20) * max(scale, 1)


def precisely_nonzero(v, scale):
    """For a `precise` value: nonzero and above the noise floor (see ZERO_REL)."""
    return v is not None and abs(v) > ZERO_REL * max(scale, 1)


class Timeout(BaseException):
    """Raised by the alarm; a BaseException so that SymPy's `except Exception` lets it pass."""


def _alarm(signum, frame):
    raise Timeout()


# ----- symbolic zero test -----------------------------------------------------------------


def symbolic_zero(d, budget):
    """True if some simplification reaches 0 within `budget` seconds; None otherwise."""
    attempts = [
        lambda e: sympy.expand(e),
        lambda e: sympy.cancel(sympy.together(e)),
        lambda e: sympy.cancel(sympy.expand(e.rewrite(sympy.exp))),
        lambda e: sympy.simplify(e),
        lambda e: sympy.simplify(sympy.expand_trig(e)),
    ]
    deadline = time.monotonic() + budget
    for attempt in attempts:
        left = deadline - time.monotonic()
        if left <= 0:
            return None
        signal.signal(signal.SIGALRM, _alarm)
        signal.setitimer(signal.ITIMER_REAL, left)
        try:
            if attempt(d) == 0:
                return True
        except Timeout:
            return None
        except Exception:
            pass
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
    return None


# ----- the checks -------------------------------------------------------------------------


def mp_of(pair):
    return mpmath.mpf(pair[0]), mpmath.mpf(pair[1])


def in_enclosure(v, enc, slack):
    (rlo, rhi), (ilo, ihi) = mp_of(enc["re"]), mp_of(enc["im"])
    return rlo - slack <= v.real <= rhi + slack and ilo - slack <= v.imag <= ihi + slack


def fmt(v):
    return mpmath.nstr(v, 17) if v is not None else "None"


class Report:
    def __init__(self):
        self.cases = 0
        self.agree = 0
        self.sympy_undecided = 0
        self.lingrav_undecided = 0
        self.disagree = []
        self.values = 0
        self.mismatches = []
        self.imprecise = []
        self.unexpected = []
        self.undecided_list = []


class Ref:
    """SymPy's value of one expression at one point: fast first, precise on demand."""

    def __init__(self, num, point):
        self.num, self.point = num, point
        self.value = num.at(point)
        self.is_precise = False

    def refine(self):
        if not self.is_precise:
            self.value = self.num.precise(self.point)
            self.is_precise = True
        return self.value

    def magnitude(self):
        return abs(self.value) if self.value is not None else 0


def slack(ref, scale):
    """How far outside an enclosure SymPy's own error may put its value."""
    if ref.is_precise:
        return max(mpmath.mpf(10) ** -25 * abs(ref.value), ZERO_REL * max(scale, 1))  # 30 digits
    return mpmath.mpf(10) ** -(DPS - 20) * max(scale, 1)  # rounding noise of terms of size scale


def judge(lingrav, ref, scale_refs):
    """'ok', 'imprecise' (lingrav's midpoint is off, its enclosure is right), 'outside' or 'none'."""
    v = ref.value
    if v is None:
        return "none"
    scale = max([abs(v)] + [r.magnitude() for r in scale_refs])
    if not in_enclosure(v, lingrav, slack(ref, scale)):
        return "outside"
    if abs(mpmath.mpc(*lingrav["f64"]) - v) > REL * max(scale, 1e-12):
        return "imprecise"
    return "ok"


def check_value(rep, where, lingrav, ref, scale_refs=()):
    """Compares one lingrav enclosure (JSON) with SymPy's value; `scale_refs` set the size of
    the terms (for a difference: both sides)."""
    rep.values += 1
    if lingrav is None:
        rep.mismatches.append(f"{where}: lingrav cannot evaluate it, SymPy gives {fmt(ref.value)}")
        return
    verdict = judge(lingrav, ref, scale_refs)
    if verdict != "ok":
        ref.refine()
        verdict = judge(lingrav, ref, scale_refs)
    if verdict == "none":
        rep.mismatches.append(f"{where}: SymPy cannot evaluate it, lingrav gives {lingrav['f64']}")
    elif verdict == "outside":
        rep.mismatches.append(
            f"{where}: SymPy value {fmt(ref.value)} lies outside lingrav's certified enclosure "
            f"re {lingrav['re']} im {lingrav['im']}"
        )
    elif verdict == "imprecise":
        rep.imprecise.append(f"{where}: f64 {lingrav['f64']} vs SymPy {fmt(ref.value)} (inside a wide enclosure)")


def same_value(a, b, scale_refs=()):
    """True if two SymPy values of equal expressions agree to their precision."""
    if a.value is None or b.value is None:
        return False
    scale = max([a.magnitude(), b.magnitude()] + [r.magnitude() for r in scale_refs])
    if a.is_precise and b.is_precise:
        tol = max(mpmath.mpf(10) ** -25 * max(a.magnitude(), b.magnitude()), ZERO_REL * max(scale, 1))
        return abs(a.value - b.value) <= tol
    return abs(a.value - b.value) <= mpmath.mpf(10) ** -(DPS - 20) * max(scale, 1)


def check_case(rep, case, budget, rng):
    rep.cases += 1
    cid = case["id"]
    lhs, rhs = to_sympy(case["lhs"]), to_sympy(case["rhs"])
    x = sym(case["deriv_var"])
    n_lhs, n_rhs, n_diff, n_deriv = Numeric(lhs), Numeric(rhs), Numeric(lhs - rhs), Numeric(sympy.diff(lhs, x))
    printed = [
        ("canonical text of lhs", Numeric(to_sympy(case["canon_lhs"])), "lhs"),
        ("canonical text of lhs - rhs", Numeric(to_sympy(case["canon_diff"])), "diff"),
        ("canonical text of the derivative", Numeric(to_sympy(case["canon_deriv"])), "deriv"),
    ]

    # Values at the given points.
    for i, (pt, vals) in enumerate(zip(case["points"], case["values"])):
        refs = {"lhs": Ref(n_lhs, pt), "rhs": Ref(n_rhs, pt), "diff": Ref(n_diff, pt), "deriv": Ref(n_deriv, pt)}
        sides = (refs["lhs"], refs["rhs"])
        at = f"at point {i}"
        check_value(rep, f"{cid} lhs {at}", vals["lhs"], refs["lhs"])
        check_value(rep, f"{cid} rhs {at}", vals["rhs"], refs["rhs"])
        check_value(rep, f"{cid} canonical text of lhs, reparsed by lingrav, {at}", vals["canon"], refs["lhs"])
        check_value(rep, f"{cid} lhs - rhs {at}", vals["diff"], refs["diff"], sides)
        check_value(rep, f"{cid} d_{x}(lhs) {at}", vals["deriv"], refs["deriv"])
        # Printing: lingrav's texts, read by SymPy, equal the originals.
        for what, num, original in printed:
            rep.values += 1
            mine, ref = Ref(num, pt), refs[original]
            scale_refs = sides if original == "diff" else ()
            if not same_value(mine, ref, scale_refs):
                mine.refine()
                ref.refine()
                if not same_value(mine, ref, scale_refs):
                    rep.mismatches.append(
                        f"{cid} {what} {at}: SymPy reads {fmt(mine.value)}, the original is {fmt(ref.value)}"
                    )

    # SymPy's verdict on lhs - rhs: numeric first (cheap and decisive when nonzero), confirmed
    # precisely before it can contradict lingrav.
    label = case["verdict"]["label"]
    sympy_verdict = None
    for _ in range(4):
        pt = {s: rng.choice([-1, 1]) * rng.uniform(0.25, 2.0) for s in SYMBOLS}
        d, sides = Ref(n_diff, pt), (Ref(n_lhs, pt), Ref(n_rhs, pt))
        if not clearly_nonzero(d.value, max(r.magnitude() for r in sides)):
            continue
        if label == "zero" and not precisely_nonzero(d.refine(), max(r.magnitude() for r in sides)):
            continue
        sympy_verdict = ("nonzero", pt, d.value)
        break
    if sympy_verdict is None:
        proved = symbolic_zero(lhs - rhs, budget)
        sympy_verdict = ("zero",) if proved else ("undecided",)

    verdict = case["verdict"]
    problems = []
    if label == "zero":
        if sympy_verdict[0] == "nonzero":
            _, pt, v = sympy_verdict
            problems.append(f"lingrav proves zero, but SymPy's lhs - rhs = {fmt(v)} at {pt}")
    elif label == "nonzero":
        w = verdict["witness"]
        d, sides = Ref(n_diff, w), (Ref(n_lhs, w), Ref(n_rhs, w))
        scale = max(r.magnitude() for r in sides)
        ok = clearly_nonzero(d.value, scale) and in_enclosure(d.value, verdict["value"], slack(d, scale))
        if not ok:
            d.refine()
            ok = precisely_nonzero(d.value, scale) and in_enclosure(d.value, verdict["value"], slack(d, scale))
        if not precisely_nonzero(d.value, scale):
            problems.append(f"lingrav's witness {w} is not a witness: SymPy's lhs - rhs there is {fmt(d.value)}")
        elif not ok:
            problems.append(
                f"at lingrav's witness {w}, SymPy's lhs - rhs = {fmt(d.value)} lies outside the certified "
                f"enclosure re {verdict['value']['re']} im {verdict['value']['im']}"
            )
        if sympy_verdict[0] == "zero":
            problems.append("SymPy simplifies lhs - rhs to 0, lingrav certifies it nonzero")
    if problems:
        rep.disagree.append((case, problems))
    elif label == "undecided":
        rep.lingrav_undecided += 1
        rep.undecided_list.append(f"{cid}: lingrav undecided ({verdict['reason']}); SymPy: {sympy_verdict[0]}")
    elif sympy_verdict[0] == "undecided":
        rep.sympy_undecided += 1
        rep.undecided_list.append(f"{cid}: SymPy undecided within {budget} s; lingrav: {label}")
    else:
        rep.agree += 1
    if case.get("expect") and case["expect"] != label:
        rep.unexpected.append(f"{cid} ({case['note']}): constructed {case['expect']}, lingrav says {label}")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("corpus", help="JSON-lines file written by tests/sympy_cross.rs")
    ap.add_argument("--budget", type=float, default=3.0, help="seconds of symbolic simplification per case")
    ap.add_argument("--seed", type=int, default=20250101, help="seed of SymPy's own random points")
    args = ap.parse_args()
    # All arithmetic on values, differences included, at DPS digits.
    mpmath.mp.dps = DPS
    rng = random.Random(args.seed)
    rep = Report()
    start = time.monotonic()
    try:
        with open(args.corpus) as f:
            cases = [json.loads(line) for line in f if line.strip()]
    except (OSError, ValueError) as e:
        print(f"cannot read the corpus {args.corpus}: {e}", file=sys.stderr)
        return 2
    for case in cases:
        try:
            check_case(rep, case, args.budget, rng)
        except SyntaxErr as e:
            rep.disagree.append((case, [f"SymPy side cannot read a text: {e}"]))
        except Exception as e:  # a failure of the check itself is reported with its case
            rep.disagree.append((case, [f"the SymPy side failed: {type(e).__name__}: {e}"]))
    elapsed = time.monotonic() - start

    for line in rep.undecided_list:
        print(f"  undecided: {line}")
    for line in rep.unexpected:
        print(f"  unexpected lingrav verdict: {line}")
    for line in rep.imprecise:
        print(f"  imprecise: {line}")
    for case, problems in rep.disagree:
        print(f"DISAGREE {case['id']} ({case['note']})")
        print(f"  lhs: {case['lhs']}")
        print(f"  rhs: {case['rhs']}")
        print(f"  lingrav's canonical lhs - rhs: {case['canon_diff']}")
        for p in problems:
            print(f"  {p}")
    for m in rep.mismatches:
        print(f"VALUE MISMATCH {m}")
    print(
        f"sympy cross-check: {rep.cases} cases, {rep.agree} verdicts agree, "
        f"{rep.sympy_undecided} sympy-undecided, {len(rep.disagree)} disagree; "
        f"{rep.lingrav_undecided} lingrav-undecided, {len(rep.unexpected)} unexpected lingrav verdicts; "
        f"{rep.values} values compared, {len(rep.mismatches)} mismatches, {len(rep.imprecise)} imprecise "
        f"({elapsed:.1f} s)"
    )
    return 1 if rep.disagree or rep.mismatches else 0


if __name__ == "__main__":
    sys.exit(main())
