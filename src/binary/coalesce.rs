//! The time to coalescence of an eccentric binary within Peters' (1964) adiabatic equations,
//! by two independent routes, and the evolution of the orbit.
//!
//! Both routes compute the ratio R(e0) = T(a0, e0) / T_c(a0) to the circular closed form
//! T_c = a0^4 / (4 beta), a function of e0 alone (R(0) = 1).
//!
//! Route 1, [`ratio_by_quadrature`]: Peters' a(e) relation
//! a = c0 e^(12/19) (1 - e^2)^(-1) (1 + 121 e^2/304)^(870/2299) turns the time into one integral,
//! T = (12/19)(c0^4/beta) int_0^e0 e^(29/19) (1 + 121 e^2/304)^(1181/2299) (1 - e^2)^(-3/2) de.
//! With e = e0 x (so that nothing overflows as e0 -> 0):
//! R = (48/19) (1 - e0^2)^4 (1 + 121 e0^2/304)^(-3480/2299)
//!     int_0^1 x^(29/19) (1 + 121 e0^2 x^2/304)^(1181/2299) (1 - e0^2 x^2)^(-3/2) dx,
//! by adaptive 15-point Gauss-Kronrod quadrature (the 7-point Gauss difference as the error
//! estimate of each interval, the worst interval halved until the estimates sum below 1e-14
//! relative). 1 - e0 x is formed as (1 - e0) + e0 (1 - x), exact factors near the peak at x = 1.
//!
//! Route 2, [`ratio_by_evolution`], and the evolution itself: the ODEs da/dt, de/dt in the
//! variable s = ln(a0/a), with the eccentricity carried as w = ln(e^2/(1 - e^2)):
//! dw/ds = -(19/6) (1 + 121 e^2/304) / (1 + 73 e^2/24 + 37 e^4/96) (bounded, never stiff; both
//! e and 1 - e^2 are recovered from w without cancellation),
//! d(t/T_c)/ds = 4 e^(-4s) (1 - e^2)^(7/2) / (1 + 73 e^2/24 + 37 e^4/96),
//! integrated by the Dormand-Prince 5(4) pair with adaptive steps until the rest is below
//! 1e-16 of the total (then the circular tail e^(-4s) is added). The GW phase rides along:
//! d phi/dt = 2 omega_orb.

use super::{BinaryError, Check};
use super::{
    Constants, Orbit, circular_coalescence_time, eccentricity_polynomial, energy_polynomial,
    gw_frequency, innermost_separation, one_minus_square,
};
use std::f64::consts::PI;

/// The result of the quadrature of route 1.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Quadrature {
    /// R(e0) = T / T_c.
    pub value: f64,
    /// The summed error estimates of the intervals, relative to the value.
    pub error: f64,
    /// How many intervals.
    pub intervals: usize,
}

/// The largest number of intervals of the adaptive quadrature.
pub const MAX_INTERVALS: usize = 4000;
/// The relative accuracy the quadrature aims at.
pub const QUADRATURE_TOLERANCE: f64 = 1e-14;

/// Nodes of the 15-point Kronrod rule on [-1, 1] (non-negative half; QUADPACK's qk15).
#[allow(
    clippy::excessive_precision,
    reason = "QUADPACK's 33-digit constants, as published, so they can be compared"
)]
const XGK: [f64; 8] = [
    0.991_455_371_120_812_639_206_854_697_526_329,
    0.949_107_912_342_758_524_526_189_684_047_851,
    0.864_864_423_359_769_072_789_712_788_640_926,
    0.741_531_185_599_394_439_863_864_773_280_788,
    0.586_087_235_467_691_130_294_144_845_693_013,
    0.405_845_151_377_397_166_906_606_412_076_961,
    0.207_784_955_007_898_467_600_689_403_773_245,
    0.0,
];
/// Weights of the 15-point Kronrod rule.
#[allow(
    clippy::excessive_precision,
    reason = "QUADPACK's 33-digit constants, as published, so they can be compared"
)]
const WGK: [f64; 8] = [
    0.022_935_322_010_529_224_963_732_008_058_970,
    0.063_092_092_629_978_553_290_700_663_189_204,
    0.104_790_010_322_250_183_839_876_322_541_518,
    0.140_653_259_715_525_918_745_189_590_510_238,
    0.169_004_726_639_267_902_826_583_426_598_550,
    0.190_350_578_064_785_409_913_256_402_421_014,
    0.204_432_940_075_298_892_414_161_999_234_649,
    0.209_482_141_084_727_828_012_999_174_891_714,
];
/// Weights of the embedded 7-point Gauss rule (at `XGK[1]`, `XGK[3]`, `XGK[5]`, `XGK[7]`).
#[allow(
    clippy::excessive_precision,
    reason = "QUADPACK's 33-digit constants, as published, so they can be compared"
)]
const WG: [f64; 4] = [
    0.129_484_966_168_869_693_270_611_432_679_082,
    0.279_705_391_489_276_667_901_467_771_423_780,
    0.381_830_050_505_118_944_950_369_775_488_975,
    0.417_959_183_673_469_387_755_102_040_816_327,
];

