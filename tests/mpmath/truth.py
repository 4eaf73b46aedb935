#!/usr/bin/env python3
"""The numerical truth for the soundness fuzzer (run by tests/soundness.rs).

Input on stdin: JSON lines, one pair each:
  {"id": 17, "class": "identity" | "near", "a": "...", "b": "...",
   "witness": null | {"point": {"x": 0.5, ...}, "re": [lo, hi], "im": [lo, hi]}}
Output on stdout: one JSON line per input line, in order:
  {"id": 17, "truth": "zero" | "nonzero" | "unclear" | "undefined",
   "points": ["zero", "nonzero", ...], "witness": null | "inside" | "outside" | "undefined",
   "detail": "..."}
then a last line {"done": N}.

Rules. A and B are parsed from lingrav's input syntax by a small parser (not by string
replacement), so `^`, exact decimals such as `7e-310`, primes `F'(u)` and the derivative
operator `d_x_y(f)` mean what they mean to lingrav, and evaluated with mpmath at 50 digits
at a few seeded points (each symbol in +-[0.3, 1.7]), on principal branches (mpmath returns
complex values for the log or a root of a negative number, as lingrav does).

Alongside each value the evaluator carries a magnitude (sums add the magnitudes of their
terms, products multiply them; see `ev`), the size against which cancellation is measured,
and the value is computed again at 80 digits. At a point the difference A - B is:
- "zero" (consistent with 0) when it is below 10^-40 of the magnitude at 50 digits and below
  10^-70 at 80 digits: rounding noise;
- "nonzero" when the 50- and 80-digit values agree to 8 digits and it is at least 10^-46 of
  the magnitude (10^-40 relative survives with digits to spare);
- "unclear" in between, "undefined" when A or B cannot be evaluated there (a pole, or an
  argument of exp or sin beyond 10^4).
Rational constant subexpressions (1 + 10^-40, 3e300*7e-310) are folded exactly first.
A pair is "nonzero" when some point is nonzero (one point proves A - B is not identically
zero), "zero" when every evaluable point is zero, "undefined" when no point is evaluable and
"unclear" otherwise.

Arbitrary functions get the samples below, the same as on the Rust side; their derivatives
F'(u), F''(u) are taken by mpmath's numerical differentiation at the working precision.

A lingrav witness (certified nonzero) is checked too: the 80-digit value of A - B at the
witness point must lie inside lingrav's certified enclosure.

Exit status 0, or 2 on bad input (a line that does not parse is reported and stops the run).
"""

import json
import random
import sys
from fractions import Fraction

import mpmath
from mpmath import mp

DPS = 50
REF_DPS = 80
POINTS = 3
# Relative to the largest operand of a sum met on the way (`scale`): a difference below
# ZERO_REL_80 at 80 digits and ZERO_REL_50 at 50 digits is consistent with 0 (rounding noise);
# one that the two precisions agree on to NONZERO_AGREE digits and that is at least
# NONZERO_REL is certainly not 0.
ZERO_REL_80 = mpmath.mpf(10) ** -70
ZERO_REL_50 = mpmath.mpf(10) ** -40
NONZERO_AGREE = 8
NONZERO_REL = mpmath.mpf(10) ** -46
WITNESS_SLACK = mpmath.mpf(10) ** -70
# Largest |argument| of sin, cos, tan, exp, sinh, cosh, tanh that is evaluated.
MAX_ARG = 10**4
SAMPLE_VAR = "u"
SAMPLES = {"F": "exp(-u^2/4)*(1 + 2*u/7)", "G": "sin(3*u/4)/(u^2 + 2)"}
FUNCS = {
    "sin": mpmath.sin,
    "cos": mpmath.cos,
    "tan": mpmath.tan,
    "exp": mpmath.exp,
    "log": mpmath.log,
    "sqrt": mpmath.sqrt,
    "sinh": mpmath.sinh,
    "cosh": mpmath.cosh,
    "tanh": mpmath.tanh,
    "atan": mpmath.atan,
    # lingrav builds abs only of arguments it shows real; a complex one is undefined here.
    "abs": lambda a: real_only(a, "abs", mpmath.fabs),
}


def real_only(a, name, f):
    if isinstance(a, mpmath.mpc):
        if a.imag != 0:
            raise Undefined(f"{name} of a complex number")
        a = a.real
    return f(a)


def atan2(y, x):
    """mpmath's atan2 of real arguments, undefined (as in lingrav) on the cut x <= 0, y = 0."""
    y = real_only(y, "atan2", lambda v: v)
    x = real_only(x, "atan2", lambda v: v)
    if is_zero(y) and x <= 0:
        raise Undefined("atan2 on its cut")
    return mpmath.atan2(y, x)


