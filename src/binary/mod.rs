//! Keplerian binaries in physical units: the quadrupole-formula luminosity and secular
//! evolution of Peters & Mathews (1963) and Peters (1964), the time to coalescence, the chirp
//! and the strain amplitude.
//!
//! The key decision: masses are carried as gravitational parameters G m (m^3/s^2; one solar
//! mass is the IAU nominal [`units::GM_SUN`]), never in kilograms, so orbital quantities are as
//! precise as G M_sun (1e-10) instead of G (2.2e-5); G itself enters only the luminosity in
//! watts. Every formula takes [`Constants`], so the same code runs in SI and in geometric units
//! (G = c = 1, where G m is the mass), which is how the tests meet the check values of
//! Peters' formulas.
//!
//! Every number has a second route ([`Summary::audit`]): the fluxes by orbit-averaging the
//! quadrupole formula over the Kepler ellipse ([`flux`]), the time to coalescence by two
//! integrators ([`coalesce`]), the algebraic quantities by an equivalent formula. The library
//! only computes; the command prints.

pub mod coalesce;
pub mod flux;
pub mod svg;
pub mod units;

#[cfg(test)]
mod tests;

use std::f64::consts::PI;

/// The two constants of the formulas: SI or geometric.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Constants {
    /// Newton's constant (only for the luminosity and masses in kilograms).
    pub g: f64,
    /// The speed of light.
    pub c: f64,
}

impl Constants {
    /// SI: [`units::G`] and [`units::C`].
    pub const SI: Constants = Constants {
        g: units::G,
        c: units::C,
    };
    /// Geometric units, G = c = 1 (a mass is its G m).
    pub const GEOMETRIC: Constants = Constants { g: 1.0, c: 1.0 };
}

/// A Keplerian binary: the gravitational parameters G m1, G m2, the semimajor axis a of the
/// relative orbit and the eccentricity e.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Orbit {
    /// G m1.
    pub gm1: f64,
    /// G m2.
    pub gm2: f64,
    /// The semimajor axis of the relative orbit.
    pub a: f64,
    /// The eccentricity, 0 <= e < 1.
    pub e: f64,
}

impl Orbit {
    /// G M, M = m1 + m2.
    #[must_use]
    pub fn gm(&self) -> f64 {
        self.gm1 + self.gm2
    }

    /// G mu, mu = m1 m2 / M the reduced mass.
    #[must_use]
    pub fn gmu(&self) -> f64 {
        self.gm1 * self.gm2 / self.gm()
    }

    /// 1 - e^2, as (1 - e)(1 + e) (exact factors for e >= 1/2).
    #[must_use]
    pub fn one_minus_e2(&self) -> f64 {
        one_minus_square(self.e)
    }

    /// The orbital period, Kepler's third law: P = 2 pi sqrt(a^3 / (G M)).
    #[must_use]
    pub fn period(&self) -> f64 {
        2.0 * PI * (self.a / self.gm()).sqrt() * self.a
    }
}

/// 1 - x^2 as (1 - x)(1 + x).
#[must_use]
pub fn one_minus_square(x: f64) -> f64 {
    (1.0 - x) * (1.0 + x)
}

/// The semimajor axis of a period P: a = (G M (P / 2 pi)^2)^(1/3).
#[must_use]
pub fn semimajor_axis_of_period(gm: f64, period: f64) -> f64 {
    let n = period / (2.0 * PI);
    gm.cbrt() * n.cbrt() * n.cbrt()
}

/// Peters & Mathews (1963) enhancement factor
/// f(e) = (1 + (73/24) e^2 + (37/96) e^4) / (1 - e^2)^(7/2).
#[must_use]
pub fn enhancement(e: f64) -> f64 {
    energy_polynomial(e * e) / one_minus_square(e).powf(3.5)
}

/// 1 + (73/24) e^2 + (37/96) e^4, of `e2` = e^2.
#[must_use]
pub fn energy_polynomial(e2: f64) -> f64 {
    1.0 + 73.0 / 24.0 * e2 + 37.0 / 96.0 * e2 * e2
}

