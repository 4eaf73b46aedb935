#!/usr/bin/env python3
"""The NumPy side of the grid benchmark (benches/grid_ratio.sh): the same computation as
`wave_residual` in benches/grid_common/mod.rs, written the way a NumPy user would.

An oblique plane wave in TT gauge along n = (2/3, 2/3, 1/3), both polarizations, is sampled on
the same lattice (5 slabs in t, 68^3 points in space, spacing 1/64, centre (0.3, 0.4, 0.5,
0.6)); fourth-order central second derivatives give box h_ij at the 64^3 interior points of
the middle slab; box hbar_mn = box h_mn - (1/2) eta_mn box h; the result is the largest
|component|. Two waves: `oblique` along (2/3, 2/3, 1/3) and `xz` along (3/5, 0, 4/5). Prints
`CASE_numpy_seconds S` (best of 5, wall clock, one core) and `CASE_residual_max R`, which must
agree with lingrav's; then the same with `_parts`: the box of the two terms cos and sin of the
phase, each component their combination (what lingrav does when the components are
combinations of fewer terms than there are components).
"""

import time

import numpy as np

A, W = 1.0e-3, 3.0
CENTER = (0.3, 0.4, 0.5, 0.6)
H = 1.0 / 64.0
SIDE, S = 64, 2
COUNTS = (2 * S + 1, SIDE + 2 * S, SIDE + 2 * S, SIDE + 2 * S)
D2 = np.array([-1.0 / 12.0, 4.0 / 3.0, -5.0 / 2.0, 4.0 / 3.0, -1.0 / 12.0])
ETA = (-1.0, 1.0, 1.0, 1.0)


def axis(a):
    n = COUNTS[a]
    return CENTER[a] + (np.arange(n) - (n - 1) / 2.0) * H


def perturbation(case, t, x, y, z):
    """(mu, nu) -> h_mu nu for the two waves of grid_common; the other components are 0."""
    if case == "oblique":
        phase = W * (t - (2.0 * x + 2.0 * y + z) / 3.0)
        hp, hc = A * np.cos(phase), A * np.sin(phase)
        return {
            (1, 1): -hp / 3.0 + 4.0 * hc / 9.0,
            (1, 2): -5.0 * hc / 9.0,
            (1, 3): 2.0 * hp / 3.0 + 2.0 * hc / 9.0,
            (2, 2): hp / 3.0 + 4.0 * hc / 9.0,
            (2, 3): -2.0 * hp / 3.0 + 2.0 * hc / 9.0,
            (3, 3): -8.0 * hc / 9.0,
        }
    phase = W * (t - (3.0 * x + 4.0 * z) / 5.0)
    hp, hc = A * np.cos(phase), A * np.sin(phase)
    return {
        (1, 1): 16.0 / 25.0 * hp,
        (1, 2): 4.0 / 5.0 * hc,
        (1, 3): -12.0 / 25.0 * hp,
        (2, 2): -hp,
        (2, 3): -3.0 / 5.0 * hc,
        (3, 3): 9.0 / 25.0 * hp,
    }


def polarizations(case, t, x, y, z):
    """The two terms every component is a combination of: (cos, sin) of the phase, and each
    component's coefficients on them (what lingrav samples instead of the six components)."""
    if case == "oblique":
        phase = W * (t - (2.0 * x + 2.0 * y + z) / 3.0)
        c = {
            (1, 1): (-1 / 3, 4 / 9),
            (1, 2): (0.0, -5 / 9),
            (1, 3): (2 / 3, 2 / 9),
            (2, 2): (1 / 3, 4 / 9),
            (2, 3): (-2 / 3, 2 / 9),
            (3, 3): (0.0, -8 / 9),
        }
    else:
        phase = W * (t - (3.0 * x + 4.0 * z) / 5.0)
        c = {
            (1, 1): (16 / 25, 0.0),
            (1, 2): (0.0, 4 / 5),
            (1, 3): (-12 / 25, 0.0),
            (2, 2): (-1.0, 0.0),
            (2, 3): (0.0, -3 / 5),
            (3, 3): (9 / 25, 0.0),
        }
    return (A * np.cos(phase), A * np.sin(phase)), c


def residual(case, by_parts=False):
    t, x, y, z = np.meshgrid(axis(0), axis(1), axis(2), axis(3), indexing="ij")
    inner = slice(S, -S)

    def box(f):
        # eta^{ss} d_s d_s f at the interior of the middle slab.
        out = np.zeros((SIDE, SIDE, SIDE))
        for a in range(4):
            acc = np.zeros((SIDE, SIDE, SIDE))
            for k, w in zip(range(-S, S + 1), D2):
                idx = [S, inner, inner, inner]
                n = COUNTS[a]
                idx[a] = S + k if a == 0 else slice(S + k, n - S + k)
                acc += w * f[tuple(idx)]
            out += ETA[a] * acc / (H * H)
        return out

    if by_parts:
        # Box of the two terms, then the components as their combinations.
        (hp, hc), coef = polarizations(case, t, x, y, z)
        bp, bc = box(hp), box(hc)
        boxes = {k: cp * bp + cc * bc for k, (cp, cc) in coef.items()}
    else:
        h = perturbation(case, t, x, y, z)
        boxes = {k: box(v) for k, v in h.items()}
    zero = np.zeros((SIDE, SIDE, SIDE))
    trace = sum(ETA[m] * boxes.get((m, m), zero) for m in range(4))
    worst = 0.0
    for m in range(4):
        for n in range(m, 4):
            b = boxes.get((m, n), zero)
            if m == n:
                b = b - 0.5 * ETA[m] * trace
            worst = max(worst, float(np.abs(b).max()))
    return worst


def main():
    print(f"numpy {np.__version__}")
    for case in ("oblique", "xz"):
        for suffix, by_parts in (("", False), ("_parts", True)):
            best = float("inf")
            r = None
            for _ in range(5):
                start = time.perf_counter()
                r = residual(case, by_parts)
                best = min(best, time.perf_counter() - start)
            print(f"{case}_numpy{suffix}_seconds {best:.4f}")
            print(f"{case}_residual{suffix}_max {r:.6e}")


if __name__ == "__main__":
    main()
