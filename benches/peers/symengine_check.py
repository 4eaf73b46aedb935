#!/usr/bin/env python3
"""The checks of `lingrav check`, done with SymEngine, timed: the peer of issue 10.

SymEngine is a general-purpose computer-algebra library written in C++ (pip package
`symengine`, used here from Python). This script decides the same claims as `lingrav check`
on the same problem files, the way a competent SymEngine user would write them, and prints
per file every claim's verdict, the time spent in-process (from reading the file to the last
verdict; importing SymEngine excluded and printed separately) and the peak memory of the
process (resource.getrusage maxrss, which includes the Python interpreter and the library).

Every worked file is covered, with the formulas of the shared modules (generic over the
library; component names and claim keys are lingrav's, so verdicts compare one by one):

  flat files in t, x, y, z (benches/peers/linearized.py, shared with benches/check_sympy.py):
    G1 = R1 - 1/2 eta R1 with R1_mn = eta^{rs} R_{r m s n}, the Lorenz, TT and synchronous
    conditions, the 20 independent components of the linearized Riemann tensor (sign of MTW)
    for pure gauge, d^m T_mn for a source;
  files about a background, in any coordinates (benches/peers/curved.py): the background's
    own equations, dG + Lambda h - 8 pi dT by forward mode in eps through
    Gamma -> Riemann -> Ricci -> Einstein, the covariant Lorenz, synchronous and TT
    conditions, the first-order change of the source's divergence, and pure gauge by the
    linearized Riemann tensor when the background's Riemann tensor is proved zero here, else
    by the file's [gauge_vector];
  claims about the radiation of [[body]] and [binary] sources (benches/peers/radiation.py):
    the quadrupole luminosity, its time average (done here: trigonometric functions through
    exponentials, expanded, the terms without an oscillating exp(i w t) kept; a luminosity
    that is no such sum leaves the claim undecided, as lingrav does) and the polarizations of
    the TT-projected far field along the claimed direction.

SymEngine has no simplify, so each component is decided by normalising and expanding.
Every component is expanded first (0 is a proof) and then evaluated at a random point
(arbitrary functions replaced by the samples of the file, exact point, 200-bit arithmetic;
coordinates with a [domain] range taken near its inner edge, the others in +-[1/4, 2]):
clearly nonzero is "nonzero", as lingrav ends with a witness. "plain" mode stops there (two
more random points for what is left, then "undecided"). "tuned" mode (the default, used by
benches/engine_ratios.sh) first goes on with the strongest route we know, like
check_sympy.py's: every value of an arbitrary function (Q(t - r), Q''(t - r), ...) becomes an
independent symbol, sin and cos of each argument symbols S and C with C^2 = 1 - S^2 (tan is
S/C; sinh, cosh, tanh likewise with C^2 = 1 + S^2), every half-integer power b^(k/2) a power
R_b^k of a new symbol with R_b^2 = b, the expression is brought over a common denominator
(as_numer_denom) and the numerator expanded and reduced with these relations (even and odd
parts in R_b, then in each C, separately: all must vanish); failing that, the same with sin,
cos, tan and their hyperbolic cousins rewritten through exponentials of expanded arguments
(for arguments related otherwise, such as 2 w t and w t). Each step is an identity, so 0 is a
proof; a component that survives is "undecided".

Translation of the syntax: `^` is `**`; numbers are exact (`1.5e-3` is 3/2000); `d_x_y(f)`
is diff(f, x, y); `Q''(a)` is the second derivative of the undefined function Q at a, built
the way SymEngine's own chain rule writes it (Subs(Derivative(Q(_xi_1), _xi_1, _xi_1),
_xi_1, a)), so hand-written derivatives and those produced by diff combine.

Each file runs in its own child process (a fresh interpreter: the peak memory is that
file's), with a time limit and an address-space limit (RLIMIT_AS); a case that passes one is
reported as "timeout" or "out of memory", never left hanging. With --lingrav BIN (or
--lingrav-json DIR holding `lingrav check --format json` output as DIR/<file stem>.json)
every component's verdict is compared with lingrav's and any difference between two
decided verdicts, or a component of the peer's that lingrav does not list (the claims
differ), is printed as "MISMATCH" and makes the exit code 1; one that lingrav lists and the
peer lacks is noted "peer missing", and a claim that one side leaves undecided without
components (see above) is noted too, not a mismatch.

Usage:  python3 benches/peers/symengine_check.py [--mode plain|tuned] [--timeout S]
            [--max-memory MB] [--lingrav BIN | --lingrav-json DIR] [--summary FILE] FILES...
Needs Python 3.11+ and SymEngine (this script installs nothing): python3 -m pip install symengine
"""

