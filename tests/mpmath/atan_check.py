"""Judge lingrav's atan / abs enclosures with mpmath (principal atan, 50 digits).

Reads the JSON lines written by tests/atan_mpmath.rs: "catan" lines hold a complex box
(re, im intervals) and lingrav's enclosure of atan over it; "atan" and "abs" lines a real
interval and the enclosure. Every f64 bound is exact in mpmath. The script evaluates the
function at the corners, the edge midpoints and 8 random interior points (seeded by argv[2])
and checks each value lies in the enclosure. Prints "mpmath atan check: N enclosures, ..." and
exits 1 on any failure.
"""

import json
import random
import sys

import mpmath
from mpmath import mp, mpf, mpc

mp.dps = 50


def inside(v, box):
    return mpf(box[0]) <= v <= mpf(box[1])


def points(lo, hi, rnd):
    lo, hi = mpf(lo), mpf(hi)
    pts = [lo, hi, (lo + hi) / 2]
    pts += [lo + (hi - lo) * mpf(rnd.random()) for _ in range(3)]
    return pts


def main():
    path, seed = sys.argv[1], int(sys.argv[2])
    rnd = random.Random(seed)
    n = bad = 0
    with open(path) as f:
        for line in f:
            c = json.loads(line)
            n += 1
            if c["f"] == "catan":
                for x in points(*c["re"], rnd):
                    for y in points(*c["im"], rnd):
                        v = mpmath.atan(mpc(x, y))
                        if not (inside(v.real, c["out_re"]) and inside(v.imag, c["out_im"])):
                            bad += 1
                            print("FAIL", c, "at", x, y, "atan =", v)
            else:
                fn = mpmath.atan if c["f"] == "atan" else abs
                for x in points(*c["x"], rnd):
                    v = fn(x)
                    if not inside(v, c["out"]):
                        bad += 1
                        print("FAIL", c, "at", x, "value", v)
    print(f"mpmath atan check: {n} enclosures, {bad} failures")
    sys.exit(1 if bad else 0)


main()