/// The Kronrod value and the |Kronrod - Gauss| estimate of `f` on [lo, hi].
fn gauss_kronrod(f: &impl Fn(f64) -> f64, lo: f64, hi: f64) -> (f64, f64) {
    let (mid, half) = (0.5 * (lo + hi), 0.5 * (hi - lo));
    let centre = f(mid);
    let (mut k, mut g) = (WGK[7] * centre, WG[3] * centre);
    for i in 0..7 {
        let pair = f(mid - half * XGK[i]) + f(mid + half * XGK[i]);
        k += WGK[i] * pair;
        if i % 2 == 1 {
            g += WG[i / 2] * pair;
        }
    }
    (k * half, ((k - g) * half).abs())
}

/// Adaptive Gauss-Kronrod quadrature of `f` over [lo, hi]: the interval with the largest error
/// estimate is halved until the estimates sum below `tol` times |integral| or `max` intervals.
/// Returns (integral, summed estimate, intervals).
pub fn integrate(
    f: impl Fn(f64) -> f64,
    lo: f64,
    hi: f64,
    tol: f64,
    max: usize,
) -> (f64, f64, usize) {
    let (v, e) = gauss_kronrod(&f, lo, hi);
    let mut parts = vec![(lo, hi, v, e)];
    loop {
        let total: f64 = parts.iter().map(|p| p.2).sum();
        let error: f64 = parts.iter().map(|p| p.3).sum();
        if error <= tol * total.abs() || parts.len() >= max || !error.is_finite() {
            return (total, error, parts.len());
        }
        let worst = (0..parts.len())
            .max_by(|&i, &j| parts[i].3.total_cmp(&parts[j].3))
            .expect("at least one interval");
        let (a, b, _, _) = parts.swap_remove(worst);
        let m = 0.5 * (a + b);
        if m <= a || m >= b {
            // Intervals cannot be halved any more: what there is, is the answer.
            parts.push((a, b, 0.0, 0.0));
            let (total, error) = parts.iter().fold((0.0, 0.0), |s, p| (s.0 + p.2, s.1 + p.3));
            return (total, error.max(tol * total.abs()), parts.len());
        }
        let (v1, e1) = gauss_kronrod(&f, a, m);
        let (v2, e2) = gauss_kronrod(&f, m, b);
        parts.push((a, m, v1, e1));
        parts.push((m, b, v2, e2));
    }
}

/// R(e0) = T(a0, e0) / T_c(a0) by the quadrature of Peters' a(e) relation (route 1).
///
/// # Errors
///
/// The quadrature does not reach its tolerance within [`MAX_INTERVALS`].
pub fn ratio_by_quadrature(e0: f64) -> Result<Quadrature, BinaryError> {
    if e0 == 0.0 {
        return Ok(Quadrature {
            value: 1.0,
            error: 0.0,
            intervals: 0,
        });
    }
    let one_minus_e0 = 1.0 - e0;
    let g0 = eccentricity_polynomial(e0 * e0);
    let integrand = |x: f64| {
        let ex = e0 * x;
        // 1 - e0 x = (1 - e0) + e0 (1 - x): both terms exact or nearly so near x = 1.
        let q = (one_minus_e0 + e0 * (1.0 - x)) * (1.0 + ex);
        x.powf(29.0 / 19.0) * eccentricity_polynomial(ex * ex).powf(1181.0 / 2299.0)
            / (q * q.sqrt())
    };
    let (i, err, n) = integrate(integrand, 0.0, 1.0, QUADRATURE_TOLERANCE, MAX_INTERVALS);
    let p = one_minus_square(e0);
    let prefactor = 48.0 / 19.0 * (p * p) * (p * p) * g0.powf(-3480.0 / 2299.0);
    let value = prefactor * i;
    let error = err / i.abs();
    if error.is_nan() || error > 1e-10 || !value.is_finite() {
        return Err(BinaryError::NoConvergence(format!(
            "the coalescence quadrature did not converge for e = {e0} ({n} intervals, relative \
             error estimate {error:.1e})"
        )));
    }
    Ok(Quadrature {
        value,
        error,
        intervals: n,
    })
}

