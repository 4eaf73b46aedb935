//! The generated code's expressions, from the problem's own texts.
//!
//! Model. The user's components, defines and function samples are built into the
//! user-structure DAG of [`crate::tape::Lowering`] (defines shared, `d_` applied by
//! differentiating the DAG), the derivatives of `h` each quantity needs are taken there, and
//! the quantity formulas of [`crate::export::certify`] (the same code that computes the
//! exported numbers) combine them. The result is lowered into the emitter's [`Dag`], which
//! shares common subexpressions. Nothing is expanded: a Gaussian pulse
//! `exp(-(t - y)^2/(2 s^2))` is computed as written, not as `exp((2 t y - t^2 - y^2)/(2 s^2))`,
//! which loses every digit far from the origin.
//!
//! **Invariants:** never calls `canon`, `zero` or `tensor`; variables are numbered as in
//! [`Op::Var`] (t, x, y, z, then the parameters in file order); an arbitrary function
//! is a call [`Op::User`] unless its sample is inlined.

use super::dag::{Dag, Fun, Id, Op};
use crate::export::quantity::Quantity;
use crate::tape::{TapeError, Target};
use num_rational::BigRational;

/// The emitter's DAG as a lowering target.
pub struct EmitTarget {
    /// The DAG.
    pub dag: Dag,
    /// Variable names: t, x, y, z, then the parameters.
    vars: Vec<String>,
    /// Arbitrary functions in file order.
    functions: Vec<String>,
    /// True to evaluate functions through their samples.
    inline: bool,
}

impl EmitTarget {
    /// A target with these variables (t, x, y, z, then parameters) and functions.
    #[must_use]
    pub fn new(vars: Vec<String>, functions: Vec<String>, inline: bool) -> EmitTarget {
        EmitTarget {
            dag: Dag::new(),
            vars,
            functions,
            inline,
        }
    }

    fn prod(&mut self, c: f64, num: Vec<Id>, den: Vec<Id>) -> Id {
        self.dag.node(Op::Prod((c + 0.0).to_bits(), num, den))
    }
}

impl Target for EmitTarget {
    type Node = Id;
    fn number(&mut self, q: &BigRational) -> Option<Id> {
        let v = num_traits::ToPrimitive::to_f64(q).filter(|v| v.is_finite())?;
        Some(self.dag.num(v))
    }
    fn pi(&mut self) -> Id {
        self.dag.num(std::f64::consts::PI)
    }
    fn symbol(&mut self, name: &str, sample: Option<&str>) -> Result<Id, TapeError> {
        match self.vars.iter().position(|v| v == name) {
            // Inside a sample only parameters have values.
            Some(i) if sample.is_none() || i >= 4 => Ok(self.dag.node(Op::Var(i as u32))),
            _ => Err(match sample {
                None => TapeError::Unbound(name.to_string()),
                Some(f) => TapeError::UnboundInSample {
                    func: f.to_string(),
                    name: name.to_string(),
                },
            }),
        }
    }
    fn add(&mut self, a: Id, b: Id) -> Id {
        self.dag.node(Op::Sum(vec![a, b]))
    }
    fn sub(&mut self, a: Id, b: Id) -> Id {
        let nb = self.neg(b);
        self.dag.node(Op::Sum(vec![a, nb]))
    }
    fn mul(&mut self, a: Id, b: Id) -> Id {
        self.prod(1.0, vec![a, b], vec![])
    }
    fn div(&mut self, a: Id, b: Id) -> Id {
        self.dag.node(Op::Quot(a, b))
    }
    fn neg(&mut self, a: Id) -> Id {
        if let Op::Num(bits) = self.dag.op(a) {
            let v = -f64::from_bits(*bits);
            return self.dag.num(v);
        }
        self.prod(-1.0, vec![a], vec![])
    }
    fn powi(&mut self, a: Id, k: i32) -> Id {
        match k {
            0 => self.dag.num(1.0),
            1 => a,
            -1 => self.prod(1.0, vec![], vec![a]),
            k if k > 1 => self.dag.node(Op::Pow(a, k.unsigned_abs())),
            k => {
                let p = self.dag.node(Op::Pow(a, k.unsigned_abs()));
                self.prod(1.0, vec![], vec![p])
            }
        }
    }
    fn root(&mut self, a: Id, q: u32) -> Id {
        self.dag.node(Op::Root(a, q))
    }
    fn exp(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Exp, a))
    }
    fn log(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Log, a))
    }
    fn sin(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Sin, a))
    }
    fn cos(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Cos, a))
    }
    fn atan(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Atan, a))
    }
    fn abs(&mut self, a: Id) -> Id {
        self.dag.node(Op::Call(Fun::Abs, a))
    }
    fn atan2(&mut self, y: Id, x: Id) -> Id {
        self.dag.node(Op::Atan2(y, x))
    }
    fn call(&mut self, f: &str, k: u32, arg: Id) -> Option<Id> {
        if self.inline {
            return None;
        }
        let i = self.functions.iter().position(|n| n == f)?;
        Some(self.dag.node(Op::User(i as u32, k, arg)))
    }
}

