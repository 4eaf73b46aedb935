//! A straight-line program in certified interval arithmetic: the fast path of `export`.
//!
//! Model. The export quantities, built from the problem's texts with their derivatives taken
//! symbolically on the user-structure DAG ([`super::lower`]), are lowered once into a list of
//! instructions over f64 intervals with outward rounding ([`crate::interval::Interval`]);
//! common subexpressions are shared by hash-consing. Evaluating a point is one pass over the
//! list: no Taylor coefficients, no allocation beyond the register file. Values whose
//! enclosure is too wide for the tolerance go on to the multiprecision route of
//! [`super::certify`].
//!
//! **Invariants:** every instruction returns an enclosure of the exact result for every real
//! in its operands, or `None` ("cannot evaluate here"), which spreads; constants are exact
//! rationals enclosed outward; parameters are the exact f64 values given.

use crate::interval::Interval;
use crate::jet::Scalar;
use crate::jet::scalar::rational_interval;
use crate::tape::{TapeError, Target};
use num_rational::BigRational;
use rustc_hash::FxHashMap;

/// An exact constant of the program.
#[derive(Clone, Debug)]
enum Exact {
    Rational(BigRational),
    Pi,
    /// A parameter's f64 value (exact as given).
    Value(f64),
}

/// An instruction; operands are earlier registers.
#[derive(Clone, Copy, Debug)]
enum Instr {
    /// Constant number `k` (its f64 enclosure and its exact value in `exact[k]`).
    Const(Interval, u32),
    Input(u8),
    Add(u32, u32),
    Sub(u32, u32),
    Mul(u32, u32),
    Div(u32, u32),
    Neg(u32),
    PowI(u32, i32),
    Root(u32, u32),
    Exp(u32),
    Log(u32),
    Sin(u32),
    Cos(u32),
}

/// The hash-consing key of an instruction (constants by their bits).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
enum Key {
    Const(u64, u64),
    Input(u8),
    Op(u8, u32, u32),
}

fn key(i: &Instr) -> Key {
    match *i {
        Instr::Const(_, k) => Key::Const(u64::from(k), 0),
        Instr::Input(k) => Key::Input(k),
        Instr::Add(a, b) => Key::Op(0, a, b),
        Instr::Sub(a, b) => Key::Op(1, a, b),
        Instr::Mul(a, b) => Key::Op(2, a, b),
        Instr::Div(a, b) => Key::Op(3, a, b),
        Instr::Neg(a) => Key::Op(4, a, 0),
        Instr::PowI(a, k) => Key::Op(5, a, k as u32),
        Instr::Root(a, q) => Key::Op(6, a, q),
        Instr::Exp(a) => Key::Op(7, a, 0),
        Instr::Log(a) => Key::Op(8, a, 0),
        Instr::Sin(a) => Key::Op(9, a, 0),
        Instr::Cos(a) => Key::Op(10, a, 0),
    }
}

/// The program being built and then run: coordinates `t, x, y, z` are inputs 0..4,
/// parameters are constants.
#[derive(Clone, Debug, Default)]
pub struct IntervalProgram {
    instrs: Vec<Instr>,
    index: FxHashMap<Key, u32>,
    parameters: Vec<(String, f64)>,
    exact: Vec<Exact>,
    constants_index: FxHashMap<ExactKey, u32>,
}

/// The sharing key of a constant: its exact value (numerator and denominator hashed as
/// integers; a rational's own hash recurses over its continued fraction).
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
enum ExactKey {
    Rational(num_bigint::BigInt, num_bigint::BigInt),
    Pi,
    Value(u64),
}

const COORDS: [&str; 4] = ["t", "x", "y", "z"];

impl IntervalProgram {
    /// An empty program with these parameter values.
    #[must_use]
    pub fn new(parameters: &[(String, f64)]) -> IntervalProgram {
        IntervalProgram {
            parameters: parameters.to_vec(),
            ..IntervalProgram::default()
        }
    }

    /// A constant, shared by its exact value (two rationals with the same f64 enclosure
    /// stay two constants: the multiprecision run tells them apart).
    fn constant(&mut self, c: Interval, e: Exact) -> u32 {
        let k = match &e {
            Exact::Rational(q) => ExactKey::Rational(q.numer().clone(), q.denom().clone()),
            Exact::Pi => ExactKey::Pi,
            Exact::Value(v) => ExactKey::Value(v.to_bits()),
        };
        if let Some(&r) = self.constants_index.get(&k) {
            return r;
        }
        self.exact.push(e);
        let r = self.instrs.len() as u32;
        self.instrs
            .push(Instr::Const(c, (self.exact.len() - 1) as u32));
        self.constants_index.insert(k, r);
        r
    }