class SyntaxErr(Exception):
    pass


class Undefined(Exception):
    pass


# ----- lingrav syntax to a tree ---------------------------------------------------------
# Nodes: ("num", Fraction) ("pi",) ("sym", name) ("add"|"sub"|"mul"|"div"|"pow", a, b)
# ("neg", a) ("call", name, a) ("func", name, primes, a) ("d", [vars], a)
# ("atan2", y, x)


def tokenize(src):
    toks = []
    i, n = 0, len(src)
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
        elif c in "+-*/^(),":
            toks.append(("op", c))
            i += 1
        else:
            raise SyntaxErr(f"unexpected {c!r} in {src!r}")
    toks.append(("end", None))
    return toks


class Parser:
    """Lingrav's precedence: + - < * / < unary sign < ^ (right-associative)."""

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
            e = ("add" if op == "+" else "sub", e, self.product())
        return e

    def product(self):
        e = self.unary()
        while self.peek() in (("op", "*"), ("op", "/")):
            op = self.take()[1]
            e = ("mul" if op == "*" else "div", e, self.unary())
        return e

    def unary(self):
        if self.peek() == ("op", "-"):
            self.take()
            return ("neg", self.unary())
        if self.peek() == ("op", "+"):
            self.take()
            return self.unary()
        return self.power()

    def power(self):
        base = self.primary()
        if self.peek() == ("op", "^"):
            self.take()
            return ("pow", base, self.exponent())
        return base

    def exponent(self):
        if self.peek() == ("op", "-"):
            self.take()
            return ("neg", self.exponent())
        if self.peek() == ("op", "+"):
            self.take()
            return self.exponent()
        return self.power()

    def primary(self):
        kind, val = self.take()
        if kind == "num":
            return ("num", Fraction(val))
        if kind == "op" and val == "(":
            e = self.sum()
            self.expect("op", ")")
            return e
        if kind == "name":
            name, primes = val
            if self.peek() == ("op", "("):
                self.take()
                arg = self.sum()
                if name == "atan2" and not primes:
                    self.expect("op", ",")
                    second = self.sum()
                    self.expect("op", ")")
                    return ("atan2", arg, second)
                self.expect("op", ")")
                if name.startswith("d_"):
                    return ("d", name[2:].split("_"), arg)
                if name in FUNCS and not primes:
                    return ("call", name, arg)
                return ("func", name, primes, arg)
            if primes:
                raise SyntaxErr(f"primes without a call in {self.src!r}")
            if name == "pi":
                return ("pi",)
            return ("sym", name)
        raise SyntaxErr(f"unexpected token {val!r} in {self.src!r}")


def symbols(node, out):
    tag = node[0]
    if tag == "sym":
        out.add(node[1])
    elif tag in ("add", "sub", "mul", "div", "pow", "atan2"):
        symbols(node[1], out)
        symbols(node[2], out)
    elif tag in ("neg",):
        symbols(node[1], out)
    elif tag == "call":
        symbols(node[2], out)
    elif tag == "func":
        symbols(node[3], out)
    elif tag == "d":
        out.update(node[1])
        symbols(node[2], out)
    return out


# ----- evaluation ---------------------------------------------------------------------------

SAMPLE_TREES = {name: Parser(text).parse() for name, text in SAMPLES.items()}


def num(q):
    return mpmath.mpf(q.numerator) / q.denominator


def is_zero(v):
    return v == 0


def power(base, expo_node, env):
    # Exact rational exponents: integer powers exactly, others on the principal branch.
    q = constant_fraction(expo_node)
    b, mb = ev(base, env)
    if q is not None and q.denominator == 1:
        n = q.numerator
        if is_zero(b):
            if n < 0:
                raise Undefined("0 to a negative power")
            return b**n, mb**n
        v = b**n
        return v, abs(v) * (mb / abs(b)) ** abs(n)
    if is_zero(b):
        if q is not None and q > 0:
            return mpmath.mpf(0), mpmath.mpf(0)
        raise Undefined("0 to a non-positive or symbolic power")
    e = num(q) if q is not None else ev(expo_node, env)[0]
    v = mpmath.exp(e * mpmath.log(b))
    return v, abs(v) * (mb / abs(b)) ** abs(e)