pub use crate::export::lower::Texts;

/// The DAG roots of every column of `quantities` (one list per quantity, columns in their
/// fixed order), in the emitter's DAG: [`crate::export::lower::roots`] into an
/// [`EmitTarget`].
///
/// # Errors
///
/// As [`crate::export::lower::roots`].
pub fn roots(
    target: EmitTarget,
    texts: &Texts<'_>,
    quantities: &[Quantity],
) -> Result<(Dag, Vec<Vec<Id>>), TapeError> {
    let (t, r) = crate::export::lower::roots(target, texts, quantities)?;
    Ok((t.dag, r))
}

/// As [`roots`], about a background (see [`crate::export::lower::roots_about`]).
///
/// # Errors
///
/// As [`crate::export::lower::roots_about`].
pub fn roots_about(
    target: EmitTarget,
    texts: &Texts<'_>,
    about: &crate::export::lower::About<'_>,
    quantities: &[Quantity],
) -> Result<(Dag, Vec<Vec<Id>>), TapeError> {
    let (t, r) = crate::export::lower::roots_about(target, texts, about, quantities)?;
    Ok((t.dag, r))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::tape::UserExprs;

    const COORDS: [&str; 4] = ["t", "x", "y", "z"];

    fn target(params: &[&str], functions: &[&str], inline: bool) -> EmitTarget {
        let vars = COORDS.iter().chain(params).map(|s| s.to_string()).collect();
        EmitTarget::new(
            vars,
            functions.iter().map(|s| s.to_string()).collect(),
            inline,
        )
    }

    fn h_only(text: &str, mu: usize, nu: usize) -> [[Option<String>; 4]; 4] {
        let mut h: [[Option<String>; 4]; 4] = Default::default();
        h[mu][nu] = Some(text.to_string());
        h
    }

    /// Issue 9: the emitted arithmetic keeps `t - y`, so it is accurate far from the origin.
    /// Reference: mpmath, 50 digits (see the export test of the same pulse).
    #[test]
    fn issue9_emitted_code_keeps_the_user_structure() {
        let h = h_only("exp(-(t - y)^2/(2*s^2))", 1, 1);
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs::default(),
            frame: None,
        };
        let (dag, r) = roots(target(&["s"], &[], false), &texts, &[Quantity::H]).unwrap();
        let vars = [100_000_000.1, 0.0, 100_000_000.0, 0.0, 0.03];
        let mut memo = rustc_hash::FxHashMap::default();
        let v = dag.eval(r[0][4], &vars, &mut memo).unwrap();
        assert!((v / 0.003_865_922_699_771_317 - 1.0).abs() < 1e-9, "{v}");
    }

    /// Riemann of h_xx = F(t - z) through the DAG: R_txtx = -(1/2) F''(t - z); with an
    /// inlined sample F = sin, -(1/2)(-sin(u)) = sin(u)/2.
    #[test]
    fn curvature_from_differentiated_user_structure() {
        let h = h_only("F(t - z)", 1, 1);
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs {
                defines: vec![],
                functions: vec![("F".into(), "sin(u)".into())],
            },
            frame: None,
        };
        let (dag, r) = roots(target(&[], &["F"], true), &texts, &[Quantity::Riemann]).unwrap();
        let (t, z) = (0.7, 0.2);
        let mut memo = rustc_hash::FxHashMap::default();
        let v = dag.eval(r[0][0], &[t, 0.1, 0.3, z], &mut memo).unwrap();
        assert!((v - (t - z).sin() / 2.0).abs() < 1e-15, "{v}");
        // Without inlining, F'' is a call to a supplied function.
        let (dag, r) = roots(target(&[], &["F"], false), &texts, &[Quantity::Riemann]).unwrap();
        let (_, users) = dag.uses(&r[0]);
        assert_eq!(users, [(0, 2)]);
    }

    #[test]
    fn coordinates_inside_samples_and_unknown_names_are_errors() {
        let h = h_only("q*x", 0, 0);
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs::default(),
            frame: None,
        };
        let e = roots(target(&[], &[], false), &texts, &[Quantity::H]).err();
        assert_eq!(e, Some(TapeError::Unbound("q".into())));
        let h = h_only("F(t)", 0, 0);
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs {
                defines: vec![],
                functions: vec![("F".into(), "u*x".into())],
            },
            frame: None,
        };
        let e = roots(target(&[], &["F"], true), &texts, &[Quantity::H]).err();
        assert!(
            matches!(e, Some(TapeError::UnboundInSample { .. })),
            "{e:?}"
        );
    }
}
