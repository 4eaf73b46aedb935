#!/usr/bin/env python3
"""The checks of `lingrav check`, done with SymEngine, timed: the peer of issue 10.

SymEngine is a general-purpose computer-algebra library written in C++ (pip package
`symengine`, used here from Python). This script decides the same claims as `lingrav check`
on the same problem files, the way a competent SymEngine user would write them, and prints
per file every claim's verdict, the time spent in-process (from reading the file to the last
verdict; importing SymEngine excluded and printed separately) and the peak memory of the
process (resource.getrusage maxrss, which includes the Python interpreter and the library).

It shares with benches/check_sympy.py (module benches/peers/linearized.py) the translation of
the expression language, the formulas of every claim, the component names and the claim rule:
G1 = R1 - 1/2 eta R1 with R1_mn = eta^{rs} R_{r m s n}, the Lorenz, TT and synchronous
conditions, the 20 independent components of the linearized Riemann tensor (sign of MTW) for
pure gauge, d^m T_mn for a source.

SymEngine has no simplify, so each component is decided by normalising and expanding.
Every component is expanded first (0 is a proof) and then evaluated at a random point
(arbitrary functions replaced by the samples of the file, exact point, 200-bit arithmetic):
clearly nonzero is "nonzero", as lingrav ends with a witness. "plain" mode stops there (what
is left is "undecided"). "tuned" mode (the default, used by benches/engine_ratios.sh) goes on
with the strongest route we know, like check_sympy.py's: every value of an arbitrary function
(Q(t - r), Q''(t - r), ...) becomes an independent symbol, every half-integer power b^(k/2) a
power R_b^k of a new symbol with R_b^2 = b, the expression is brought over a common
denominator (as_numer_denom) and the numerator expanded and reduced with R_b^2 = b (even and
odd parts in R_b separately, both must vanish); then the same with sin, cos, tan and their
hyperbolic cousins rewritten through exponentials of expanded arguments. Each step is an
identity, so 0 is a proof; a component that survives is "undecided".

Translation of the syntax: `^` is `**`; numbers are exact (`1.5e-3` is 3/2000); `d_x_y(f)`
is diff(f, x, y); `Q''(a)` is the second derivative of the undefined function Q at a, built
the way SymEngine's own chain rule writes it (Subs(Derivative(Q(_xi_1), _xi_1, _xi_1),
_xi_1, a)), so hand-written derivatives and those produced by diff combine.

Each file runs in its own child process (a fresh interpreter: the peak memory is that
file's), with a time limit and an address-space limit (RLIMIT_AS); a case that passes one is
reported as "timeout" or "out of memory", never left hanging. With --lingrav BIN (or
--lingrav-json DIR holding `lingrav check --format json` output as DIR/<file stem>.json)
every component's verdict is compared with lingrav's and any difference between two
decided verdicts is printed as "MISMATCH" and makes the exit code 1.

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

from linearized import COORDS_NAMES, Namespace, claims_components, status, tensor

_t0 = time.perf_counter()
import symengine as se  # noqa: E402  (timed on purpose)

IMPORT_SECONDS = time.perf_counter() - _t0

COORDS = se.symbols(COORDS_NAMES)
ZERO = se.Integer(0)
NONZERO_BELOW = 1e-12  # a numeric value at most this large is not called nonzero
PRECISION_BITS = 200
_SHIFT = se.Symbol("_lingrav_peer_shift")

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


def build(path):
    doc = tomllib.loads(path.read_text())
    ns = Namespace(se, COORDS, exact, prime)
    values = {}
    for name, value in doc.get("parameters", {}).items():
        s = se.Symbol(name)
        ns[name] = s
        values[s] = exact(repr(value))
    u = se.Symbol("u")
    samples = {}
    for name, sample in doc.get("functions", {}).items():
        f = se.Function(name)
        ns[name] = f
        ns.functions[name] = f
        sub = Namespace(se, COORDS, exact, prime)
        sub["u"] = u
        samples[name] = (u, sub.evaluate(sample))
    for name, text in doc.get("define", {}).items():
        ns[name] = ns.evaluate(text)
    h = tensor(ns, doc.get("perturbation", {}), ZERO)
    source = tensor(ns, doc["source"], ZERO) if "source" in doc else None
    return doc, h, source, values, samples


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


def numeric_value(expr, values, samples, rng):
    """expr at a random point, parameters at their file values, functions by their samples,
    evaluated in PRECISION_BITS-bit arithmetic. None where it cannot be evaluated."""
    point = dict(values)
    for c in COORDS:
        point[c] = se.Integer(rng.choice([-1, 1]) * rng.randint(250, 2000)) / 1000
    replace = {}
    for atom, (name, n, arg) in function_values(expr).items():
        u, sample = samples[name]
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


def _reduced_zero(expr):
    """Common denominator, expand the numerator, reduce every R_b with R_b^2 = b."""
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
    for b, r in roots.items():
        split = []
        for e in parts:
            flipped = e.xreplace({r: -r})
            for part in (se.expand((e + flipped) / 2), se.expand((e - flipped) / (2 * r))):
                even = {p: b ** (int(p.args[1]) // 2) for p in part.atoms(se.Pow)
                        if p.args[0] == r}
                split.append(se.expand(part.xreplace(even)))
        parts = split
    return all(e == 0 for e in parts)


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
        for atom in expr.atoms(type(f(COORDS[1]))):
            replace[atom] = rule(atom.args[0])
    return expr.xreplace(replace) if replace else None


def reduces_to_zero(expr):
    """The tuned zero test: function values become independent symbols, then _reduced_zero,
    then the same after rewriting trigonometric functions through exponentials."""
    names = {atom: se.Symbol(f"_F{i}") for i, atom in enumerate(function_values(expr))}
    e = expr.xreplace(names) if names else expr
    if _reduced_zero(e):
        return True
    rewritten = _trig_as_exp(e)
    return rewritten is not None and _reduced_zero(rewritten)


def verdict(expr, values, samples, rng, tuned):
    """(verdict, detail): expand (0 is a proof); a numeric look at the expanded form (clearly
    nonzero ends it, as lingrav ends with a witness); tuned: then reduces_to_zero."""
    e = se.expand(expr)
    if e == 0:
        return "zero", None
    v = numeric_value(e, values, samples, rng)
    if v is not None and abs(v) > NONZERO_BELOW:
        return "nonzero", f"{v:.6g} at a random point"
    if tuned and reduces_to_zero(e):
        return "zero", None
    if v is None:
        return "undecided", "not reduced to 0; no numeric value at a random point"
    return "undecided", "not reduced to 0; numerically ~0"


# --- one file, in the child ----------------------------------------------------------------


def run_one(path, tuned):
    """Every claim of one file; prints a line per claim, then 'RESULT <json>' last."""
    after_import_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    rng = random.Random(20240601)
    start = time.perf_counter()
    doc, h, source, values, samples = build(path)
    claims = claims_components(doc, h, source, se, COORDS)
    components, statuses = {}, []
    for key, asserted, comps in claims:
        vs = []
        for name, expr in comps:
            v, detail = verdict(expr, values, samples, rng, tuned)
            vs.append(v)
            components[f"{key}\t{name}"] = v
            if v == "undecided":
                print(f"      {key} {name}: undecided: {detail}", flush=True)
        st = status(vs, bool(asserted))
        statuses.append((key, st))
        counts = ", ".join(f"{vs.count(v)} {v}" for v in ("zero", "nonzero", "undecided")
                           if vs.count(v))
        print(f"    {st:<9} {key:<20} {len(vs)} components: {counts}", flush=True)
    seconds = time.perf_counter() - start
    peak_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print("RESULT " + json.dumps({"seconds": seconds, "peak_kb": peak_kb,
                                  "after_import_kb": after_import_kb, "claims": statuses,
                                  "components": components}), flush=True)


def child_main(path, tuned):
    try:
        run_one(path, tuned)
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


def run_child(path, mode, timeout, max_memory_mb, quiet=False):
    """(outcome, result): outcome is 'ok', 'timeout', 'out of memory' or 'error'. The child's
    lines are echoed unless quiet."""
    def limit():
        if max_memory_mb:
            cap = max_memory_mb * 1024 * 1024
            resource.setrlimit(resource.RLIMIT_AS, (cap, cap))

    cmd = [sys.executable, str(Path(__file__).resolve()), "--child", "--mode", mode, str(path)]
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
    """Per-component verdicts from `lingrav check --format json`; None if it gave up: no JSON,
    an "undecided: too large/too slow" line after it, or a claim without components (what a
    run stopped by a limit has been seen to print, with "holds")."""
    text = text.strip()
    try:
        doc, end = json.JSONDecoder().raw_decode(text)
    except json.JSONDecodeError:
        return None
    if "undecided" in text[end:] or any(not c["components"] for c in doc["claims"]):
        return None
    return {f"{c['key']}\t{comp['name']}": comp["verdict"]
            for c in doc["claims"] for comp in c["components"]}


def compare(mine, theirs):
    """'yes', 'MISMATCH', or a note why the comparison is partial."""
    if theirs is None:
        return "lingrav gave up"
    if mine is None:
        return "peer stopped"
    mismatch = [(k, mine.get(k, "absent"), v) for k, v in theirs.items()
                if mine.get(k) in ("zero", "nonzero") and v in ("zero", "nonzero")
                and mine[k] != v]
    mismatch += [(k, v, "absent") for k, v in mine.items() if k not in theirs]
    for key, m, t in mismatch:
        print(f"    MISMATCH {key.replace(chr(9), ' ')}: SymEngine {m}, lingrav {t}", flush=True)
    if mismatch:
        return "MISMATCH"
    notes = set()
    for k, v in theirs.items():
        if mine.get(k) != v:
            notes.add("peer undecided" if mine.get(k) == "undecided" else
                      "lingrav undecided" if v == "undecided" else f"peer {mine.get(k, 'missing')}")
    return ", ".join(sorted(notes)) if notes else "yes"


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
        return child_main(Path(args.files[0]), args.mode == "tuned")

    print(f"SymEngine {se.__version__}, Python {sys.version.split()[0]}; "
          f"import symengine: {IMPORT_SECONDS:.2f} s (not counted); mode {args.mode}")
    rows, any_mismatch = [], False
    for f in args.files:
        path = Path(f)
        print(f"{path.name}:", flush=True)
        outcome, result = run_child(path, args.mode, args.timeout, args.max_memory)
        if outcome == "ok" and args.repeat > 1:
            runs = [result] + [run_child(path, args.mode, args.timeout, args.max_memory,
                                         quiet=True)[1] for _ in range(args.repeat - 1)]
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
