"""Judge lingrav's atan2 and abs values with mpmath (50 digits).

Reads the JSON lines written by tests/atan2_mpmath.rs: a lingrav expression, the same
function written in mpmath syntax ("mp", evaluated with x and y as exact mpf values and
mpmath's atan2, fabs, sqrt and diff in scope), the point, lingrav's certified enclosure of the
canonical form (re, im) and the parsed tree's f64 value (or null). Checks the mpmath value lies
in the enclosure (imaginary part containing 0) and within 1e-12 (relative) of the f64 value.
Prints "mpmath atan2 check: N points, ..." and exits 1 on any failure.
"""

import json
import sys

import mpmath
from mpmath import mp, mpf

mp.dps = 50


def main():
    path = sys.argv[1]
    n = bad = compared = 0
    scope = {"atan2": mpmath.atan2, "fabs": mpmath.fabs, "sqrt": mpmath.sqrt, "diff": mpmath.diff}
    with open(path) as f:
        for line in f:
            c = json.loads(line)
            n += 1
            x, y = mpf(c["x"]), mpf(c["y"])
            v = eval(c["mp"], dict(scope, x=x, y=y))
            lo, hi = mpf(c["re"][0]), mpf(c["re"][1])
            ilo, ihi = mpf(c["im"][0]), mpf(c["im"][1])
            if not (lo <= v <= hi and ilo <= 0 <= ihi):
                bad += 1
                print("FAIL enclosure", c, "mpmath", v)
            if c["f64"] is not None:
                compared += 1
                d = abs(mpf(c["f64"]) - v)
                if d > mpf("1e-12") * max(1, abs(v)):
                    bad += 1
                    print("FAIL f64", c, "mpmath", v)
    print(f"mpmath atan2 check: {n} points, {compared} f64 values compared, {bad} failures")
    sys.exit(1 if bad else 0)


main()
