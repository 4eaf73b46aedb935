//! From canonical forms to tape nodes, through the structural view of the form.
//!
//! A form is read with [`Store::view`]: its numerator's terms (exact coefficient, kernel
//! powers, at most one exponential) over its denominator factors, each kernel by its kind.
//! Nothing is printed or parsed. Exponentials are regrouped as the printer regroups them:
//! each exponent is split into formal real and imaginary parts ([`Store::exponent_parts`]),
//! and the terms `a e^(P + iQ) m + b e^(P - iQ) m` of one kernel monomial `m` become
//! `e^P m ((a + b) cos Q + i (a - b) sin Q)`; so a real expression compiles to a tape whose
//! constants are all real (the real fast path), and a coefficient or an exponent that is not
//! real gives complex constants. Coefficients, exact in Q(sqrt 2, sqrt 3, i), are rounded to
//! complex doubles here, once each.
//!
//! Symbols resolve to inputs (the coordinates) or constants (parameter values), inside a
//! function's sample to the sample's variable or constants.
//!
//! Arbitrary functions `F^(n)(arg)` are evaluated through their samples: the sample is a form
//! in one variable, differentiated `n` times with [`Store::diff`] (this defines the sample's
//! derivatives; it is not a derivative of the perturbation) and compiled with its variable
//! bound to the compiled argument. Shared arguments and repeated calls share nodes through the
//! builder's hash-consing and the compiler's memo (by form and binding).

use super::{C64, Node, TapeBuilder};
use crate::canon::{Coeff, ExpSplit, Form, FunctionSample, Kernel, KernelId, OwnedTerm, Store};
use num_traits::ToPrimitive;
use rustc_hash::FxHashMap;
use std::rc::Rc;

/// Why a form could not be compiled.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum TapeError {
    /// A symbol with no value: not an input and not a constant.
    #[error("`{0}` has no value: it is neither a coordinate nor a parameter")]
    Unbound(String),
    /// A symbol inside a function's sample other than its variable and the parameters.
    #[error("the sample of `{func}` uses `{name}`, which has no value there")]
    UnboundInSample {
        /// The function.
        func: String,
        /// The symbol.
        name: String,
    },
    /// An arbitrary function without a sample.
    #[error("the function `{0}` has no sample to evaluate it with")]
    NoSample(String),
    /// Differentiating a sample ran into a limit.
    #[error("cannot differentiate the sample of `{func}`: {why}")]
    Sample {
        /// The function.
        func: String,
        /// The limit that was hit.
        why: String,
    },
    /// A power too large for the tape.
    #[error("the power {0} is too large to evaluate")]
    Power(String),
    /// Samples that call each other without end.
    #[error("function samples nest deeper than {0} levels")]
    TooDeep(usize),
    /// A text that did not parse (the lowering of the user's texts, [`super::Lowering`]).
    #[error("internal: the printed form `{text}` does not read back: {why}")]
    Reread {
        /// The printed text, cut to a readable length.
        text: String,
        /// The parse error.
        why: String,
    },
    /// Something that the tape does not evaluate (a coefficient beyond the f64 range).
    #[error("cannot evaluate `{0}` on a grid")]
    Unsupported(String),
}

const MAX_DEPTH: usize = 16;

/// Where a symbol is looked up.
#[derive(Clone, Copy)]
enum Scope<'a> {
    /// The expressions themselves: inputs, then constants.
    Top,
    /// Inside the sample of `func`: its variable (bound to `arg`), then constants.
    Sample {
        func: &'a str,
        var: KernelId,
        arg: Node,
        depth: usize,
    },
}

impl Scope<'_> {
    /// What a compiled node depends on besides the form: the binding of the sample variable
    /// (and the depth, which bounds nesting).
    fn key(&self) -> Option<(KernelId, Node, usize)> {
        match *self {
            Scope::Top => None,
            Scope::Sample {
                var, arg, depth, ..
            } => Some((var, arg, depth)),
        }
    }
}

/// The memo's key: a form or a kernel, under a binding.
type MemoKey<T> = (T, Option<(KernelId, Node, usize)>);

/// Compiles forms of one store into one [`TapeBuilder`].
pub struct Compiler<'s> {
    store: &'s mut Store,
    /// The builder the nodes live in.
    pub builder: TapeBuilder,
    inputs: FxHashMap<String, usize>,
    constants: FxHashMap<String, f64>,
    samples: FxHashMap<Rc<str>, FunctionSample>,
    derivatives: FxHashMap<(Rc<str>, u32), (KernelId, Form)>,
    memo: FxHashMap<MemoKey<Form>, Node>,
    kernels: FxHashMap<MemoKey<KernelId>, Node>,
    exponents: FxHashMap<Form, ExpSplit>,
}