    /// The constants enclosed in `S` at its working precision, for [`IntervalProgram::run_in`].
    #[must_use]
    pub fn constants<S: Scalar>(&self, ctx: &S::Ctx) -> Vec<Option<S>> {
        self.exact
            .iter()
            .map(|e| match e {
                Exact::Rational(q) => S::from_rational(q, ctx),
                Exact::Pi => S::pi(ctx),
                Exact::Value(v) => S::input(*v, ctx),
            })
            .collect()
    }

    /// Runs the program at `(t, x, y, z)` in enclosure arithmetic `S` (multiprecision balls
    /// where f64 intervals are too wide), with `constants` from
    /// [`IntervalProgram::constants`] at the same precision.
    pub fn run_in<S: Scalar>(
        &self,
        point: [f64; 4],
        ctx: &S::Ctx,
        constants: &[Option<S>],
        regs: &mut Vec<Option<S>>,
    ) {
        regs.clear();
        regs.reserve(self.instrs.len());
        for i in &self.instrs {
            let r = |k: u32| regs[k as usize].as_ref();
            let v = match *i {
                Instr::Const(_, k) => constants[k as usize].clone(),
                Instr::Input(k) => S::input(point[k as usize], ctx),
                Instr::Add(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.add(y)),
                Instr::Sub(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.sub(y)),
                Instr::Mul(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.mul(y)),
                Instr::Div(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.div(y)),
                Instr::Neg(a) => r(a).map(Scalar::neg),
                Instr::PowI(a, k) => r(a).and_then(|x| x.powi(i64::from(k))),
                Instr::Root(a, q) => r(a).and_then(|x| root_in(x, q, ctx)),
                Instr::Exp(a) => r(a).and_then(Scalar::exp),
                Instr::Log(a) => r(a).and_then(Scalar::ln),
                Instr::Sin(a) => r(a).and_then(Scalar::sin),
                Instr::Cos(a) => r(a).and_then(Scalar::cos),
            };
            regs.push(v);
        }
    }

    fn push(&mut self, i: Instr) -> u32 {
        let k = key(&i);
        if let Some(&r) = self.index.get(&k) {
            return r;
        }
        let r = self.instrs.len() as u32;
        self.instrs.push(i);
        self.index.insert(k, r);
        r
    }

    /// Number of instructions.
    #[must_use]
    pub fn len(&self) -> usize {
        self.instrs.len()
    }

    /// True for an empty program.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.instrs.is_empty()
    }

    /// Runs the program at `(t, x, y, z)` into `regs` (resized as needed).
    pub fn run(&self, point: [f64; 4], regs: &mut Vec<Option<Interval>>) {
        regs.clear();
        regs.reserve(self.instrs.len());
        for i in &self.instrs {
            let r = |k: u32| regs[k as usize];
            let v = match *i {
                Instr::Const(c, _) => Some(c),
                Instr::Input(k) => Interval::point(point[k as usize]),
                Instr::Add(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.add(y)),
                Instr::Sub(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.sub(y)),
                Instr::Mul(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.mul(y)),
                Instr::Div(a, b) => r(a).zip(r(b)).and_then(|(x, y)| x.div(y)),
                Instr::Neg(a) => r(a).map(|x| -x),
                Instr::PowI(a, k) => r(a).and_then(|x| x.powi(i64::from(k))),
                Instr::Root(a, q) => r(a).and_then(|x| root(x, q)),
                Instr::Exp(a) => r(a).and_then(Interval::exp),
                Instr::Log(a) => r(a).and_then(Interval::ln),
                Instr::Sin(a) => r(a).map(Interval::sin),
                Instr::Cos(a) => r(a).map(Interval::cos),
            };
            regs.push(v);
        }
    }
}

/// [`root`] in any enclosure arithmetic.
fn root_in<S: Scalar>(x: &S, q: u32, ctx: &S::Ctx) -> Option<S> {
    if q == 2 {
        return x.sqrt();
    }
    if x.is_exact_zero() {
        return Some(S::zero());
    }
    if !x.is_positive() {
        return None;
    }
    x.ln()?.div(&S::from_i64(i64::from(q), ctx)?)?.exp()
}

/// The principal real `x^(1/q)`: `sqrt` for `q = 2`, `exp(ln(x)/q)` for positive `x`, exactly
/// 0 at 0; `None` where it is not real or the enclosure reaches below 0.
fn root(x: Interval, q: u32) -> Option<Interval> {
    if q == 2 {
        return x.sqrt();
    }
    if x.lo() == 0.0 && x.hi() == 0.0 {
        return Some(Interval::ZERO);
    }
    if x.lo() <= 0.0 {
        return None;
    }
    let inv_q = Interval::point(1.0)?.div(Interval::point(f64::from(q))?)?;
    x.ln()?.mul(inv_q)?.exp()
}

