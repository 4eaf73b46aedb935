#!/usr/bin/env python3
"""The checks of `lingrav check`, done by hand in SymPy, timed: the comparison for the README.

For each problem file this reads the TOML (tomllib), translates lingrav's expression syntax
into SymPy, builds h_{mu nu} with the defines substituted in order, and then does what a
practitioner would do for each claim of the file:

  field equations   G1_mn = R1_mn - 1/2 eta_mn R1 (minus 8 pi T_mn with a source), with
                    R1_mn = 1/2 (d_s d_m h^s_n + d_s d_n h^s_m - d_m d_n h - box h_mn);
  Lorenz gauge      d^m hbar_mn, hbar = h - 1/2 eta h;
  TT gauge          h_tm, h_ii, d_i h_ij;
  pure gauge        the 20 independent components of the linearized Riemann tensor,
                    R_abcd = 1/2 (d_b d_c h_ad + d_a d_d h_bc - d_a d_c h_bd - d_b d_d h_ac);
  with a source     its conservation d^m T_mn,

deciding each component with sympy.simplify: zero when simplify returns 0. When it does not,
the component is evaluated at a random point (arbitrary functions replaced by their samples
from the file): a clearly nonzero value makes it "nonzero", otherwise "undecided" (simplify
did not reduce it, but it looks zero). A claim's status follows lingrav's rule: a vanishing
claim holds when every component is zero; a claim written `= false` holds when one is nonzero.

That is the "plain" mode, the checks as they are usually written. `--mode tuned` is the fastest
SymPy route we know for these files, to keep the comparison conservative: each component is
first evaluated at a random point (clearly nonzero ends it, as lingrav ends with a witness);
otherwise every value of an arbitrary function (Q(t - r), Q''(t - r), ...) becomes an
independent symbol, sqrt(x^2 + y^2 + z^2) a positive symbol R, and the expanded numerator of
the rational function, reduced with R^2 = x^2 + y^2 + z^2, is compared with 0 (each step is an
identity, so 0 is a proof); only if that fails does simplify run.

Translation of the syntax: `^` is `**`; numbers are exact (`1.5e-3` is 3/2000); `d_x_y(f)`
is sympy.diff(f, x, y); `Q''(a)` is the second derivative of the undefined function Q at a,
written the way SymPy's own chain rule writes it (Subs(Derivative(Q(xi), (xi, 2)), xi, a)),
so hand-written derivatives and those produced by diff combine. Coordinates and parameters
are declared real, which can only help simplify.

Each case runs in a child process; the time is measured there with time.perf_counter, from
reading the file to the last verdict, and excludes importing SymPy (printed separately). A case
that exceeds the per-case time limit is stopped and reported as '>N s'.

Usage:  python3 benches/check_sympy.py [--mode plain|tuned|both] [--timeout S | --quick]
                                        [--lingrav BIN] [--summary FILE] [FILES...]
Needs SymPy (this script installs nothing):  python3 -m pip install sympy
"""

import argparse
import json
import multiprocessing
import random
import subprocess
import sys
import time
import tomllib
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent / "peers"))
from linearized import (  # noqa: E402  (the formulas shared with the SymEngine peer)
    COORDS_NAMES, NAMES, Namespace, claims_components, status, tensor)

_t0 = time.perf_counter()
import sympy as sp  # noqa: E402  (timed on purpose)
from sympy.core.function import AppliedUndef  # noqa: E402

IMPORT_SECONDS = time.perf_counter() - _t0

ROOT = Path(__file__).resolve().parent.parent
DEFAULT_FILES = ["oblique_wave.toml", "static_mass.toml", "vibrating_rod.toml"]
QUICK_TIMEOUT = 60.0

COORDS = sp.symbols(COORDS_NAMES, real=True)

# --- lingrav syntax -> SymPy ---------------------------------------------------------------


def prime(f, n, arg):
    """The n-th derivative of the undefined function f at arg, in SymPy's chain-rule form."""
    if n == 0:
        return f(arg)
    if arg.is_Symbol:
        return sp.Derivative(f(arg), (arg, n))
    xi = sp.Dummy("xi_1", dummy_index=hash(arg))
    return sp.Subs(sp.Derivative(f(xi), (xi, n)), xi, arg)


def build(path):
    doc = tomllib.loads(path.read_text())
    ns = Namespace(sp, COORDS, sp.Rational, prime)
    values = {}
    for name, value in doc.get("parameters", {}).items():
        s = sp.Symbol(name, real=True)
        ns[name] = s
        values[s] = sp.Rational(repr(value))
    u = sp.Symbol("u", real=True)
    samples = {}
    for name, sample in doc.get("functions", {}).items():
        f = sp.Function(name)
        ns[name] = f
        ns.functions[name] = f
        sub = Namespace(sp, COORDS, sp.Rational, prime)
        sub["u"] = u
        samples[f] = sp.Lambda(u, sub.evaluate(sample))
    for name, text in doc.get("define", {}).items():
        ns[name] = ns.evaluate(text)
    h = tensor(ns, doc.get("perturbation", {}), sp.Integer(0))
    source = tensor(ns, doc["source"], sp.Integer(0)) if "source" in doc else None
    return doc, h, source, values, samples