# Derivatives of the built-in functions, for the propagation of magnitudes.
DERIVS = {
    "sin": mpmath.cos,
    "cos": mpmath.sin,
    "tan": lambda a: 1 + mpmath.tan(a) ** 2,
    "exp": mpmath.exp,
    "log": lambda a: 1 / a,
    "sqrt": lambda a: 1 / (2 * mpmath.sqrt(a)),
    "sinh": mpmath.cosh,
    "cosh": mpmath.sinh,
    "tanh": lambda a: 1 - mpmath.tanh(a) ** 2,
    "atan": lambda a: 1 / (1 + a**2),
    "abs": lambda a: 1,
}


def constant_fraction(node):
    """The exact value of a rational constant tree (numbers, + - * / and integer powers)."""
    tag = node[0]
    if tag == "num":
        return node[1]
    if tag == "neg":
        v = constant_fraction(node[1])
        return None if v is None else -v
    if tag in ("add", "sub", "mul", "div"):
        a, b = constant_fraction(node[1]), constant_fraction(node[2])
        if a is None or b is None:
            return None
        if tag == "add":
            return a + b
        if tag == "sub":
            return a - b
        if tag == "mul":
            return a * b
        return None if b == 0 else a / b
    if tag == "pow":
        a, b = constant_fraction(node[1]), constant_fraction(node[2])
        if a is None or b is None or b.denominator != 1 or abs(b.numerator) > 5000:
            return None
        if a == 0 and b.numerator < 0:
            return None
        return a**b.numerator
    return None


def ev(node, env):
    """(value, magnitude): the value, and the size against which its rounding error is
    measured: sums add the magnitudes of their terms (cancellation loses digits relative to
    them), products multiply them, a function f(a) has |f(a)| + |f'(a)| * magnitude(a)."""
    tag = node[0]
    if tag == "num":
        v = num(node[1])
        return v, abs(v)
    if tag == "pi":
        return +mpmath.pi, +mpmath.pi
    if tag == "sym":
        v = env[node[1]]
        return v, abs(v)
    if tag == "neg":
        v, m = ev(node[1], env)
        return -v, m
    if tag in ("add", "sub"):
        (a, ma), (b, mb) = ev(node[1], env), ev(node[2], env)
        return (a + b if tag == "add" else a - b), ma + mb
    if tag == "mul":
        (a, ma), (b, mb) = ev(node[1], env), ev(node[2], env)
        return a * b, ma * mb
    if tag == "div":
        d, md = ev(node[2], env)
        if is_zero(d):
            raise Undefined("division by zero")
        a, ma = ev(node[1], env)
        # Relative errors add, as for a product: |a/d| (ma/|a|) (md/|d|).
        return a / d, ma * md / abs(d) ** 2
    if tag == "pow":
        return power(node[1], node[2], env)
    if tag == "call":
        name = node[1]
        a, ma = ev(node[2], env)
        if name == "log" and is_zero(a):
            raise Undefined("log(0)")
        if name not in ("log", "sqrt") and abs(a) > MAX_ARG:
            # exp(exp(exp(9))) and sin of it would take mpmath forever; such a point is
            # left out, as lingrav's f64 enclosures leave it out.
            raise Undefined("argument too large")
        if name == "sqrt" and is_zero(a):
            return mpmath.mpf(0), mpmath.sqrt(ma)
        v = FUNCS[name](a)
        if isinstance(v, mpmath.mpc) and v.imag == 0:
            v = v.real
        return v, abs(v) + abs(DERIVS[name](a)) * ma
    if tag == "atan2":
        (y, my), (x, mx) = ev(node[1], env), ev(node[2], env)
        v = atan2(y, x)
        # |d atan2| = |x dy - y dx| / (x^2 + y^2)
        return v, abs(v) + (abs(x) * my + abs(y) * mx) / (x * x + y * y)
    if tag == "func":
        name, primes, arg = node[1], node[2], node[3]
        if name not in SAMPLE_TREES:
            raise SyntaxErr(f"no sample for the function {name}")
        a, ma = ev(arg, env)
        tree = SAMPLE_TREES[name]
        f = lambda s: ev(tree, {SAMPLE_VAR: s})[0]  # noqa: E731
        v = f(a) if primes == 0 else mpmath.diff(f, a, primes)
        # The samples' derivatives are of order 1 on the sampled range.
        return v, abs(v) + ma
    if tag == "d":
        v = derivative(node[2], node[1], env)
        return v, abs(v) + ev(node[2], env)[1]
    raise SyntaxErr(f"unknown node {tag}")


def derivative(node, variables, env):
    if not variables:
        return ev(node, env)[0]
    v, rest = variables[0], variables[1:]

    def f(s):
        e = dict(env)
        e[v] = s
        return derivative(node, rest, e)

    if not rest:
        return mpmath.diff(lambda s: ev(node, {**env, v: s})[0], env[v])

    return mpmath.diff(f, env[v])


