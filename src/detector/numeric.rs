//! The second route: the same quantities in f64, from the vectors themselves. The arms and
//! angles are the user's texts evaluated by the direct evaluator of the parsed tree
//! ([`crate::expr::Evaluator`]); nothing here touches a canonical form.

use crate::expr::Evaluator;

/// A 3-vector of f64.
pub type V3 = [f64; 3];

/// The value of a text with the symbols of `point`.
///
/// # Errors
///
/// A text that does not parse or has no finite real value there.
pub fn eval_text(text: &str, point: &[(String, f64)]) -> Result<f64, String> {
    let e = crate::parse::parse(text).map_err(|e| format!("`{text}`: {}", e.message))?;
    let values = |n: &str| point.iter().find(|(m, _)| m == n).map(|(_, v)| *v);
    let functions = |_: &str, _: u32, _: f64| None;
    let ev = Evaluator {
        values: &values,
        functions: &functions,
    };
    e.eval(&ev).map_err(|e| format!("`{text}`: {e}"))
}

/// A vector from its entries' texts.
///
/// # Errors
///
/// As [`eval_text`].
pub fn eval_vector(texts: &[String; 3], point: &[(String, f64)]) -> Result<V3, String> {
    Ok([
        eval_text(&texts[0], point)?,
        eval_text(&texts[1], point)?,
        eval_text(&texts[2], point)?,
    ])
}

fn dot(a: &V3, b: &V3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// `(F_+, F_x)` for unit arms `a`, `b` and angles `(theta, phi, psi)`, by the convention of
/// [`super::CONVENTION`]: `D_ij e_ij = (a.e.a - b.e.b)/2` for `e = u u - v v` and
/// `e = u v + v u`.
#[must_use]
pub fn pattern(a: &V3, b: &V3, theta: f64, phi: f64, psi: f64) -> (f64, f64) {
    let (st, ct) = theta.sin_cos();
    let (sp, cp) = phi.sin_cos();
    let (ss, cs) = psi.sin_cos();
    let e_theta = [ct * cp, ct * sp, -st];
    let e_phi = [-sp, cp, 0.0];
    let u: V3 = std::array::from_fn(|i| cs * e_theta[i] + ss * e_phi[i]);
    let v: V3 = std::array::from_fn(|i| ss * e_theta[i] - cs * e_phi[i]);
    // x.(u u - v v).x = (x.u)^2 - (x.v)^2, x.(u v + v u).x = 2 (x.u)(x.v).
    let (au, av, bu, bv) = (dot(a, &u), dot(a, &v), dot(b, &u), dot(b, &v));
    let plus = 0.5 * ((au * au - av * av) - (bu * bu - bv * bv));
    let cross = au * av - bu * bv;
    (plus, cross)
}

/// The averages over the sky and psi, by quadrature.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Quadrature {
    /// `<F_+^2 + F_x^2>`.
    pub sum: f64,
    /// `<F_+^2>`.
    pub plus2: f64,
    /// `<F_x^2>`.
    pub cross2: f64,
    /// `<F_+ F_x>`.
    pub plus_cross: f64,
}

/// Nodes of the quadrature in cos theta.
pub const QUAD_MU: usize = 12;
/// Nodes of the quadrature in phi and in psi.
pub const QUAD_ANGLE: usize = 24;

/// How [`quadrature`] integrates, in words.
pub const QUADRATURE_METHOD: &str = "Gauss-Legendre in cos theta (12 nodes) times the \
    trapezoid rule in phi and in psi (24 nodes each); exact up to rounding for these \
    trigonometric polynomials of degree 4";

/// Gauss-Legendre nodes and weights on [-1, 1] (Newton's method on P_n).
#[must_use]
pub fn gauss_legendre(n: usize) -> Vec<(f64, f64)> {
    let nf = n as f64;
    (0..n)
        .map(|i| {
            let mut x = (std::f64::consts::PI * (i as f64 + 0.75) / (nf + 0.5)).cos();
            let mut dp = 1.0;
            for _ in 0..100 {
                let (mut p0, mut p1) = (1.0, x);
                for k in 2..=n {
                    let kf = k as f64;
                    let p2 = ((2.0 * kf - 1.0) * x * p1 - (kf - 1.0) * p0) / kf;
                    p0 = p1;
                    p1 = p2;
                }
                dp = nf * (x * p1 - p0) / (x * x - 1.0);
                let step = p1 / dp;
                x -= step;
                if step.abs() < 1e-16 {
                    break;
                }
            }
            (x, 2.0 / ((1.0 - x * x) * dp * dp))
        })
        .collect()
}

/// The averages of `F_+^2 + F_x^2`, `F_+^2`, `F_x^2` and `F_+ F_x` over the sphere of source
/// directions (uniform in solid angle) and over psi in [0, 2 pi).
#[must_use]
pub fn quadrature(a: &V3, b: &V3) -> Quadrature {
    let nodes = gauss_legendre(QUAD_MU);
    let step = std::f64::consts::TAU / QUAD_ANGLE as f64;
    let mut acc = [0.0f64; 4];
    for &(mu, w) in &nodes {
        let theta = mu.acos();
        for i in 0..QUAD_ANGLE {
            let phi = step * i as f64;
            for j in 0..QUAD_ANGLE {
                let psi = step * j as f64;
                let (p, c) = pattern(a, b, theta, phi, psi);
                acc[0] += w * (p * p + c * c);
                acc[1] += w * p * p;
                acc[2] += w * c * c;
                acc[3] += w * p * c;
            }
        }
    }
    // The weights sum to 2 over cos theta; each angle has QUAD_ANGLE nodes.
    let norm = 2.0 * (QUAD_ANGLE * QUAD_ANGLE) as f64;
    Quadrature {
        sum: acc[0] / norm,
        plus2: acc[1] / norm,
        cross2: acc[2] / norm,
        plus_cross: acc[3] / norm,
    }
}