import argparse
import json
import random
import resource
import subprocess
import sys
import time
import tomllib
from fractions import Fraction
from pathlib import Path

import curved
import radiation
from linearized import (COORDS_NAMES, Claim, Namespace, claims_components, status,
                        tensor)

_t0 = time.perf_counter()
import symengine as se  # noqa: E402  (timed on purpose)

IMPORT_SECONDS = time.perf_counter() - _t0

ZERO = se.Integer(0)
NONZERO_BELOW = 1e-12  # a numeric value at most this large is not called nonzero
PRECISION_BITS = 200
MORE_POINTS = 2  # further random points for a component that was not reduced to 0
_SHIFT = se.Symbol("_lingrav_peer_shift")
_ANY = se.Symbol("_lingrav_peer_any")

# --- lingrav syntax -> SymEngine -----------------------------------------------------------


def exact(text):
    """An exact SymEngine rational from a decimal text ('1.5e-3' is 3/2000)."""
    q = Fraction(text)
    return se.Integer(q.numerator) / se.Integer(q.denominator)


def prime(f, n, arg):
    """The n-th derivative of the undefined function f at arg, in SymEngine's chain-rule form.

    SymEngine's Python Subs constructor evaluates at once (and mishandles a non-symbol
    point), so the form is obtained from the chain rule itself: d^n/ds^n f(arg + s) at s = 0."""
    if n == 0:
        return f(arg)
    if isinstance(arg, se.Symbol):
        return se.diff(f(arg), arg, n)
    return se.diff(f(arg + _SHIFT), _SHIFT, n).xreplace({_SHIFT: ZERO})


class File:
    """A problem file read into SymEngine: coordinates, parameters (with their values),
    arbitrary functions (with their samples), defines, and the ranges of [domain]."""

    def __init__(self, path):
        self.doc = doc = tomllib.loads(path.read_text())
        self.names = doc.get("coordinates", COORDS_NAMES.split())
        self.coords = [se.Symbol(c) for c in self.names]
        self.ns = ns = Namespace(se, self.coords, exact, prime)
        self.values = {}
        for name, value in doc.get("parameters", {}).items():
            s = se.Symbol(name)
            ns[name] = s
            self.values[s] = exact(repr(value))
        u = se.Symbol("u")
        self.samples = {}
        for name, sample in doc.get("functions", {}).items():
            f = se.Function(name)
            ns[name] = f
            ns.functions[name] = f
            sub = Namespace(se, self.coords, exact, prime)
            sub["u"] = u
            self.samples[name] = (u, sub.evaluate(sample))
        for name, text in doc.get("define", {}).items():
            ns[name] = ns.evaluate(text)
        self.domain = {se.Symbol(c): tuple(Fraction(repr(x)) for x in lim)
                       for c, lim in doc.get("domain", {}).items()}

    def claims(self, decide):
        """[Claim] of the file, lingrav's order; decide(expr) gives a verdict (the
        pure-gauge route about a background needs one)."""
        doc, ns = self.doc, self.ns
        out = []
        if curved.is_curved(doc):
            def is_flat(exprs):
                return all(decide(e)[0] == "zero" for e in exprs)
            out += curved.claims_components(doc, ns, se, self.coords, is_flat)
        else:
            h = tensor(ns, doc.get("perturbation", {}), ZERO)
            source = tensor(ns, doc["source"], ZERO) if "source" in doc else None
            out += [Claim(*c) for c in claims_components(doc, h, source, se, self.coords)]
        if radiation.has_radiation_claims(doc):
            out += radiation.claims_components(doc, ns, se, time_average)
        return out


