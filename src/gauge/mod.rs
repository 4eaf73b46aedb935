//! Gauge transformations of a perturbation, the construction of the gauge vector that brings
//! a Lorenz-gauge plane wave to TT gauge, and gauge equivalence of two perturbations.
//!
//! Model. An infinitesimal change of coordinates `x^mu -> x^mu + xi^mu` changes the
//! perturbation by `h_{mu nu} -> h_{mu nu} - d_mu xi_nu - d_nu xi_mu` (indices down) and
//! leaves the linearized Riemann tensor unchanged. It changes the Lorenz divergence
//! `d^mu hbar_{mu nu}` by `-box xi_nu`, so a Lorenz-gauge perturbation stays in Lorenz gauge
//! exactly when `box xi_nu = 0`.
//!
//! Key design decision: every statement about a transformed perturbation is checked on the
//! transformed forms themselves, with the same exact engine as `check`; a construction (such
//! as [`plane::tt_gauge_vector`]) is never trusted on its own.
//!
//! **Invariants:** nothing here evaluates numerically except the zero tester's witnesses;
//! nothing here prints.

pub mod audit;
pub mod compare;
pub mod plane;

use crate::canon::{CResult, Form, Names, Store};
use crate::tensor::{COMPONENTS, component_name};
use crate::tensor::{COORDS, ETA, Sym4};
use crate::zero::{Sampling, Verdict, decide};

/// `h_{mu nu} - d_mu xi_nu - d_nu xi_mu`.
///
/// # Errors
///
/// An algebra limit.
pub fn transform(store: &mut Store, h: &Sym4, xi: &[Form; 4]) -> CResult<Sym4> {
    let coords = COORDS.map(|c| store.symbol_kernel(c));
    let mut out = *h;
    for mu in 0..4 {
        for nu in mu..4 {
            let a = store.diff(xi[nu], coords[mu])?;
            let b = store.diff(xi[mu], coords[nu])?;
            let s = store.add(a, b)?;
            let v = store.sub(h[mu][nu], s)?;
            out[mu][nu] = v;
            out[nu][mu] = v;
        }
    }
    Ok(out)
}

/// `box xi_nu = eta^{rho sigma} d_rho d_sigma xi_nu`, for each `nu`.
///
/// # Errors
///
/// An algebra limit.
pub fn box_vector(store: &mut Store, xi: &[Form; 4]) -> CResult<[Form; 4]> {
    let coords = COORDS.map(|c| store.symbol_kernel(c));
    let mut out = [store.zero(); 4];
    for (slot, &f) in out.iter_mut().zip(xi) {
        let mut acc = store.zero();
        for (rho, &c) in coords.iter().enumerate() {
            let d1 = store.diff(f, c)?;
            let d2 = store.diff(d1, c)?;
            let t = store.scale(d2, &crate::canon::Coeff::int(ETA[rho]))?;
            acc = store.add(acc, t)?;
        }
        *slot = acc;
    }
    Ok(out)
}

/// The printed text of `f` if it reads back, with `names`, to a form proved equal to `f`;
/// `None` otherwise (a few printed forms do not, e.g. ones that print an imaginary unit).
pub fn text_that_reads_back(store: &mut Store, names: &Names, f: Form) -> Option<String> {
    let text = store.to_text(f);
    let e = crate::parse::parse(&text).ok()?;
    let g = store.build(&e, names).ok()?;
    let d = store.sub(g, f).ok()?;
    store.is_zero(d).then_some(text)
}

/// The texts of the components of `h` for a problem file, each proved to read back to the
/// same form; where a simplified text does not, `fallback(mu, nu)` (or, without one, an
/// error naming the component). Zero components have no text.
///
/// # Errors
///
/// A component whose text does not read back and that has no fallback.
pub fn file_texts(
    store: &mut Store,
    names: &Names,
    h: &Sym4,
    fallback: impl Fn(usize, usize) -> Option<String>,
) -> Result<[[Option<String>; 4]; 4], String> {
    let mut out: [[Option<String>; 4]; 4] = Default::default();
    for (mu, nu) in COMPONENTS {
        let f = h[mu][nu];
        if store.is_zero(f) {
            continue;
        }
        let text = match text_that_reads_back(store, names, f) {
            Some(t) => t,
            None => fallback(mu, nu).ok_or_else(|| {
                format!(
                    "the simplified form of component {} does not read back exactly, so it \
                     cannot be written to a file",
                    component_name(mu, nu)
                )
            })?,
        };
        out[mu][nu] = Some(text.clone());
        out[nu][mu] = Some(text);
    }
    Ok(out)
}

/// The texts of `h - d xi - d xi` from the texts of `h` and `xi` (in the file's names), for
/// the independent audit and for writing a component whose simplified text does not read
/// back.
#[must_use]
pub fn transformed_texts(
    h_text: &[[Option<String>; 4]; 4],
    xi: &[String],
) -> [[Option<String>; 4]; 4] {
    std::array::from_fn(|mu| {
        std::array::from_fn(|nu| {
            let orig = h_text[mu][nu].as_deref().unwrap_or("0");
            Some(format!(
                "({orig}) - d_{}({}) - d_{}({})",
                COORDS[mu], xi[nu], COORDS[nu], xi[mu]
            ))
        })
    })
}

