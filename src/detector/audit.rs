//! The audit of every number `antenna` reports: the printed exact forms evaluated through the
//! independent jet route (`crate::audit::expr::Expressions`, certified f64 intervals)
//! against the f64 contraction of the vectors and the quadrature of [`super::numeric`], at
//! the given values or, with symbols, at seeded points. A disagreement is an internal defect.

use super::numeric::{Quadrature, V3, eval_text, eval_vector, pattern, quadrature};
use crate::audit::expr::{Expressions, Route, seeded_points};
use crate::interval::Interval;

/// Relative tolerance between an f64 value and a certified enclosure (f64 rounding of a few
/// dozen operations, and of the quadrature's sums).
pub const TOLERANCE: f64 = 1e-11;

/// The texts the numbers come from.
#[derive(Clone, Debug)]
pub struct Inputs {
    /// The arms' entries.
    pub arms: [[String; 3]; 2],
    /// theta, phi, psi as written.
    pub angles: [String; 3],
}

/// The printed exact forms to audit.
#[derive(Clone, Debug)]
pub struct Printed {
    /// `F_+`.
    pub plus: String,
    /// `F_x`.
    pub cross: String,
    /// `<F_+^2 + F_x^2>`.
    pub sum: String,
    /// `<F_+^2> = <F_x^2>`.
    pub each: String,
}

/// One comparison.
#[derive(Clone, Debug, PartialEq)]
pub struct Row {
    /// The quantity.
    pub quantity: &'static str,
    /// The point (values of the symbols; empty without symbols).
    pub point: Vec<(String, f64)>,
    /// The second route's f64 value.
    pub direct: f64,
    /// The jet route's enclosure of the printed exact form, if it could be evaluated.
    pub enclosure: Option<(f64, f64)>,
    /// How far outside the enclosure the f64 value may lie (its rounding).
    pub tolerance: f64,
}

impl Row {
    /// True if the f64 value lies in the enclosure, widened by the row's tolerance.
    #[must_use]
    pub fn agrees(&self) -> bool {
        self.enclosure.is_some_and(|(lo, hi)| {
            lo - self.tolerance <= self.direct && self.direct <= hi + self.tolerance
        })
    }
}

/// The audit's result.
#[derive(Clone, Debug, Default)]
pub struct Report {
    /// Every comparison made.
    pub rows: Vec<Row>,
    /// Why some or all could not be made.
    pub not_audited: Vec<String>,
}

impl Report {
    /// True if a comparison disagrees: an internal defect.
    #[must_use]
    pub fn defect(&self) -> bool {
        self.rows
            .iter()
            .any(|r| r.enclosure.is_some() && !r.agrees())
    }

    /// The first disagreement.
    #[must_use]
    pub fn first_defect(&self) -> Option<&Row> {
        self.rows
            .iter()
            .find(|r| r.enclosure.is_some() && !r.agrees())
    }
}

/// How many seeded points when the inputs have symbols.
pub const POINTS: usize = 3;

/// The second value given to a printed `i` (see [`jet_enclosure`]).
pub const I_PROBE: f64 = 0.731;

/// The jet route's enclosure of a printed real form at `point`. A printed form may carry
/// the imaginary unit in pairs that cancel (`(1 + i)*cos(2*pi/5) + (1 - i)*cos(8*pi/5)`);
/// the jet route reads `i` as a name, so such a form is evaluated at `i = 0` and at
/// `i = I_PROBE` and the intersection is returned: it is empty (lower bound above the upper)
/// if the value depends on `i`, that is if the printed form is not real.
#[must_use]
pub fn jet_enclosure(route: &Expressions, point: &[(String, f64)]) -> Option<(f64, f64)> {
    let at = |p: &[(String, f64)]| {
        route
            .values::<Interval>(p, &())
            .ok()
            .and_then(|v| v.first().copied().flatten())
            .map(|i: Interval| (i.lo(), i.hi()))
    };
    let uses_i =
        route.names().iter().any(|(n, _)| n == "i") && !point.iter().any(|(n, _)| n == "i");
    if !uses_i {
        return at(point);
    }
    let with = |v: f64| {
        let mut p = point.to_vec();
        p.push(("i".to_string(), v));
        p
    };
    let (a, b) = (at(&with(0.0))?, at(&with(I_PROBE))?);
    Some((a.0.max(b.0), a.1.min(b.1)))
}

/// The jet route's enclosure of `text` at `point`.
fn enclosure(text: &str, point: &[(String, f64)]) -> Result<Option<(f64, f64)>, String> {
    let route = Expressions::new(text, None, &[], &[]).map_err(|e| e.to_string())?;
    Ok(jet_enclosure(&route, point))
}

/// The symbols of the inputs, sorted.
#[must_use]
pub fn symbols(inputs: &Inputs) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    let all = inputs.arms.iter().flatten().chain(&inputs.angles);
    for t in all {
        if let Ok(e) = crate::parse::parse(t) {
            out.extend(crate::jet::eval::free_names(&e));
        }
    }
    out.sort();
    out.dedup();
    out
}

/// Audits the pattern and the averages: with symbols at [`POINTS`] seeded points, else once.
#[must_use]
pub fn audit(inputs: &Inputs, printed: &Printed, seed: u64) -> Report {
    let names: Vec<(String, Option<f64>)> =
        symbols(inputs).into_iter().map(|n| (n, None)).collect();
    let points = if names.is_empty() {
        vec![Vec::new()]
    } else {
        seeded_points(&names, seed, POINTS)
    };
    let mut report = Report::default();
    for point in points {
        let values = (|| -> Result<(V3, V3, [f64; 3]), String> {
            let a = eval_vector(&inputs.arms[0], &point)?;
            let b = eval_vector(&inputs.arms[1], &point)?;
            let ang = [
                eval_text(&inputs.angles[0], &point)?,
                eval_text(&inputs.angles[1], &point)?,
                eval_text(&inputs.angles[2], &point)?,
            ];
            Ok((a, b, ang))
        })();
        let (a, b, [th, ph, ps]) = match values {
            Ok(v) => v,
            Err(why) => {
                report.not_audited.push(format!(
                    "the inputs cannot be evaluated at a seeded point: {why}"
                ));
                continue;
            }
        };
        let (plus, cross) = pattern(&a, &b, th, ph, ps);
        let Quadrature {
            sum,
            plus2,
            cross2,
            plus_cross,
        } = quadrature(&a, &b);
        let zero = "0".to_string();
        for (quantity, text, direct) in [
            ("F_plus", &printed.plus, plus),
            ("F_cross", &printed.cross, cross),
            ("sky average of F_plus^2 + F_cross^2", &printed.sum, sum),
            ("sky average of F_plus^2", &printed.each, plus2),
            ("sky average of F_cross^2", &printed.each, cross2),
            ("sky average of F_plus F_cross", &zero, plus_cross),
        ] {
            match enclosure(text, &point) {
                Ok(e) => {
                    if e.is_none() {
                        report.not_audited.push(format!(
                            "{quantity} cannot be evaluated by the jet route here"
                        ));
                    }
                    report.rows.push(Row {
                        quantity,
                        point: point.clone(),
                        direct,
                        enclosure: e,
                        tolerance: TOLERANCE * (1.0 + direct.abs()),
                    });
                }
                Err(why) => report
                    .not_audited
                    .push(format!("{quantity} cannot be read back: {why}")),
            }
        }
    }
    report
}
