//! Gauge equivalence of two perturbations: the same linearized Riemann tensor.
//!
//! Model. Two perturbations describe the same physics, to first order, exactly when they
//! differ by `d_mu xi_nu + d_nu xi_mu` for some `xi`; on a simply connected region that is
//! the case exactly when their linearized Riemann tensors agree (the Riemann tensor of the
//! difference vanishes, and a perturbation with vanishing linearized Riemann tensor is pure
//! gauge; common practice). So the test compares the
//! 20 algebraically independent Riemann components one by one with the exact zero test.
//!
//! Key design decision: the second file is built once, straight into the first file's store,
//! from its own texts with its own name table ([`crate::problem::ProblemFile::build_into`]):
//! its parameters, functions and defines are declared and built in its order, exactly as
//! reading it alone would. Symbols are shared by name, so a parameter (or function) that
//! both files declare is one symbol (one arbitrary function), and the two files' defines
//! never meet: a define `c` in one file cannot capture a `c` of the other. [`import`] then
//! merges only the sampling: typical values and samples of names both files declare come
//! from the first file (the choice affects only numerical witnesses, never an exact
//! verdict), with a note where the files differ.

use crate::canon::Store;
use crate::check::{ExactParts, Status};
use crate::claim::Kind;
use crate::problem::Problem;
use crate::tensor::{Linearized, Sym4};
use crate::zero::{Sampling, Verdict, decide};
use std::rc::Rc;

/// The second perturbation, in the first one's store.
#[derive(Clone, Debug)]
pub struct Imported {
    /// Its `h_{mu nu}`.
    pub h: Sym4,
    /// The first file's sampling, completed with the second file's parameters and samples.
    pub sampling: Sampling,
    /// Names both files declare with different typical values or samples.
    pub notes: Vec<String>,
}

/// Merges the sampling of `b`, built into `store` (the first problem's, with
/// [`crate::problem::ProblemFile::build_into`]), into the first problem's: the second file's
/// parameters and function samples that the first does not declare are added; for names both
/// declare the first file's typical value or sample is kept, with a note where they differ.
pub fn import(
    store: &mut Store,
    a_sampling: &Sampling,
    a_parameters: &[(String, f64)],
    a_functions: &[(String, String)],
    b: &Problem,
) -> Imported {
    let mut sampling = a_sampling.clone();
    let mut notes = Vec::new();
    for (p, v) in &b.parameters {
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
    for (f, sample) in &b.functions {
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
                if let Some(s) = b.sampling.samples.get(f.as_str()) {
                    sampling.samples.insert(Rc::from(f.as_str()), s.clone());
                }
            }
        }
    }
    Imported {
        h: b.h,
        sampling,
        notes,
    }
}

/// One Riemann component of the difference.
#[derive(Clone, Debug)]
pub struct Difference {
    /// `R_txtx`, ...
    pub name: String,
    /// The verdict on `R[A] - R[B]`.
    pub verdict: Verdict,
    /// The simplified difference (zero when proved equal, or a note when the audit
    /// contradicted that proof).
    pub residual: crate::check::Residual,
}

/// The comparison of two perturbations.
#[derive(Clone, Debug)]
pub struct Comparison {
    /// All 20 components.
    pub components: Vec<Difference>,
    /// Holds: every component proved equal; fails: one certified different; else undecided.
    pub status: Status,
}

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
        let residual = if store.is_zero(d) {
            crate::check::Residual::Zero
        } else {
            crate::check::Residual::Form(d)
        };
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