/// The state of route 2 in s = ln(a0/a): w = ln(e^2/(1 - e^2)) (unused when circular),
/// tau = t / T_c, and the GW phase.
#[derive(Clone, Copy, Debug, PartialEq)]
struct State {
    w: f64,
    tau: f64,
    phase: f64,
}

/// e^2 and 1 - e^2 of w, without cancellation.
fn eccentricity_parts(w: f64, circular: bool) -> (f64, f64) {
    if circular {
        return (0.0, 1.0);
    }
    if w >= 0.0 {
        let x = (-w).exp();
        (1.0 / (1.0 + x), x / (1.0 + x))
    } else {
        let x = w.exp();
        (x / (1.0 + x), 1.0 / (1.0 + x))
    }
}

/// The right-hand sides in s; `k` = 2 omega_0 T_c, the phase scale.
fn rates(s: f64, y: State, circular: bool, k: f64) -> State {
    let (e2, p) = eccentricity_parts(y.w, circular);
    let f = energy_polynomial(e2);
    let common = p * p * p * p.sqrt() / f;
    State {
        w: if circular {
            0.0
        } else {
            -19.0 / 6.0 * eccentricity_polynomial(e2) / f
        },
        tau: 4.0 * (-4.0 * s).exp() * common,
        phase: k * 4.0 * (-2.5 * s).exp() * common,
    }
}

fn axpy(y: State, h: f64, terms: &[(f64, State)]) -> State {
    let mut out = y;
    for &(c, d) in terms {
        out.w += h * c * d.w;
        out.tau += h * c * d.tau;
        out.phase += h * c * d.phase;
    }
    out
}

/// The largest number of Dormand-Prince steps of one integration.
pub const MAX_STEPS: usize = 200_000;
/// The relative accuracy per step of the Dormand-Prince integration.
pub const STEP_TOLERANCE: f64 = 1e-13;

/// An integration of route 2 from s = 0: the state at each of `stops` (increasing), or
/// until the remaining time is negligible when `stops` is empty; `tau_scale` and
/// `phase_scale` set the absolute error floors.
struct Integration {
    circular: bool,
    k: f64,
    tau_scale: f64,
    steps: usize,
}

impl Integration {
    fn new(e0: f64, k: f64) -> Integration {
        // The high-eccentricity approximation (768/425)(1 - e0^2)^(7/2) is within a factor 2
        // of R for every e0: a floor for the error in t/T_c.
        let p = one_minus_square(e0);
        Integration {
            circular: e0 == 0.0,
            k,
            tau_scale: (768.0 / 425.0 * p.powf(3.5)).min(1.0),
            steps: 0,
        }
    }

    /// One Dormand-Prince 5(4) step of size h from (s, y): the new state and the error norm.
    fn step(&self, s: f64, y: State, h: f64) -> (State, f64) {
        let f = |s: f64, y: State| rates(s, y, self.circular, self.k);
        let k1 = f(s, y);
        let k2 = f(s + h / 5.0, axpy(y, h, &[(1.0 / 5.0, k1)]));
        let k3 = f(
            s + 3.0 * h / 10.0,
            axpy(y, h, &[(3.0 / 40.0, k1), (9.0 / 40.0, k2)]),
        );
        let k4 = f(
            s + 4.0 * h / 5.0,
            axpy(
                y,
                h,
                &[(44.0 / 45.0, k1), (-56.0 / 15.0, k2), (32.0 / 9.0, k3)],
            ),
        );
        let k5 = f(
            s + 8.0 * h / 9.0,
            axpy(
                y,
                h,
                &[
                    (19372.0 / 6561.0, k1),
                    (-25360.0 / 2187.0, k2),
                    (64448.0 / 6561.0, k3),
                    (-212.0 / 729.0, k4),
                ],
            ),
        );
        let k6 = f(
            s + h,
            axpy(
                y,
                h,
                &[
                    (9017.0 / 3168.0, k1),
                    (-355.0 / 33.0, k2),
                    (46732.0 / 5247.0, k3),
                    (49.0 / 176.0, k4),
                    (-5103.0 / 18656.0, k5),
                ],
            ),
        );
        let y5 = axpy(
            y,
            h,
            &[
                (35.0 / 384.0, k1),
                (500.0 / 1113.0, k3),
                (125.0 / 192.0, k4),
                (-2187.0 / 6784.0, k5),
                (11.0 / 84.0, k6),
            ],
        );
        let k7 = f(s + h, y5);
        // The difference of the fifth- and fourth-order solutions.
        let d = [
            (35.0 / 384.0 - 5179.0 / 57600.0, k1),
            (500.0 / 1113.0 - 7571.0 / 16695.0, k3),
            (125.0 / 192.0 - 393.0 / 640.0, k4),
            (-2187.0 / 6784.0 + 92097.0 / 339_200.0, k5),
            (11.0 / 84.0 - 187.0 / 2100.0, k6),
            (-1.0 / 40.0, k7),
        ];
        let zero = State {
            w: 0.0,
            tau: 0.0,
            phase: 0.0,
        };
        let err = axpy(zero, h, &d);
        let sc = |a: f64, b: f64, floor: f64| floor + STEP_TOLERANCE * a.abs().max(b.abs());
        let norm = (err.w / sc(y.w, y5.w, STEP_TOLERANCE))
            .abs()
            .max((err.tau / sc(y.tau, y5.tau, STEP_TOLERANCE * self.tau_scale)).abs())
            .max(
                (err.phase / sc(y.phase, y5.phase, STEP_TOLERANCE * self.tau_scale * self.k)).abs(),
            );
        (y5, norm)
    }

