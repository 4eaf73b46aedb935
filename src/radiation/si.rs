//! SI numbers for the exact results of `radiation`: the user says what one geometric unit of
//! mass is (`--mass-unit 1.4msun`), every name in a result has a value (the file's parameter
//! values, `--set`, the time of `--at`), and each result becomes a number with its SI unit.
//!
//! With G = c = 1 and masses measured in the unit `M_u` (carried as `G M_u` in m^3/s^2, the
//! IAU 2015 nominal `G M_sun` times the number of solar masses, as `lingrav binary` does), a
//! length is in units of `G M_u/c^2`, a time in `G M_u/c^3`, and (dimensional analysis, common
//! practice):
//!
//! | quantity | geometric dimension | SI factor | unit |
//! |---|---|---|---|
//! | luminosity dE/dt | 1 | `c^5/G` | W |
//! | angular momentum flux dJ/dt | mass | `M_u c^2 = (G M_u/G) c^2` | N m (= J) |
//! | linear momentum flux dP/dt | 1 | `c^4/G` | N |
//! | strain h | 1 | 1 | (none) |
//! | distance | length | `G M_u/c^2` | m |
//! | time, period | time | `G M_u/c^3` | s |
//! | angular frequency w | 1/time | `c^3/(2 pi G M_u)` (to f = w/(2 pi)) | Hz |
//!
//! G (CODATA) enters only the luminosity, the fluxes and `M_u` in kilograms.
//!
//! **Two routes.** Route A encloses the exact canonical form at the values in outward-rounded
//! intervals (`Store::eval_interval`) and multiplies by the factor enclosed in intervals (each
//! decimal constant taken as the interval of its nearest double). Route B parses the form's
//! printed text again and evaluates it in plain floating point by the parsed tree's own
//! evaluator (`Expr::eval`, which shares nothing with the canonical form but the parser), times
//! the factor in plain floating point. [`SiNumber::judge`] compares them: B must lie in A
//! widened by 1e-9 relative (and an absolute floor from the caller's scale, for values that
//! cancel to 0); a disagreement is an internal defect, an enclosure wider than that is a
//! number not certified. The values are the same; what is audited is the evaluation.
//!
//! **Invariants:** numbers only (the exact forms stay in geometric units); a name without a
//! value or an arbitrary function is an error, never a guess; never prints.

use crate::binary::units::{C, G, GM_SUN};
use crate::canon::{Form, Point, Store};
use crate::interval::{CInterval, Interval};
use std::f64::consts::PI;

/// Relative agreement required of the two routes, and the relative width accepted for an
/// enclosure.
pub const TOLERANCE: f64 = 1e-9;

/// What an SI number measures.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Dimension {
    /// A luminosity, W.
    Power,
    /// An angular momentum flux (a torque), N m.
    Torque,
    /// A linear momentum flux (a force), N.
    Force,
    /// A strain, dimensionless.
    Strain,
    /// A distance, m.
    Length,
    /// A time, s.
    Time,
    /// An angular frequency w, printed as f = w/(2 pi) in Hz.
    AngularFrequency,
}

impl Dimension {
    /// The SI unit as printed (empty for a strain).
    #[must_use]
    pub fn unit(self) -> &'static str {
        match self {
            Dimension::Power => "W",
            Dimension::Torque => "N m",
            Dimension::Force => "N",
            Dimension::Strain => "",
            Dimension::Length => "m",
            Dimension::Time => "s",
            Dimension::AngularFrequency => "Hz",
        }
    }

    /// The suffix of a JSON key holding a number of this dimension (`luminosity_w`).
    #[must_use]
    pub fn key_suffix(self) -> &'static str {
        match self {
            Dimension::Power => "_w",
            Dimension::Torque => "_n_m",
            Dimension::Force => "_n",
            Dimension::Strain => "",
            Dimension::Length => "_m",
            Dimension::Time => "_s",
            Dimension::AngularFrequency => "_hz",
        }
    }
}

/// One geometric unit of mass.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Scale {
    /// The unit in solar masses, as given.
    pub msun: f64,
    /// `G M_u`, m^3/s^2.
    pub gm: f64,
}

impl Scale {
    /// The unit of `msun` solar masses; `None` unless positive and finite.
    #[must_use]
    pub fn new(msun: f64) -> Option<Scale> {
        let gm = msun * GM_SUN;
        (msun > 0.0 && gm.is_finite() && gm > 0.0).then_some(Scale { msun, gm })
    }

    /// `G M_u/c^2`, m.
    #[must_use]
    pub fn length_m(&self) -> f64 {
        self.gm / (C * C)
    }

    /// `G M_u/c^3`, s.
    #[must_use]
    pub fn time_s(&self) -> f64 {
        self.gm / (C * C * C)
    }