# --- verdicts ------------------------------------------------------------------------------


def function_values(expr):
    """The values of arbitrary functions in expr: {atom: (name, order, argument)}."""
    out = {}
    for s in expr.atoms(se.Subs):
        d = s.expr
        if isinstance(d, se.Derivative) and len(s.variables) == 1:
            out[s] = (str(d.expr.get_name()), len(d.variables), s.point[0])
    for d in expr.atoms(se.Derivative):  # Q'(u) with a bare symbol u
        f = d.expr
        if isinstance(f, se.FunctionSymbol) and isinstance(f.args[0], se.Symbol) \
                and not str(f.args[0]).startswith("_xi"):
            out[d] = (str(f.get_name()), len(d.variables), f.args[0])
    for f in expr.atoms(se.FunctionSymbol):
        if not any(str(s).startswith("_xi") for s in f.free_symbols):
            out[f] = (str(f.get_name()), 0, f.args[0])
    return out


def random_point(file, rng):
    """Exact random coordinates: in [a, a + min(b - a, 2)] for a [domain] range [a, b] (near
    its inner edge, where the fields are not small), else +-[1/4, 2]; the parameters at their
    values."""
    point = dict(file.values)
    for c in file.coords:
        if c in file.domain:
            a, b = file.domain[c]
            q = a + min(b - a, 2) * Fraction(rng.randint(1, 999), 1000)
        else:
            q = Fraction(rng.choice([-1, 1]) * rng.randint(250, 2000), 1000)
        point[c] = se.Integer(q.numerator) / se.Integer(q.denominator)
    return point


def numeric_value(expr, file, rng):
    """expr at a random point, functions by their samples, evaluated in PRECISION_BITS-bit
    arithmetic. None where it cannot be evaluated."""
    point = random_point(file, rng)
    replace = {}
    for atom, (name, n, arg) in function_values(expr).items():
        u, sample = file.samples[name]
        replace[atom] = se.diff(sample, u, n).xreplace({u: arg.xreplace(point)}) if n \
            else sample.xreplace({u: arg.xreplace(point)})
    try:
        v = complex(expr.xreplace(replace).xreplace(point).n(PRECISION_BITS, real=False))
    except (RuntimeError, TypeError, ValueError, ZeroDivisionError):
        return None
    return v if v == v else None  # NaN: a pole or 0/0 at the point


def _is_half_power(p):
    e = p.args[1]
    return isinstance(e, se.Rational) and not e.is_integer and (2 * e).is_integer