/// 1 + (121/304) e^2, of `e2` = e^2.
#[must_use]
pub fn eccentricity_polynomial(e2: f64) -> f64 {
    1.0 + 121.0 / 304.0 * e2
}

/// G m1 m2 M / c^5 in gravitational parameters: G^3 m1 m2 M / c^5.
fn coupling(o: &Orbit, k: Constants) -> f64 {
    o.gm1 * o.gm2 * o.gm() / k.c.powi(5)
}

/// Orbit-averaged luminosity (Peters & Mathews 1963):
/// L = (32/5) G^4 m1^2 m2^2 M / (c^5 a^5) f(e), with G^4 m1^2 m2^2 M = (G m1)^2 (G m2)^2 (G M) / G.
#[must_use]
pub fn luminosity(o: &Orbit, k: Constants) -> f64 {
    let q = o.gm1 * o.gm2 / (o.a * o.a);
    32.0 / 5.0 * q * q * (o.gm() / o.a) / (k.g * k.c.powi(5)) * enhancement(o.e)
}

/// da/dt (Peters 1964):
/// -(64/5) G^3 m1 m2 M / (c^5 a^3 (1 - e^2)^(7/2)) (1 + (73/24) e^2 + (37/96) e^4).
#[must_use]
pub fn semimajor_axis_rate(o: &Orbit, k: Constants) -> f64 {
    -64.0 / 5.0 * coupling(o, k) / o.a.powi(3) * enhancement(o.e)
}

/// de/dt (Peters 1964):
/// -(304/15) e G^3 m1 m2 M / (c^5 a^4 (1 - e^2)^(5/2)) (1 + (121/304) e^2).
#[must_use]
pub fn eccentricity_rate(o: &Orbit, k: Constants) -> f64 {
    -304.0 / 15.0 * o.e * coupling(o, k) / o.a.powi(4) / o.one_minus_e2().powf(2.5)
        * eccentricity_polynomial(o.e * o.e)
}

/// dJ/dt (Peters 1964), J the orbital angular momentum in units of G (so that dJ/dt / J is
/// the relative rate): -(32/5) G^(7/2) m1^2 m2^2 M^(1/2) / (c^5 a^(7/2)) (1 + (7/8) e^2)/(1 - e^2)^2,
/// divided by J = mu sqrt(G M a (1 - e^2)): the relative rate dJ/dt / J.
#[must_use]
pub fn angular_momentum_relative_rate(o: &Orbit, k: Constants) -> f64 {
    let x = o.one_minus_e2();
    -32.0 / 5.0 * coupling(o, k) / o.a.powi(4) * (1.0 + 7.0 / 8.0 * o.e * o.e) / (x * x * x.sqrt())
}

/// The orbital period derivative dP/dt = (3/2) (P / a) da/dt (Kepler), dimensionless.
#[must_use]
pub fn period_derivative(o: &Orbit, k: Constants) -> f64 {
    1.5 * o.period() / o.a * semimajor_axis_rate(o, k)
}

/// The binary-pulsar form of dP/dt, a second route:
/// -(192 pi / 5) (P / 2 pi)^(-5/3) f(e) T1 T2 T^(-1/3), T_i = G m_i / c^3 (seconds).
#[must_use]
pub fn period_derivative_pulsar_form(o: &Orbit, k: Constants) -> f64 {
    let c3 = k.c.powi(3);
    let (t1, t2, t) = (o.gm1 / c3, o.gm2 / c3, o.gm() / c3);
    let n = o.period() / (2.0 * PI);
    -192.0 * PI / 5.0 * n.powf(-5.0 / 3.0) * enhancement(o.e) * t1 * t2 / t.cbrt()
}

/// beta = (64/5) G^3 m1 m2 M / c^5 (Peters 1964), so that da/dt = -beta / a^3 when e = 0.
#[must_use]
pub fn beta(o: &Orbit, k: Constants) -> f64 {
    64.0 / 5.0 * coupling(o, k)
}

/// The circular-orbit time to coalescence (Peters 1964): T_c = a^4 / (4 beta).
#[must_use]
pub fn circular_coalescence_time(o: &Orbit, k: Constants) -> f64 {
    let a2 = o.a * o.a;
    a2 / (4.0 * beta(o, k)) * a2
}

