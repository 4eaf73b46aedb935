//! Gauge equivalence of two perturbations: the same linearized Riemann tensor.
//!
//! Model. Two perturbations describe the same physics, to first order, exactly when they
//! differ by `d_mu xi_nu + d_nu xi_mu` for some `xi`; on a simply connected region that is
//! the case exactly when their linearized Riemann tensors agree (the Riemann tensor of the
//! difference vanishes, and a perturbation with vanishing linearized Riemann tensor is pure
//! gauge; common practice). So the test compares the
//! 20 algebraically independent Riemann components one by one with the exact zero test.
//!
//! Key design decision: the second file is rebuilt into the first file's store from its own
//! texts with its own name table: its parameters, functions and defines are declared and
//! built in its order, exactly as reading it did. Symbols are shared by name, so a parameter
//! (or function) that both files declare is one symbol (one arbitrary function), and the two
//! files' defines never meet: a define `c` in one file cannot capture a `c` of the other.
//! Typical values and samples of names both files declare come from the first file (the
//! choice affects only numerical witnesses, never an exact verdict).

use crate::canon::{FunctionSample, Names, Store};
use crate::check::{ExactParts, Status};
use crate::claim::Kind;
use crate::problem::Problem;
use crate::tensor::COMPONENTS;
use crate::tensor::{COORDS, Linearized, Sym4, index_name};
use crate::zero::{Sampling, Verdict, decide};
use std::rc::Rc;

/// The second perturbation, rebuilt in the first one's store.
#[derive(Clone, Debug)]
pub struct Imported {
    /// Its `h_{mu nu}`.
    pub h: Sym4,
    /// The first file's sampling, completed with the second file's parameters and samples.
    pub sampling: Sampling,
    /// Names both files declare with different typical values or samples.
    pub notes: Vec<String>,
}

fn reparse(
    store: &mut Store,
    names: &Names,
    text: &str,
    what: &str,
) -> Result<crate::canon::Form, String> {
    let e = crate::parse::parse(text).map_err(|e| format!("{what}: {e}"))?;
    store
        .build(&e, names)
        .map_err(|e| format!("{what}: {}", e.message))
}

/// Rebuilds `b`'s perturbation in `store` (the first problem's), with `b`'s own names.
///
/// # Errors
///
/// An expression of `b` that no longer builds (only an algebra limit can cause that, since
/// `b` was read successfully).
pub fn import(
    store: &mut Store,
    a_sampling: &Sampling,
    a_parameters: &[(String, f64)],
    a_functions: &[(String, String)],
    b: &Problem,
) -> Result<Imported, String> {
    let mut names = Names::strict();
    for c in COORDS {
        names.symbol(c);
    }
    let mut sampling = a_sampling.clone();
    let mut notes = Vec::new();
    for (p, v) in &b.parameters {
        names.symbol(p);
        let k = store.symbol_kernel(p);
        match a_parameters.iter().find(|(q, _)| q == p) {
            Some((_, va)) if va != v => notes.push(format!(
                "parameter `{p}` has the typical value {va} in the first file and {v} in the \
                 second; {va} is used for numerical witnesses"
            )),
            Some(_) => {}
            None => {
                sampling.typical.insert(k, *v);
            }
        }
    }
    let mut sample_names = Names::strict();
    sample_names.symbol("u");
    for (p, _) in &b.parameters {
        sample_names.symbol(p);
    }
    let var = store.symbol_kernel("u");
    for (f, sample) in &b.functions {
        names.function(f);
        match a_functions.iter().find(|(g, _)| g == f) {
            Some((_, sa)) => {
                if sa != sample {
                    notes.push(format!(
                        "function `{f}` has the sample `{sa}` in the first file and `{sample}` \
                         in the second; it is one arbitrary function, sampled as `{sa}`"
                    ));
                }
            }
            None => {
                let form = reparse(store, &sample_names, sample, &format!("sample of `{f}`"))?;
                sampling
                    .samples
                    .insert(Rc::from(f.as_str()), FunctionSample { var, form });
            }
        }
    }
    for (d, text) in &b.defines {
        let form = reparse(store, &names, text, &format!("define `{d}`"))?;
        names.define(d, form);
    }
    let mut h = [[store.zero(); 4]; 4];
    for (mu, nu) in COMPONENTS {
        if let Some(text) = &b.h_text[mu][nu] {
            let f = reparse(
                store,
                &names,
                text,
                &format!("component {}", index_name(&[mu, nu])),
            )?;
            h[mu][nu] = f;
            h[nu][mu] = f;
        }
    }
    Ok(Imported { h, sampling, notes })
}

/// One Riemann component of the difference.
#[derive(Clone, Debug)]
pub struct Difference {
    /// `R_txtx`, ...
    pub name: String,
    /// The verdict on `R[A] - R[B]`.
    pub verdict: Verdict,
    /// The simplified difference, when it is not proved zero.
    pub residual: Option<String>,
}

/// The comparison of two perturbations.
#[derive(Clone, Debug)]
pub struct Comparison {
    /// All 20 components.
    pub components: Vec<Difference>,
    /// Holds: every component proved equal; fails: one certified different; else undecided.
    pub status: Status,
}

const RESIDUAL_CHARS: usize = 400;

/// Compares the 20 independent linearized Riemann components of `a` and `b`.
///
/// # Errors
///
/// An algebra limit.
pub fn compare(
    store: &mut Store,
    a: &Sym4,
    b: &Sym4,
    sampling: &Sampling,
) -> Result<Comparison, crate::canon::CanonError> {
    let (mut la, mut lb) = (Linearized::new(store, *a), Linearized::new(store, *b));
    let (mut pa, mut pb) = (
        ExactParts::new(&mut la, None),
        ExactParts::new(&mut lb, None),
    );
    let mut components = Vec::new();
    for part in Kind::PureGauge.parts() {
        let fa = pa.form(store, part)?;
        let fb = pb.form(store, part)?;
        let d = store.sub(fa, fb)?;
        let verdict = decide(store, d, sampling);
        let residual = (!store.is_zero(d)).then(|| {
            let t = store.to_text(d);
            if t.len() > RESIDUAL_CHARS {
                let cut: String = t.chars().take(RESIDUAL_CHARS).collect();
                format!("{cut}... ({} terms)", store.num_terms(d))
            } else {
                t
            }
        });
        components.push(Difference {
            name: part.name(),
            verdict,
            residual,
        });
    }
    let refs: Vec<&Verdict> = components.iter().map(|c| &c.verdict).collect();
    let status = Status::of(&refs, true);
    Ok(Comparison { components, status })
}
