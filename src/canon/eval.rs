//! Certified interval evaluation of canonical forms at a point.
//!
//! Design decision: arbitrary functions are evaluated through *sample* functions given as
//! forms in one variable; their derivatives come from the engine's own exact differentiation,
//! so `F''(t - z)` needs nothing but the sample of `F`.

use super::{Form, Kernel, KernelId, Rat, Store};
use crate::interval::{CInterval, Interval};
use rustc_hash::FxHashMap;
use std::rc::Rc;

/// A sample for an arbitrary function: `form` as a function of the symbol `var`.
#[derive(Clone, Debug)]
pub struct FunctionSample {
    /// The symbol the sample is written in.
    pub var: KernelId,
    /// The sample expression.
    pub form: Form,
}

/// Values of symbols and samples of arbitrary functions.
#[derive(Clone, Debug, Default)]
pub struct Point {
    /// Symbol values.
    pub values: FxHashMap<KernelId, CInterval>,
    /// Samples of arbitrary functions, by name.
    pub samples: FxHashMap<Rc<str>, FunctionSample>,
}

struct Memo {
    kernels: FxHashMap<KernelId, Option<CInterval>>,
    forms: FxHashMap<Form, Option<CInterval>>,
}

fn pi_interval() -> CInterval {
    // The f64 nearest pi lies below it, so [pi_f64, next_up(pi_f64)] contains pi.
    let p = std::f64::consts::PI;
    CInterval::from_real(Interval::new(p, p.next_up()).expect("finite"))
}

/// Products and sums of intervals whose imaginary parts are exactly zero stay exactly real:
/// the enclosure [0, 0] says the true imaginary part is 0, and 0 times or plus 0 is exactly 0.
/// Keeping it exact matters on the negative real axis, where the principal log and roots are
/// evaluable only for exactly real arguments.
fn cmul(a: CInterval, b: CInterval) -> Option<CInterval> {
    if a.im == Interval::ZERO && b.im == Interval::ZERO {
        return Some(CInterval::from_real(a.re.mul(b.re)?));
    }
    a.mul(b)
}

fn cadd(a: CInterval, b: CInterval) -> Option<CInterval> {
    if a.im == Interval::ZERO && b.im == Interval::ZERO {
        return Some(CInterval::from_real(a.re.add(b.re)?));
    }
    a.add(b)
}

fn cpowi(a: CInterval, n: i64) -> Option<CInterval> {
    if a.im == Interval::ZERO {
        return Some(CInterval::from_real(a.re.powi(n)?));
    }
    a.powi(n)
}

fn cdiv(a: CInterval, b: CInterval) -> Option<CInterval> {
    if a.im == Interval::ZERO && b.im == Interval::ZERO {
        return Some(CInterval::from_real(a.re.div(b.re)?));
    }
    a.div(b)
}

/// The principal logarithm: off the negative real axis as the interval library computes it,
/// and on it (imaginary part exactly zero, real part negative) as ln|x| + i*pi.
fn principal_log(z: CInterval) -> Option<CInterval> {
    if z.im == Interval::ZERO && z.re.hi() < 0.0 {
        let re = (-z.re).ln()?;
        return Some(CInterval::new(re, pi_interval().re));
    }
    z.log()
}

impl Store {
    /// An enclosure of the value of `f` at `pt`; `None` where it cannot be evaluated (a
    /// missing value, a denominator enclosing zero, a root or logarithm near its branch cut,
    /// overflow).
    pub fn eval_interval(&mut self, f: Form, pt: &Point) -> Option<CInterval> {
        let mut memo = Memo {
            kernels: FxHashMap::default(),
            forms: FxHashMap::default(),
        };
        self.eval_form(f, pt, &mut memo)
    }

    /// A floating-point value (midpoint of the enclosure), for diagnostics and cross-checks.
    pub fn eval_f64(&mut self, f: Form, pt: &Point) -> Option<(f64, f64)> {
        let z = self.eval_interval(f, pt)?;
        Some((z.re.mid(), z.im.mid()))
    }

    fn eval_form(&mut self, f: Form, pt: &Point, memo: &mut Memo) -> Option<CInterval> {
        if let Some(v) = memo.forms.get(&f) {
            return *v;
        }
        let r = self.rats[f.0 as usize].clone();
        let v = (|| {
            let mut num = self.eval_poly(&r.num, pt, memo)?;
            for (fid, e) in &r.den {
                let p = self.factors[fid.0 as usize].clone();
                let d = cpowi(self.eval_poly(&p, pt, memo)?, *e as i64)?;
                num = cdiv(num, d)?;
            }
            Some(num)
        })();
        memo.forms.insert(f, v);
        v
    }

    fn eval_poly(&mut self, p: &super::Poly, pt: &Point, memo: &mut Memo) -> Option<CInterval> {
        let mut acc = CInterval::ZERO;
        for (m, c) in p {
            // The monomial is read in place (the arena only grows), not copied per term.
            let mi = m.0 as usize;
            let mut t = c.to_interval()?;
            for j in 0..self.monos[mi].pows.len() {
                let (k, e) = self.monos[mi].pows[j];
                let kv = self.eval_kernel(k, pt, memo)?;
                t = cmul(t, cpowi(kv, e as i64)?)?;
            }
            if let Some(ex) = self.monos[mi].exp {
                let ev = self.eval_form(ex, pt, memo)?;
                t = cmul(t, ev.exp()?)?;
            }
            acc = cadd(acc, t)?;
        }
        Some(acc)
    }

    fn eval_kernel(&mut self, k: KernelId, pt: &Point, memo: &mut Memo) -> Option<CInterval> {
        if let Some(v) = memo.kernels.get(&k) {
            return *v;
        }
        let v = match self.kernel(k).clone() {
            Kernel::Sym(_) => pt.values.get(&k).copied(),
            Kernel::Pi => Some(pi_interval()),
            Kernel::Root { radicand, q } => {
                let r = self.eval_form(radicand, pt, memo)?;
                // Principal root exp(log(R)/q); log needs Re R > 0 (away from the branch cut).
                let l = principal_log(r)?;
                let inv_q = crate::canon::coeff::rational_interval(&super::Q::new(
                    1.into(),
                    (q as i64).into(),
                ))?;
                let l = CInterval::new(l.re.mul(inv_q)?, l.im.mul(inv_q)?);
                l.exp()
            }
            Kernel::Log(a) => principal_log(self.eval_form(a, pt, memo)?),
            // Certified only near the real axis (see `CInterval::atan`), else "cannot evaluate".
            Kernel::Atan(a) => self.eval_form(a, pt, memo)?.atan(),
            Kernel::Func { name, order, arg } => {
                let a = self.eval_form(arg, pt, memo)?;
                let sample = pt.samples.get(&name)?.clone();
                let mut d = sample.form;
                for _ in 0..order {
                    d = self.diff(d, sample.var).ok()?;
                }
                // The sample sees the same parameter values, with its variable set to the argument.
                let mut inner = pt.clone();
                inner.values.insert(sample.var, a);
                let mut inner_memo = Memo {
                    kernels: FxHashMap::default(),
                    forms: FxHashMap::default(),
                };
                self.eval_form(d, &inner, &mut inner_memo)
            }
        };
        memo.kernels.insert(k, v);
        v
    }

    /// The numerator of `f` as a form (used by the zero test to report witnesses).
    pub fn numerator(&mut self, f: Form) -> Form {
        let r = self.rats[f.0 as usize].clone();
        self.intern_rat(Rat {
            num: r.num.clone(),
            den: Vec::new(),
        })
    }
}
