//! The audit of `response`: the printed exact strains, evaluated by the independent jet route
//! (`crate::audit::Audit`, certified intervals, from the file's texts and the printed
//! texts, never a canonical form) at seeded times and parameter values, against the same
//! quantities computed a second way from the file's texts: `D_ij Lambda_ij,kl(n) h_kl` at
//! the detector, `-2 D_ij R_0i0j` from the jets' second derivatives of `h` (the linearized
//! Riemann tensor written out again here), and the finite-arm delay as a Gauss-Legendre
//! quadrature of `(1/2) a_i a_j h^TT_ij` along the photon's path. The vectors are the texts
//! evaluated in f64 ([`super::numeric`]). A disagreement is an internal defect.

use super::numeric::{V3, eval_text, eval_vector, gauss_legendre};
use crate::audit::Audit;
use crate::interval::Interval;
use crate::problem::Problem;

/// Relative tolerance against the sum of the absolute values of the terms (f64 rounding of a
/// few hundred operations; the quadrature's error for smooth integrands).
pub const TOLERANCE: f64 = 1e-9;

/// How many seeded points.
pub const POINTS: usize = 3;

/// Gauss-Legendre nodes per leg of the finite-arm quadrature.
pub const NODES: usize = 32;

/// The texts the second route reads.
#[derive(Clone, Debug)]
pub struct Inputs {
    /// The arms' entries.
    pub arms: [[String; 3]; 2],
    /// The detector's position.
    pub at: [String; 3],
    /// The propagation direction (as read).
    pub n: [String; 3],
    /// The arm length, for the finite-arm route.
    pub length: Option<String>,
}

/// The printed exact forms (functions of t and the file's parameters).
#[derive(Clone, Debug)]
pub struct Printed {
    /// Route 1's strain.
    pub tt: String,
    /// Route 2's second derivative.
    pub second: String,
    /// Route 2's strain, if integrated.
    pub tidal: Option<String>,
    /// The finite-arm strain.
    pub finite: Option<String>,
}

pub use super::audit::{Report, Row};

/// `Lambda_ij,kl(n) s_kl` contracted with `d`, and the sum of the terms' absolute values.
fn d_lambda(d: &[[f64; 3]; 3], n: &V3, s: &[[f64; 3]; 3]) -> (f64, f64) {
    let p = |i: usize, j: usize| f64::from(u8::from(i == j)) - n[i] * n[j];
    let (mut sum, mut abs) = (0.0, 0.0);
    for i in 0..3 {
        for j in 0..3 {
            for k in 0..3 {
                for l in 0..3 {
                    let lam = p(i, k) * p(j, l) - 0.5 * p(i, j) * p(k, l);
                    let term = d[i][j] * lam * s[k][l];
                    sum += term;
                    abs += term.abs();
                }
            }
        }
    }
    (sum, abs)
}

fn tensor(a: &V3, b: &V3, half: f64) -> [[f64; 3]; 3] {
    std::array::from_fn(|i| std::array::from_fn(|j| half * (a[i] * a[j] - b[i] * b[j])))
}

fn pair(i: Option<Interval>) -> Option<(f64, f64)> {
    i.map(|v| (v.lo(), v.hi()))
}

fn set(point: &mut Vec<(String, f64)>, name: &str, v: f64) {
    match point.iter_mut().find(|(n, _)| n == name) {
        Some(slot) => slot.1 = v,
        None => point.push((name.to_string(), v)),
    }
}

/// The spatial block of `h` at a point, from the jets (midpoints), or why not.
fn h_at(audit: &Audit, point: &[(String, f64)]) -> Result<[[f64; 3]; 3], String> {
    let f = audit.fields_at(point).map_err(|e| e.to_string())?;
    let mut s = [[0.0; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            s[i][j] = f
                .h(i + 1, j + 1)
                .ok_or("h cannot be evaluated on the photon's path")?
                .mid();
        }
    }
    Ok(s)
}