def value(node, env, dps):
    """(value, magnitude) at `dps` digits (see `ev`)."""
    with mp.workdps(dps):
        e = {k: mpmath.mpf(v) for k, v in env.items()}
        try:
            v, m = ev(node, e)
        except (Undefined, ZeroDivisionError, ValueError, OverflowError) as err:
            raise Undefined(str(err)) from err
        if not (mpmath.isfinite(v) and mpmath.isfinite(m)):
            raise Undefined("not finite")
        return v, max(m, abs(v))


def classify(a, b, env):
    """Label of A - B at one point: "zero" (consistent with 0), "nonzero" (certainly not 0),
    "unclear" or "undefined"."""
    try:
        (a50, _), (b50, _) = value(a, env, DPS), value(b, env, DPS)
        (a80, sa), (b80, sb) = value(a, env, REF_DPS), value(b, env, REF_DPS)
    except Undefined:
        return "undefined"
    with mp.workdps(REF_DPS):
        d50, d80 = a50 - b50, a80 - b80
        scale = max(sa, sb)
        if abs(d80) <= scale * ZERO_REL_80 and abs(d50) <= scale * ZERO_REL_50:
            return "zero"
        err = abs(d50 - d80)
        agree = float("inf") if err == 0 else float(mpmath.log10(abs(d80) / err))
        if agree >= NONZERO_AGREE and abs(d80) >= scale * NONZERO_REL:
            return "nonzero"
    return "unclear"


def check_witness(a, b, w, names):
    """Is the 80-digit value of A - B inside lingrav's enclosure (widened by the 80-digit
    rounding noise, WITNESS_SLACK relative to the terms)?"""
    env = {s: 0.7 for s in names}
    env.update(w["point"])
    try:
        with mp.workdps(REF_DPS):
            (va, sa), (vb, sb) = value(a, env, REF_DPS), value(b, env, REF_DPS)
            d = mpmath.mpc(va - vb)
            slack = max(sa, sb) * WITNESS_SLACK
            re_lo, re_hi = w["re"]
            im_lo, im_hi = w["im"]
            inside = (
                re_lo - slack <= d.real <= re_hi + slack
                and im_lo - slack <= d.imag <= im_hi + slack
            )
    except Undefined:
        return "undefined", ""
    return ("inside" if inside else "outside"), mpmath.nstr(d, 20)


def fold(node):
    """The tree with every rational constant subtree replaced by its exact value, so that
    exact constants such as 1 + 10^-40 carry no rounding (and no cancellation scale)."""
    q = constant_fraction(node)
    if q is not None:
        return ("num", q)
    tag = node[0]
    if tag in ("add", "sub", "mul", "div", "pow", "atan2"):
        return (tag, fold(node[1]), fold(node[2]))
    if tag == "neg":
        return (tag, fold(node[1]))
    if tag == "call":
        return (tag, node[1], fold(node[2]))
    if tag == "func":
        return (tag, node[1], node[2], fold(node[3]))
    if tag == "d":
        return (tag, node[1], fold(node[2]))
    return node


def judge(rec, seed):
    a = fold(Parser(rec["a"]).parse())
    b = fold(Parser(rec["b"]).parse())
    names = sorted(symbols(a, set()) | symbols(b, set()))
    rng = random.Random(seed * 1_000_003 + rec["id"])
    labels = []
    for _ in range(POINTS):
        env = {}
        for s in names:
            mag = 0.3 + 1.4 * rng.random()
            env[s] = -mag if rng.random() < 0.5 else mag
        labels.append(classify(a, b, env))
    defined = [lab for lab in labels if lab != "undefined"]
    if "nonzero" in defined:
        truth = "nonzero"
    elif not defined:
        truth = "undefined"
    elif all(lab == "zero" for lab in defined):
        truth = "zero"
    else:
        truth = "unclear"
    out = {"id": rec["id"], "truth": truth, "points": labels, "witness": None}
    if rec.get("witness"):
        verdict, detail = check_witness(a, b, rec["witness"], names)
        out["witness"] = verdict
        out["detail"] = detail
    return out


def main():
    seed = int(sys.argv[1]) if len(sys.argv) > 1 else 0
    n = 0
    for line in sys.stdin:
        line = line.strip()
        if not line:
            continue
        rec = json.loads(line)
        try:
            out = judge(rec, seed)
        except SyntaxErr as err:
            print(json.dumps({"id": rec.get("id"), "error": str(err)}), flush=True)
            sys.exit(2)
        print(json.dumps(out))
        n += 1
    print(json.dumps({"done": n}), flush=True)


if __name__ == "__main__":
    main()
