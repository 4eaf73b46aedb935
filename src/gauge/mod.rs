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