/// Audits the printed strains at [`POINTS`] seeded points.
#[must_use]
pub fn audit(problem: &Problem, inputs: &Inputs, printed: &Printed, seed: u64) -> Report {
    let mut report = Report::default();
    let mut extras = vec![
        ("the TT strain".to_string(), printed.tt.clone()),
        (
            "the tidal second derivative".to_string(),
            printed.second.clone(),
        ),
    ];
    if let Some(s) = &printed.tidal {
        extras.push(("the tidal strain".into(), format!("d_t_t({s})")));
    }
    let jets = match Audit::fields(problem, 2, &extras) {
        Ok(a) => a,
        Err(e) => {
            report
                .not_audited
                .push(format!("the printed forms cannot be evaluated: {e}"));
            return report;
        }
    };
    let finite = match &printed.finite {
        Some(text) => {
            match Audit::fields(
                problem,
                0,
                &[("the finite-arm strain".into(), text.clone())],
            ) {
                Ok(a) => Some((a, text)),
                Err(e) => {
                    report
                        .not_audited
                        .push(format!("the finite-arm strain cannot be evaluated: {e}"));
                    None
                }
            }
        }
        None => None,
    };
    for seeded in jets.seeded_points(seed, POINTS) {
        let geometry = (|| -> Result<_, String> {
            let a = eval_vector(&inputs.arms[0], &seeded)?;
            let b = eval_vector(&inputs.arms[1], &seeded)?;
            let n = eval_vector(&inputs.n, &seeded)?;
            let x0 = eval_vector(&inputs.at, &seeded)?;
            let len = match &inputs.length {
                Some(t) => Some(eval_text(t, &seeded)?),
                None => None,
            };
            Ok((a, b, n, x0, len))
        })();
        let (a, b, n, x0, len) = match geometry {
            Ok(g) => g,
            Err(why) => {
                report.not_audited.push(format!(
                    "the detector's vectors cannot be evaluated at a seeded point: {why}"
                ));
                continue;
            }
        };
        let mut point = seeded.clone();
        for (i, c) in ["x", "y", "z"].iter().enumerate() {
            set(&mut point, c, x0[i]);
        }
        let d = tensor(&a, &b, 0.5);
        let fields = match jets.fields_at(&point) {
            Ok(f) => f,
            Err(e) => {
                report
                    .not_audited
                    .push(format!("h cannot be evaluated at a seeded point: {e}"));
                continue;
            }
        };
        // Route 1 from the texts.
        let spatial = (|| -> Option<[[f64; 3]; 3]> {
            let mut s = [[0.0; 3]; 3];
            for i in 0..3 {
                for j in 0..3 {
                    s[i][j] = fields.h(i + 1, j + 1)?.mid();
                }
            }
            Some(s)
        })();
        // E_ij = R_0i0j = (1/2)(d_i d_0 h_0j + d_0 d_j h_i0 - d_0 d_0 h_ij - d_i d_j h_00)
        // (MTW sign, first order), from the jets.
        let electric = (|| -> Option<[[f64; 3]; 3]> {
            let mut e = [[0.0; 3]; 3];
            for i in 0..3 {
                for j in 0..3 {
                    let (p, q) = (i + 1, j + 1);
                    e[i][j] = 0.5
                        * (fields.ddh(p, 0, 0, q)?.mid() + fields.ddh(0, q, p, 0)?.mid()
                            - fields.ddh(0, 0, p, q)?.mid()
                            - fields.ddh(p, q, 0, 0)?.mid());
                }
            }
            Some(e)
        })();
        let mut push = |quantity, direct: f64, scale: f64, enclosure| {
            report.rows.push(Row {
                quantity,
                point: point.clone(),
                direct,
                enclosure,
                tolerance: TOLERANCE * scale,
            });
        };
        match spatial {
            Some(s) => {
                let (v, abs) = d_lambda(&d, &n, &s);
                push("TT strain", v, abs, pair(fields.extra(0)));
            }
            None => report
                .not_audited
                .push("h cannot be evaluated at a seeded point".into()),
        }
        match electric {
            Some(e) => {
                let (mut v, mut abs) = (0.0, 0.0);
                for i in 0..3 {
                    for j in 0..3 {
                        let term = -2.0 * d[i][j] * e[i][j];
                        v += term;
                        abs += term.abs();
                    }
                }
                push("tidal d^2 s/dt^2", v, abs, pair(fields.extra(1)));
                if printed.tidal.is_some() {
                    push("tidal strain (its d^2/dt^2)", v, abs, pair(fields.extra(2)));
                }
            }
            None => report
                .not_audited
                .push("the second derivatives of h cannot be evaluated at a seeded point".into()),
        }
        if let (Some((fin, _)), Some(len)) = (&finite, len) {
            let t = point.iter().find(|(n, _)| n == "t").map_or(0.0, |p| p.1);
            match quadrature(fin, &point, (&a, &b, &n, &x0), t, len) {
                Ok((v, abs)) => {
                    let enc = fin.fields_at(&point).ok().and_then(|f| pair(f.extra(0)));
                    report.rows.push(Row {
                        quantity: "finite-arm strain",
                        point: point.clone(),
                        direct: v,
                        enclosure: enc,
                        tolerance: TOLERANCE * abs,
                    });
                }
                Err(why) => report
                    .not_audited
                    .push(format!("the finite-arm quadrature: {why}")),
            }
        }
    }
    report
}

/// `(dT_a - dT_b)/(2L)` by Gauss-Legendre quadrature of `(1/2) a_i a_j h^TT_ij` along the
/// out and back legs of each arm (photon received at the corner at `t`), and the sum of the
/// absolute values of the terms.
fn quadrature(
    audit: &Audit,
    base: &[(String, f64)],
    (a, b, n, x0): (&V3, &V3, &V3, &V3),
    t: f64,
    len: f64,
) -> Result<(f64, f64), String> {
    let nodes = gauss_legendre(NODES);
    let mut abs = 0.0;
    let mut delay = |arm: &V3| -> Result<f64, String> {
        let aa = tensor(arm, &[0.0; 3], 1.0);
        let mut sum = 0.0;
        for &(x, w) in &nodes {
            let l = 0.5 * len * (1.0 + x);
            let wl = 0.5 * len * w;
            // Out: at x0 + l a at t - 2L + l; back: at x0 + (L - l) a at t - L + l.
            for (time, along) in [(t - 2.0 * len + l, l), (t - len + l, len - l)] {
                let mut p = base.to_vec();
                set(&mut p, "t", time);
                for (i, c) in ["x", "y", "z"].iter().enumerate() {
                    set(&mut p, c, x0[i] + along * arm[i]);
                }
                let s = h_at(audit, &p)?;
                let (v, va) = d_lambda(&aa, n, &s);
                sum += 0.5 * wl * v;
                abs += (0.5 * wl * va).abs();
            }
        }
        Ok(sum)
    };
    let da = delay(a)?;
    let db = delay(b)?;
    let scale = abs / (2.0 * len.abs());
    Ok(((da - db) / (2.0 * len), scale))
}