/// The chirp mass (m1 m2)^(3/5) / M^(1/5), in the units of the masses (or of G m).
#[must_use]
pub fn chirp_mass(m1: f64, m2: f64) -> f64 {
    (m1 * m2).powf(0.6) / (m1 + m2).powf(0.2)
}

/// The chirp mass as mu^(3/5) M^(2/5), a second route.
#[must_use]
pub fn chirp_mass_from_reduced(m1: f64, m2: f64) -> f64 {
    let m = m1 + m2;
    (m1 / m * m2).powf(0.6) * m.powf(0.4)
}

/// The gravitational-wave frequency of the dominant (quadrupole, n = 2) harmonic: twice the
/// orbital frequency, f_gw = 2 / P.
#[must_use]
pub fn gw_frequency(o: &Orbit) -> f64 {
    2.0 / o.period()
}

/// df_gw/dt of f_gw = 2 / P: -f_gw (dP/dt) / P.
#[must_use]
pub fn gw_frequency_rate(o: &Orbit, k: Constants) -> f64 {
    -gw_frequency(o) * period_derivative(o, k) / o.period()
}

/// The leading-order chirp (circular orbit): df/dt = (96/5) pi^(8/3) (G Mc/c^3)^(5/3) f^(11/3),
/// with `gmc` = G Mc.
#[must_use]
pub fn chirp_rate(gmc: f64, f: f64, k: Constants) -> f64 {
    let tc = gmc / k.c.powi(3);
    96.0 / 5.0 * PI.powf(8.0 / 3.0) * tc.powf(5.0 / 3.0) * f.powf(11.0 / 3.0)
}

/// The leading-order time to coalescence from f (circular orbit):
/// tau = (5/256) (G Mc/c^3)^(-5/3) (pi f)^(-8/3).
#[must_use]
pub fn chirp_time(gmc: f64, f: f64, k: Constants) -> f64 {
    let tc = gmc / k.c.powi(3);
    5.0 / 256.0 * tc.powf(-5.0 / 3.0) * (PI * f).powf(-8.0 / 3.0)
}

/// The strain amplitude of a circular binary at distance d:
/// h0 = 4 (G Mc / c^2)^(5/3) (pi f / c)^(2/3) / d (the amplitude of h_plus seen face-on).
#[must_use]
pub fn strain_amplitude(gmc: f64, f: f64, d: f64, k: Constants) -> f64 {
    let c2 = k.c * k.c;
    4.0 * (gmc / c2).powf(5.0 / 3.0) * (PI * f / k.c).powf(2.0 / 3.0) / d
}

/// The same amplitude as 4 G mu R^2 omega^2 / (c^4 d), R the circular-orbit separation at
/// orbital angular frequency omega = pi f (Kepler): a second route.
#[must_use]
pub fn strain_amplitude_from_orbit(gm1: f64, gm2: f64, f: f64, d: f64, k: Constants) -> f64 {
    let gm = gm1 + gm2;
    let omega = PI * f;
    let r = (gm / (omega * omega)).cbrt();
    4.0 * (gm1 * gm2 / gm) * r * r * omega * omega / (k.c.powi(4) * d)
}

/// The separation 6 G M / c^2 (the innermost stable circular orbit of a test particle about
/// a mass M), where the evolution stops: the slow-motion point-mass formulas do not apply
/// closer in.
#[must_use]
pub fn innermost_separation(gm: f64, k: Constants) -> f64 {
    6.0 * gm / (k.c * k.c)
}

/// A second opinion on one number: its value by the other route and how far apart they are.
#[derive(Clone, Debug, PartialEq)]
pub struct Check {
    /// What was checked (a JSON-friendly key).
    pub key: &'static str,
    /// How the second value was obtained.
    pub route: &'static str,
    /// The first (printed) value.
    pub value: f64,
    /// The value by the second route.
    pub second: f64,
    /// |value - second| / scale.
    pub disagreement: f64,
    /// None when the comparison is meaningful; otherwise why it is not made.
    pub skipped: Option<&'static str>,
}