/// [`compare`] about a background proved flat (Minkowski in any coordinates): the 20
/// independent components of the covariant linearized Riemann tensor of `a` and `b`, named in
/// `frame`. On a flat background they are gauge invariant, and equal exactly when `a - b` is
/// pure gauge (common practice), so the verdicts mean what they mean for flat problems.
///
/// # Errors
///
/// An algebra limit.
pub fn compare_about(
    store: &mut Store,
    bg: &mut crate::tensor::curved::Background,
    (a, b): (&Sym4, &Sym4),
    sampling: &Sampling,
    frame: &crate::tensor::Frame,
) -> Result<Comparison, crate::canon::CanonError> {
    use crate::tensor::curved::Perturbation;
    let ra = Perturbation::new(*a).riemann(store, bg)?;
    let rb = Perturbation::new(*b).riemann(store, bg)?;
    let mut components = Vec::new();
    for ((idx, fa), (_, fb)) in ra.into_iter().zip(rb) {
        let d = store.sub(fa, fb)?;
        let verdict = decide(store, d, sampling);
        let residual = if store.is_zero(d) {
            crate::check::Residual::Zero
        } else {
            crate::check::Residual::Form(d)
        };
        components.push(Difference {
            name: crate::claim::Part::Riemann(idx).name_in(frame),
            verdict,
            residual,
        });
    }
    let refs: Vec<&Verdict> = components.iter().map(|c| &c.verdict).collect();
    let status = Status::of(&refs, true);
    Ok(Comparison { components, status })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::problem::{ProblemFile, from_str};

    const A: &str = "
[parameters]
w = 2.0
[functions]
F = 'exp(-u^2)'
[define]
c = 'x'
[perturbation]
xx = 'c*cos(w*t) + F(t)'
";

    const B: &str = "
[parameters]
w = 3.0
v = 0.5
[functions]
F = 'exp(-u^2/2)'
G = 'sin(u)'
[define]
c = 'y'
[perturbation]
xx = 'c*cos(w*t) + F(t) + v*G(z)'
";

    /// Issue 11 (item 3): the second file is built once, into the first file's store, and
    /// `import` only merges the sampling; the semantics stay: b's defines never capture a's
    /// names, shared names are one symbol, the first file's typical values and samples win,
    /// with notes.
    #[test]
    fn issue11_the_second_file_is_built_once_into_the_first_store() {
        let mut a = from_str("a.toml", A).unwrap();
        let b = ProblemFile::parse("b.toml", B)
            .unwrap()
            .build_into(&mut a.store)
            .unwrap();
        let sampling = a.sampling.clone();
        let im = import(&mut a.store, &sampling, &a.parameters, &a.functions, &b);
        // b's `c` is its own y, and w, F are the symbols of a.
        let e = crate::parse::parse("y*cos(w*t) + F(t) + v*G(z)").unwrap();
        let mut names = crate::canon::Names::free();
        names.function("F");
        names.function("G");
        let want = a.store.build(&e, &names).unwrap();
        assert_eq!(im.h[1][1], want);
        // Typical values: a's w, b's v.
        let w = a.store.symbol_kernel("w");
        let v = a.store.symbol_kernel("v");
        assert_eq!(im.sampling.typical.get(&w), Some(&2.0));
        assert_eq!(im.sampling.typical.get(&v), Some(&0.5));
        // Samples: a's F, b's G.
        assert_eq!(im.sampling.samples["F"].form, a.sampling.samples["F"].form);
        let g = im.sampling.samples["G"].form;
        let e = crate::parse::parse("sin(u)").unwrap();
        let want = a.store.build(&e, &crate::canon::Names::free()).unwrap();
        assert_eq!(g, want);
        assert_eq!(im.notes.len(), 2, "{:?}", im.notes);
        assert!(im.notes[0].starts_with("parameter `w` has the typical value 2"));
        assert!(im.notes[1].starts_with("function `F` has the sample `exp(-u^2)`"));
        // The second problem keeps its texts for the audit; its own store is empty.
        assert_eq!(b.defines, [("c".to_string(), "y".to_string())]);
        assert_eq!(b.store.num_terms(b.store.one()), 1);
    }

    /// Errors of the second file are its own, pointing into it.
    #[test]
    fn issue11_an_error_of_the_second_file_points_into_it() {
        let mut a = from_str("a.toml", A).unwrap();
        let bad = "[perturbation]\nxx = 'c*q'\n";
        let e = ProblemFile::parse("b.toml", bad)
            .unwrap()
            .build_into(&mut a.store)
            .unwrap_err();
        assert!(e.to_string().contains("undeclared name `c`"), "{e}");
        // The first problem's forms are still there.
        let ha = a.h[1][1];
        assert!(!a.store.is_zero(ha));
        assert!(a.store.num_terms(ha) > 0);
    }
}
