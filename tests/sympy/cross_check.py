#!/usr/bin/env python3
"""Judge lingrav's claims on a corpus with SymPy and mpmath (run by tests/sympy_cross.rs).

Input: a JSON-lines file, one case per line, written by the Rust test: the texts `lhs` and
`rhs` in lingrav's input syntax, lingrav's canonical texts (`canon_lhs`, `canon_diff`,
`canon_deriv`), lingrav's verdict on lhs - rhs (with its witness point and certified
enclosure when nonzero), and certified enclosures of five values at each of a few points.

Rules. The texts are converted to SymPy by a parser of lingrav's syntax (not by string
replacement), so `^`, exact decimals such as `7e-25`, primes `F'(u)` and operators `d_x_y(f)`
mean exactly what they mean to lingrav. Then:

- Verdict. SymPy's own verdict on lhs - rhs is "nonzero" when its value at some random point,
  computed with mpmath at 50 digits, is clearly nonzero; otherwise "zero" when a symbolic
  simplification reaches 0 within the per-case time budget; otherwise "undecided" (counted,
  never a disagreement). A disagreement is a contradiction only: lingrav says zero and SymPy's
  value is clearly nonzero; lingrav says nonzero but SymPy's value at lingrav's own witness is
  not clearly nonzero or lies outside lingrav's certified enclosure; or SymPy proves zero what
  lingrav certifies nonzero.
- Values. At every point, SymPy's value (mpmath, 50 digits) must lie in lingrav's certified
  enclosure, and the midpoint lingrav reports as its f64 value must be within a relative 1e-9.
  A midpoint off by more than that inside a correct but wide enclosure is counted as
  "imprecise", not as a disagreement. SymPy also evaluates lingrav's printed canonical texts,
  which must equal the originals (a printing bug shows up here).

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

DPS = 50
REL = 1e-9
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
    """Evaluates a SymPy expression at points with mpmath, at DPS digits."""

    def __init__(self, e):
        c = concrete(e)
        self.syms = sorted(c.free_symbols, key=lambda s: s.name)
        self.fn = sympy.lambdify(self.syms, c, modules="mpmath")

    def at(self, point):
        args = [mpmath.mpf(point.get(s.name, 0.7)) for s in self.syms]
        try:
            return mpmath.mpc(self.fn(*args))
        except (ZeroDivisionError, ValueError, OverflowError):
            return None


def clearly_nonzero(v, scale):
    return v is not None and abs(v) > mpmath.mpf(10) ** -30 * max(scale, 1)


# ----- symbolic zero test -----------------------------------------------------------------


class Timeout(BaseException):
    """Raised by the alarm; a BaseException so that SymPy's `except Exception` lets it pass."""


def _alarm(signum, frame):
    raise Timeout()


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


def check_value(rep, case, what, point_index, lingrav, ref, scale):
    """Compares one lingrav enclosure (JSON) with SymPy's value `ref`."""
    rep.values += 1
    where = f"{case['id']} {what} at point {point_index}"
    if ref is None:
        rep.mismatches.append(f"{where}: SymPy cannot evaluate it, lingrav gives {lingrav}")
        return
    if lingrav is None:
        rep.mismatches.append(f"{where}: lingrav cannot evaluate it, SymPy gives {fmt(ref)}")
        return
    slack = mpmath.mpf(10) ** -25 * max(scale, 1)
    if not in_enclosure(ref, lingrav, slack):
        rep.mismatches.append(
            f"{where}: SymPy value {fmt(ref)} lies outside lingrav's certified enclosure "
            f"re {lingrav['re']} im {lingrav['im']}"
        )
        return
    mid = mpmath.mpc(*lingrav["f64"])
    tol = REL * max(scale, 1e-12)
    if abs(mid - ref) > tol:
        rep.imprecise.append(f"{where}: f64 {lingrav['f64']} vs SymPy {fmt(ref)} (inside a wide enclosure)")