    /// `M_u`, kg (limited by G's uncertainty).
    #[must_use]
    pub fn mass_kg(&self) -> f64 {
        self.gm / G
    }

    /// The factor from geometric units to SI, enclosed (route A): every decimal constant is
    /// the interval of its nearest double, c is exact.
    #[must_use]
    pub fn factor_enclosure(&self, d: Dimension) -> Option<Interval> {
        let c = Interval::point(C)?;
        let g = Interval::around(G)?;
        let gm = Interval::around(GM_SUN)?.mul(Interval::around(self.msun)?)?;
        match d {
            Dimension::Power => c.powi(5)?.div(g),
            Dimension::Torque => gm.mul(c.powi(2)?)?.div(g),
            Dimension::Force => c.powi(4)?.div(g),
            Dimension::Strain => Some(Interval::ONE),
            Dimension::Length => gm.div(c.powi(2)?),
            Dimension::Time => gm.div(c.powi(3)?),
            Dimension::AngularFrequency => {
                let two_pi = Interval::around(2.0 * PI)?;
                c.powi(3)?.div(two_pi.mul(gm)?)
            }
        }
    }

    /// The same factor in plain floating point, written from the units (route B).
    #[must_use]
    pub fn factor_f64(&self, d: Dimension) -> f64 {
        match d {
            Dimension::Power => C.powi(5) / G,
            Dimension::Torque => self.mass_kg() * C * C,
            Dimension::Force => C.powi(4) / G,
            Dimension::Strain => 1.0,
            Dimension::Length => self.length_m(),
            Dimension::Time => self.time_s(),
            Dimension::AngularFrequency => 1.0 / (2.0 * PI * self.time_s()),
        }
    }
}

/// Why a form has no SI number here.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum SiError {
    /// A name in the form with no value.
    #[error("`{0}` has no value")]
    NoValue(String),
    /// An arbitrary function: its sample is a stand-in for tests, not a value.
    #[error("the arbitrary function `{0}` has no values (its sample is not one)")]
    Function(String),
    /// The exact form could not be enclosed as a real number at the values.
    #[error("the exact form cannot be enclosed as a real number at these values")]
    NotEnclosed,
    /// The printed text could not be evaluated (route B).
    #[error("the printed form cannot be evaluated at these values: {0}")]
    Text(String),
}

/// An SI number by both routes.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SiNumber {
    /// Route A: the enclosure, in SI.
    pub enclosure: Interval,
    /// Route B: the floating-point value of the printed text, in SI.
    pub text_value: f64,
}

/// How the two routes compare.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Judgement {
    /// B lies in A (widened by the tolerance) and A is narrow: the number is the midpoint
    /// of A; the relative difference of B from it.
    Agree(f64),
    /// A is wider than the tolerance allows (the number is not certified); its relative width.
    Wide(f64),
    /// B lies outside A widened by the tolerance: an internal defect.
    Disagree,
}

impl SiNumber {
    /// The printed value: the midpoint of the enclosure.
    #[must_use]
    pub fn value(&self) -> f64 {
        self.enclosure.mid()
    }

    /// Compares the routes; `floor` is an absolute tolerance (the scale of the quantity's
    /// family times [`TOLERANCE`]), so that a value that cancels to 0 is not judged
    /// relatively.
    #[must_use]
    pub fn judge(&self, floor: f64) -> Judgement {
        let a = self.enclosure;
        let m = a.mid();
        let b = self.text_value;
        let slack = TOLERANCE * m.abs().max(b.abs()) + floor.abs();
        if b < a.lo() - slack || b > a.hi() + slack {
            return Judgement::Disagree;
        }
        let width = a.width();
        if width > 2.0 * (TOLERANCE * m.abs() + floor.abs()) {
            let rel = if m == 0.0 {
                f64::INFINITY
            } else {
                width / m.abs()
            };
            return Judgement::Wide(rel);
        }
        let diff = (b - m).abs();
        Judgement::Agree(if m == 0.0 && diff == 0.0 {
            0.0
        } else {
            diff / m.abs().max(b.abs()).max(f64::MIN_POSITIVE)
        })
    }
}