impl Check {
    /// A comparison relative to `scale` (|value| unless the quantity needs another).
    #[must_use]
    pub fn new(key: &'static str, route: &'static str, value: f64, second: f64) -> Check {
        Check::scaled(key, route, value, second, value.abs())
    }

    /// A comparison relative to `scale`.
    #[must_use]
    pub fn scaled(
        key: &'static str,
        route: &'static str,
        value: f64,
        second: f64,
        scale: f64,
    ) -> Check {
        let d = if value == second {
            0.0
        } else {
            (value - second).abs() / scale
        };
        Check {
            key,
            route,
            value,
            second,
            disagreement: if d.is_nan() { f64::INFINITY } else { d },
            skipped: None,
        }
    }

    /// True when compared and beyond `tolerance` (or not finite).
    #[must_use]
    pub fn fails(&self, tolerance: f64) -> bool {
        self.skipped.is_none() && (self.disagreement.is_nan() || self.disagreement > tolerance)
    }
}

/// The relative tolerance of every audit comparison: a larger disagreement is an internal
/// defect. Both routes of every quantity are accurate to about 1e-11 or better.
pub const AUDIT_TOLERANCE: f64 = 1e-8;

/// Below this eccentricity de/dt is not audited by energy and angular-momentum balance: the
/// two fluxes cancel to order e^2 there.
pub const BALANCE_MIN_ECCENTRICITY: f64 = 1e-3;

/// Everything `lingrav binary` reports about a binary, in SI (masses as G m).
#[derive(Clone, Debug, PartialEq)]
pub struct Summary {
    /// The orbit.
    pub orbit: Orbit,
    /// The orbital period, s.
    pub period: f64,
    /// The luminosity, W.
    pub luminosity: f64,
    /// da/dt, m/s.
    pub semimajor_axis_rate: f64,
    /// de/dt, 1/s.
    pub eccentricity_rate: f64,
    /// dP/dt, s/s.
    pub period_derivative: f64,
    /// The time to coalescence, s (Peters 1964, eccentric).
    pub coalescence_time: f64,
    /// The circular-orbit closed form a^4 / (4 beta) at the same a, s.
    pub circular_coalescence_time: f64,
    /// The quadrature behind the coalescence time.
    pub coalescence: coalesce::Quadrature,
    /// The chirp mass, in solar masses.
    pub chirp_mass_msun: f64,
    /// f_gw = 2 / P, Hz.
    pub gw_frequency: f64,
    /// df_gw/dt, Hz/s.
    pub gw_frequency_rate: f64,
    /// The strain amplitude at the distance, if one is given.
    pub strain: Option<f64>,
    /// The second routes.
    pub audit: Vec<Check>,
}

/// Why a binary cannot be summarised.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum BinaryError {
    /// A number left the range of double precision (overflow, underflow to 0, NaN).
    #[error(
        "{0} is not a finite nonzero number for these inputs: they are outside the range double \
         precision can compute with"
    )]
    OutOfRange(&'static str),
    /// The coalescence integrals did not converge within their bounds.
    #[error("{0}")]
    NoConvergence(String),
}

fn finite(name: &'static str, v: f64) -> Result<f64, BinaryError> {
    if v.is_finite() && v != 0.0 {
        Ok(v)
    } else {
        Err(BinaryError::OutOfRange(name))
    }
}

