"""Outside check of `lingrav radiation --mass-unit` (issue 13): the SI numbers of a Keplerian
binary written again from published closed forms with mpmath at 40 digits, with the same
constants (c exact; G = 6.67430e-11 m^3/(kg s^2), CODATA; G M_sun = 1.3271244e20 m^3/s^2,
IAU 2015 Resolution B3 nominal; checks.md section 8).

Sources of the formulas, named beside each check below:
- Peters & Mathews (1963), Phys. Rev. 131, 435, eq. (16) (checks.md 1b): the orbit-averaged
  luminosity <L> = (32/5) G^4 m1^2 m2^2 (m1 + m2)/(c^5 a^5) f(e),
  f(e) = (1 + 73/24 e^2 + 37/96 e^4)/(1 - e^2)^(7/2);
- Peters (1964), Phys. Rev. 136, B1224, eq. (5.5), from memory (checks.md 1c): the
  orbit-averaged angular-momentum flux <dJ/dt> = (32/5) G^(7/2) m1^2 m2^2 sqrt(M)/(c^5 a^(7/2))
  (1 + 7/8 e^2)/(1 - e^2)^2, the rate at which the orbit loses angular momentum; lingrav's
  dJ_z/dt = -(2/5) eps_zjk ddQ_ja dddQ_ka is the source's rate of change, so it is minus
  this for an orbit turning about +z;
- Kepler's third law (common practice): P = 2 pi sqrt(a^3/(G M)); for a circular orbit the
  quadrupole waves come at twice the orbital frequency, f = 1/(pi) sqrt(G M/a^3) (checks.md 2c);
- the face-on circular waveform (checks.md 2c): h_plus^2 + h_cross^2 = (4 G^2 m1 m2/(c^4 a d))^2
  at every time.

Input: one JSON object per line: {"m1", "m2", "a", "e", "unit_msun", "distance", "si": the
"si" object of `lingrav radiation --format json`}. Output: one line per check,
"ok name" or "FAIL name: detail"; exit 1 on any failure.
"""

import json
import sys

import mpmath as mp

mp.mp.dps = 40
C = mp.mpf(299792458)
G = mp.mpf("6.67430e-11")
GM_SUN = mp.mpf("1.3271244e20")
REL = mp.mpf("1e-12")

failures = 0


def check(name, got, want, rel=REL):
    global failures
    if got is None:
        print(f"FAIL {name}: lingrav printed no number (want {mp.nstr(want, 15)})")
        failures += 1
        return
    got = mp.mpf(got)
    if want == 0:
        ok = abs(got) <= mp.mpf("1e-30")
    else:
        ok = abs(got / want - 1) <= rel
    if ok:
        print(f"ok {name}: {mp.nstr(got, 15)}")
    else:
        print(f"FAIL {name}: lingrav {mp.nstr(got, 17)}, closed form {mp.nstr(want, 17)}")
        failures += 1


for line in open(sys.argv[1]):
    case = json.loads(line)
    si = case["si"]
    label = case["label"]
    gmu = mp.mpf(case["unit_msun"]) * GM_SUN  # G times one mass unit, m^3/s^2
    lu = gmu / C**2  # length unit, m
    gm1 = mp.mpf(case["m1"]) * gmu
    gm2 = mp.mpf(case["m2"]) * gmu
    gm = gm1 + gm2
    a = mp.mpf(case["a"]) * lu
    e = mp.mpf(case["e"])
    fe = (1 + mp.mpf(73) / 24 * e**2 + mp.mpf(37) / 96 * e**4) / (1 - e**2) ** mp.mpf(3.5)
    # Peters & Mathews (1963) eq. (16), with G^4 m1^2 m2^2 M = (G m1)^2 (G m2)^2 (G M)/G.
    lum = mp.mpf(32) / 5 * gm1**2 * gm2**2 * gm / (G * C**5 * a**5) * fe
    check(f"{label}: <L> (Peters & Mathews 1963)", si["averages"]["luminosity_w"], lum)
    # Peters (1964) eq. (5.5), from memory: G^(7/2) m1^2 m2^2 sqrt(M) = (G m1)^2 (G m2)^2
    # sqrt(G M)/G.
    jdot = (
        mp.mpf(32) / 5 * gm1**2 * gm2**2 * mp.sqrt(gm) / (G * C**5 * a ** mp.mpf(3.5))
        * (1 + mp.mpf(7) / 8 * e**2) / (1 - e**2) ** 2
    )
    check(
        f"{label}: <dJ_z/dt> (Peters 1964)",
        si["averages"]["angular_momentum_flux_z_n_m"],
        -jdot,
    )
    period = 2 * mp.pi * mp.sqrt(a**3 / gm)
    if e == 0:
        # Kepler's third law; the quadrupole's one frequency is twice the orbit's.
        check(f"{label}: f_gw = 2/P (Kepler)", si["numbers"]["frequency_1_hz"], 2 / period)
        if case.get("distance") is not None and si.get("at") is not None:
            d = mp.mpf(case["distance"]) * lu
            h0 = 4 * gm1 * gm2 / (C**4 * a * d)
            hp = mp.mpf(si["at"]["h_plus"])
            hx = mp.mpf(si["at"]["h_cross"])
            check(f"{label}: face-on h_plus^2 + h_cross^2 (checks.md 2c)", hp**2 + hx**2, h0**2)
    else:
        check(f"{label}: P (Kepler)", si["numbers"]["orbital_period_s"], period)
    if case.get("distance") is not None:
        check(f"{label}: distance", si["numbers"]["distance_m"], mp.mpf(case["distance"]) * lu)

sys.exit(1 if failures else 0)