impl Target for IntervalProgram {
    type Node = u32;
    fn number(&mut self, q: &BigRational) -> Option<u32> {
        let c = rational_interval(q)?;
        Some(self.constant(c, Exact::Rational(q.clone())))
    }
    fn pi(&mut self) -> u32 {
        // The double nearest to pi is below it; one ulp either side encloses it.
        let pi = Interval::around(std::f64::consts::PI).expect("finite");
        self.constant(pi, Exact::Pi)
    }
    fn symbol(&mut self, name: &str, sample: Option<&str>) -> Result<u32, TapeError> {
        if let Some((_, v)) = self.parameters.iter().find(|(n, _)| n == name) {
            let v = *v;
            let c = Interval::point(v).ok_or_else(|| TapeError::Unsupported(name.into()))?;
            return Ok(self.constant(c, Exact::Value(v)));
        }
        match (COORDS.iter().position(|c| *c == name), sample) {
            (Some(k), None) => Ok(self.push(Instr::Input(k as u8))),
            (_, None) => Err(TapeError::Unbound(name.to_string())),
            (_, Some(f)) => Err(TapeError::UnboundInSample {
                func: f.to_string(),
                name: name.to_string(),
            }),
        }
    }
    fn add(&mut self, a: u32, b: u32) -> u32 {
        self.push(Instr::Add(a, b))
    }
    fn sub(&mut self, a: u32, b: u32) -> u32 {
        self.push(Instr::Sub(a, b))
    }
    fn mul(&mut self, a: u32, b: u32) -> u32 {
        self.push(Instr::Mul(a, b))
    }
    fn div(&mut self, a: u32, b: u32) -> u32 {
        self.push(Instr::Div(a, b))
    }
    fn neg(&mut self, a: u32) -> u32 {
        self.push(Instr::Neg(a))
    }
    fn powi(&mut self, a: u32, k: i32) -> u32 {
        self.push(Instr::PowI(a, k))
    }
    fn root(&mut self, a: u32, q: u32) -> u32 {
        self.push(Instr::Root(a, q))
    }
    fn exp(&mut self, a: u32) -> u32 {
        self.push(Instr::Exp(a))
    }
    fn log(&mut self, a: u32) -> u32 {
        self.push(Instr::Log(a))
    }
    fn sin(&mut self, a: u32) -> u32 {
        self.push(Instr::Sin(a))
    }
    fn cos(&mut self, a: u32) -> u32 {
        self.push(Instr::Cos(a))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::export::lower::{Texts, roots};
    use crate::export::quantity::Quantity;
    use crate::tape::UserExprs;

    /// The program's enclosures contain the true values: R_txtx of h_xx = sin(w (t - z)) is
    /// (w^2/2) sin(w (t - z)) (MTW sign: R_txtx = -(1/2) d_t d_t h_xx).
    #[test]
    fn curvature_enclosures_contain_the_value() {
        let mut h: [[Option<String>; 4]; 4] = Default::default();
        h[1][1] = Some("sin(w*(t - z))".into());
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs::default(),
            frame: None,
        };
        let p = IntervalProgram::new(&[("w".into(), 3.0)]);
        let (p, r) = roots(p, &texts, &[Quantity::Riemann]).unwrap();
        let mut regs = Vec::new();
        let (t, z) = (0.7, 0.2);
        p.run([t, 0.0, 0.0, z], &mut regs);
        let v = regs[r[0][0] as usize].unwrap();
        let want = 4.5 * (3.0f64 * (t - z)).sin();
        assert!(v.lo() <= want && want <= v.hi(), "{v:?} vs {want}");
        assert!(v.hi() - v.lo() < 1e-13, "{v:?}");
        // A singular point gives None, not a number.
        let mut h: [[Option<String>; 4]; 4] = Default::default();
        h[0][0] = Some("1/x".into());
        let texts = Texts {
            h: &h,
            source: None,
            user: UserExprs::default(),
            frame: None,
        };
        let (p, r) = roots(IntervalProgram::new(&[]), &texts, &[Quantity::H]).unwrap();
        p.run([0.0, 0.0, 1.0, 1.0], &mut regs);
        assert!(regs[r[0][0] as usize].is_none());
    }

    #[test]
    fn roots_of_order_three_are_real_only_for_positive_arguments() {
        let x = Interval::point(8.0).unwrap();
        let r = root(x, 3).unwrap();
        assert!(r.lo() <= 2.0 && 2.0 <= r.hi() && r.hi() - r.lo() < 1e-14);
        assert!(root(Interval::point(-8.0).unwrap(), 3).is_none());
        assert_eq!(root(Interval::ZERO, 3), Some(Interval::ZERO));
    }
}