# --- verdicts ------------------------------------------------------------------------------


def function_values(expr):
    """The values of arbitrary functions in expr: {atom: (function, order, argument)}."""
    out = {}
    for s in expr.atoms(sp.Subs):
        if isinstance(s.expr, sp.Derivative) and len(s.variables) == 1:
            (f_of_xi,) = [s.expr.expr]
            out[s] = (f_of_xi.func, s.expr.derivative_count, s.point[0])
    for d in expr.atoms(sp.Derivative):  # Q'(u) with a bare symbol u
        if isinstance(d.expr, AppliedUndef) and d.expr.args[0].is_Symbol:
            out[d] = (d.expr.func, d.derivative_count, d.expr.args[0])
    for a in expr.atoms(AppliedUndef):
        if not any(isinstance(arg, sp.Dummy) for arg in a.args):
            out[a] = (a.func, 0, a.args[0])
    return out


def numeric_value(expr, values, samples, rng):
    """expr at a random point, parameters at their file values, functions by their samples."""
    point = dict(values)
    for c in COORDS:
        point[c] = sp.Rational(rng.choice([-1, 1]) * rng.randint(250, 2000), 1000)
    u = sp.Symbol("u", real=True)
    replace = {}
    for atom, (f, n, arg) in function_values(expr).items():
        replace[atom] = sp.diff(samples[f](u), u, n).subs(u, arg.xreplace(point))
    return complex(expr.xreplace(replace).xreplace(point).evalf(30))


R = sp.Symbol("R", positive=True)  # stands for sqrt(x^2 + y^2 + z^2)