/// The summary of a binary in SI, with a distance `d` (m) for the strain if given.
///
/// # Errors
///
/// A quantity outside double range, or a coalescence integral that does not converge.
pub fn summarize(o: Orbit, d: Option<f64>) -> Result<Summary, BinaryError> {
    let k = Constants::SI;
    let period = finite("the orbital period", o.period())?;
    let luminosity = finite("the luminosity", luminosity(&o, k))?;
    let adot = finite("da/dt", semimajor_axis_rate(&o, k))?;
    // + 0.0: a circular orbit has de/dt = 0, not -0.
    let edot = eccentricity_rate(&o, k) + 0.0;
    if !edot.is_finite() {
        return Err(BinaryError::OutOfRange("de/dt"));
    }
    let pdot = finite("dP/dt", period_derivative(&o, k))?;
    let tc = finite(
        "the circular coalescence time",
        circular_coalescence_time(&o, k),
    )?;
    let quad = coalesce::ratio_by_quadrature(o.e)?;
    let t = finite("the time to coalescence", quad.value * tc)?;
    let (m1, m2) = (o.gm1 / units::GM_SUN, o.gm2 / units::GM_SUN);
    let mc = finite("the chirp mass", chirp_mass(m1, m2))?;
    let f = finite("the gravitational-wave frequency", gw_frequency(&o))?;
    let fdot = finite("df_gw/dt", gw_frequency_rate(&o, k))?;
    let gmc = mc * units::GM_SUN;
    let strain = match d {
        Some(d) => Some(finite(
            "the strain amplitude",
            strain_amplitude(gmc, f, d, k),
        )?),
        None => None,
    };

    // The second routes.
    let fl = flux::average(&o, k);
    let mut audit = vec![
        Check::new(
            "semimajor_axis",
            "Kepler's law both ways: a from the period of a",
            o.a,
            semimajor_axis_of_period(o.gm(), period),
        ),
        Check::new(
            "luminosity",
            "orbit average of (G/5c^5) <dddQ_ij dddQ_ij> over the Kepler ellipse",
            luminosity,
            fl.luminosity,
        ),
        Check::new(
            "semimajor_axis_rate",
            "energy balance with the orbit-averaged flux",
            adot,
            fl.semimajor_axis_rate,
        ),
        eccentricity_check(&o, edot, &fl),
        Check::new(
            "period_derivative",
            "the binary-pulsar form (192 pi/5)(P/2 pi)^(-5/3) f(e) T1 T2 T^(-1/3)",
            pdot,
            period_derivative_pulsar_form(&o, k),
        ),
    ];
    let second = coalesce::ratio_by_evolution(o.e)?;
    audit.push(Check::new(
        "time_to_coalescence",
        "Dormand-Prince integration of da/dt, de/dt in ln a",
        quad.value,
        second,
    ));
    audit.push(Check::new(
        "chirp_mass",
        "mu^(3/5) M^(2/5)",
        mc,
        chirp_mass_from_reduced(m1, m2),
    ));
    audit.push(Check::new(
        "gw_frequency_rate",
        "the chirp formula (96/5) pi^(8/3) (G Mc/c^3)^(5/3) f^(11/3) times f(e)",
        fdot,
        chirp_rate(gmc, f, k) * enhancement(o.e),
    ));
    if let (Some(h), Some(d)) = (strain, d) {
        audit.push(Check::new(
            "strain_amplitude",
            "4 G mu R^2 omega^2 / (c^4 d) at the circular separation R of f_gw",
            h,
            strain_amplitude_from_orbit(o.gm1, o.gm2, f, d, k),
        ));
    }
    Ok(Summary {
        orbit: o,
        period,
        luminosity,
        semimajor_axis_rate: adot,
        eccentricity_rate: edot,
        period_derivative: pdot,
        coalescence_time: t,
        circular_coalescence_time: tc,
        coalescence: quad,
        chirp_mass_msun: mc,
        gw_frequency: f,
        gw_frequency_rate: fdot,
        strain,
        audit,
    })
}

/// de/dt against angular-momentum balance: exactly 0 for a circular orbit (and the flux
/// balance must then be consistent with it), skipped for tiny e where the balance cancels.
fn eccentricity_check(o: &Orbit, edot: f64, fl: &flux::Fluxes) -> Check {
    let route = "energy and angular-momentum balance with the orbit-averaged fluxes";
    if o.e == 0.0 {
        // A circular orbit stays circular: the two relative rates must agree.
        let half = fl.semimajor_axis_rate / (2.0 * o.a);
        return Check::scaled(
            "eccentricity_rate",
            route,
            half,
            fl.angular_momentum_relative_rate,
            half.abs(),
        );
    }
    let mut c = Check::new("eccentricity_rate", route, edot, fl.eccentricity_rate);
    if o.e < BALANCE_MIN_ECCENTRICITY {
        c.skipped = Some("e below 1e-3, where the two fluxes cancel to order e^2");
    }
    c
}
