//! The second route to the luminosity and the secular rates: the quadrupole formula averaged
//! numerically over one Kepler orbit, then energy and angular-momentum balance.
//!
//! Along the orbit (relative coordinate x, velocity v, acceleration -G M x/r^3 and its time
//! derivative, the jerk) the moments I_ij = x_i x_j have
//! d^2 I/dt^2 = a x + 2 v v + x a and d^3 I/dt^3 = j x + 3 a v + 3 v a + x j; Q = mu I^TF.
//! `L = (G/5c^5) <dddQ_ij dddQ_ij>`, `dJ_z/dt = -(2G/5c^5) eps_zjk <ddQ_ja dddQ_ka>` (the trace
//! drops out of the latter). Then E = -G m1 m2/(2a) gives da/dt, J = mu sqrt(G M a (1 - e^2))
//! gives de/dt. Nothing of Peters' closed forms is used.
//!
//! The design decision: the average is taken in the true anomaly theta (dt = r^2 dtheta / h)
//! with the trapezoid rule. There the integrands are trigonometric polynomials of low degree
//! (r = p/(1 + e cos theta), the powers of r cancel against dt), so 64 equally spaced points
//! are exact up to rounding for every e < 1. In the eccentric anomaly the integrand peaks at
//! periastron with a width sqrt(1 - e) and the trapezoid rule would need ever more points as
//! e approaches 1. The 32-point sum is kept as a convergence check.

use super::{Constants, Orbit, one_minus_square};
use std::f64::consts::PI;

/// Points of the trapezoid rule in the true anomaly.
pub const POINTS: usize = 64;

/// The orbit averages in units G M = a = 1, per unit reduced mass squared:
/// `energy` = `<|d^3 I^TF/dt^3|^2>`, `angular` = `<eps_zjk d^2 I_ja/dt^2 d^3 I_ka/dt^3>`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ShapeAverages {
    /// `<|d^3 I^TF/dt^3|^2>` (32 f(e) in Peters' closed form).
    pub energy: f64,
    /// `<eps_zjk ddI_ja dddI_ka>` (16 (1 + 7e^2/8)/(1 - e^2)^2 in Peters' closed form).
    pub angular: f64,
}

/// The averages by the trapezoid rule with `n` points in the true anomaly.
#[must_use]
pub fn shape_averages(e: f64, n: usize) -> ShapeAverages {
    let p = one_minus_square(e);
    let h = p.sqrt();
    let (mut energy, mut angular) = (0.0, 0.0);
    for k in 0..n {
        let th = 2.0 * PI * k as f64 / n as f64;
        let (s, c) = th.sin_cos();
        let r = p / (1.0 + e * c);
        let x = [r * c, r * s];
        let v = [-s / h, (e + c) / h];
        let r3 = r * r * r;
        let acc = [-x[0] / r3, -x[1] / r3];
        let xv = x[0] * v[0] + x[1] * v[1];
        let jerk = [
            -v[0] / r3 + 3.0 * x[0] * xv / (r3 * r * r),
            -v[1] / r3 + 3.0 * x[1] * xv / (r3 * r * r),
        ];
        let mut i2 = [[0.0; 2]; 2];
        let mut i3 = [[0.0; 2]; 2];
        for a in 0..2 {
            for b in 0..2 {
                i2[a][b] = acc[a] * x[b] + 2.0 * v[a] * v[b] + x[a] * acc[b];
                i3[a][b] =
                    jerk[a] * x[b] + 3.0 * acc[a] * v[b] + 3.0 * v[a] * acc[b] + x[a] * jerk[b];
            }
        }
        // The z row and column vanish in the orbital plane; the trace-free part of I in three
        // dimensions removes tr/3 from all three diagonal entries.
        let tr = i3[0][0] + i3[1][1];
        let sq: f64 = i3.iter().flatten().map(|m| m * m).sum::<f64>() - tr * tr / 3.0;
        let eps: f64 = (0..2)
            .map(|a| i2[0][a] * i3[1][a] - i2[1][a] * i3[0][a])
            .sum();
        // dt = r^2 dtheta / h; the period is 2 pi.
        let w = r * r / h;
        energy += sq * w;
        angular += eps * w;
    }
    ShapeAverages {
        energy: energy / n as f64,
        angular: angular / n as f64,
    }
}

/// The fluxes and the rates they imply, in the units of `k`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Fluxes {
    /// `L = (G/5c^5) <dddQ dddQ>`.
    pub luminosity: f64,
    /// da/dt from dE/dt = -L, E = -G m1 m2/(2a).
    pub semimajor_axis_rate: f64,
    /// (dJ/dt)/J.
    pub angular_momentum_relative_rate: f64,
    /// de/dt from E and J (0 for e = 0).
    pub eccentricity_rate: f64,
    /// max relative change of the two averages from 32 to 64 points.
    pub convergence: f64,
}

/// The fluxes of `o` by orbit averaging.
#[must_use]
pub fn average(o: &Orbit, k: Constants) -> Fluxes {
    let fine = shape_averages(o.e, POINTS);
    let coarse = shape_averages(o.e, POINTS / 2);
    let convergence = ((fine.energy - coarse.energy) / fine.energy)
        .abs()
        .max(((fine.angular - coarse.angular) / fine.angular).abs());
    let (gm, gmu, a, c5) = (o.gm(), o.gmu(), o.a, k.c.powi(5));
    let q = gmu * gm / (a * a);
    let luminosity = q * q * (gm / a) * fine.energy / (5.0 * k.g * c5);
    let adot = -0.4 * gmu * gm * gm * fine.energy / (c5 * a.powi(3));
    let jrate = -0.4 * gmu * gm * gm * fine.angular / (c5 * a.powi(4) * o.one_minus_e2().sqrt());
    let edot = if o.e == 0.0 {
        0.0
    } else {
        o.one_minus_e2() / o.e * (adot / (2.0 * a) - jrate)
    };
    Fluxes {
        luminosity,
        semimajor_axis_rate: adot,
        angular_momentum_relative_rate: jrate,
        eccentricity_rate: edot,
        convergence,
    }
}