def reduces_to_zero(expr):
    """The tuned zero test: each function value becomes an independent symbol, r a symbol R;
    the numerator of the rational function, reduced with R^2 = x^2 + y^2 + z^2, is expanded.
    An empty result proves zero (every step is an identity); anything else proves nothing."""
    names = {atom: sp.Symbol(f"F{i}") for i, atom in enumerate(function_values(expr))}
    _, x, y, z = COORDS
    s2 = x**2 + y**2 + z**2
    e = expr.xreplace(names).xreplace({s2: R**2})
    num, _ = sp.fraction(sp.together(e))
    num = sp.expand(num)
    if R in num.free_symbols:
        if not num.is_polynomial(R):
            return False
        num = sp.expand(sum(c * s2 ** (k // 2) * R ** (k % 2)
                            for (k,), c in sp.Poly(num, R).terms()))
    return num == 0


def verdict(expr, values, samples, rng, tuned):
    """(verdict, detail). Plain: simplify, then a numeric look at what is left. Tuned: a
    numeric look first (clearly nonzero ends it), then reduces_to_zero, then simplify."""
    if tuned:
        try:
            v = numeric_value(expr, values, samples, rng)
            if abs(v) > 1e-12:
                return "nonzero", f"{v:.6g} at a random point"
        except (TypeError, ValueError, ZeroDivisionError):
            pass
        if reduces_to_zero(expr):
            return "zero", None
    s = sp.simplify(expr)
    if s == 0:
        return "zero", None
    try:
        v = numeric_value(s, values, samples, rng)
    except (TypeError, ValueError, ZeroDivisionError) as err:
        return "undecided", f"simplify left {sp.sstr(s)[:200]}; no numeric value ({err})"
    if abs(v) > 1e-12:
        return "nonzero", f"{v:.6g} at a random point"
    return "undecided", f"simplify left {sp.sstr(s)[:200]}; numerically ~0"


def run_case(path, tuned, queue):
    """In the child: every claim of the file, each component decided; reports on queue."""
    rng = random.Random(20240601)
    start, cpu = time.perf_counter(), time.process_time()
    doc, h, source, values, samples = build(path)
    claims = claims_components(doc, h, source, sp, COORDS)
    queue.put(("built", time.perf_counter() - start))
    for key, asserted, comps in claims:
        t = time.perf_counter()
        vs = []
        for name, expr in comps:
            tc = time.perf_counter()
            v, detail = verdict(expr, values, samples, rng, tuned)
            vs.append(v)
            queue.put(("component", key, name, v, detail, time.perf_counter() - tc))
        queue.put(("claim", key, asserted, status(vs, bool(asserted)), vs,
                   time.perf_counter() - t))
    queue.put(("done", time.perf_counter() - start, time.process_time() - cpu))


def run(path, tuned, timeout):
    """Runs one case in a child process; returns (seconds or None, cpu, claims, components)."""
    ctx = multiprocessing.get_context("fork")
    queue = ctx.Queue()
    child = ctx.Process(target=run_case, args=(path, tuned, queue), daemon=True)
    wall = time.perf_counter()
    child.start()
    claims, components, seconds, cpu = [], {}, None, None
    while seconds is None:
        remaining = timeout - (time.perf_counter() - wall)
        try:
            msg = queue.get(timeout=max(min(remaining, 5.0), 0.01))
        except Exception:  # queue.Empty: out of time, or the child died
            if child.is_alive() and remaining > 0:
                continue
            break
        if msg[0] == "done":
            _, seconds, cpu = msg
        elif msg[0] == "built":
            print(f"    every component built (h, derivatives) at {msg[1]:.2f} s", flush=True)
        elif msg[0] == "claim":
            _, key, asserted, st, vs, secs = msg
            claims.append((key, asserted, st))
            counts = ", ".join(f"{vs.count(v)} {v}" for v in ("zero", "nonzero", "undecided")
                               if vs.count(v))
            print(f"    {st:<9} {key:<20} {len(vs)} components: {counts}  ({secs:.2f} s)",
                  flush=True)
        else:
            _, key, name, v, detail, secs = msg
            components[(key, name)] = v
            if v == "undecided" or secs > 10:
                more = f": {detail}" if v == "undecided" else ""
                print(f"      {key} {name}: {v} in {secs:.1f} s{more}", flush=True)
    if child.is_alive():
        child.kill()
    child.join()
    return seconds, cpu, claims, components


def lingrav_verdicts(binary, path):
    """Per-component verdicts of `lingrav check --format json` (run outside any timing)."""
    out = subprocess.run([binary, "check", "--format", "json", str(path)],
                         capture_output=True, text=True, check=False).stdout
    return {(c["key"], comp["name"]): comp["verdict"]
            for c in json.loads(out)["claims"] for comp in c["components"]}


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("files", nargs="*", help="problem files (default: the three in worked/)")
    ap.add_argument("--mode", choices=["plain", "tuned", "both"], default="plain",
                    help="plain: simplify every component; tuned: numeric look, then "
                         "polynomial reduction, then simplify; both: one after the other")
    ap.add_argument("--timeout", type=float, default=3600.0, help="seconds per case")
    ap.add_argument("--quick", action="store_true", help=f"--timeout {QUICK_TIMEOUT:g}")
    ap.add_argument("--lingrav", metavar="BIN",
                    help="compare every component's verdict with `BIN check --format json`")
    ap.add_argument("--summary", metavar="FILE",
                    help="write 'file<TAB>mode<TAB>seconds<TAB>cpu seconds<TAB>agrees' lines; "
                         "agrees is yes, DIFFERS, stopped (time limit) or no (claim not proved)")
    args = ap.parse_args()
    timeout = QUICK_TIMEOUT if args.quick else args.timeout
    files = [Path(f) for f in args.files] or [ROOT / "worked" / f for f in DEFAULT_FILES]
    modes = ["plain", "tuned"] if args.mode == "both" else [args.mode]

    print(f"SymPy {sp.__version__}, Python {sys.version.split()[0]}; "
          f"import sympy: {IMPORT_SECONDS:.2f} s (not counted)")
    rows = []
    all_agree = True
    for path in files:
        theirs = lingrav_verdicts(args.lingrav, path) if args.lingrav else None
        for mode in modes:
            print(f"{path.name} ({mode}):", flush=True)
            seconds, cpu, claims, components = run(path, mode == "tuned", timeout)
            if theirs is not None:
                differ = [(k, components[k], v) for k, v in theirs.items()
                          if k in components and components[k] != v]
                differ += [(k, v, "absent") for k, v in components.items() if k not in theirs]
                for (key, name), mine, lg in differ:
                    print(f"    DIFFERS {key} {name}: SymPy {mine}, lingrav {lg}")
                reached = sum(k in components for k in theirs)
                agrees = not differ and reached == len(theirs)
                mark = "DIFFERS" if differ else ("yes" if agrees else "stopped")
                same = sum(components.get(k) == v for k, v in theirs.items())
                what = f"verdicts agree with lingrav on {same} of {len(theirs)} components"
            else:
                # lingrav proves every claim of the shipped files it is compared on.
                agrees = seconds is not None and all(st == "holds" for _, _, st in claims)
                what = f"every claim holds: {'yes' if agrees else 'no'}"
                mark = "yes" if agrees else ("stopped" if seconds is None else "no")
            all_agree &= mark in ("yes", "stopped")  # a time limit is not a disagreement
            if seconds is None:
                shown, secs, cpus = f">{timeout:g} s (stopped)", f">{timeout:g}", "-"
            else:
                shown, secs, cpus = f"{seconds:.2f} s (cpu {cpu:.2f} s)", f"{seconds:.3f}", \
                    f"{cpu:.3f}"
            print(f"  total {shown}; {what}", flush=True)
            rows.append(f"{path.name}\t{mode}\t{secs}\t{cpus}\t{mark}")
    if args.summary:
        Path(args.summary).write_text("".join(r + "\n" for r in rows))
    return 0 if all_agree else 1


if __name__ == "__main__":
    sys.exit(main())
