//! Kepler's equation `M = E - e sin E` solved numerically for the eccentric anomaly `E`, for
//! what needs an eccentric orbit at a given time: the pictures of `radiation --svg` and the SI
//! numbers of `radiation --mass-unit ... --at`. The exact route never uses it (every exact
//! quantity of an eccentric orbit is a function of `E`).
//!
//! Two solvers that share nothing but the equation: [`solve`], Newton's method kept inside a
//! bracket (a step that would leave the bracket is a bisection step instead, so it converges
//! for every `0 <= e < 1`, including `e` near 1 where plain Newton from `E = M` overshoots),
//! and [`solve_by_bisection`], plain bisection, the second opinion.
//!
//! Both first split `M = 2 pi k + M'` with `M'` in `[-pi, pi)` (the solution then is
//! `2 pi k + E'`, as `E - e sin E - M` is `2 pi`-periodic in shifts of both) and use the
//! symmetry `E'(-M') = -E'(M')`, so the root is searched in `[0, pi]`, where
//! `f(E) = E - e sin E - M'` increases (`f' = 1 - e cos E > 0`) from `f(0) = -M' <= 0` to
//! `f(pi) = pi - M' >= 0`: there is exactly one root and the bracket always holds it.

use std::f64::consts::PI;

/// Why Kepler's equation was not solved.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum KeplerError {
    /// An eccentricity outside `[0, 1)` or not finite.
    #[error("the eccentricity {0} is not in [0, 1)")]
    Eccentricity(f64),
    /// A mean anomaly that is not finite, or so large that `2 pi` is below its resolution.
    #[error("the mean anomaly {0} is not finite or too large to resolve one orbit")]
    MeanAnomaly(f64),
    /// No convergence within the iteration cap (not expected: the bracket halves at least
    /// every other step).
    #[error("Kepler's equation did not converge for M = {0}, e = {1}")]
    NoConvergence(f64, f64),
}

/// Largest |M| accepted: beyond it an f64 resolves 2 pi to fewer than about 1e-6 relative.
const MAX_MEAN_ANOMALY: f64 = 1e9;
/// Iteration cap (bisection alone needs about 55 steps on [0, pi]).
const MAX_STEPS: usize = 200;

/// `M` split into `2 pi k` and `M'` in `[-pi, pi)`.
fn reduce(m: f64, e: f64) -> Result<(f64, f64), KeplerError> {
    if !(0.0..1.0).contains(&e) || !e.is_finite() {
        return Err(KeplerError::Eccentricity(e));
    }
    if !m.is_finite() || m.abs() > MAX_MEAN_ANOMALY {
        return Err(KeplerError::MeanAnomaly(m));
    }
    let k = ((m + PI) / (2.0 * PI)).floor();
    let turns = 2.0 * PI * k;
    let mut rest = m - turns;
    // Rounding may leave `rest` a hair outside [-pi, pi]; the bracket below needs |rest| <= pi.
    rest = rest.clamp(-PI, PI);
    Ok((turns, rest))
}

/// The eccentric anomaly `E` with `E - e sin E = m`, by Newton's method inside a bracket.
///
/// # Errors
///
/// `e` outside `[0, 1)`, `m` not finite or beyond 1e9, or no convergence.
pub fn solve(m: f64, e: f64) -> Result<f64, KeplerError> {
    let (turns, rest) = reduce(m, e)?;
    let (sign, target) = if rest < 0.0 {
        (-1.0, -rest)
    } else {
        (1.0, rest)
    };
    let f = |x: f64| x - e * x.sin() - target;
    let (mut lo, mut hi) = (0.0_f64, PI);
    // A start that is never far: M + e sin M lies in the bracket and is the first-order
    // solution; near e = 1 with small M, pi is safer (Danby's choice, common practice).
    let mut x = if e > 0.8 && target < 0.2 {
        (6.0 * target).cbrt().min(PI)
    } else {
        (target + e * target.sin()).min(PI)
    };
    for _ in 0..MAX_STEPS {
        let fx = f(x);
        if fx == 0.0 {
            return Ok(turns + sign * x);
        }
        if fx < 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        let d = 1.0 - e * x.cos();
        let newton = x - fx / d;
        let next = if newton > lo && newton < hi && d > 0.0 {
            newton
        } else {
            0.5 * (lo + hi)
        };
        if (next - x).abs() <= 4.0 * f64::EPSILON * (1.0 + x.abs()) || hi - lo <= f64::EPSILON {
            return Ok(turns + sign * next);
        }
        x = next;
    }
    Err(KeplerError::NoConvergence(m, e))
}

/// The same root by bisection alone (the second opinion on [`solve`]).
///
/// # Errors
///
/// As [`solve`].
pub fn solve_by_bisection(m: f64, e: f64) -> Result<f64, KeplerError> {
    let (turns, rest) = reduce(m, e)?;
    let (sign, target) = if rest < 0.0 {
        (-1.0, -rest)
    } else {
        (1.0, rest)
    };
    let (mut lo, mut hi) = (0.0_f64, PI);
    for _ in 0..MAX_STEPS {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if mid - e * mid.sin() - target < 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Ok(turns + sign * 0.5 * (lo + hi))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The residual of Kepler's equation at the returned root, for every e up to 0.99 and M
    /// over several orbits, both signs; and the two solvers agree.
    #[test]
    fn newton_in_a_bracket_solves_keplers_equation() {
        for &e in &[0.0, 0.1, 0.5, 0.9, 0.97, 0.99, 0.999] {
            for k in -400..=400 {
                let m = f64::from(k) * 0.0471;
                let x = solve(m, e).unwrap();
                assert!(
                    (x - e * x.sin() - m).abs() <= 1e-13 * (1.0 + m.abs()),
                    "e = {e}, M = {m}: E = {x}"
                );
                let y = solve_by_bisection(m, e).unwrap();
                assert!((x - y).abs() <= 1e-12 * (1.0 + m.abs()), "e = {e}, M = {m}");
            }
        }
    }

    /// Known values: E = M at e = 0; at M = pi, E = pi for every e (apoapsis); and a value
    /// from mpmath (`findroot` at 30 digits: e = 0.5, M = 1 gives E = 1.498701133517848314...).
    #[test]
    fn known_roots() {
        assert_eq!(solve(0.7, 0.0).unwrap(), 0.7);
        assert!((solve(PI, 0.9).unwrap() - PI).abs() < 1e-14);
        let e = solve(1.0, 0.5).unwrap();
        assert!((e - 1.498_701_133_517_848).abs() < 1e-12, "{e}");
    }

    #[test]
    fn refuses_what_it_cannot_solve() {
        assert!(matches!(solve(1.0, 1.0), Err(KeplerError::Eccentricity(_))));
        assert!(matches!(
            solve(1.0, -0.1),
            Err(KeplerError::Eccentricity(_))
        ));
        assert!(matches!(
            solve(f64::NAN, 0.3),
            Err(KeplerError::MeanAnomaly(_))
        ));
        assert!(matches!(solve(1e12, 0.3), Err(KeplerError::MeanAnomaly(_))));
        assert!(matches!(
            solve_by_bisection(1.0, f64::NAN),
            Err(KeplerError::Eccentricity(_))
        ));
    }
}
