"""Judge lingrav's multiprecision ball enclosures with mpmath, independently.

Reads the JSON lines written by tests/ball_mpmath.rs. Each line holds a function name, its
argument as an exact dyadic [mantissa, exponent] (null for the constant pi), the working
precision, and lingrav's enclosure: midpoint [mantissa, exponent] and radius [m, e], meaning
the ball |y - mid| <= rad. For each line this script

1. recomputes the value with mpmath at max(REF_BITS, prec + 200) bits of working precision
   (the reference; its own error is taken as at most 2^-(bits - 10) relative, far below the
   2^-prec widths being judged) and checks, in exact integer arithmetic, that it lies in lingrav's ball;
2. recomputes it at 60 significant digits and checks that lingrav's midpoint agrees with it to
   D = min(60, floor(prec log10 2) - 1) digits (|mid - ref60| <= 10^(1-D) |ref60|; D = 59 at
   200 bits, so a 200-bit enclosure is compared at the full 60 digits);
3. checks that the ball's width is near 2^-prec relative (2 rad <= 2^-(prec - 4) |ref|).

Any failure is printed with its case; the exit status is then 1. The last line is the summary
"mpmath ball check: N enclosures, ..." that the Rust test reads.
"""

import json
import sys
from collections import Counter

import mpmath
from mpmath import mp

REF_BITS = 400

FUNCS = {
    "exp": mpmath.exp,
    "ln": mpmath.log,
    "sin": mpmath.sin,
    "cos": mpmath.cos,
    "tan": mpmath.tan,
    "atan": mpmath.atan,
    "sqrt": mpmath.sqrt,
    "sinh": mpmath.sinh,
    "cosh": mpmath.cosh,
    "tanh": mpmath.tanh,
}


def dyadic(pair):
    """[mantissa string, exponent] -> (int, int)."""
    return int(pair[0]), int(pair[1])


def mpf_parts(x):
    """The exact (mantissa, exponent) of an mpf."""
    sign, man, exp, _ = x._mpf_
    m = int(man)
    return (-m if sign else m), int(exp)


def sub(a, b):
    """Exact a - b for dyadics (m, e)."""
    e = min(a[1], b[1])
    return (a[0] << (a[1] - e)) - (b[0] << (b[1] - e)), e


def add(a, b):
    return sub(a, (-b[0], b[1]))


def le(a, b):
    """Exact a <= b."""
    return sub(a, b)[0] <= 0


def absd(a):
    return abs(a[0]), a[1]


def top(a):
    """|a| < 2^top(a)."""
    return a[1] + abs(a[0]).bit_length()


def evaluate(name, x, prec_bits):
    with mpmath.workprec(prec_bits):
        if name == "pi":
            return +mp.pi
        arg = mpmath.mpf(x)  # exact: (mantissa, exponent) tuples convert without rounding
        return FUNCS[name](arg)


def main(path):
    failures = []
    counts = Counter()
    worst_width = None
    n = 0
    with open(path) as f:
        for line in f:
            line = line.strip()
            if not line:
                continue
            case = json.loads(line)
            n += 1
            name = case["f"]
            counts[name] += 1
            x = dyadic(case["x"]) if case["x"] is not None else None
            mid = dyadic(case["mid"])
            rad = dyadic(case["rad"])
            prec = int(case["prec"])
            # Enough bits that the argument is held exactly.
            bits = max(REF_BITS, prec + 200, (abs(x[0]).bit_length() + 64) if x else 0)
            ref = evaluate(name, x, bits)
            r = mpf_parts(ref)
            ref_err = (1, top(r) - (bits - 10)) if r[0] else (0, 0)
            label = f"{name}({x[0]}*2^{x[1]})" if x else f"{name} at {prec} bits"

            # 1. containment: |ref - mid| <= rad + ref_err
            dist = absd(sub(r, mid))
            if not le(dist, add(rad, ref_err)):
                failures.append(f"NOT CONTAINED: {label}: mpmath {mpmath.nstr(ref, 70)}")
                continue
            # 2. agreement at 60 digits (the argument and midpoint are taken exactly)
            with mpmath.workprec(bits):
                arg = mpmath.mpf(x) if x else None
                mid_mp = mpmath.mpf(mid)
            with mpmath.workdps(60):
                ref60 = FUNCS[name](arg) if x else +mp.pi
            with mpmath.workprec(bits):
                digits = min(60, int(prec * 0.30103) - 1)
                if abs(mid_mp - ref60) > mpmath.mpf(10) ** (1 - digits) * abs(ref60):
                    failures.append(
                        f"DIFFERS at {digits} digits: {label}: mpmath {mpmath.nstr(ref60, 60)},"
                        f" lingrav midpoint {mpmath.nstr(mid_mp, 60)}"
                    )
                    continue
            # 3. width near 2^-prec relative: 2 rad <= 2^-(prec - 4) |ref|
            if r[0] == 0:
                failures.append(f"ZERO REFERENCE: {label}")
                continue
            two_rad = (rad[0], rad[1] + 1)
            if not le(two_rad, (abs(r[0]), r[1] - (prec - 4))):
                failures.append(f"TOO WIDE: {label}: radius {rad[0]}*2^{rad[1]}")
                continue
            # log2 of the relative width, measured against 2^-prec
            width_log2 = (
                (rad[1] + 1 + rad[0].bit_length()) - top(r) + 1 + prec if rad[0] else None
            )
            if width_log2 is not None and (worst_width is None or width_log2 > worst_width):
                worst_width = width_log2
    for msg in failures:
        print(msg)
    per = ", ".join(f"{k} {v}" for k, v in sorted(counts.items()))
    worst = f"2^-prec * 2^{worst_width}" if worst_width is not None else "exact"
    print(f"per function: {per}")
    print(
        f"mpmath ball check: {n} enclosures, {len(failures)} failures"
        f" (mpmath {mpmath.__version__}, reference at max({REF_BITS}, prec + 200) bits and at 60 digits;"
        f" widest relative width below about {worst})"
    )
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