def _reduced_zero(expr, relations=()):
    """Common denominator, expand the numerator, reduce every R_b with R_b^2 = b (half-integer
    powers b^(k/2) become R_b^k), then every symbol C of `relations` (C, C^2) likewise."""
    roots = {}  # base b -> symbol R_b
    half = {}
    for p in expr.atoms(se.Pow):
        if _is_half_power(p):
            b = p.args[0]
            if b not in roots:
                roots[b] = se.Symbol(f"_R{len(roots)}")
            half[p] = roots[b] ** int(2 * p.args[1])
    num, _ = expr.xreplace(half).as_numer_denom()
    parts = [se.expand(num)]
    for r, b in [(r, b) for b, r in roots.items()] + list(relations):
        split = []
        for e in parts:
            if e == 0:
                continue
            if r not in e.free_symbols:
                split.append(e)
                continue
            flipped = e.xreplace({r: -r})
            for part in (se.expand((e + flipped) / 2), se.expand((e - flipped) / (2 * r))):
                even = {p: b ** (int(p.args[1]) // 2) for p in part.atoms(se.Pow)
                        if p.args[0] == r}
                split.append(se.expand(part.xreplace(even)))
        parts = split
    return all(e == 0 for e in parts)


def _trig_symbols(expr):
    """sin(a) -> S, cos(a) -> C with C^2 = 1 - S^2, tan(a) -> S/C, and sinh, cosh, tanh
    likewise with C^2 = 1 + S^2, one pair for each argument: (expr', [(C, C^2)])."""
    replace, relations = {}, []
    pairs = {}
    for kind, (s_f, c_f, t_f, sign) in {"": (se.sin, se.cos, se.tan, -1),
                                          "h": (se.sinh, se.cosh, se.tanh, 1)}.items():
        for f in (s_f, c_f, t_f):
            for atom in expr.atoms(type(f(_ANY))):
                a = atom.args[0]
                if (kind, a) not in pairs:
                    i = len(pairs)
                    s, c = se.Symbol(f"_S{kind}{i}"), se.Symbol(f"_C{kind}{i}")
                    pairs[(kind, a)] = (s, c)
                    relations.append((c, 1 + sign * s**2))
                s, c = pairs[(kind, a)]
                replace[atom] = s if f is s_f else c if f is c_f else s / c
    return (expr.xreplace(replace) if replace else expr), relations


def _trig_as_exp(expr):
    """sin, cos, tan, sinh, cosh, tanh rewritten through exp of expanded arguments (so that
    exp(a) exp(b) merges into exp(a + b)); None if there are none."""
    def e(a):
        return se.exp(se.expand(a))

    i = se.I
    rules = {se.sin: lambda a: (e(i * a) - e(-i * a)) / (2 * i),
             se.cos: lambda a: (e(i * a) + e(-i * a)) / 2,
             se.tan: lambda a: (e(i * a) - e(-i * a)) / (i * (e(i * a) + e(-i * a))),
             se.sinh: lambda a: (e(a) - e(-a)) / 2,
             se.cosh: lambda a: (e(a) + e(-a)) / 2,
             se.tanh: lambda a: (e(a) - e(-a)) / (e(a) + e(-a))}
    replace = {}
    for f, rule in rules.items():
        for atom in expr.atoms(type(f(_ANY))):
            replace[atom] = rule(atom.args[0])
    return expr.xreplace(replace) if replace else None


def reduces_to_zero(expr):
    """The tuned zero test: function values become independent symbols; then _reduced_zero
    with sin and cos of each argument as symbols S, C with C^2 = 1 - S^2; then, for arguments
    related otherwise (2a and a, t - z and t + z), _reduced_zero after rewriting trigonometric
    functions through exponentials."""
    names = {atom: se.Symbol(f"_F{i}") for i, atom in enumerate(function_values(expr))}
    e = expr.xreplace(names) if names else expr
    if _reduced_zero(*_trig_symbols(e)):
        return True
    rewritten = _trig_as_exp(e)
    return rewritten is not None and _reduced_zero(rewritten)


def verdict(expr, file, rng, tuned):
    """(verdict, detail): expand (0 is a proof); a numeric look at the expanded form (clearly
    nonzero ends it, as lingrav ends with a witness); tuned: then reduces_to_zero; then a
    numeric look at MORE_POINTS other points."""
    e = se.expand(expr)
    if e == 0:
        return "zero", None
    v = numeric_value(e, file, rng)
    if v is not None and abs(v) > NONZERO_BELOW:
        return "nonzero", f"{v:.6g} at a random point"
    if tuned and reduces_to_zero(e):
        return "zero", None
    for _ in range(MORE_POINTS):
        w = numeric_value(e, file, rng)
        if w is not None and abs(w) > NONZERO_BELOW:
            return "nonzero", f"{w:.6g} at a random point"
        v = w if v is None else v
    if v is None:
        return "undecided", "not reduced to 0; no numeric value at a random point"
    return "undecided", "not reduced to 0; numerically ~0"


def time_average(expr, t):
    """(average over all t, None) of expr when, with trigonometric functions through
    exponentials and expanded, every term is c exp(i w t + k) with c free of t and w real
    (the average keeps the terms with w = 0); else (None, why). A frequency with parameters
    is taken as nonzero, as lingrav does."""
    e = se.expand(_trig_as_exp(expr) or expr)
    kept = []
    for term in e.args if isinstance(e, se.Add) else [e]:
        factors = term.args if isinstance(term, se.Mul) else [term]
        expo = sum(f.args[1] for f in factors if isinstance(f, se.Pow) and f.args[0] == se.E)
        rest = se.Mul(*[f for f in factors
                        if not (isinstance(f, se.Pow) and f.args[0] == se.E)])
        if se.diff(rest, t) != 0:
            return None, "a term depends on the time other than through exp(i w t)"
        rate = se.expand(se.diff(expo, t)) if expo != 0 else ZERO
        if rate == 0:
            kept.append(term)
            continue
        if se.diff(rate, t) != 0:
            return None, "an exponent is not linear in the time"
        real = sum(k * se.sympify(c).as_real_imag()[0]
                   for k, c in rate.as_coefficients_dict().items())
        if se.expand(real) != 0:
            return None, "an exponential grows or decays in time"
    return se.Add(*kept), None


# --- one file, in the child ----------------------------------------------------------------


def run_one(path, tuned, quiet=False):
    """Every claim of one file, timed; prints a line per claim unless quiet. Returns the
    result (seconds, peak memory, verdicts)."""
    after_import_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    rng = random.Random(20240601)
    start = time.perf_counter()
    file = File(path)

    def decide(expr):
        return verdict(expr, file, rng, tuned)

    components, statuses = {}, []
    for claim in file.claims(decide):
        if claim.why:
            components[f"{claim.key}\t*"] = "undecided"
        vs = []
        for name, expr in claim.components:
            v, detail = decide(expr)
            vs.append(v)
            components[f"{claim.key}\t{name}"] = v
            if v == "undecided" and not quiet:
                print(f"      {claim.key} {name}: undecided: {detail}", flush=True)
        st = status(vs, bool(claim.expect_zero), claim.refutable)
        statuses.append((claim.key, st))
        counts = ", ".join(f"{vs.count(v)} {v}" for v in ("zero", "nonzero", "undecided")
                           if vs.count(v))
        if claim.why:
            counts = f"undecided: {claim.why}"
        if not quiet:
            print(f"    {st:<9} {claim.key:<20} {len(vs)} components: {counts}", flush=True)
    seconds = time.perf_counter() - start
    peak_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return {"seconds": seconds, "peak_kb": peak_kb, "after_import_kb": after_import_kb,
            "claims": statuses, "components": components}


def run_repeated(path, tuned, min_seconds):
    """run_one, printed as 'RESULT <json>' last. With min_seconds > 0 that first run is a
    warm-up, as in lingrav's timer (benches/check_files.rs), and the reported time is the
    median of further runs in the same process (quiet), at least one, until they add up to
    min_seconds (at most 1000 runs); the verdicts are the first run's."""
    result = run_one(path, tuned)
    times = [result["seconds"]]
    if min_seconds > 0:
        times = []
        while not times or (sum(times) < min_seconds and len(times) < 1000):
            times.append(run_one(path, tuned, quiet=True)["seconds"])
    times.sort()
    result["seconds"] = times[len(times) // 2]
    result["runs"] = len(times)
    result["peak_kb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print("RESULT " + json.dumps(result), flush=True)


def child_main(path, tuned, min_seconds):
    try:
        run_repeated(path, tuned, min_seconds)
    except MemoryError:
        print("OUT OF MEMORY", flush=True)
        return 4
    except RuntimeError as err:  # SymEngine reports std::bad_alloc as a RuntimeError
        if "alloc" in str(err).lower():
            print("OUT OF MEMORY", flush=True)
            return 4
        raise
    return 0


# --- the parent: one child per file, limits, comparison with lingrav ------------------------


def run_child(path, mode, timeout, max_memory_mb, quiet=False, min_seconds=0.0):
    """(outcome, result): outcome is 'ok', 'timeout', 'out of memory' or 'error'. The child's
    lines are echoed unless quiet. The child repeats the check in-process until its runs add
    up to min_seconds and reports their median."""
    def limit():
        if max_memory_mb:
            cap = max_memory_mb * 1024 * 1024
            resource.setrlimit(resource.RLIMIT_AS, (cap, cap))

    cmd = [sys.executable, str(Path(__file__).resolve()), "--child", "--mode", mode,
           "--min-seconds", str(min_seconds), str(path)]
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout,
                              preexec_fn=limit, check=False)
    except subprocess.TimeoutExpired as err:
        out = err.stdout.decode() if isinstance(err.stdout, bytes) else (err.stdout or "")
        if not quiet:
            sys.stdout.write(out)
        return "timeout", None
    result = None
    for line in proc.stdout.splitlines():
        if line.startswith("RESULT "):
            result = json.loads(line[len("RESULT "):])
        elif not quiet:
            print(line)
    if result is not None:
        return "ok", result
    if "OUT OF MEMORY" in proc.stdout or "MemoryError" in proc.stderr \
            or "bad_alloc" in proc.stderr or proc.returncode in (-9, 4):
        return "out of memory", None
    sys.stderr.write(proc.stderr[-2000:])
    return "error", None


def lingrav_components(text):
    """Per-component verdicts from `lingrav check --format json`, keyed "claim<TAB>component";
    a claim that lingrav left undecided without components (a time average of a luminosity
    that is not periodic, pure gauge about a background without a route) as
    "claim<TAB>*": "undecided". None if it gave up: no JSON, an "undecided: too large/too
    slow" line after it, or a claim that holds or fails without components (what a run
    stopped by a limit has been seen to print)."""
    text = text.strip()
    try:
        doc, end = json.JSONDecoder().raw_decode(text)
    except json.JSONDecodeError:
        return None
    if "undecided" in text[end:] or any(not c["components"] and c["status"] != "undecided"
                                        for c in doc["claims"]):
        return None
    out = {f"{c['key']}\t*": "undecided" for c in doc["claims"] if not c["components"]}
    out.update({f"{c['key']}\t{comp['name']}": comp["verdict"]
                for c in doc["claims"] for comp in c["components"]})
    return out


def compare(mine, theirs):
    """'yes', 'MISMATCH', or a note why the comparison is partial. Keys as lingrav_components
    gives them (the peer's claims without components are "claim<TAB>*" too)."""
    if theirs is None:
        return "lingrav gave up"
    if mine is None:
        return "peer stopped"

    def claim(k):
        return k.split("\t")[0] + "\t*"

    mismatch = [(k, mine.get(k, "absent"), v) for k, v in theirs.items()
                if mine.get(k) in ("zero", "nonzero") and v in ("zero", "nonzero")
                and mine[k] != v]
    mismatch += [(k, v, "absent") for k, v in mine.items()
                 if k not in theirs and claim(k) not in theirs and claim(k) not in mine]
    for key, m, t in mismatch:
        print(f"    MISMATCH {key.replace(chr(9), ' ')}: SymEngine {m}, lingrav {t}", flush=True)
    if mismatch:
        return "MISMATCH"
    notes = set()
    for k, v in theirs.items():
        if mine.get(k) == v:
            if k.endswith("\t*"):
                notes.add("both undecided")
            continue
        if mine.get(k) == "undecided" or claim(k) in mine:
            notes.add("peer undecided")
        elif v == "undecided":
            notes.add("lingrav undecided")
        else:
            notes.add(f"peer {mine.get(k, 'missing')}")
    if any(k not in theirs and claim(k) in theirs for k in mine):
        notes.add("lingrav undecided")
    return ", ".join(sorted(notes)) if notes else "yes"


def not_covered(path):
    """Why the peer does not check this file, or None. Claims with `far_zone_order` are
    about the falloff in 1/r at fixed retarded time (the peer checks exact vanishing), and an
    eccentric [binary] is written in the eccentric anomaly (the peer expands circular orbits)."""
    doc = tomllib.loads(path.read_text())
    if doc.get("claims", {}).get("far_zone_order") is not None:
        return "far_zone_order (claims checked as O(1/r^n); the peer checks exact vanishing)"
    ecc = doc.get("binary", {}).get("eccentricity")
    if ecc is not None and str(ecc).strip() not in ("0", "0.0"):
        return "an eccentric [binary] (the peer expands circular orbits only)"
    return None


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("files", nargs="+", help="problem files")
    ap.add_argument("--mode", choices=["plain", "tuned"], default="tuned",
                    help="plain: expand and a numeric look; tuned: then rational-function and "
                         "root reduction, trig through exp (default)")
    ap.add_argument("--timeout", type=float, default=120.0, help="seconds per file (120)")
    ap.add_argument("--max-memory", type=int, default=4096, metavar="MB",
                    help="address-space limit per file in MiB (4096; 0: none)")
    ap.add_argument("--repeat", type=int, default=1, metavar="N",
                    help="run each file N times; the median time is reported, with the "
                         "largest peak memory (1)")
    ap.add_argument("--min-seconds", type=float, default=0.0, metavar="S",
                    help="within each run, check once untimed (a warm-up, as lingrav's timer "
                         "does), then repeat the check in-process until the repeats add up to "
                         "S seconds (at least one, at most 1000) and take their median (0: "
                         "one timed check, no warm-up)")
    ap.add_argument("--lingrav", metavar="BIN",
                    help="compare every component's verdict with `BIN check --format json`")
    ap.add_argument("--lingrav-json", metavar="DIR",
                    help="compare with DIR/<file stem>.json, saved `lingrav check --format json`")
    ap.add_argument("--summary", metavar="FILE",
                    help="write 'file<TAB>seconds|timeout|out of memory|error<TAB>peak MB<TAB>"
                         "agrees' lines")
    ap.add_argument("--child", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        return child_main(Path(args.files[0]), args.mode == "tuned", args.min_seconds)

    print(f"SymEngine {se.__version__}, Python {sys.version.split()[0]}; "
          f"import symengine: {IMPORT_SECONDS:.2f} s (not counted); mode {args.mode}")
    rows, any_mismatch = [], False
    for f in args.files:
        path = Path(f)
        print(f"{path.name}:", flush=True)
        why = not_covered(path)
        if why:
            print(f"  not covered: {why}", flush=True)
            rows.append(f"{path}\tnot covered\t-\t-")
            continue
        outcome, result = run_child(path, args.mode, args.timeout, args.max_memory,
                                    min_seconds=args.min_seconds)
        if outcome == "ok" and args.repeat > 1:
            runs = [result] + [run_child(path, args.mode, args.timeout, args.max_memory,
                                         quiet=True, min_seconds=args.min_seconds)[1]
                               for _ in range(args.repeat - 1)]
            runs = [r for r in runs if r is not None]
            seconds = sorted(r["seconds"] for r in runs)
            result["seconds"] = seconds[len(seconds) // 2]
            result["peak_kb"] = max(r["peak_kb"] for r in runs)
        theirs, compared = None, False
        if args.lingrav:
            try:
                out = subprocess.run(
                    [args.lingrav, "check", "--format", "json", "--time-limit",
                     str(int(args.timeout * 1000)), "--max-memory", str(args.max_memory or 4096),
                     str(path)], capture_output=True, text=True, check=False,
                    timeout=args.timeout + 30).stdout
            except subprocess.TimeoutExpired:
                out = ""
            theirs, compared = lingrav_components(out), True
        elif args.lingrav_json:
            saved = Path(args.lingrav_json) / f"{path.stem}.json"
            if saved.exists():
                theirs, compared = lingrav_components(saved.read_text()), True
        agrees = compare(result and result["components"], theirs) if compared else "-"
        any_mismatch |= agrees == "MISMATCH"
        if outcome == "ok":
            secs, peak = f"{result['seconds']:.5f}", f"{result['peak_kb'] / 1024:.0f}"
            runs = f"median of {args.repeat}, " if args.repeat > 1 else ""
            print(f"  total {result['seconds']:.3f} s in-process ({runs}import excluded), "
                  f"peak {peak} MB "
                  f"(after import {result['after_import_kb'] / 1024:.0f} MB); "
                  f"verdicts agree with lingrav: {agrees}", flush=True)
        else:
            secs, peak = outcome, "-"
            print(f"  {outcome}; verdicts agree with lingrav: {agrees}", flush=True)
        if agrees == "MISMATCH":
            print(f"  !!! VERDICT MISMATCH between SymEngine and lingrav on {path} !!!",
                  flush=True)
        rows.append(f"{path}\t{secs}\t{peak}\t{agrees}")
    if args.summary:
        Path(args.summary).write_text("".join(r + "\n" for r in rows))
    return 1 if any_mismatch else 0


if __name__ == "__main__":
    sys.exit(main())