/// Defines and texts for the audit of a gauge transformation about a background, written
/// from the background's *texts* (never its canonical forms), so that the audit stays
/// independent: the inverse metric by cofactors over the determinant, the Christoffel
/// symbols Gamma^e_ab = (1/2) g^{ed} (d_a g_db + d_b g_da - d_d g_ab) with the `d_` operator,
/// and h'_ab = h_ab - d_a xi_b - d_b xi_a + 2 Gamma^e_ab xi_e. `stem` prefixes the names of
/// the defines (choose one the problem does not use); `xi` are names (or texts) of xi_mu.
#[must_use]
pub fn covariant_transformed_texts(
    coords: &[String; 4],
    g_text: &[[Option<String>; 4]; 4],
    h_text: &[[Option<String>; 4]; 4],
    xi: &[String],
    stem: &str,
) -> (Vec<(String, String)>, crate::problem::TensorText) {
    let g = |a: usize, b: usize| format!("({})", g_text[a][b].as_deref().unwrap_or("0"));
    let mut defines = Vec::new();
    // det g by the Leibniz formula, the cofactors by 3x3 determinants.
    let perms = permutations4();
    let det: Vec<String> = perms
        .iter()
        .map(|(p, sign)| {
            let prod: Vec<String> = (0..4).map(|i| g(i, p[i])).collect();
            format!("{}{}", if *sign > 0 { "+" } else { "-" }, prod.join("*"))
        })
        .collect();
    let det_name = format!("{stem}_det");
    defines.push((det_name.clone(), det.join(" ")));
    let inv = |a: usize, b: usize| format!("{stem}_inv_{a}{b}");
    for a in 0..4 {
        for b in a..4 {
            let rows: Vec<usize> = (0..4).filter(|&r| r != a).collect();
            let cols: Vec<usize> = (0..4).filter(|&c| c != b).collect();
            let mut terms = Vec::new();
            for (p, sign) in crate::tensor::curved::PERMUTATIONS3 {
                let sign = if (a + b) % 2 == 0 { sign } else { -sign };
                terms.push(format!(
                    "{}{}*{}*{}",
                    if sign > 0 { "+" } else { "-" },
                    g(rows[0], cols[p[0]]),
                    g(rows[1], cols[p[1]]),
                    g(rows[2], cols[p[2]])
                ));
            }
            defines.push((inv(a, b), format!("({})/{det_name}", terms.join(" "))));
        }
    }
    let ginv = |a: usize, b: usize| inv(a.min(b), a.max(b));
    let gam = |e: usize, a: usize, b: usize| format!("{stem}_gam_{e}{a}{b}");
    for e in 0..4 {
        for a in 0..4 {
            for b in a..4 {
                let (ca, cb) = (&coords[a], &coords[b]);
                let terms: Vec<String> = (0..4)
                    .map(|d| {
                        format!(
                            "{}*(d_{ca}({}) + d_{cb}({}) - d_{}({}))",
                            ginv(e, d),
                            g(d, b),
                            g(d, a),
                            coords[d],
                            g(a, b)
                        )
                    })
                    .collect();
                defines.push((gam(e, a, b), format!("({})/2", terms.join(" + "))));
            }
        }
    }
    let texts = std::array::from_fn(|a: usize| {
        std::array::from_fn(|b: usize| {
            let orig = h_text[a][b].as_deref().unwrap_or("0");
            let (lo, hi) = (a.min(b), a.max(b));
            let conn: Vec<String> = (0..4)
                .map(|e| format!("{}*({})", gam(e, lo, hi), xi[e]))
                .collect();
            Some(format!(
                "({orig}) - d_{}({}) - d_{}({}) + 2*({})",
                coords[a],
                xi[b],
                coords[b],
                xi[a],
                conn.join(" + ")
            ))
        })
    });
    (defines, texts)
}

/// The 24 permutations of 0..4 with their signs.
fn permutations4() -> Vec<([usize; 4], i32)> {
    let mut out = Vec::new();
    for a in 0..4 {
        for b in 0..4 {
            for c in 0..4 {
                for d in 0..4 {
                    let p = [a, b, c, d];
                    let distinct = (0..4).all(|i| (i + 1..4).all(|j| p[i] != p[j]));
                    if distinct {
                        let inversions = (0..4)
                            .flat_map(|i| (i + 1..4).map(move |j| (i, j)))
                            .filter(|&(i, j)| p[i] > p[j])
                            .count();
                        out.push((p, if inversions % 2 == 0 { 1 } else { -1 }));
                    }
                }
            }
        }
    }
    out
}

/// `box xi_nu` and the zero test's verdict on each component: Lorenz gauge is preserved
/// exactly when all four vanish.
///
/// # Errors
///
/// An algebra limit.
pub fn box_verdicts(
    store: &mut Store,
    xi: &[Form; 4],
    sampling: &Sampling,
) -> CResult<([Form; 4], Vec<Verdict>)> {
    let bx = box_vector(store, xi)?;
    let verdicts = bx.iter().map(|f| decide(store, *f, sampling)).collect();
    Ok((bx, verdicts))
}

/// The Lorenz divergence `d^mu hbar_{mu nu}` of `h` and the zero test's verdict on each
/// component (the TT construction starts from Lorenz gauge).
///
/// # Errors
///
/// An algebra limit.
pub fn lorenz_verdicts(
    store: &mut Store,
    h: &Sym4,
    sampling: &Sampling,
) -> CResult<([Form; 4], Vec<Verdict>)> {
    let mut lin = crate::tensor::Linearized::new(store, *h);
    let div = lin.lorenz(store)?;
    let verdicts = div.iter().map(|f| decide(store, *f, sampling)).collect();
    Ok((div, verdicts))
}