/// The SI number of the geometric form `f` of dimension `d`, with every symbol of `f` given
/// by `values` (names and values).
///
/// # Errors
///
/// A name without a value, an arbitrary function, or a form that cannot be enclosed or
/// evaluated (a domain error at the values).
pub fn number(
    store: &mut Store,
    f: Form,
    values: &[(String, f64)],
    scale: &Scale,
    d: Dimension,
) -> Result<SiNumber, SiError> {
    if let Some(name) = store.functions_used(f).first() {
        return Err(SiError::Function(name.to_string()));
    }
    for s in store.free_symbols(f) {
        if !values.iter().any(|(n, _)| **n == *s) {
            return Err(SiError::NoValue(s.to_string()));
        }
    }
    // Route A.
    let mut pt = Point::default();
    for (name, v) in values {
        let i = Interval::point(*v).ok_or(SiError::NotEnclosed)?;
        let k = store.symbol_kernel(name);
        pt.values.insert(k, CInterval::from_real(i));
    }
    let z = store.eval_interval(f, &pt).ok_or(SiError::NotEnclosed)?;
    if !z.im.contains(0.0) {
        return Err(SiError::NotEnclosed);
    }
    let enclosure = scale
        .factor_enclosure(d)
        .and_then(|k| z.re.mul(k))
        .ok_or(SiError::NotEnclosed)?;
    // Route B.
    let text = store.to_text(f);
    let tree = crate::parse::parse(&text).map_err(|e| SiError::Text(e.to_string()))?;
    let lookup = |name: &str| values.iter().find(|(n, _)| n == name).map(|(_, v)| *v);
    let no_functions = |_: &str, _: u32, _: f64| None;
    let ev = crate::expr::Evaluator {
        values: &lookup,
        functions: &no_functions,
    };
    let v = tree.eval(&ev).map_err(|e| SiError::Text(e.to_string()))?;
    Ok(SiNumber {
        enclosure,
        text_value: v * scale.factor_f64(d),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The units of one solar mass against checks.md section 8 (T_sun, GM_sun/c^2, M_sun),
    /// and c^5/G = 3.628e52 W (common practice, from memory; recomputed from c and G here).
    #[test]
    fn units_of_one_solar_mass() {
        let s = Scale::new(1.0).unwrap();
        assert!((s.time_s() / 4.925_490_947_641e-6 - 1.0).abs() < 1e-12);
        assert!((s.length_m() / 1_476.625_038 - 1.0).abs() < 1e-9);
        assert!((s.mass_kg() / 1.988_41e30 - 1.0).abs() < 1e-5);
        let p = s.factor_f64(Dimension::Power);
        assert!((p / 3.628e52 - 1.0).abs() < 1e-3, "{p}");
        for d in [
            Dimension::Power,
            Dimension::Torque,
            Dimension::Force,
            Dimension::Strain,
            Dimension::Length,
            Dimension::Time,
            Dimension::AngularFrequency,
        ] {
            let k = s.factor_enclosure(d).unwrap();
            let f = s.factor_f64(d);
            assert!(k.contains(f) || (f / k.mid() - 1.0).abs() < 1e-15, "{d:?}");
            assert!(k.width() <= 1e-14 * k.mid().abs(), "{d:?}");
        }
        assert!(Scale::new(0.0).is_none() && Scale::new(-1.0).is_none());
        assert!(Scale::new(f64::INFINITY).is_none());
    }

    #[test]
    fn both_routes_and_their_judgement() {
        let mut st = Store::new();
        let f = crate::expression(&mut st, "(32/5)*m^5/R^5 + sin(w*t)^2").unwrap();
        let s = Scale::new(1.4).unwrap();
        let values: Vec<(String, f64)> = [("m", 0.5), ("R", 40.0), ("w", 0.01), ("t", 3.0)]
            .iter()
            .map(|(n, v)| (n.to_string(), *v))
            .collect();
        let n = number(&mut st, f, &values, &s, Dimension::Power).unwrap();
        let exact = ((32.0 / 5.0) * 0.5_f64.powi(5) / 40.0_f64.powi(5) + (0.03_f64).sin().powi(2))
            * C.powi(5)
            / G;
        assert!((n.value() / exact - 1.0).abs() < 1e-13);
        assert!(matches!(n.judge(0.0), Judgement::Agree(d) if d < 1e-13));
        // A forged second route is caught.
        let forged = SiNumber {
            text_value: n.text_value * (1.0 + 1e-6),
            ..n
        };
        assert_eq!(forged.judge(0.0), Judgement::Disagree);
        // A wide enclosure is not a certified number.
        let wide = SiNumber {
            enclosure: Interval::new(1.0, 1.0 + 1e-6).unwrap(),
            text_value: 1.0,
        };
        assert!(matches!(wide.judge(0.0), Judgement::Wide(_)));
        // A missing value and an arbitrary function are errors.
        assert_eq!(
            number(&mut st, f, &values[..3], &s, Dimension::Power),
            Err(SiError::NoValue("t".into()))
        );
        let g = crate::expression(&mut st, "F(t)").unwrap();
        assert!(matches!(
            number(&mut st, g, &values, &s, Dimension::Strain),
            Err(SiError::Function(_))
        ));
    }
}