def check_case(rep, case, budget, rng):
    rep.cases += 1
    cid = case["id"]
    lhs, rhs = to_sympy(case["lhs"]), to_sympy(case["rhs"])
    canon_lhs, canon_diff = to_sympy(case["canon_lhs"]), to_sympy(case["canon_diff"])
    canon_deriv = to_sympy(case["canon_deriv"])
    deriv = sympy.diff(lhs, sym(case["deriv_var"]))
    n_lhs, n_rhs = Numeric(lhs), Numeric(rhs)
    n_canon, n_cdiff, n_cderiv, n_deriv = Numeric(canon_lhs), Numeric(canon_diff), Numeric(canon_deriv), Numeric(deriv)

    # Values at the given points.
    for i, (pt, vals) in enumerate(zip(case["points"], case["values"])):
        vl, vr, vd = n_lhs.at(pt), n_rhs.at(pt), n_deriv.at(pt)
        sl = abs(vl) if vl is not None else 1
        sr = abs(vr) if vr is not None else 1
        diff = vl - vr if vl is not None and vr is not None else None
        check_value(rep, case, "lhs", i, vals["lhs"], vl, sl)
        check_value(rep, case, "rhs", i, vals["rhs"], vr, sr)
        check_value(rep, case, "canonical text of lhs (reparsed by lingrav)", i, vals["canon"], vl, sl)
        check_value(rep, case, "lhs - rhs", i, vals["diff"], diff, max(sl, sr))
        check_value(rep, case, f"d_{case['deriv_var']}(lhs)", i, vals["deriv"], vd, abs(vd) if vd is not None else 1)
        # Printing: lingrav's texts, read by SymPy, equal the originals.
        for what, num, ref, scale in [
            ("canonical text of lhs", n_canon, vl, sl),
            ("canonical text of lhs - rhs", n_cdiff, diff, max(sl, sr)),
            ("canonical text of the derivative", n_cderiv, vd, abs(vd) if vd is not None else 1),
        ]:
            v = num.at(pt)
            rep.values += 1
            if v is None or ref is None or abs(v - ref) > mpmath.mpf(10) ** -30 * max(scale, 1):
                rep.mismatches.append(f"{cid} {what} at point {i}: SymPy reads {fmt(v)}, the original is {fmt(ref)}")

    # SymPy's verdict on lhs - rhs: numeric first (cheap and decisive when nonzero).
    sympy_verdict = None
    for _ in range(4):
        pt = {s: rng.choice([-1, 1]) * rng.uniform(0.25, 2.0) for s in SYMBOLS}
        vl, vr = n_lhs.at(pt), n_rhs.at(pt)
        if vl is None or vr is None:
            continue
        if clearly_nonzero(vl - vr, max(abs(vl), abs(vr))):
            sympy_verdict = ("nonzero", pt, vl - vr)
            break
    if sympy_verdict is None:
        proved = symbolic_zero(lhs - rhs, budget)
        sympy_verdict = ("zero",) if proved else ("undecided",)

    verdict = case["verdict"]
    label = verdict["label"]
    problems = []
    if label == "zero":
        if sympy_verdict[0] == "nonzero":
            _, pt, v = sympy_verdict
            problems.append(f"lingrav proves zero, but SymPy's lhs - rhs = {fmt(v)} at {pt}")
    elif label == "nonzero":
        w = verdict["witness"]
        vl, vr = n_lhs.at(w), n_rhs.at(w)
        v = vl - vr if vl is not None and vr is not None else None
        scale = max(abs(vl), abs(vr)) if v is not None else 1
        if not clearly_nonzero(v, scale):
            problems.append(f"lingrav's witness {w} is not a witness: SymPy's lhs - rhs there is {fmt(v)}")
        elif not in_enclosure(v, verdict["value"], mpmath.mpf(10) ** -25 * max(scale, 1)):
            problems.append(
                f"at lingrav's witness {w}, SymPy's lhs - rhs = {fmt(v)} lies outside the certified "
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