    /// Integrates from (s, y) to `s_end` with adaptive steps (first trial step `h`); returns the
    /// state there and the last accepted step size.
    fn advance(
        &mut self,
        mut s: f64,
        mut y: State,
        s_end: f64,
        mut h: f64,
    ) -> Result<(State, f64), BinaryError> {
        while s < s_end {
            if self.steps >= MAX_STEPS {
                return Err(BinaryError::NoConvergence(format!(
                    "the orbit integration stopped after {MAX_STEPS} steps"
                )));
            }
            let last = s + h >= s_end;
            let hh = if last { s_end - s } else { h };
            let (y1, norm) = self.step(s, y, hh);
            self.steps += 1;
            if !norm.is_finite() {
                return Err(BinaryError::NoConvergence(
                    "the orbit integration met a non-finite value".into(),
                ));
            }
            if norm <= 1.0 {
                s = if last { s_end } else { s + hh };
                y = y1;
            }
            let factor = if norm == 0.0 {
                5.0
            } else {
                (0.9 * norm.powf(-0.2)).clamp(0.2, 5.0)
            };
            h = (hh * factor).clamp(1e-12, 1.0);
        }
        Ok((y, h))
    }
}

/// The initial state for eccentricity e0.
fn initial(e0: f64) -> State {
    let w = if e0 == 0.0 {
        0.0
    } else {
        (e0 * e0).ln() - one_minus_square(e0).ln()
    };
    State {
        w,
        tau: 0.0,
        phase: 0.0,
    }
}

/// R(e0) = T(a0, e0) / T_c(a0) by integrating the ODEs in ln a (route 2).
///
/// # Errors
///
/// The integration does not finish within [`MAX_STEPS`].
pub fn ratio_by_evolution(e0: f64) -> Result<f64, BinaryError> {
    let mut run = Integration::new(e0, 0.0);
    let (mut s, mut y, mut h) = (0.0f64, initial(e0), 0.01);
    // Advance a unit of s at a time until the circular tail e^(-4s) is negligible.
    loop {
        let tail = (-4.0 * s).exp();
        if tail <= 1e-16 * y.tau {
            return Ok(y.tau + tail);
        }
        (y, h) = run.advance(s, y, s + 1.0, h)?;
        s += 1.0;
    }
}

/// One row of the evolution.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Sample {
    /// Time since the start, s.
    pub t: f64,
    /// Semimajor axis, m.
    pub a: f64,
    /// Eccentricity.
    pub e: f64,
    /// f_gw = 2 f_orb, Hz.
    pub f_gw: f64,
    /// Accumulated GW phase of the n = 2 harmonic, 2 x mean orbital phase, radians.
    pub phase: f64,
}

/// Why the evolution stopped.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Stop {
    /// f_gw reached the chosen frequency.
    Frequency,
    /// a reached 6 G M / c^2.
    Innermost,
}

/// The evolution of an orbit: rows at equal steps in ln a.
#[derive(Clone, Debug, PartialEq)]
pub struct Evolution {
    /// The rows, the first at the start, the last where it stopped.
    pub samples: Vec<Sample>,
    /// Why it stopped.
    pub stop: Stop,
    /// Dormand-Prince steps taken (accepted and rejected).
    pub steps: usize,
}