/// Terms of one kernel monomial and one exponential pair: `pows * e^re * (a e^(i im) + b
/// e^(-i im))`, or `pows * e^whole * a`.
struct Group {
    pows: Vec<(KernelId, i32)>,
    exp: GroupExp,
    a: Coeff,
    b: Coeff,
}

#[derive(Clone, Copy, PartialEq, Eq, Hash)]
enum GroupExp {
    None,
    /// `e^(re ± i im)`; no `im` when the exponent is real.
    Parts {
        re: Form,
        im: Option<Form>,
    },
    Whole(Form),
}

impl Group {
    /// The coefficients of `cos(im)` and `sin(im)`: `a + b` and `i (a - b)`.
    fn cos_sin(&self) -> (Coeff, Coeff) {
        (self.a.add(&self.b), self.a.sub(&self.b).mul(&Coeff::i()))
    }

    /// The first nonzero coefficient as the group is written out (`a`, or the coefficient of
    /// cos, else of sin).
    fn first_value(&self) -> Option<Coeff> {
        let v = match self.exp {
            GroupExp::Parts { im: Some(_), .. } => {
                let (c, s) = self.cos_sin();
                if c.is_zero() { s } else { c }
            }
            _ => self.a.clone(),
        };
        (!v.is_zero()).then_some(v)
    }

    fn scale(&mut self, c: &Coeff) {
        self.a = self.a.mul(c);
        self.b = self.b.mul(c);
    }
}

impl<'s> Compiler<'s> {
    /// A compiler whose inputs are the symbols `inputs` (input `i` is `inputs[i]`), with
    /// `constants` as the values of the other symbols, and `samples` for the arbitrary
    /// functions.
    pub fn new(
        store: &'s mut Store,
        inputs: &[&str],
        constants: &[(String, f64)],
        samples: &FxHashMap<Rc<str>, FunctionSample>,
    ) -> Compiler<'s> {
        Compiler {
            store,
            builder: TapeBuilder::new(inputs.len()),
            inputs: inputs
                .iter()
                .enumerate()
                .map(|(i, s)| (s.to_string(), i))
                .collect(),
            constants: constants.iter().cloned().collect(),
            samples: samples.clone(),
            derivatives: FxHashMap::default(),
            memo: FxHashMap::default(),
            kernels: FxHashMap::default(),
            exponents: FxHashMap::default(),
        }
    }

    /// The node computing `f`.
    ///
    /// # Errors
    ///
    /// A symbol without a value, a function without a sample, or a sample that cannot be
    /// differentiated within the store's limits.
    pub fn form(&mut self, f: Form) -> Result<Node, TapeError> {
        self.form_in(f, Scope::Top)
    }

    fn form_in(&mut self, f: Form, scope: Scope<'_>) -> Result<Node, TapeError> {
        let key = (f, scope.key());
        if let Some(&n) = self.memo.get(&key) {
            return Ok(n);
        }
        let view = self.store.view(f);
        let num = view.numerator().owned_terms();
        let den: Vec<(Vec<OwnedTerm>, u32)> = view
            .denominator()
            .map(|(p, e)| (p.owned_terms(), e))
            .collect();
        // Each denominator factor is scaled so that its first regrouped coefficient is one,
        // the unit moving into the numerator (as the printer does): a real quotient whose
        // factors were normalised with a complex unit then has real constants throughout.
        let mut scale = Coeff::one();
        let mut factors = Vec::with_capacity(den.len());
        for (p, e) in &den {
            let mut g = self.groups(p);
            if let Some(u) = g.iter().find_map(|g| g.first_value())
                && let Some(inv) = u.inv()
            {
                for x in &mut g {
                    x.scale(&inv);
                }
                for _ in 0..*e {
                    scale = scale.mul(&inv);
                }
            }
            factors.push((g, *e));
        }
        let mut g = self.groups(&num);
        for x in &mut g {
            x.scale(&scale);
        }
        let mut n = self.sum(&g, scope)?;
        if !factors.is_empty() {
            let mut d = self.builder.real(1.0);
            for (g, e) in &factors {
                let x = self.sum(g, scope)?;
                let x = self.power(x, i64::from(*e))?;
                d = self.builder.mul(d, x);
            }
            n = self.builder.div(n, d);
        }
        self.memo.insert(key, n);
        Ok(n)
    }

    /// The split of an exponent (cached: the split builds forms).
    fn exponent(&mut self, e: Form) -> ExpSplit {
        if let Some(&s) = self.exponents.get(&e) {
            return s;
        }
        let s = self.store.exponent_parts(e);
        self.exponents.insert(e, s);
        s
    }

    /// The terms of a polynomial, with the exponentials of each kernel monomial paired.
    fn groups(&mut self, terms: &[OwnedTerm]) -> Vec<Group> {
        let mut groups: Vec<Group> = Vec::new();
        let mut index: FxHashMap<(Vec<(KernelId, i32)>, GroupExp), usize> = FxHashMap::default();
        for t in terms {
            let (exp, conjugate) = match t.exp {
                None => (GroupExp::None, false),
                Some(e) => match self.exponent(e) {
                    ExpSplit::Whole(w) => (GroupExp::Whole(w), false),
                    ExpSplit::Parts { re, im, conjugate } => {
                        let im = (!self.store.is_zero(im)).then_some(im);
                        (GroupExp::Parts { re, im }, conjugate)
                    }
                },
            };
            let slot = *index.entry((t.powers.clone(), exp)).or_insert_with(|| {
                groups.push(Group {
                    pows: t.powers.clone(),
                    exp,
                    a: Coeff::zero(),
                    b: Coeff::zero(),
                });
                groups.len() - 1
            });
            let g = &mut groups[slot];
            if conjugate {
                g.b = g.b.add(&t.coeff);
            } else {
                g.a = g.a.add(&t.coeff);
            }
        }
        groups
    }

    /// The sum of the groups.
    fn sum(&mut self, groups: &[Group], scope: Scope<'_>) -> Result<Node, TapeError> {
        let mut sum = self.builder.real(0.0);
        for g in groups {
            let t = self.group(g, scope)?;
            sum = self.builder.add(sum, t);
        }
        Ok(sum)
    }

    fn group(&mut self, g: &Group, scope: Scope<'_>) -> Result<Node, TapeError> {
        // Kernel powers: positive ones over negative ones.
        let mut up = self.builder.real(1.0);
        let mut down = self.builder.real(1.0);
        for &(k, e) in &g.pows {
            let x = self.kernel(k, scope)?;
            let p = self.power(x, i64::from(e.unsigned_abs()))?;
            if e > 0 {
                up = self.builder.mul(up, p);
            } else {
                down = self.builder.mul(down, p);
            }
        }
        let mut m = self.builder.div(up, down);
        let value = match g.exp {
            GroupExp::None => self.coeff(&g.a)?,
            GroupExp::Whole(w) => {
                let x = self.form_in(w, scope)?;
                let x = self.builder.exp(x);
                let c = self.coeff(&g.a)?;
                self.builder.mul(c, x)
            }
            GroupExp::Parts { re, im } => {
                if !self.store.is_zero(re) {
                    let x = self.form_in(re, scope)?;
                    let x = self.builder.exp(x);
                    m = self.builder.mul(m, x);
                }
                match im {
                    None => self.coeff(&g.a)?,
                    Some(im) => {
                        // a e^(iQ) + b e^(-iQ) = (a + b) cos Q + i (a - b) sin Q.
                        let q = self.form_in(im, scope)?;
                        let (cc, sc) = g.cos_sin();
                        let cc = self.coeff(&cc)?;
                        let sc = self.coeff(&sc)?;
                        let mut v = self.builder.real(0.0);
                        if !self.builder.is_zero(cc) {
                            let c = self.builder.cos(q);
                            v = self.builder.mul(cc, c);
                        }
                        if !self.builder.is_zero(sc) {
                            let s = self.builder.sin(q);
                            let s = self.builder.mul(sc, s);
                            v = self.builder.add(v, s);
                        }
                        v
                    }
                }
            }
        };
        Ok(self.builder.mul(value, m))
    }

    /// An exact coefficient, rounded to a complex double.
    fn coeff(&mut self, c: &Coeff) -> Result<Node, TapeError> {
        let (mut re, mut im) = (0.0, 0.0);
        for (basis, q) in c.components() {
            let v = q
                .to_f64()
                .filter(|v| v.is_finite())
                .ok_or_else(|| TapeError::Unsupported(q.to_string()))?;
            let v = match basis.radicand() {
                1 => v,
                m => v * f64::from(m).sqrt(),
            };
            if basis.is_imaginary() {
                im += v;
            } else {
                re += v;
            }
        }
        Ok(self.builder.constant(C64::new(re, im)))
    }

    /// `x^n` for an exponent of a canonical form.
    fn power(&mut self, x: Node, n: i64) -> Result<Node, TapeError> {
        let n = i32::try_from(n).map_err(|_| TapeError::Power(n.to_string()))?;
        Ok(self.builder.powi(x, n))
    }

    fn kernel(&mut self, k: KernelId, scope: Scope<'_>) -> Result<Node, TapeError> {
        let key = (k, scope.key());
        if let Some(&n) = self.kernels.get(&key) {
            return Ok(n);
        }
        let n = match self.store.kernel(k).clone() {
            Kernel::Sym(name) => self.symbol(k, &name, scope)?,
            Kernel::Pi => self.builder.real(std::f64::consts::PI),
            Kernel::Root { radicand, q } => {
                let x = self.form_in(radicand, scope)?;
                self.builder.root(x, q)
            }
            Kernel::Log(a) => {
                let x = self.form_in(a, scope)?;
                self.builder.log(x)
            }
            Kernel::Atan(a) => {
                // atan(x) = (i/2)(log(1 - i x) - log(1 + i x)), the principal branches.
                let x = self.form_in(a, scope)?;
                let one = self.builder.real(1.0);
                let i = self.builder.constant(C64::new(0.0, 1.0));
                let ix = self.builder.mul(i, x);
                let m = self.builder.sub(one, ix);
                let p = self.builder.add(one, ix);
                let lm = self.builder.log(m);
                let lp = self.builder.log(p);
                let d = self.builder.sub(lm, lp);
                let half_i = self.builder.constant(C64::new(0.0, 0.5));
                self.builder.mul(half_i, d)
            }
            Kernel::Func { name, order, arg } => {
                let a = self.form_in(arg, scope)?;
                self.call(&name, order, a, scope)?
            }
        };
        self.kernels.insert(key, n);
        Ok(n)
    }

    fn symbol(&mut self, k: KernelId, n: &str, scope: Scope<'_>) -> Result<Node, TapeError> {
        let unbound = match scope {
            Scope::Top => {
                if let Some(&i) = self.inputs.get(n) {
                    return Ok(self.builder.input(i));
                }
                TapeError::Unbound(n.to_string())
            }
            Scope::Sample { func, var, arg, .. } => {
                if k == var {
                    return Ok(arg);
                }
                TapeError::UnboundInSample {
                    func: func.to_string(),
                    name: n.to_string(),
                }
            }
        };
        match self.constants.get(n) {
            Some(&v) => Ok(self.builder.real(v)),
            None => Err(unbound),
        }
    }

    /// `F^(order)(arg)`.
    fn call(
        &mut self,
        name: &str,
        order: u32,
        arg: Node,
        scope: Scope<'_>,
    ) -> Result<Node, TapeError> {
        let depth = match scope {
            Scope::Top => 0,
            Scope::Sample { depth, .. } => depth + 1,
        };
        if depth >= MAX_DEPTH {
            return Err(TapeError::TooDeep(MAX_DEPTH));
        }
        let (var, form) = self.derivative(name, order)?;
        let inner = Scope::Sample {
            func: name,
            var,
            arg,
            depth,
        };
        self.form_in(form, inner)
    }

    /// The `order`-th derivative of `name`'s sample, with the sample's variable.
    fn derivative(&mut self, name: &str, order: u32) -> Result<(KernelId, Form), TapeError> {
        let key: (Rc<str>, u32) = (Rc::from(name), order);
        if let Some(&d) = self.derivatives.get(&key) {
            return Ok(d);
        }
        let sample = self
            .samples
            .get(name)
            .cloned()
            .ok_or_else(|| TapeError::NoSample(name.to_string()))?;
        if !matches!(self.store.kernel(sample.var), Kernel::Sym(_)) {
            return Err(TapeError::NoSample(name.to_string()));
        }
        let mut form = sample.form;
        for _ in 0..order {
            form = self
                .store
                .diff(form, sample.var)
                .map_err(|e| TapeError::Sample {
                    func: name.to_string(),
                    why: e.to_string(),
                })?;
        }
        self.derivatives.insert(key, (sample.var, form));
        Ok((sample.var, form))
    }
}