/// Why an evolution cannot start.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum EvolveError {
    /// The chosen frequency is not above the current one.
    #[error("the frequency to stop at, {until} Hz, is not above the current f_gw = {now} Hz")]
    FrequencyNotAbove {
        /// The chosen frequency.
        until: f64,
        /// f_gw now.
        now: f64,
    },
    /// The orbit is already within 6 G M / c^2.
    #[error(
        "the orbit is already within 6 G M / c^2 = {0} m, where the slow-motion point-mass \
         evolution does not apply"
    )]
    AlreadyInnermost(f64),
    /// The integration failed.
    #[error(transparent)]
    Integration(#[from] BinaryError),
}

/// Evolves `o` (SI) until f_gw reaches `until` (Hz) or a reaches 6 G M / c^2, whichever is
/// first, with `rows` rows (at least 2) at equal steps in ln a.
///
/// # Errors
///
/// A frequency not above the current one, an orbit already at the innermost separation, or
/// an integration that does not finish.
pub fn evolve(o: &Orbit, until: Option<f64>, rows: usize) -> Result<Evolution, EvolveError> {
    let k = Constants::SI;
    let gm = o.gm();
    let f0 = gw_frequency(o);
    let a_in = innermost_separation(gm, k);
    if o.a <= a_in {
        return Err(EvolveError::AlreadyInnermost(a_in));
    }
    let mut stop = Stop::Innermost;
    let mut a_end = a_in;
    if let Some(f) = until {
        if f <= f0 {
            return Err(EvolveError::FrequencyNotAbove { until: f, now: f0 });
        }
        // Kepler: f_gw = 2/P = sqrt(G M / a^3) / pi.
        let a_f = (gm / (PI * f).powi(2)).cbrt();
        if a_f > a_in {
            a_end = a_f;
            stop = Stop::Frequency;
        }
    }
    let tc = circular_coalescence_time(o, k);
    let omega0 = (gm / o.a).sqrt() / o.a;
    let phase_scale = 2.0 * omega0 * tc;
    let s_end = (o.a / a_end).ln();
    let mut run = Integration::new(o.e, phase_scale);
    let rows = rows.max(2);
    let mut y = initial(o.e);
    let circular = o.e == 0.0;
    let sample = |s: f64, y: State| {
        let a = if s == s_end { a_end } else { o.a * (-s).exp() };
        let (e2, _) = eccentricity_parts(y.w, circular);
        Sample {
            t: y.tau * tc,
            a,
            e: e2.sqrt(),
            f_gw: (gm / a).sqrt() / (a * PI),
            phase: y.phase,
        }
    };
    let mut samples = vec![sample(0.0, y)];
    let (mut s, mut h) = (0.0, 0.01);
    for i in 1..rows {
        let next = if i + 1 == rows {
            s_end
        } else {
            s_end * i as f64 / (rows - 1) as f64
        };
        (y, h) = run.advance(s, y, next, h)?;
        s = next;
        samples.push(sample(s, y));
    }
    Ok(Evolution {
        samples,
        stop,
        steps: run.steps,
    })
}

/// The evolution's audit: its elapsed time against T(a0, e0) - T(a_end, e_end) by route 1,
/// relative to T(a0, e0); and Peters' invariant c0 = a e^(-12/19) (1 - e^2)
/// (1 + 121 e^2/304)^(-870/2299) at the end against the start (for a circular orbit: the
/// eccentricity must stay 0).
///
/// # Errors
///
/// A quadrature that does not converge.
pub fn audit_evolution(o: &Orbit, ev: &Evolution) -> Result<[Check; 2], BinaryError> {
    let k = Constants::SI;
    let last = ev.samples.last().expect("at least two rows");
    let end = Orbit {
        a: last.a,
        e: last.e,
        ..*o
    };
    let t0 = ratio_by_quadrature(o.e)?.value * circular_coalescence_time(o, k);
    let t1 = ratio_by_quadrature(end.e)?.value * circular_coalescence_time(&end, k);
    let time = Check::scaled(
        "evolution_elapsed_time",
        "T(a0, e0) - T(a, e) by the coalescence quadrature, relative to T(a0, e0)",
        last.t,
        t0 - t1,
        t0,
    );
    let c0 = |a: f64, e: f64| {
        a * e.powf(-12.0 / 19.0)
            * one_minus_square(e)
            * eccentricity_polynomial(e * e).powf(-870.0 / 2299.0)
    };
    let route = "Peters' invariant a e^(-12/19) (1 - e^2) (1 + 121 e^2/304)^(-870/2299)";
    let invariant = if o.e == 0.0 {
        Check::scaled("evolution_end_point", route, last.e, 0.0, 1.0)
    } else {
        Check::new(
            "evolution_end_point",
            route,
            c0(last.a, last.e),
            c0(o.a, o.e),
        )
    };
    Ok([time, invariant])
}
