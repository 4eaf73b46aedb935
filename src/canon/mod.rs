//! Canonical forms: expressions as rational functions over kernels with exact coefficients.
//!
//! Model. A canonical form ([`Form`]) is a quotient `N / D`:
//! - `N` is an expanded sum of terms `c * m`, with `c` an exact [`Coeff`] in Q(sqrt 2, sqrt 3, i)
//!   and `m` a monomial: a product of kernel powers (integer exponents, negative allowed) times
//!   at most one exponential `exp(E)`, `E` itself a canonical form.
//! - `D` is a product of powers of normalised multi-term polynomials, kept *factored*, so that
//!   common denominators need no gcd: N / D is zero exactly when N is.
//! - Kernels are symbols, `pi`, principal roots `R^(1/q)`, logarithms, principal arctangents
//!   and arbitrary functions `F^(n)(arg)`, each with canonical arguments, interned once.
//!
//! Key design decision: trigonometric and hyperbolic functions are rewritten through
//! exponentials (sin a = (e^(ia) - e^(-ia))/(2i)), and exponentials merge (e^a e^b = e^(a+b)),
//! so every trig identity with symbolic arguments becomes polynomial arithmetic. The constant
//! part i*pi*k/12 of an exponent is taken out exactly as a coefficient (the field holds all
//! 24th roots of unity). Every rewrite is an identity of the principal branches: sqrt(x^2) stays
//! a root kernel with the relation k^2 = x^2, never x.
//!
//! Soundness argument for "zero": each construction step replaces an expression by an equal
//! one (where both are defined), so a numerator that cancels to no terms proves the expression
//! zero wherever it is defined. `atan(A)` is a kernel with no rewrite (only atan(0) = 0), so it
//! adds no identity; its derivative A'/(1 + A^2) holds wherever atan is analytic (off its cuts
//! on the imaginary axis). `abs(u)` is built as sqrt(u^2), equal to |u| for real u only, so it is
//! built only when [`Store::is_real_shown`] proves u real (coordinates, parameters and the
//! values of arbitrary functions being real by convention); a verdict on an expression with
//! `abs` therefore holds at the real points where it is defined, with arbitrary functions
//! real-valued. `atan2(y, x)` is built as 2 atan(y/(sqrt(x^2 + y^2) + x)) for y, x shown real,
//! exact off its cut x <= 0, y = 0, where it is left undefined (the argument is in
//! `build.rs`); its half-angle kernel is differentiated by the equal (x y' - y x') /
//! (2 (x^2 + y^2)) (`Store::half_angle_atan`). Completeness is partial (kernels may be algebraically
//! dependent in ways not modelled, e.g. log(x^2) and log(x)); the zero tester then falls back
//! to certified numerical witnesses or says "undecided".
//!
//! **Invariants:** coefficients are exact (floating point appears only in [`crate::zero`]'s
//! witnesses); a form is interned, so equal forms in one [`Store`] have equal ids; the numerator
//! never holds a zero coefficient; root kernels appear with exponents in `0..q`.

mod build;
pub(crate) mod coeff;
mod diff;
mod eval;
mod print;
mod view;

pub use build::{BUILTINS, BuildError, Names, Unknown};
pub use coeff::{Basis, Coeff, Q};
pub use eval::{FunctionSample, Point};
pub use print::{Naming, Pretty, latex_name};
pub use view::{ExpSplit, FormView, MonoView, OwnedTerm, PolyView, TermView};

use num_bigint::BigInt;
use num_integer::Integer;
use num_traits::{Signed, ToPrimitive, Zero};
use rustc_hash::FxHashMap;
use std::rc::Rc;
use std::time::Instant;

/// A canonical form in a [`Store`]. Equal forms of one store have equal ids.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub struct Form(u32);

/// An interned kernel.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub struct KernelId(u32);

/// An interned monomial.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
struct MonoId(u32);

/// An interned denominator factor (a normalised polynomial with two or more terms).
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
struct FactorId(u32);

/// The indivisible building blocks of canonical forms.
#[derive(Clone, PartialEq, Eq, Hash, Debug)]
pub enum Kernel {
    /// A symbol: a coordinate, a parameter or a free symbol.
    Sym(Rc<str>),
    /// The constant pi.
    Pi,
    /// The principal root `radicand^(1/q)`, `q >= 2`.
    Root {
        /// What is under the root.
        radicand: Form,
        /// The root's order.
        q: u32,
    },
    /// The principal natural logarithm.
    Log(Form),
    /// The principal arctangent (real on the real line, cuts on the imaginary axis beyond
    /// +-i); its argument is canonical.
    Atan(Form),
    /// An arbitrary function of one argument, differentiated `order` times.
    Func {
        /// The function's name.
        name: Rc<str>,
        /// How many derivatives.
        order: u32,
        /// The argument.
        arg: Form,
    },
}

#[derive(Clone, PartialEq, Eq, Hash, Debug)]
struct Mono {
    /// Sorted by kernel id, no zero exponents.
    pows: Vec<(KernelId, i32)>,
    /// The exponent of the monomial's exponential factor, if any (never the zero form).
    exp: Option<Form>,
}

type Term = (MonoId, Coeff);
/// The most kernels a denominator factor may involve to be divided out
/// ([`Store::divide_terms`]).
const DIV_KERNELS: usize = 8;
/// An exponent vector over a factor's kernels ([`Store::divide_terms`]).
type DivExponents = [i32; DIV_KERNELS];
/// A long division's quotient monomials, in the order made, and its quotient (indices into
/// them) if it divided exactly ([`Store::divide_terms`]).
struct Division {
    made: Vec<Mono>,
    quotient: Option<Vec<(usize, Coeff)>>,
}
/// Sorted by monomial id, no zero coefficients.
type Poly = Vec<Term>;
/// The terms of a product of numerators: those summed by monomial (distinct monomials, no
/// zero coefficient, in no order), and those that bring a further factor along (see
/// [`Store::products_by_monomial`]).
type Products = (Vec<Term>, Vec<(MonoId, Coeff, Form)>);
/// The number of term pairs from which a product packs its exponents.
const PACKED_MIN_PAIRS: usize = 32;
/// The product of two monomials' exponentials: the exponent (none for 1), a coefficient and a
/// further factor ([`Store::exp_mul`]).
type ExpProduct = (Option<Form>, Coeff, Form);
/// The most pairs of distinct exponentials a packed product tabulates.
const PAIR_TABLE_MAX: usize = 1 << 16;
/// Kernels per packed exponent vector ([`Store::products_packed`]).
const LANES: usize = 8;
/// Bits per kernel in a packed exponent vector.
const LANE_BITS: u32 = 16;
/// A lane holds the exponent plus this bias; operands' exponents are within `±LANE_MAX`, so
/// a lane of a product (at most `2 LANE_MAX + 2 LANE_BIAS` before the bias is taken off
/// once) never carries into the next.
const LANE_BIAS: u128 = 1 << 14;
/// The largest exponent (in magnitude) that [`Store::products_packed`] packs.
const LANE_MAX: i32 = 1 << 13;
/// The terms of [`Store::linear`] over one denominator: its factors (like [`Rat::den`]) and
/// the numerator's coefficient per monomial.
type DenGroup = (Vec<(FactorId, u32)>, FxHashMap<MonoId, Coeff>);

/// A linear combination being summed: its terms by denominator, in order of first
/// appearance ([`Store::linear`], [`Store::dot`]).
#[derive(Default)]
struct Combination {
    groups: Vec<DenGroup>,
    total: usize,
}

impl Combination {
    /// Adds `k * r`; returns the largest group's term count so far (for the size limit).
    fn add(&mut self, k: &Coeff, r: &Rat) -> usize {
        let g = match self.groups.iter().position(|(d, _)| *d == r.den) {
            Some(i) => i,
            None => {
                self.groups.push((r.den.clone(), FxHashMap::default()));
                self.groups.len() - 1
            }
        };
        let acc = &mut self.groups[g].1;
        let unit = k.is_one();
        for (m, c) in &r.num {
            let scaled;
            let c = if unit {
                c
            } else {
                scaled = c.mul(k);
                &scaled
            };
            match acc.get_mut(m) {
                Some(e) => *e = e.add(c),
                None => {
                    acc.insert(*m, c.clone());
                }
            }
        }
        self.total = self.total.max(acc.len());
        self.total
    }
}

#[derive(Clone, PartialEq, Eq, Debug)]
struct Rat {
    num: Poly,
    /// Sorted by factor id, positive exponents.
    den: Vec<(FactorId, u32)>,
}

/// Hashes the denominator, the number of terms and at most [`RAT_HASH_TERMS`] terms at
/// evenly spread positions: interning a large form then costs a fixed amount of hashing
/// (equality, checked on every hit, still compares everything). Equal forms hash equal: the
/// positions depend only on the length.
impl std::hash::Hash for Rat {
    fn hash<H: std::hash::Hasher>(&self, h: &mut H) {
        self.den.hash(h);
        let n = self.num.len();
        h.write_usize(n);
        if n <= RAT_HASH_TERMS {
            self.num.hash(h);
        } else {
            for k in 0..RAT_HASH_TERMS {
                self.num[k * (n - 1) / (RAT_HASH_TERMS - 1)].hash(h);
            }
        }
    }
}

/// How many terms of a form its hash reads.
const RAT_HASH_TERMS: usize = 16;

/// Why a computation on canonical forms stopped.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum CanonError {
    /// An intermediate result grew past the term limit.
    #[error("too large: an intermediate result has over {0} terms")]
    TooLarge(usize),
    /// The time limit ran out.
    #[error("too slow: stopped after the time limit of {0} ms")]
    Timeout(u64),
    /// Division by an expression that is identically zero.
    #[error("division by an expression that is identically zero")]
    DivisionByZero,
    /// A power that is not defined, such as 0^(-1).
    #[error("{0}")]
    Undefined(String),
    /// The process passed its memory cap (in MiB; see [`crate::budget`]).
    #[error("too large: memory use passed the cap of {0} MiB")]
    MemoryCap(u64),
    /// An exact coefficient would grow past the size cap (in bits).
    #[error("too large: an exact number would have over {0} bits")]
    NumberTooLarge(u64),
    /// A power or root beyond the exponent caps ([`MAX_POWER`], [`MAX_ROOT`]).
    #[error(
        "too large: an exponent beyond the limits (integer powers up to {MAX_POWER} in \
         magnitude, roots up to order {MAX_ROOT})"
    )]
    PowerTooLarge,
}

/// The largest magnitude of an integer power (or of the numerator of a rational one) that
/// the canonical form builds.
pub const MAX_POWER: i64 = 10_000;

/// The largest order of a root (the denominator of a rational power).
pub const MAX_ROOT: u32 = 1000;

impl CanonError {
    /// True for the errors that mean "a size, time or memory limit was reached" (the answer
    /// is undecided), as opposed to an expression that is not defined.
    pub fn is_limit(&self) -> bool {
        matches!(
            self,
            CanonError::TooLarge(_)
                | CanonError::Timeout(_)
                | CanonError::NumberTooLarge(_)
                | CanonError::PowerTooLarge
                | CanonError::MemoryCap(_)
        )
    }
}

/// The largest numerator or denominator, in bits, that a product of coefficients may reach.
/// Big-integer gcds grow with the square of the size, so this bounds the time of every
/// coefficient operation (2^18 bits is about 79,000 decimal digits).
pub const MAX_COEFF_BITS: u64 = 1 << 18;

/// Result of an operation on canonical forms.
pub type CResult<T> = Result<T, CanonError>;

/// Limits that keep every computation bounded.
#[derive(Clone, Copy, Debug)]
pub struct Limits {
    /// Largest number of terms any intermediate numerator may have.
    pub max_terms: usize,
    /// Wall-clock budget, checked inside multiplication.
    pub deadline: Option<(Instant, u64)>,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_terms: 200_000,
            deadline: None,
        }
    }
}

/// The arena of canonical forms, kernels and monomials, with the caches of derived results.
pub struct Store {
    kernels: Vec<Kernel>,
    kernel_ids: FxHashMap<Kernel, KernelId>,
    monos: Vec<Mono>,
    mono_ids: FxHashMap<Mono, MonoId>,
    factors: Vec<Poly>,
    factor_ids: FxHashMap<Poly, FactorId>,
    rats: Vec<Rc<Rat>>,
    rat_ids: FxHashMap<Rc<Rat>, Form>,
    mono_mul_cache: FxHashMap<(MonoId, MonoId), (MonoId, Coeff, Form)>,
    exp_mul_cache: FxHashMap<(Option<Form>, Option<Form>), ExpProduct>,
    /// The kernel lists of packed products ([`Store::products_packed`]), numbered.
    kernel_sets: FxHashMap<Vec<KernelId>, u32>,
    /// Monomials by kernel list, packed powers and exponential.
    packed_monos: FxHashMap<(u32, u128, Option<Form>), MonoId>,
    /// Calls of [`Store::check_size`] (it reads the clock on every 16th).
    size_checks: std::cell::Cell<u32>,
    diff_cache: FxHashMap<(Form, KernelId), Form>,
    dlog_cache: FxHashMap<(KernelId, KernelId), Form>,
    dlog_mono_cache: FxHashMap<(MonoId, KernelId), Form>,
    deps_cache: FxHashMap<KernelId, Rc<[KernelId]>>,
    form_deps_cache: FxHashMap<Form, Rc<[KernelId]>>,
    /// Real and imaginary parts of exponents ([`Store::split_re_im`]), for the printers.
    re_im_cache: FxHashMap<Form, (Form, Form)>,
    /// Root kernels `sqrt(u^2)` and `sqrt(x^2 + y^2)` built by [`Store::sqrt_of_squares`]
    /// for `abs` and `atan2` of arguments shown real: their radicand is `>= 0`
    /// ([`Store::is_real_shown`]).
    square_roots: rustc_hash::FxHashSet<KernelId>,
    /// Symbol kernels by name ([`Store::symbol_kernel`]), so that a name read again (every
    /// coordinate of every written term) is found without building a kernel to look up.
    symbol_ids: FxHashMap<Box<str>, KernelId>,
    /// `atan` kernels that are half angles of `atan2(y, x)` ([`Store::half_angle_atan`]),
    /// with their `(y, x)`: differentiated by the angle's own rule.
    atan2_args: FxHashMap<KernelId, (Form, Form)>,
    /// Root kernels `sqrt(u^2)` built by [`Store::abs_of_real`], with their `u`: the display
    /// printers write them as `abs(u)`.
    abs_args: FxHashMap<KernelId, Form>,
    /// The limits in force.
    pub limits: Limits,
    /// The names the display printers use (`Store::to_display_text`; set by
    /// `Store::set_display_names`), never the canonical printers.
    display: Option<Rc<print::Naming>>,
    /// Set while a display printer runs.
    naming: Option<Rc<print::Naming>>,
    /// Whether the display printers print in display form (`Store::set_display_names`).
    display_on: bool,
    /// True while a display printer runs in display form.
    displaying: bool,
    /// Sums of more terms than this print their sines and cosines as they are, not
    /// regrouped into products (lower while a summary is printed).
    trig_terms: usize,
    unit: MonoId,
    zero: Form,
    one: Form,
}

impl Default for Store {
    fn default() -> Self {
        Store::new()
    }
}

impl Store {
    /// An empty store with default limits.
    pub fn new() -> Store {
        let mut s = Store {
            kernels: Vec::new(),
            kernel_ids: FxHashMap::default(),
            monos: Vec::new(),
            mono_ids: FxHashMap::default(),
            factors: Vec::new(),
            factor_ids: FxHashMap::default(),
            rats: Vec::new(),
            rat_ids: FxHashMap::default(),
            mono_mul_cache: FxHashMap::default(),
            exp_mul_cache: FxHashMap::default(),
            kernel_sets: FxHashMap::default(),
            packed_monos: FxHashMap::default(),
            size_checks: std::cell::Cell::new(0),
            diff_cache: FxHashMap::default(),
            dlog_cache: FxHashMap::default(),
            dlog_mono_cache: FxHashMap::default(),
            deps_cache: FxHashMap::default(),
            form_deps_cache: FxHashMap::default(),
            re_im_cache: FxHashMap::default(),
            square_roots: rustc_hash::FxHashSet::default(),
            symbol_ids: FxHashMap::default(),
            atan2_args: FxHashMap::default(),
            abs_args: FxHashMap::default(),
            limits: Limits::default(),
            display: None,
            naming: None,
            display_on: false,
            displaying: false,
            trig_terms: print::trig::MAX_TERMS,
            unit: MonoId(0),
            zero: Form(0),
            one: Form(0),
        };
        s.unit = s.intern_mono(Mono {
            pows: Vec::new(),
            exp: None,
        });
        s.zero = s.intern_rat(Rat {
            num: Vec::new(),
            den: Vec::new(),
        });
        s.one = s.intern_rat(Rat {
            num: vec![(s.unit, Coeff::one())],
            den: Vec::new(),
        });
        s
    }

    // ----- interning -------------------------------------------------------------------

    fn intern_kernel(&mut self, k: Kernel) -> KernelId {
        if let Some(&id) = self.kernel_ids.get(&k) {
            return id;
        }
        let id = KernelId(self.kernels.len() as u32);
        self.kernels.push(k.clone());
        self.kernel_ids.insert(k, id);
        id
    }
    fn intern_mono(&mut self, m: Mono) -> MonoId {
        if let Some(&id) = self.mono_ids.get(&m) {
            return id;
        }
        let id = MonoId(self.monos.len() as u32);
        self.monos.push(m.clone());
        self.mono_ids.insert(m, id);
        id
    }
    fn intern_factor(&mut self, p: Poly) -> FactorId {
        if let Some(&id) = self.factor_ids.get(&p) {
            return id;
        }
        let id = FactorId(self.factors.len() as u32);
        self.factors.push(p.clone());
        self.factor_ids.insert(p, id);
        id
    }
    fn intern_rat(&mut self, r: Rat) -> Form {
        if let Some(&id) = self.rat_ids.get(&r) {
            return id;
        }
        let id = Form(self.rats.len() as u32);
        // One allocation shared by the table and the index.
        let r = Rc::new(r);
        self.rats.push(r.clone());
        self.rat_ids.insert(r, id);
        id
    }

    /// The kernel behind an id.
    pub fn kernel(&self, k: KernelId) -> &Kernel {
        &self.kernels[k.0 as usize]
    }

    // ----- constructors ----------------------------------------------------------------

    /// The form 0.
    pub fn zero(&self) -> Form {
        self.zero
    }
    /// The form 1.
    pub fn one(&self) -> Form {
        self.one
    }
    /// True if `f` is the zero form (a proof that the expression is identically zero).
    pub fn is_zero(&self, f: Form) -> bool {
        f == self.zero
    }
    /// A constant coefficient.
    pub fn constant(&mut self, c: Coeff) -> Form {
        if c.is_zero() {
            return self.zero;
        }
        let unit = self.unit;
        self.intern_rat(Rat {
            num: vec![(unit, c)],
            den: Vec::new(),
        })
    }
    /// A rational constant.
    pub fn rational(&mut self, q: Q) -> Form {
        self.constant(Coeff::rational(q))
    }
    /// An integer constant.
    pub fn int(&mut self, n: i64) -> Form {
        self.constant(Coeff::int(n))
    }
    /// The symbol called `name`.
    pub fn symbol(&mut self, name: &str) -> Form {
        let k = self.symbol_kernel(name);
        self.kernel_form(k)
    }
    /// The kernel of the symbol called `name`.
    pub fn symbol_kernel(&mut self, name: &str) -> KernelId {
        if let Some(&k) = self.symbol_ids.get(name) {
            return k;
        }
        let k = self.intern_kernel(Kernel::Sym(Rc::from(name)));
        self.symbol_ids.insert(name.into(), k);
        k
    }
    /// The constant pi.
    pub fn pi(&mut self) -> Form {
        let k = self.intern_kernel(Kernel::Pi);
        self.kernel_form(k)
    }
    fn kernel_form(&mut self, k: KernelId) -> Form {
        let m = self.intern_mono(Mono {
            pows: vec![(k, 1)],
            exp: None,
        });
        self.intern_rat(Rat {
            num: vec![(m, Coeff::one())],
            den: Vec::new(),
        })
    }
    /// The arbitrary function `name` differentiated `order` times, at `arg`.
    pub fn func(&mut self, name: &str, order: u32, arg: Form) -> Form {
        let k = self.intern_kernel(Kernel::Func {
            name: Rc::from(name),
            order,
            arg,
        });
        self.kernel_form(k)
    }

    /// The number of terms of the numerator (a size measure).
    pub fn num_terms(&self, f: Form) -> usize {
        self.rats[f.0 as usize].num.len()
    }

    /// If `f` is a constant coefficient, that coefficient.
    pub fn as_constant(&self, f: Form) -> Option<Coeff> {
        let r = &self.rats[f.0 as usize];
        if !r.den.is_empty() {
            return None;
        }
        match r.num.as_slice() {
            [] => Some(Coeff::zero()),
            [(m, c)] if *m == self.unit => Some(c.clone()),
            _ => None,
        }
    }

    /// If `f` is a rational constant, that number.
    pub fn as_rational(&self, f: Form) -> Option<Q> {
        self.as_constant(f)?.as_rational()
    }

    /// If `f` is a lone symbol, its name.
    pub fn as_symbol(&self, f: Form) -> Option<Rc<str>> {
        let r = &self.rats[f.0 as usize];
        if !r.den.is_empty() {
            return None;
        }
        match r.num.as_slice() {
            [(m, c)] if c.is_one() => {
                let mono = &self.monos[m.0 as usize];
                match (mono.pows.as_slice(), mono.exp) {
                    ([(k, 1)], None) => match self.kernel(*k) {
                        Kernel::Sym(s) => Some(s.clone()),
                        _ => None,
                    },
                    _ => None,
                }
            }
            _ => None,
        }
    }

    fn check_size(&self, n: usize) -> CResult<()> {
        if n > self.limits.max_terms {
            return Err(CanonError::TooLarge(self.limits.max_terms));
        }
        // The process-wide memory budget (counted by the binary's allocator): past it, stop
        // as "too large" like any other size limit.
        if crate::budget::over_budget() {
            return Err(CanonError::MemoryCap((crate::budget::cap() >> 20) as u64));
        }
        // The clock is read on the first call and every 16th after: a call is at most one row
        // of a product, so the deadline is still seen within milliseconds, and reading it on
        // every call was 2 to 3% of a large check.
        if let Some((t, ms)) = self.limits.deadline {
            let n = self.size_checks.get().wrapping_add(1);
            self.size_checks.set(n);
            if n % 16 == 1 && Instant::now() > t {
                return Err(CanonError::Timeout(ms));
            }
        }
        Ok(())
    }

    // ----- polynomial arithmetic -------------------------------------------------------

    fn poly_add(a: &Poly, b: &Poly) -> Poly {
        let mut out = Vec::with_capacity(a.len() + b.len());
        let (mut i, mut j) = (0, 0);
        while i < a.len() && j < b.len() {
            match a[i].0.cmp(&b[j].0) {
                std::cmp::Ordering::Less => {
                    out.push(a[i].clone());
                    i += 1;
                }
                std::cmp::Ordering::Greater => {
                    out.push(b[j].clone());
                    j += 1;
                }
                std::cmp::Ordering::Equal => {
                    let c = a[i].1.add(&b[j].1);
                    if !c.is_zero() {
                        out.push((a[i].0, c));
                    }
                    i += 1;
                    j += 1;
                }
            }
        }
        out.extend_from_slice(&a[i..]);
        out.extend_from_slice(&b[j..]);
        out
    }

    fn poly_scale(a: &Poly, c: &Coeff) -> Poly {
        if c.is_zero() {
            return Vec::new();
        }
        a.iter().map(|(m, x)| (*m, x.mul(c))).collect()
    }

    /// Terms in any order, possibly several per monomial, as a polynomial: sorted by
    /// monomial, the coefficients of one monomial added, zeros dropped. The same polynomial
    /// as accumulating them per monomial and calling [`Store::sort_terms`] (exact addition
    /// does not depend on the order).
    fn merge_terms(mut v: Vec<Term>) -> Poly {
        v.sort_unstable_by_key(|t| t.0);
        let mut out: Poly = Vec::with_capacity(v.len());
        for (m, c) in v {
            match out.last_mut() {
                Some(last) if last.0 == m => last.1 = last.1.add(&c),
                _ => out.push((m, c)),
            }
        }
        out.retain(|t| !t.1.is_zero());
        out
    }

    fn sort_terms(acc: FxHashMap<MonoId, Coeff>) -> Poly {
        let mut v: Poly = acc.into_iter().filter(|(_, c)| !c.is_zero()).collect();
        v.sort_by_key(|t| t.0);
        v
    }

    /// Product of two numerators, as a form (root reductions may bring denominators).
    fn poly_mul(&mut self, a: &Poly, b: &Poly) -> CResult<Rat> {
        if a.is_empty() || b.is_empty() {
            return Ok(Rat {
                num: Vec::new(),
                den: Vec::new(),
            });
        }
        // The size limit is checked on the result as it grows (below), never on an estimate
        // from the operands: a product whose terms collapse is not refused.
        let bits = |p: &Poly| p.iter().map(|(_, c)| c.bits()).max().unwrap_or(0);
        let (ba, bb) = (bits(a), bits(b));
        if ba + bb > MAX_COEFF_BITS {
            return Err(CanonError::NumberTooLarge(MAX_COEFF_BITS));
        }
        // Small products (a term times a sum, above all) reuse the cached monomial products;
        // packing pays for itself only over many pairs.
        let packed = if a.len().min(b.len()) >= 2 && a.len() * b.len() >= PACKED_MIN_PAIRS {
            self.products_packed(a, b)?
        } else {
            None
        };
        let products = match packed {
            Some(products) => products,
            None => self.products_by_monomial(a, b)?,
        };
        self.finish_products(products)
    }

    /// The numerator of a product from its terms: those needing no further factor sorted,
    /// the others summed per factor, multiplied once and added.
    fn finish_products(&mut self, (mut num, extras): Products) -> CResult<Rat> {
        num.sort_unstable_by_key(|t| t.0);
        debug_assert!(
            num.windows(2).all(|w| w[0].0 < w[1].0),
            "a product's terms have distinct monomials"
        );
        let mut r = Rat {
            num,
            den: Vec::new(),
        };
        // Terms that brought a radicand power along: sum those sharing one, then multiply once.
        let mut by_extra: std::collections::BTreeMap<Form, FxHashMap<MonoId, Coeff>> =
            std::collections::BTreeMap::new();
        for (m, c, extra) in extras {
            let e = by_extra
                .entry(extra)
                .or_default()
                .entry(m)
                .or_insert_with(Coeff::zero);
            *e = e.add(&c);
        }
        for (extra, terms) in by_extra {
            let t = self.intern_rat(Rat {
                num: Self::sort_terms(terms),
                den: Vec::new(),
            });
            let p = self.mul(t, extra)?;
            let cur = self.intern_rat(r);
            let s = self.add(cur, p)?;
            r = (*self.rats[s.0 as usize]).clone();
        }
        Ok(r)
    }

    /// The terms of `a * b`, each pair's monomials multiplied by [`Store::mono_mul`] (cached
    /// per pair): the sum of the terms that need no further factor, by monomial, and those
    /// that bring one along (a radicand's power, or `A^q` from an exponent).
    fn products_by_monomial(&mut self, a: &Poly, b: &Poly) -> CResult<Products> {
        let mut acc: FxHashMap<MonoId, Coeff> = FxHashMap::default();
        let mut extras: Vec<(MonoId, Coeff, Form)> = Vec::new();
        for (ma, ca) in a {
            for (mb, cb) in b {
                let (m, f, extra) = self.mono_mul(*ma, *mb)?;
                let c = ca.mul(cb).mul(&f);
                if c.is_zero() {
                    continue;
                }
                if extra == self.one {
                    let e = acc.entry(m).or_insert_with(Coeff::zero);
                    *e = e.add(&c);
                } else {
                    extras.push((m, c, extra));
                }
            }
            self.check_size(acc.len() + extras.len())?;
        }
        Ok((
            acc.into_iter().filter(|(_, c)| !c.is_zero()).collect(),
            extras,
        ))
    }

    /// The same terms as [`Store::products_by_monomial`], with the kernel powers of each
    /// monomial packed into one machine word (a 16-bit lane per kernel, up to [`LANES`]
    /// kernels in both operands together): a product of powers is one addition, and terms are
    /// summed by packed key, so no intermediate monomial is interned. Exponentials are
    /// combined once per pair of distinct exponents, exactly as [`Store::make_mono`] does.
    /// `None` when the operands have more kernels or larger exponents than the lanes hold, a
    /// root kernel, or too many distinct exponentials.
    fn products_packed<'p>(&mut self, a: &'p Poly, b: &'p Poly) -> CResult<Option<Products>> {
        // The kernels of both operands, sorted: lanes in kernel order unpack to sorted powers.
        let mut kernels: Vec<KernelId> = Vec::with_capacity(LANES);
        for (m, _) in a.iter().chain(b) {
            for &(k, e) in &self.monos[m.0 as usize].pows {
                if e.abs() > LANE_MAX {
                    return Ok(None);
                }
                if !kernels.contains(&k) {
                    if kernels.len() == LANES {
                        return Ok(None);
                    }
                    kernels.push(k);
                }
            }
        }
        // Root kernels reduce through their radicands, term by term: the cached monomial
        // products remember those reductions, which this path would redo per product.
        if kernels
            .iter()
            .any(|&k| matches!(self.kernel(k), Kernel::Root { .. }))
        {
            return Ok(None);
        }
        kernels.sort_unstable();
        let set = match self.kernel_sets.get(&kernels) {
            Some(&id) => id,
            None => {
                let id = self.kernel_sets.len() as u32;
                self.kernel_sets.insert(kernels.clone(), id);
                id
            }
        };
        let bias: u128 = (0..LANES)
            .map(|i| LANE_BIAS << (LANE_BITS * i as u32))
            .sum();
        // Each operand's terms as (packed powers, index of the exponential, coefficient).
        let mut exp_index: FxHashMap<Option<Form>, usize> = FxHashMap::default();
        let mut pack = |p: &'p Poly,
                        exps: &mut Vec<Option<Form>>|
         -> Vec<(u128, usize, &'p Coeff)> {
            exp_index.clear();
            exp_index.insert(None, 0);
            exps.clear();
            exps.push(None);
            p.iter()
                .map(|(m, c)| {
                    let mono = &self.monos[m.0 as usize];
                    let mut key = bias;
                    for &(k, e) in &mono.pows {
                        let lane = kernels.iter().position(|&x| x == k).expect("collected");
                        key = key.wrapping_add(((e as i128) as u128) << (LANE_BITS * lane as u32));
                    }
                    let x = *exp_index.entry(mono.exp).or_insert_with(|| {
                        exps.push(mono.exp);
                        exps.len() - 1
                    });
                    (key, x, c)
                })
                .collect()
        };
        let (mut exps_a, mut exps_b) = (Vec::new(), Vec::new());
        let pa = pack(a, &mut exps_a);
        let pb = pack(b, &mut exps_b);
        // The product of two exponentials, per pair of distinct exponents: an index into
        // `exps`, a coefficient and a further factor (as `make_mono` gives them).
        let mut exps: Vec<Option<Form>> = vec![None];
        let mut exp_ids: FxHashMap<Option<Form>, u32> = FxHashMap::default();
        exp_ids.insert(None, 0);
        let nb = exps_b.len();
        // The table of exponential products is dense: past PAIR_TABLE_MAX entries (operands
        // with thousands of distinct exponentials each) it would outgrow the result, so such
        // products keep the monomial route.
        if exps_a.len() * nb > PAIR_TABLE_MAX {
            return Ok(None);
        }
        let mut pair: Vec<Option<(u32, Coeff, Form)>> = vec![None; exps_a.len() * nb];
        pair[0] = Some((0, Coeff::one(), self.one));
        let mut acc: FxHashMap<(u128, u32), Coeff> =
            FxHashMap::with_capacity_and_hasher(pa.len() + pb.len(), Default::default());
        let mut raw_extras: Vec<(u128, u32, Coeff, Form)> = Vec::new();
        for &(ka, xa, ca) in &pa {
            for &(kb, xb, cb) in &pb {
                let slot = xa * nb + xb;
                if pair[slot].is_none() {
                    let (e, c, extra) = self.exp_mul(exps_a[xa], exps_b[xb])?;
                    let id = *exp_ids.entry(e).or_insert_with(|| {
                        exps.push(e);
                        (exps.len() - 1) as u32
                    });
                    pair[slot] = Some((id, c, extra));
                }
                let (x, f, extra) = pair[slot].as_ref().expect("filled above");
                let mut c = ca.mul(cb);
                if !f.is_one() {
                    c = c.mul(f);
                }
                if c.is_zero() {
                    continue;
                }
                let key = (ka.wrapping_add(kb).wrapping_sub(bias), *x);
                if *extra == self.one {
                    let e = acc.entry(key).or_insert_with(Coeff::zero);
                    *e = e.add(&c);
                } else {
                    raw_extras.push((key.0, key.1, c, *extra));
                }
            }
            self.check_size(acc.len() + raw_extras.len())?;
        }
        // Unpack: distinct keys are distinct monomials (no root kernel reduces). In key order,
        // so that new monomials are numbered independently of the hash map's order.
        let mut keyed: Vec<((u128, u32), Coeff)> =
            acc.into_iter().filter(|(_, c)| !c.is_zero()).collect();
        keyed.sort_unstable_by_key(|t| t.0);
        let mut terms: Vec<Term> = Vec::with_capacity(keyed.len());
        let mut extras: Vec<(MonoId, Coeff, Form)> = Vec::with_capacity(raw_extras.len());
        for ((key, x), c) in keyed {
            terms.push((self.unpack_mono(set, &kernels, key, exps[x as usize]), c));
        }
        for (key, x, c, extra) in raw_extras {
            extras.push((
                self.unpack_mono(set, &kernels, key, exps[x as usize]),
                c,
                extra,
            ));
        }
        Ok(Some((terms, extras)))
    }

    /// The monomial of packed powers over the kernel set `set` (its kernels `kernels`) and an
    /// exponential; cached by key, so that a recurring monomial is not hashed as a list.
    fn unpack_mono(
        &mut self,
        set: u32,
        kernels: &[KernelId],
        key: u128,
        exp: Option<Form>,
    ) -> MonoId {
        if let Some(&m) = self.packed_monos.get(&(set, key, exp)) {
            return m;
        }
        let mut pows = Vec::with_capacity(kernels.len());
        for (lane, &k) in kernels.iter().enumerate() {
            let v = ((key >> (LANE_BITS * lane as u32)) & 0xffff) as i32 - LANE_BIAS as i32;
            if v != 0 {
                pows.push((k, v));
            }
        }
        let m = self.intern_mono(Mono { pows, exp });
        self.packed_monos.insert((set, key, exp), m);
        m
    }

    /// The product of two monomials' exponentials as [`Store::make_mono`] reduces it: the
    /// exponent, a coefficient and a further factor; cached. Both product routes
    /// ([`Store::mono_mul`] and [`Store::products_packed`]) combine exponentials here.
    fn exp_mul(
        &mut self,
        a: Option<Form>,
        b: Option<Form>,
    ) -> CResult<(Option<Form>, Coeff, Form)> {
        let key = if a <= b { (a, b) } else { (b, a) };
        if let Some(r) = self.exp_mul_cache.get(&key) {
            return Ok(r.clone());
        }
        let exp = match key {
            (None, None) => None,
            (Some(x), None) | (None, Some(x)) => Some(x),
            (Some(x), Some(y)) => Some(self.add(x, y)?),
        };
        let (m, c, extra) = self.make_mono(Vec::new(), exp)?;
        let r = (self.monos[m.0 as usize].exp, c, extra);
        self.exp_mul_cache.insert(key, r.clone());
        Ok(r)
    }

    /// The product of two monomials: a reduced monomial, a coefficient from the exponential's
    /// constant part, and a form from root reductions (usually one).
    fn mono_mul(&mut self, a: MonoId, b: MonoId) -> CResult<(MonoId, Coeff, Form)> {
        if a == self.unit {
            return Ok((b, Coeff::one(), self.one));
        }
        if b == self.unit {
            return Ok((a, Coeff::one(), self.one));
        }
        let key = if a <= b { (a, b) } else { (b, a) };
        if let Some(r) = self.mono_mul_cache.get(&key) {
            return Ok(r.clone());
        }
        let (ma, mb) = (&self.monos[a.0 as usize], &self.monos[b.0 as usize]);
        // Merge the two sorted power lists (one allocation, no copies of the monomials).
        let (pa, pb) = (&ma.pows, &mb.pows);
        let mut pows = Vec::with_capacity(pa.len() + pb.len());
        let (mut i, mut j) = (0, 0);
        while i < pa.len() && j < pb.len() {
            match pa[i].0.cmp(&pb[j].0) {
                std::cmp::Ordering::Less => {
                    pows.push(pa[i]);
                    i += 1;
                }
                std::cmp::Ordering::Greater => {
                    pows.push(pb[j]);
                    j += 1;
                }
                std::cmp::Ordering::Equal => {
                    let e = pa[i]
                        .1
                        .checked_add(pb[j].1)
                        .ok_or(CanonError::NumberTooLarge(31))?;
                    if e != 0 {
                        pows.push((pa[i].0, e));
                    }
                    i += 1;
                    j += 1;
                }
            }
        }
        pows.extend_from_slice(&pa[i..]);
        pows.extend_from_slice(&pb[j..]);
        let (exp, coeff, exp_extra) = self.exp_mul(ma.exp, mb.exp)?;
        let mut extra = self.reduce_roots(&mut pows)?;
        if exp_extra != self.one {
            extra = self.mul(extra, exp_extra)?;
        }
        let r = (self.intern_mono(Mono { pows, exp }), coeff, extra);
        self.mono_mul_cache.insert(key, r.clone());
        Ok(r)
    }

    /// Builds a reduced monomial from kernel powers and an exponent: root powers are brought
    /// into `0..q` through `k^q = radicand`, and the exponent's constant `i*pi*k/12` part is
    /// taken out as an exact coefficient.
    fn make_mono(
        &mut self,
        mut pows: Vec<(KernelId, i32)>,
        exp: Option<Form>,
    ) -> CResult<(MonoId, Coeff, Form)> {
        let mut extra = self.reduce_roots(&mut pows)?;
        let mut coeff = Coeff::one();
        let exp = match exp {
            Some(e) => {
                let (rest, c, pulled) = self.split_exponent(e)?;
                coeff = c;
                if pulled != self.one {
                    extra = self.mul(extra, pulled)?;
                }
                if rest == self.zero { None } else { Some(rest) }
            }
            None => None,
        };
        let m = self.intern_mono(Mono { pows, exp });
        Ok((m, coeff, extra))
    }

    /// Brings root powers into `0..q` through `k^q = radicand`; returns the radicand powers
    /// taken out.
    fn reduce_roots(&mut self, pows: &mut Vec<(KernelId, i32)>) -> CResult<Form> {
        let mut extra = self.one;
        let mut i = 0;
        while i < pows.len() {
            let (k, e) = pows[i];
            if let Kernel::Root { radicand, q } = *self.kernel(k) {
                let q = q as i32;
                let (d, r) = e.div_mod_floor(&q);
                if d != 0 {
                    let p = self.powi(radicand, d as i64)?;
                    extra = self.mul(extra, p)?;
                    if r == 0 {
                        pows.remove(i);
                        continue;
                    }
                    pows[i].1 = r;
                }
            }
            i += 1;
        }
        Ok(extra)
    }

    /// Splits an exponent E into (rest, c, p) with exp(E) = c * p * exp(rest):
    /// `c` is exp(i*pi*k/12) for the exponent's pi term when exact, and `p` collects
    /// exp(q*log(A)) = A^q for rational q.
    fn split_exponent(&mut self, e: Form) -> CResult<(Form, Coeff, Form)> {
        let r = self.rats[e.0 as usize].clone();
        if !r.den.is_empty() {
            // A quotient hides its pi part in the common denominator; when the pi part is
            // linear, i*q*pi with q rational, d/dpi finds it and it comes out as usual.
            let pi = self.intern_kernel(Kernel::Pi);
            let c = self.diff(e, pi)?;
            if let Some(q) = self.as_constant(c).and_then(|c| c.as_imag_rational()) {
                let pi_form = self.kernel_form(pi);
                let part = self.scale(pi_form, &c_imag(&q))?;
                let rest = self.sub(e, part)?;
                let (rest2, coeff, pulled) = self.split_exponent(rest)?;
                // The pi part splits into an exact root of unity (denominators 1, 2, 3, 4, 6,
                // 12) and, for any other denominator, a remainder i*pi*r that stays in the
                // exponent. Nothing may be dropped: exp(E) = c * p * exp(rest) exactly.
                let (pi_rest, root, pi_pulled) = self.split_exponent(part)?;
                let rest = self.add(rest2, pi_rest)?;
                let pulled = self.mul(pulled, pi_pulled)?;
                return Ok((rest, coeff.mul(&root), pulled));
            }
            return Ok((e, Coeff::one(), self.one));
        }
        let pi = self.intern_kernel(Kernel::Pi);
        let mut rest: Poly = Vec::new();
        let mut coeff = Coeff::one();
        let mut pulled = self.one;
        for (m, c) in r.num.iter().cloned() {
            let mono = self.monos[m.0 as usize].clone();
            if mono.exp.is_none() && mono.pows.len() == 1 && mono.pows[0].1 == 1 {
                let k = mono.pows[0].0;
                if k == pi
                    && let Some(q) = c.as_imag_rational()
                {
                    // exp(i*pi*q) depends only on q mod 2.
                    let two = Q::from_integer(BigInt::from(2));
                    let q = &q - (&q / &two).floor() * &two;
                    let twelve_q = &q * Q::from_integer(BigInt::from(12));
                    if twelve_q.is_integer() {
                        // q is in [0, 2), so 12 q is an integer in 0..24.
                        let k = twelve_q.to_integer().to_i64().ok_or_else(|| {
                            CanonError::Undefined("pi multiple out of range".into())
                        })?;
                        coeff = coeff.mul(&Coeff::unit_root24(k));
                    } else {
                        rest.push((m, Coeff::rational(q).mul(&Coeff::i())));
                    }
                    continue;
                }
                if let Kernel::Log(arg) = *self.kernel(k)
                    && let Some(q) = c.as_rational()
                {
                    // exp(q*log(A)) = A^q for the principal branches.
                    let p = self.pow_rational(arg, &q)?;
                    pulled = self.mul(pulled, p)?;
                    continue;
                }
            }
            rest.push((m, c));
        }
        rest.sort_by_key(|t| t.0);
        let rest = self.intern_rat(Rat {
            num: rest,
            den: Vec::new(),
        });
        Ok((rest, coeff, pulled))
    }

    /// Interns a quotient after cancelling every denominator factor that divides the
    /// numerator exactly, so that (x + 1)/(x + 1) is 1 and equal quotients share one form.
    fn intern_cancelled(&mut self, r: Rat) -> Form {
        if let Some(&id) = self.rat_ids.get(&r) {
            return id;
        }
        let r = self.divide_out(r);
        self.intern_rat(r)
    }

    /// `r` as [`Store::intern_cancelled`] would intern it, not interned.
    fn cancelled(&mut self, r: Rat) -> Rat {
        // A quotient already in the store was interned as the result of this cancellation
        // (or needs none: a constant over factors), so trying again would change nothing.
        if self.rat_ids.contains_key(&r) {
            return r;
        }
        self.divide_out(r)
    }

    /// `r` with the denominator factors that divide its numerator exactly divided out.
    fn divide_out(&mut self, mut r: Rat) -> Rat {
        // Trial division costs about |N| |F| per factor and attempt; large numerators (deep in a
        // tensor computation) skip it: cancellation is for readable and unique small forms,
        // the zero test does not need it.
        const CANCEL_MAX_TERMS: usize = 48;
        if !r.den.is_empty() && !r.num.is_empty() && r.num.len() <= CANCEL_MAX_TERMS {
            let mut den = Vec::with_capacity(r.den.len());
            for (fid, mut e) in std::mem::take(&mut r.den) {
                while e > 0 {
                    match self.divide_by_factor(&r.num, fid) {
                        Some(q) => {
                            r.num = q;
                            e -= 1;
                        }
                        None => break,
                    }
                }
                if e > 0 {
                    den.push((fid, e));
                }
            }
            r.den = den;
        }
        r
    }

    /// `n / f` when `f` divides `n` exactly as polynomials in the kernels (exponentials of
    /// `n` ride along as independent labels; `f` must have none). Exact division in the free
    /// polynomial ring is also exact modulo the root relations, so the result is an identity.
    fn poly_div_exact(&mut self, n: &Poly, f: &Poly) -> Option<Poly> {
        let division = self.divide_terms(n, f);
        self.finish_division(division)
    }

    /// `n` divided by the denominator factor `f`, as [`Store::poly_div_exact`].
    fn divide_by_factor(&mut self, n: &Poly, f: FactorId) -> Option<Poly> {
        let division = self.divide_terms(n, &self.factors[f.0 as usize]);
        self.finish_division(division)
    }

    /// Interns the quotient's monomials in the order the division made them (also those of
    /// a division that failed part-way, so that the store's numbering does not depend on
    /// how a refusal is reached), and returns the quotient if the division succeeded.
    fn finish_division(&mut self, d: Division) -> Option<Poly> {
        let ids: Vec<MonoId> = d.made.into_iter().map(|m| self.intern_mono(m)).collect();
        let quotient = d.quotient?;
        let mut out: FxHashMap<MonoId, Coeff> = FxHashMap::default();
        for (i, q) in quotient {
            let e = out.entry(ids[i]).or_insert_with(Coeff::zero);
            *e = e.add(&q);
        }
        Some(Self::sort_terms(out))
    }

    /// The long division of `n` by `f` ([`Store::poly_div_exact`]), without touching the
    /// store: the quotient's monomials in the order they were made, and the quotient (its
    /// terms index those monomials) if `f` divides `n`.
    ///
    /// Exponent vectors over `f`'s kernels (at most [`DIV_KERNELS`] of them; a factor with
    /// more is not divided out) are fixed arrays, compared lexicographically in kernel order;
    /// `n` is divided group by group, a group being the terms that agree in everything `f`
    /// does not involve, in the order of those parts.
    fn divide_terms(&self, n: &Poly, f: &Poly) -> Division {
        let refused = Division {
            made: Vec::new(),
            quotient: None,
        };
        if f.len() < 2 {
            return refused;
        }
        let mut kf: Vec<KernelId> = Vec::new();
        for (m, _) in f {
            let mono = &self.monos[m.0 as usize];
            if mono.exp.is_some() {
                return refused;
            }
            kf.extend(mono.pows.iter().map(|p| p.0));
        }
        kf.sort_unstable();
        kf.dedup();
        let k = kf.len();
        if k > DIV_KERNELS {
            return refused;
        }
        let vector = |pows: &[(KernelId, i32)]| -> DivExponents {
            let mut v = [0; DIV_KERNELS];
            for &(kid, e) in pows {
                if let Ok(i) = kf.binary_search(&kid) {
                    v[i] = e;
                }
            }
            v
        };
        let fterms: Vec<(DivExponents, &Coeff)> = f
            .iter()
            .map(|(m, c)| (vector(&self.monos[m.0 as usize].pows), c))
            .collect();
        let Some(&(flead, fcoef)) = fterms.iter().max_by(|a, b| a.0.cmp(&b.0)) else {
            return refused;
        };
        // Cheap refusals first. In each variable, and in the total degree, the highest and the
        // lowest degree of a product are the sums of the factors' (the ring has no zero
        // divisors), so each group's degree span in every kernel of f, and its total-degree
        // span, must reach f's. (A refusal is always safe: cancellation is optional.)
        let spans = |vs: &mut dyn Iterator<Item = DivExponents>| -> [(i32, i32); DIV_KERNELS + 1] {
            let mut out = [(i32::MAX, i32::MIN); DIV_KERNELS + 1];
            for v in vs {
                let total: i32 = v[..k].iter().sum();
                for (i, s) in out[..=k].iter_mut().enumerate() {
                    let x = if i < k { v[i] } else { total };
                    s.0 = s.0.min(x);
                    s.1 = s.1.max(x);
                }
            }
            out
        };
        let fspan = spans(&mut fterms.iter().map(|(v, _)| *v));
        // A span in some kernel, or in the total degree, narrower than f's.
        let narrower = |g: &[(i32, i32); DIV_KERNELS + 1]| {
            g[..=k]
                .iter()
                .zip(&fspan[..=k])
                .any(|(a, b)| a.1 - a.0 < b.1 - b.0)
        };
        // The whole numerator's spans first (each group's are within them), before any
        // grouping: small numerators that no factor divides are mostly refused here.
        let vectors: Vec<DivExponents> = n
            .iter()
            .map(|(m, _)| vector(&self.monos[m.0 as usize].pows))
            .collect();
        if narrower(&spans(&mut vectors.iter().copied())) {
            return refused;
        }
        // The numerator's terms grouped by everything f does not involve (the kernels
        // outside f, then the exponential); the groups are put in that order once they have
        // passed the refusals below.
        type Outside = (Vec<(KernelId, i32)>, Option<Form>);
        let mut group_of: FxHashMap<Outside, usize> = FxHashMap::default();
        let mut groups: Vec<(Outside, Vec<(DivExponents, &Coeff)>)> = Vec::new();
        for ((m, c), &v) in n.iter().zip(&vectors) {
            let mono = &self.monos[m.0 as usize];
            let outside: Outside = (
                mono.pows
                    .iter()
                    .filter(|p| kf.binary_search(&p.0).is_err())
                    .copied()
                    .collect(),
                mono.exp,
            );
            match group_of.get(&outside) {
                Some(&g) => groups[g].1.push((v, c)),
                None => {
                    group_of.insert(outside.clone(), groups.len());
                    groups.push((outside, vec![(v, c)]));
                }
            }
        }
        if groups
            .iter()
            .any(|(_, terms)| narrower(&spans(&mut terms.iter().map(|(v, _)| *v))))
        {
            return refused;
        }
        let Some(finv) = fcoef.inv() else {
            return refused;
        };
        groups.sort_unstable_by(|a, b| a.0.cmp(&b.0));
        let mut made: Vec<Mono> = Vec::new();
        let mut quotient: Vec<(usize, Coeff)> = Vec::new();
        let mut budget = 4 * (n.len() + f.len()) + 64;
        for ((rest, exp), terms) in groups {
            // The remainder, ascending: the leading term is the last.
            let mut rem: Vec<(DivExponents, Coeff)> =
                terms.into_iter().map(|(v, c)| (v, c.clone())).collect();
            rem.sort_unstable_by_key(|t| t.0);
            // f has lowest power 0 in each of its kernels (its content was taken out), so a
            // quotient q = n/f has, kernel by kernel, the same lowest power as n: a quotient
            // term below it proves that f does not divide n.
            let mut lowest = [0; DIV_KERNELS];
            for (i, l) in lowest[..k].iter_mut().enumerate() {
                *l = rem.iter().map(|t| t.0[i]).min().unwrap_or(0);
            }
            while let Some((lead, c)) = rem.last().cloned() {
                let Some(b) = budget.checked_sub(1) else {
                    return Division {
                        made,
                        quotient: None,
                    };
                };
                budget = b;
                let mut d = [0; DIV_KERNELS];
                for i in 0..k {
                    d[i] = lead[i] - flead[i];
                }
                if d[..k].iter().zip(&lowest[..k]).any(|(a, b)| a < b) {
                    return Division {
                        made,
                        quotient: None,
                    };
                }
                let q = c.mul(&finv);
                for (fv, fc) in &fterms {
                    let mut key = [0; DIV_KERNELS];
                    for i in 0..k {
                        key[i] = fv[i] + d[i];
                    }
                    let sub = fc.mul(&q);
                    match rem.binary_search_by(|t| t.0.cmp(&key)) {
                        Ok(at) => {
                            let e = rem[at].1.sub(&sub);
                            if e.is_zero() {
                                rem.remove(at);
                            } else {
                                rem[at].1 = e;
                            }
                        }
                        Err(at) => {
                            let e = Coeff::zero().sub(&sub);
                            if !e.is_zero() {
                                rem.insert(at, (key, e));
                            }
                        }
                    }
                }
                let mut pows = rest.clone();
                for (kid, e) in kf.iter().zip(&d[..k]) {
                    if *e != 0 {
                        pows.push((*kid, *e));
                    }
                }
                pows.sort_by_key(|p| p.0);
                let no_progress = rem.last().is_some_and(|t| t.0 >= lead);
                if no_progress
                    || pows
                        .iter()
                        .any(|(kid, e)| *e < 0 && matches!(self.kernel(*kid), Kernel::Root { .. }))
                {
                    return Division {
                        made,
                        quotient: None,
                    };
                }
                quotient.push((made.len(), q));
                made.push(Mono { pows, exp });
            }
        }
        Division {
            made,
            quotient: Some(quotient),
        }
    }

    /// Expands a factored denominator (or any product of factors) into a numerator.
    fn expand_factors(&mut self, fs: &[(FactorId, u32)]) -> CResult<Form> {
        let mut acc = self.one;
        for &(f, e) in fs {
            let p = self.factors[f.0 as usize].clone();
            let pf = self.intern_rat(Rat {
                num: p,
                den: Vec::new(),
            });
            for _ in 0..e {
                acc = self.mul(acc, pf)?;
            }
        }
        Ok(acc)
    }

    // ----- field operations on forms --------------------------------------------------

    /// `a + b`.
    pub fn add(&mut self, a: Form, b: Form) -> CResult<Form> {
        if a == self.zero {
            return Ok(b);
        }
        if b == self.zero {
            return Ok(a);
        }
        let ra = self.rats[a.0 as usize].clone();
        let rb = self.rats[b.0 as usize].clone();
        let r = self.sum_rat(&ra, &rb)?;
        Ok(self.intern_cancelled(r))
    }

    /// `ra + rb` (both nonzero) before the final cancellation, not interned: over the
    /// common denominator, the numerators times the missing factors formed, cancelled and
    /// summed as [`Store::mul`] and [`Store::add`] would intern them, but only the caller
    /// keeps the result.
    fn sum_rat(&mut self, ra: &Rat, rb: &Rat) -> CResult<Rat> {
        if ra.den == rb.den {
            let num = Self::poly_add(&ra.num, &rb.num);
            self.check_size(num.len())?;
            let den = if num.is_empty() {
                Vec::new()
            } else {
                ra.den.clone()
            };
            return Ok(Rat { num, den });
        }
        // Common denominator: the factor-wise maximum of the exponents.
        let mut lcm = ra.den.clone();
        for &(f, e) in &rb.den {
            match lcm.binary_search_by_key(&f, |p| p.0) {
                Ok(i) => lcm[i].1 = lcm[i].1.max(e),
                Err(i) => lcm.insert(i, (f, e)),
            }
        }
        let missing = |den: &[(FactorId, u32)]| -> Vec<(FactorId, u32)> {
            lcm.iter()
                .filter_map(|&(f, e)| {
                    let have = den.iter().find(|p| p.0 == f).map(|p| p.1).unwrap_or(0);
                    (e > have).then_some((f, e - have))
                })
                .collect()
        };
        let ma = missing(&ra.den);
        let mb = missing(&rb.den);
        let xa = self.expand_factors(&ma)?;
        let xb = self.expand_factors(&mb)?;
        let pa = self.numerator_times(&ra.num, xa)?;
        let pb = self.numerator_times(&rb.num, xb)?;
        // pa, pb came from numerators times polynomials: their own denominators (from root
        // reductions) are merged in their sum; then divide by the common denominator.
        let rs = if pa.num.is_empty() {
            pb
        } else if pb.num.is_empty() {
            pa
        } else {
            let sum = self.sum_rat(&pa, &pb)?;
            self.cancelled(sum)
        };
        if rs.num.is_empty() {
            return Ok(Rat {
                num: Vec::new(),
                den: Vec::new(),
            });
        }
        let Rat { num, mut den } = rs;
        for (f, e) in lcm {
            match den.binary_search_by_key(&f, |p| p.0) {
                Ok(i) => den[i].1 += e,
                Err(i) => den.insert(i, (f, e)),
            }
        }
        Ok(Rat { num, den })
    }

    /// `num * x` (`num` a numerator, `x` nonzero) as [`Store::mul`] forms and cancels it, not
    /// interned (a zero product has no terms).
    fn numerator_times(&mut self, num: &Poly, x: Form) -> CResult<Rat> {
        let rx = self.rats[x.0 as usize].clone();
        if x == self.one {
            return Ok(Rat {
                num: num.clone(),
                den: Vec::new(),
            });
        }
        if *num == self.rats[self.one.0 as usize].num {
            return Ok((*rx).clone());
        }
        let prod = self.poly_mul(num, &rx.num)?;
        if prod.num.is_empty() {
            return Ok(Rat {
                num: Vec::new(),
                den: Vec::new(),
            });
        }
        let mut den = prod.den;
        for &(f, e) in &rx.den {
            match den.binary_search_by_key(&f, |p| p.0) {
                Ok(i) => den[i].1 += e,
                Err(i) => den.insert(i, (f, e)),
            }
        }
        Ok(self.cancelled(Rat { num: prod.num, den }))
    }

    /// The sum of many forms, built once: forms with the same denominator are merged in one
    /// pass (one accumulator, one interned result), and the few groups are then added. Adding
    /// `n` terms one at a time would intern `n` partial sums of growing size, quadratic in
    /// time and memory.
    ///
    /// # Errors
    ///
    /// A size or time limit.
    pub fn sum(&mut self, forms: &[Form]) -> CResult<Form> {
        let one = Coeff::one();
        let terms: Vec<(&Coeff, Form)> = forms.iter().map(|&f| (&one, f)).collect();
        self.linear(&terms)
    }

    /// The linear combination `sum_k c_k f_k` with constant coefficients, built once like
    /// [`Store::sum`]: no scaled copy or partial sum is interned.
    ///
    /// # Errors
    ///
    /// A size or time limit.
    pub fn linear(&mut self, terms: &[(&Coeff, Form)]) -> CResult<Form> {
        // One term with coefficient 1 is its own combination: the accumulation below would
        // rebuild the same numerator over the same denominator, a quotient the store already
        // holds, and return its id (the lookup comes before any cancellation). Common: a
        // derivative whose terms all went into one accumulator.
        let mut live = terms
            .iter()
            .filter(|&&(k, f)| f != self.zero && !k.is_zero());
        if let (Some(&(k, f)), None) = (live.next(), live.next())
            && k.is_one()
        {
            self.check_size(self.rats[f.0 as usize].num.len())?;
            return Ok(f);
        }
        let mut acc = Combination::default();
        for &(k, f) in terms {
            if f == self.zero || k.is_zero() {
                continue;
            }
            let total = acc.add(k, &self.rats[f.0 as usize]);
            self.check_size(total)?;
        }
        self.finish_combination(acc)
    }

    /// `sum_k a_k b_k`, equal to [`Store::sum`] of the [`Store::mul`] products but built
    /// once: each product is formed and cancelled exactly as `mul` forms and cancels it,
    /// added to the sum and dropped, so no product is interned (memory is the result's).
    ///
    /// # Errors
    ///
    /// A size or time limit.
    pub fn dot(&mut self, pairs: &[(Form, Form)]) -> CResult<Form> {
        let live: Vec<(Form, Form)> = pairs
            .iter()
            .copied()
            .filter(|&(a, b)| a != self.zero && b != self.zero)
            .collect();
        if let [(a, b)] = live.as_slice() {
            return self.mul(*a, *b);
        }
        let one = Coeff::one();
        let mut acc = Combination::default();
        for (a, b) in live {
            let total = if a == self.one || b == self.one {
                let f = if a == self.one { b } else { a };
                acc.add(&one, &self.rats[f.0 as usize])
            } else {
                // Formed and cancelled as `mul` forms and cancels it.
                let r = self.product_rat(a, b)?;
                if r.num.is_empty() {
                    continue;
                }
                let r = self.cancelled(r);
                acc.add(&one, &r)
            };
            self.check_size(total)?;
        }
        self.finish_combination(acc)
    }

    /// Interns every denominator group of `acc` and adds them.
    /// The groups are added in order as [`Store::add`] would add their interned forms, but
    /// only the final sum is interned.
    fn finish_combination(&mut self, acc: Combination) -> CResult<Form> {
        // The sum so far before its cancellation (`None`: zero).
        let mut out: Option<Rat> = None;
        for (den, acc) in acc.groups {
            let num = Self::sort_terms(acc);
            if num.is_empty() {
                continue;
            }
            let g = Rat { num, den };
            out = Some(match out {
                None => g,
                Some(o) => {
                    let (o, g) = (self.cancelled(o), self.cancelled(g));
                    if o.num.is_empty() {
                        g
                    } else {
                        self.sum_rat(&o, &g)?
                    }
                }
            });
        }
        Ok(match out {
            None => self.zero,
            Some(r) => self.intern_cancelled(r),
        })
    }

    /// `-a`.
    pub fn neg(&mut self, a: Form) -> CResult<Form> {
        self.scale(a, &Coeff::int(-1))
    }

    /// `c * a` for a constant `c`.
    pub fn scale(&mut self, a: Form, c: &Coeff) -> CResult<Form> {
        if c.is_zero() {
            return Ok(self.zero);
        }
        let r = self.rats[a.0 as usize].clone();
        Ok(self.intern_rat(Rat {
            num: Self::poly_scale(&r.num, c),
            den: r.den.clone(),
        }))
    }

    /// `a - b`.
    pub fn sub(&mut self, a: Form, b: Form) -> CResult<Form> {
        if b == self.zero {
            return Ok(a);
        }
        self.linear(&[(&Coeff::one(), a), (&Coeff::int(-1), b)])
    }

    /// `a * b`.
    pub fn mul(&mut self, a: Form, b: Form) -> CResult<Form> {
        if a == self.zero || b == self.zero {
            return Ok(self.zero);
        }
        if a == self.one {
            return Ok(b);
        }
        if b == self.one {
            return Ok(a);
        }
        if let Some(f) = self.term_product(a, b)? {
            return Ok(f);
        }
        let r = self.product_rat(a, b)?;
        if r.num.is_empty() {
            return Ok(self.zero);
        }
        Ok(self.intern_cancelled(r))
    }

    /// `a * b` for two single terms without denominators (a coefficient times a monomial,
    /// every factor of a written monomial such as `3*t^2*x*y`), when their monomials multiply
    /// without a further factor: exactly the form the general product interns (one term
    /// `mono_mul`'s monomial with coefficient `ca cb f`, nothing to cancel), without its
    /// accumulator, sorting and second lookup. `None` when it does not apply.
    fn term_product(&mut self, a: Form, b: Form) -> CResult<Option<Form>> {
        let (ra, rb) = (&self.rats[a.0 as usize], &self.rats[b.0 as usize]);
        let ([(ma, ca)], [(mb, cb)]) = (ra.num.as_slice(), rb.num.as_slice()) else {
            return Ok(None);
        };
        if !ra.den.is_empty() || !rb.den.is_empty() {
            return Ok(None);
        }
        if ca.bits() + cb.bits() > MAX_COEFF_BITS {
            return Err(CanonError::NumberTooLarge(MAX_COEFF_BITS));
        }
        let c = ca.mul(cb);
        let (ma, mb) = (*ma, *mb);
        let (m, f, extra) = self.mono_mul(ma, mb)?;
        if extra != self.one {
            return Ok(None);
        }
        let c = c.mul(&f);
        self.check_size(1)?;
        if c.is_zero() {
            return Ok(Some(self.zero));
        }
        Ok(Some(self.intern_rat(Rat {
            num: vec![(m, c)],
            den: Vec::new(),
        })))
    }

    /// The quotient `a * b` before cancellation (a zero product has no terms); `a` and `b`
    /// neither zero nor one.
    fn product_rat(&mut self, a: Form, b: Form) -> CResult<Rat> {
        let ra = self.rats[a.0 as usize].clone();
        let rb = self.rats[b.0 as usize].clone();
        let prod = self.poly_mul(&ra.num, &rb.num)?;
        if prod.num.is_empty() {
            return Ok(Rat {
                num: Vec::new(),
                den: Vec::new(),
            });
        }
        let mut den = prod.den;
        for &(f, e) in ra.den.iter().chain(&rb.den) {
            match den.binary_search_by_key(&f, |p| p.0) {
                Ok(i) => den[i].1 += e,
                Err(i) => den.insert(i, (f, e)),
            }
        }
        Ok(Rat { num: prod.num, den })
    }

    /// `1 / a`; an error if `a` is identically zero.
    pub fn inv(&mut self, a: Form) -> CResult<Form> {
        if a == self.zero {
            return Err(CanonError::DivisionByZero);
        }
        let r = self.rats[a.0 as usize].clone();
        let den = self.expand_factors(&r.den)?;
        // Take out the monomial content (the lowest power of every non-root kernel, and a
        // shared exponential), then make the leading coefficient one.
        let (content, cofactor) = self.split_content(&r.num)?;
        let mono = self.monos[content.0 as usize].clone();
        let inv_pows: Vec<(KernelId, i32)> = mono.pows.iter().map(|&(k, e)| (k, -e)).collect();
        let inv_exp = match mono.exp {
            Some(e) => Some(self.neg(e)?),
            None => None,
        };
        // Negative root powers reduce through the radicand: 1/k = k^(q-1)/radicand.
        let (m, c, extra) = self.make_mono(inv_pows, inv_exp)?;
        let minv = self.intern_rat(Rat {
            num: vec![(m, c)],
            den: Vec::new(),
        });
        let minv = self.mul(minv, extra)?;
        let part = self.mul(den, minv)?;
        if let [(cm, cc)] = cofactor.as_slice() {
            debug_assert!(
                *cm == self.unit,
                "the content of a single term is the whole monomial"
            );
            let cinv = cc.inv().ok_or(CanonError::DivisionByZero)?;
            return self.scale(part, &cinv);
        }
        let lead = self.leading_coeff(&cofactor);
        let linv = lead.inv().ok_or(CanonError::DivisionByZero)?;
        let normalised = Self::poly_scale(&cofactor, &linv);
        let fid = self.intern_factor(normalised);
        let q = self.intern_rat(Rat {
            num: vec![(self.unit, linv)],
            den: vec![(fid, 1)],
        });
        self.mul(part, q)
    }

    /// The coefficient of the term that leads in the structural (history-independent) order.
    fn leading_coeff(&mut self, p: &Poly) -> Coeff {
        let mut best: Option<(String, &Coeff)> = None;
        for (m, c) in p {
            let key = self.mono_key(*m);
            if best.as_ref().is_none_or(|(k, _)| key > *k) {
                best = Some((key, c));
            }
        }
        best.map(|b| b.1.clone()).unwrap_or_else(Coeff::one)
    }

    /// Splits a numerator into a content monomial (the lowest power of every kernel, and a
    /// shared exponential) and the cofactor polynomial.
    fn split_content(&mut self, p: &Poly) -> CResult<(MonoId, Poly)> {
        if p.len() == 1 {
            let (m, c) = &p[0];
            return Ok((*m, vec![(self.unit, c.clone())]));
        }
        let monos: Vec<Mono> = p
            .iter()
            .map(|(m, _)| self.monos[m.0 as usize].clone())
            .collect();
        let mut content: Vec<(KernelId, i32)> = Vec::new();
        let first = &monos[0];
        let all_kernels: std::collections::BTreeSet<KernelId> = monos
            .iter()
            .flat_map(|m| m.pows.iter().map(|p| p.0))
            .collect();
        for k in all_kernels {
            let min = monos
                .iter()
                .map(|m| m.pows.iter().find(|p| p.0 == k).map(|p| p.1).unwrap_or(0))
                .min()
                .unwrap_or(0);
            if min != 0 {
                content.push((k, min));
            }
        }
        let shared_exp = if monos.iter().all(|m| m.exp == first.exp) {
            first.exp
        } else {
            None
        };
        if content.is_empty() && shared_exp.is_none() {
            return Ok((self.unit, p.clone()));
        }
        // Dividing by the content lowers exponents only, so root powers stay in 0..q.
        let mut out: FxHashMap<MonoId, Coeff> = FxHashMap::default();
        for ((_, c), m) in p.iter().zip(&monos) {
            let mut pows = m.pows.clone();
            for &(k, e) in &content {
                if let Some(x) = pows.iter_mut().find(|p| p.0 == k) {
                    x.1 -= e;
                } else {
                    pows.push((k, -e));
                }
            }
            pows.retain(|p| p.1 != 0);
            pows.sort_by_key(|p| p.0);
            let exp = if shared_exp.is_some() { None } else { m.exp };
            let id = self.intern_mono(Mono { pows, exp });
            let e = out.entry(id).or_insert_with(Coeff::zero);
            *e = e.add(c);
        }
        let content = self.intern_mono(Mono {
            pows: content,
            exp: shared_exp,
        });
        Ok((content, Self::sort_terms(out)))
    }

    /// `a / b`.
    pub fn div(&mut self, a: Form, b: Form) -> CResult<Form> {
        let ib = self.inv(b)?;
        self.mul(a, ib)
    }

    /// `a^n` for an integer `n`.
    pub fn powi(&mut self, a: Form, n: i64) -> CResult<Form> {
        if n == 0 {
            return Ok(self.one);
        }
        if n < 0 {
            // Invert first: 1/P^n keeps the factor P with exponent n, so a printed power in a
            // denominator reads back to the same form (cancellation tidies roots: 1/r^3).
            let ia = self.inv(a)?;
            return self.powi(ia, -n);
        }
        let mut result = self.one;
        let mut base = a;
        let mut n = n as u64;
        while n > 0 {
            self.check_size(0)?;
            if n & 1 == 1 {
                result = self.mul(result, base)?;
            }
            n >>= 1;
            if n > 0 {
                base = self.mul(base, base)?;
            }
        }
        Ok(result)
    }

    /// `a^q` for a rational `q`, with the principal branch: `a^(p/q) = (a^(1/q))^p`.
    pub fn pow_rational(&mut self, a: Form, q: &Q) -> CResult<Form> {
        if q.is_integer() {
            let n = q
                .to_integer()
                .to_i64()
                .filter(|n| n.abs() <= MAX_POWER)
                .ok_or(CanonError::PowerTooLarge)?;
            return self.powi(a, n);
        }
        if a == self.zero {
            return if q.is_positive() {
                Ok(self.zero)
            } else {
                Err(CanonError::Undefined("0 to a negative power".into()))
            };
        }
        if a == self.one {
            return Ok(self.one);
        }
        let den = q
            .denom()
            .to_u32()
            .filter(|d| *d <= MAX_ROOT)
            .ok_or(CanonError::PowerTooLarge)?;
        let num = q
            .numer()
            .to_i64()
            .filter(|n| n.abs() <= MAX_POWER)
            .ok_or(CanonError::PowerTooLarge)?;
        let root = self.root(a, den)?;
        self.powi(root, num)
    }

    /// The principal root `a^(1/q)`.
    pub fn root(&mut self, a: Form, q: u32) -> CResult<Form> {
        if q == 1 || a == self.zero || a == self.one {
            return Ok(a);
        }
        // Exact square roots of positive rationals k^2 * m, m in {1, 2, 3, 6}.
        if q == 2
            && let Some(r) = self.as_rational(a)
            && r.is_positive()
            && let Some(c) = exact_sqrt(&r)
        {
            return Ok(self.constant(c));
        }
        let k = self.intern_kernel(Kernel::Root { radicand: a, q });
        Ok(self.kernel_form(k))
    }

    /// `exp(a)`.
    pub fn exp(&mut self, a: Form) -> CResult<Form> {
        if a == self.zero {
            return Ok(self.one);
        }
        let (m, c, extra) = self.make_mono(Vec::new(), Some(a))?;
        let t = self.intern_rat(Rat {
            num: vec![(m, c)],
            den: Vec::new(),
        });
        self.mul(t, extra)
    }

    /// The principal `log(a)`.
    pub fn log(&mut self, a: Form) -> CResult<Form> {
        if a == self.one {
            return Ok(self.zero);
        }
        if a == self.zero {
            return Err(CanonError::Undefined("log(0)".into()));
        }
        let k = self.intern_kernel(Kernel::Log(a));
        Ok(self.kernel_form(k))
    }

    /// The principal `atan(a)`: a kernel (no rewrite besides atan(0) = 0).
    pub fn atan(&mut self, a: Form) -> CResult<Form> {
        if a == self.zero {
            return Ok(self.zero);
        }
        let k = self.intern_kernel(Kernel::Atan(a));
        Ok(self.kernel_form(k))
    }

    /// The half angle `atan(q)` of `atan2(y, x)`, for `q = y / (sqrt(x^2 + y^2) + x)` built
    /// by the caller from real `y` and `x` (`atan2` in `build.rs`). The kernel remembers
    /// `(y, x)`, so that its derivative is `(x y' - y x') / (2 (x^2 + y^2))`: equal to the
    /// general `q' / (1 + q^2)` wherever `q` is defined, since `1 + q^2 = 2 r / (r + x)` and
    /// `q' = (x y' - y x') / (r (r + x))` there, with `r^2 = x^2 + y^2`. Any recorded pair
    /// whose `q` is this kernel's argument gives the same value (the identity depends on `q`
    /// only through that equation), so which pair is remembered does not matter.
    pub(crate) fn half_angle_atan(&mut self, q: Form, y: Form, x: Form) -> CResult<Form> {
        if q == self.zero {
            return Ok(self.zero);
        }
        let k = self.intern_kernel(Kernel::Atan(q));
        self.atan2_args.entry(k).or_insert((y, x));
        Ok(self.kernel_form(k))
    }

    /// `(exp(i a), exp(-i a))`.
    fn exp_i_pair(&mut self, a: Form) -> CResult<(Form, Form)> {
        let ia = self.scale(a, &Coeff::i())?;
        let p = self.exp(ia)?;
        let nia = self.neg(ia)?;
        let m = self.exp(nia)?;
        Ok((p, m))
    }

    /// `sin(a) = (e^(ia) - e^(-ia)) / (2i)`.
    pub fn sin(&mut self, a: Form) -> CResult<Form> {
        let (p, m) = self.exp_i_pair(a)?;
        let d = self.sub(p, m)?;
        // 1/(2i) = -i/2
        self.scale(
            d,
            &Coeff::i().mul(&Coeff::rational(Q::new((-1).into(), 2.into()))),
        )
    }
    /// `cos(a) = (e^(ia) + e^(-ia)) / 2`.
    pub fn cos(&mut self, a: Form) -> CResult<Form> {
        let (p, m) = self.exp_i_pair(a)?;
        let s = self.add(p, m)?;
        self.scale(s, &Coeff::rational(Q::new(1.into(), 2.into())))
    }
    /// `tan(a) = sin(a) / cos(a)`.
    pub fn tan(&mut self, a: Form) -> CResult<Form> {
        let s = self.sin(a)?;
        let c = self.cos(a)?;
        self.div(s, c)
    }
    /// `sinh(a) = (e^a - e^(-a)) / 2`.
    pub fn sinh(&mut self, a: Form) -> CResult<Form> {
        let p = self.exp(a)?;
        let na = self.neg(a)?;
        let m = self.exp(na)?;
        let d = self.sub(p, m)?;
        self.scale(d, &Coeff::rational(Q::new(1.into(), 2.into())))
    }
    /// `cosh(a) = (e^a + e^(-a)) / 2`.
    pub fn cosh(&mut self, a: Form) -> CResult<Form> {
        let p = self.exp(a)?;
        let na = self.neg(a)?;
        let m = self.exp(na)?;
        let d = self.add(p, m)?;
        self.scale(d, &Coeff::rational(Q::new(1.into(), 2.into())))
    }
    /// `tanh(a) = sinh(a) / cosh(a)`.
    pub fn tanh(&mut self, a: Form) -> CResult<Form> {
        let s = self.sinh(a)?;
        let c = self.cosh(a)?;
        self.div(s, c)
    }

    /// `a^b` for any exponent: rational exponents exactly, otherwise `exp(b*log(a))`.
    pub fn pow(&mut self, a: Form, b: Form) -> CResult<Form> {
        if let Some(q) = self.as_rational(b) {
            return self.pow_rational(a, &q);
        }
        if a == self.zero {
            return Err(CanonError::Undefined("0 to a symbolic power".into()));
        }
        let l = self.log(a)?;
        let e = self.mul(b, l)?;
        self.exp(e)
    }

    /// The symbols that `f` depends on, sorted.
    pub fn free_symbols(&mut self, f: Form) -> Vec<Rc<str>> {
        let ks = self.form_deps(f);
        let mut v: Vec<Rc<str>> = ks
            .iter()
            .filter_map(|k| match self.kernel(*k) {
                Kernel::Sym(s) => Some(s.clone()),
                _ => None,
            })
            .collect();
        v.sort();
        v.dedup();
        v
    }

    /// Every kernel `f` contains, in its terms, denominators and exponents, and inside the
    /// arguments of those kernels, at any depth; each once, in the order first reached.
    fn reachable_kernels(&mut self, f: Form) -> Vec<KernelId> {
        let mut out = Vec::new();
        let mut kernels_seen = rustc_hash::FxHashSet::default();
        let mut stack = vec![f];
        let mut seen = rustc_hash::FxHashSet::default();
        while let Some(g) = stack.pop() {
            if !seen.insert(g) {
                continue;
            }
            let r = self.rats[g.0 as usize].clone();
            let dens = r.den.iter().map(|(fid, _)| &self.factors[fid.0 as usize]);
            for (m, _) in r.num.iter().chain(dens.flatten()) {
                let mono = &self.monos[m.0 as usize];
                if let Some(e) = mono.exp {
                    stack.push(e);
                }
                for &(k, _) in &mono.pows {
                    if !kernels_seen.insert(k) {
                        continue;
                    }
                    out.push(k);
                    match self.kernel(k) {
                        Kernel::Sym(_) | Kernel::Pi => {}
                        Kernel::Root { radicand: a, .. }
                        | Kernel::Log(a)
                        | Kernel::Atan(a)
                        | Kernel::Func { arg: a, .. } => stack.push(*a),
                    }
                }
            }
        }
        out
    }

    /// The names of the arbitrary functions that `f` uses, sorted.
    pub fn functions_used(&mut self, f: Form) -> Vec<Rc<str>> {
        let mut out: Vec<Rc<str>> = self
            .reachable_kernels(f)
            .into_iter()
            .filter_map(|k| match self.kernel(k) {
                Kernel::Func { name, .. } => Some(name.clone()),
                _ => None,
            })
            .collect();
        out.sort();
        out.dedup();
        out
    }

    /// Symbol kernels a kernel depends on.
    fn kernel_deps(&mut self, k: KernelId) -> Rc<[KernelId]> {
        if let Some(d) = self.deps_cache.get(&k) {
            return d.clone();
        }
        let d: Rc<[KernelId]> = match self.kernel(k).clone() {
            Kernel::Sym(_) => Rc::from(vec![k]),
            // pi is listed so that an exponent's pi part can be found by differentiating.
            Kernel::Pi => Rc::from(vec![k]),
            Kernel::Root { radicand: a, .. }
            | Kernel::Log(a)
            | Kernel::Atan(a)
            | Kernel::Func { arg: a, .. } => self.form_deps(a),
        };
        self.deps_cache.insert(k, d.clone());
        d
    }

    fn poly_deps(&mut self, p: &Poly, out: &mut Vec<KernelId>) {
        // Each monomial's kernels once, in a first pass that borrows nothing mutably; the
        // kernels' own dependencies (cached) in a second.
        let mut kernels: Vec<KernelId> = Vec::new();
        let mut seen: rustc_hash::FxHashSet<KernelId> = Default::default();
        let mut exps: Vec<Form> = Vec::new();
        for (m, _) in p {
            let mono = &self.monos[m.0 as usize];
            for &(k, _) in &mono.pows {
                if seen.insert(k) {
                    kernels.push(k);
                }
            }
            if let Some(e) = mono.exp
                && !exps.contains(&e)
            {
                exps.push(e);
            }
        }
        for k in kernels {
            out.extend(self.kernel_deps(k).iter().copied());
        }
        for e in exps {
            out.extend(self.form_deps(e).iter().copied());
        }
    }

    /// Symbol kernels a form depends on (cached per form).
    fn form_deps(&mut self, f: Form) -> Rc<[KernelId]> {
        if let Some(d) = self.form_deps_cache.get(&f) {
            return d.clone();
        }
        let r = self.rats[f.0 as usize].clone();
        let mut out = Vec::new();
        self.poly_deps(&r.num, &mut out);
        for (fid, _) in &r.den {
            let p = self.factors[fid.0 as usize].clone();
            self.poly_deps(&p, &mut out);
        }
        out.sort();
        out.dedup();
        let d: Rc<[KernelId]> = Rc::from(out);
        self.form_deps_cache.insert(f, d.clone());
        d
    }

    /// Whether `f` is shown real-valued wherever it is defined (for real symbols): every kernel
    /// it contains, in its terms, denominators and exponents, at any depth, is a symbol, `pi`,
    /// an `atan` of a form shown real, an arbitrary function of a form shown real (arbitrary
    /// functions are real-valued by convention), or a principal root or logarithm of a form
    /// shown real *and* shown nonnegative (a sum of nonnegative terms, the private
    /// `is_nonneg_shown`, or a root [`Store::abs_of_real`] or `atan2` built from a sum of
    /// squares of forms shown real); and `f` and every
    /// kernel argument minus its formal conjugate (coefficients and exponents conjugated,
    /// [`Store::conj_formal`]) cancels to zero. `false` means "not shown", not "not real"; a
    /// limit reached also gives `false`.
    ///
    /// Soundness, by induction on the depth of kernels. Symbols, `pi` and arbitrary functions
    /// are real by convention. A kernel whose argument `a` is real (induction, and `a` equal to
    /// its conjugate) is real: `atan` of a real number is real; the principal `q`-th root of a
    /// real `a >= 0` is the real `a^(1/q) >= 0`, and the principal logarithm of a real `a > 0`
    /// is real (at `a = 0` it is undefined, so "where defined" covers it). A root of a
    /// negative number is not real, which is why a root needs its radicand shown nonnegative,
    /// not just real. With every kernel real, the formal conjugate of `f` is its complex
    /// conjugate, so `f - conj(f) = 0` makes `f` real.
    pub fn is_real_shown(&mut self, f: Form) -> bool {
        // Every kernel reached must be real; `f` and every kernel argument must also equal
        // its formal conjugate (an exponent need not be real).
        let mut self_conjugate = vec![f];
        let mut nonneg = Vec::new();
        for k in self.reachable_kernels(f) {
            match self.kernel(k) {
                Kernel::Sym(_) | Kernel::Pi => {}
                Kernel::Atan(a) | Kernel::Func { arg: a, .. } => self_conjugate.push(*a),
                Kernel::Root { radicand: a, .. } | Kernel::Log(a) => {
                    self_conjugate.push(*a);
                    if !self.square_roots.contains(&k) {
                        nonneg.push(*a);
                    }
                }
            }
        }
        // Every kernel reached is real, so a formal conjugate is the complex conjugate.
        self_conjugate.sort();
        self_conjugate.dedup();
        // `f - conj(f)` cancelling to no terms proves them equal (forms are not unique, so
        // comparing ids alone would be too strict).
        for g in self_conjugate {
            if !self.self_conjugate_shown(g) {
                return false;
            }
        }
        // With every kernel real (given the roots' radicands are nonnegative, which this
        // checks for each of them), every root kernel is >= 0: `is_nonneg_shown` may use that.
        nonneg.iter().all(|&a| self.is_nonneg_shown(a))
    }

    /// Whether `g` minus its formal conjugate cancels (so `g` is real when its kernels are).
    fn self_conjugate_shown(&mut self, g: Form) -> bool {
        let Ok(c) = self.conj_formal(g) else {
            return false;
        };
        c == g || self.sub(g, c) == Ok(self.zero)
    }

    /// Whether the form `g`, whose kernels are all real and root kernels nonnegative (the
    /// caller, [`Store::is_real_shown`], establishes both), is shown `>= 0` wherever it is
    /// defined: its numerator and each denominator factor are sums of terms `c * m` with `c`
    /// real and certified `>= 0`, `m` a product of even powers of (real) kernels, any powers of
    /// `pi` and of root kernels (`>= 0`), and at most one `exp(E)` with `E` equal to its formal
    /// conjugate (so real, and `exp(E) > 0`); a denominator factor raised to an even power
    /// needs only to be real. A sum of nonnegative terms is nonnegative, a quotient of
    /// nonnegative numbers too (where defined). Cheap and incomplete: `x^2 - 2*x + 1` is not
    /// shown (the root of `abs(x - 1)` is recorded when `abs` builds it instead).
    fn is_nonneg_shown(&mut self, g: Form) -> bool {
        let r = self.rats[g.0 as usize].clone();
        if !self.poly_nonneg_shown(&r.num) {
            return false;
        }
        r.den.iter().all(|&(fid, e)| {
            let p = self.factors[fid.0 as usize].clone();
            (e % 2 == 0 && self.poly_real_shown(&p)) || self.poly_nonneg_shown(&p)
        })
    }

    /// Every term nonnegative (see [`Store::is_nonneg_shown`]).
    fn poly_nonneg_shown(&mut self, p: &Poly) -> bool {
        p.iter().all(|(m, c)| {
            let nonneg_coeff = c.is_real() && c.to_interval().is_some_and(|v| v.re.lo() >= 0.0);
            let mono = self.monos[m.0 as usize].clone();
            nonneg_coeff
                && mono.exp.is_none_or(|e| self.self_conjugate_shown(e))
                && mono.pows.iter().all(|&(k, e)| {
                    e % 2 == 0 || matches!(self.kernel(k), Kernel::Pi | Kernel::Root { .. })
                })
        })
    }

    /// Every coefficient real and every exponent equal to its conjugate: a real polynomial
    /// when its kernels are real.
    fn poly_real_shown(&mut self, p: &Poly) -> bool {
        p.iter().all(|(m, c)| {
            let e = self.monos[m.0 as usize].exp;
            c.is_real() && e.is_none_or(|e| self.self_conjugate_shown(e))
        })
    }

    /// `|u| = sqrt(u^2)` for `u` shown real ([`Store::is_real_shown`], which the caller must
    /// have checked). The root kernel is recorded as the root of a real square, so that it is
    /// shown real and nonnegative itself (`abs(abs(x))`): its radicand `u^2` is `>= 0`
    /// because `u` is real, whatever the expanded radicand looks like.
    pub fn abs_of_real(&mut self, u: Form) -> CResult<Form> {
        let sq = self.mul(u, u)?;
        let root = self.sqrt_of_squares(sq)?;
        // The display printers write the root as abs(u) again (it reads back to this root).
        if let Some(k) = self.square_root_kernel(root, sq) {
            self.abs_args.entry(k).or_insert(u);
        }
        Ok(root)
    }

    /// The kernel of `root` when it is the single kernel `sqrt(sq)`.
    fn square_root_kernel(&self, root: Form, sq: Form) -> Option<KernelId> {
        let r = &self.rats[root.0 as usize];
        if let [(m, c)] = r.num.as_slice()
            && r.den.is_empty()
            && c.is_one()
            && let [(k, 1)] = self.monos[m.0 as usize].pows.as_slice()
            && self.monos[m.0 as usize].exp.is_none()
            && matches!(self.kernel(*k), Kernel::Root { radicand, q: 2 } if *radicand == sq)
        {
            return Some(*k);
        }
        None
    }

    /// `sqrt(sq)` for a radicand the caller knows to be a sum of squares of forms shown real
    /// (`u^2` for `abs`, `x^2 + y^2` for `atan2`), hence `>= 0`: the root kernel is recorded
    /// as such ([`Store::is_real_shown`] then accepts it without looking at the expanded
    /// radicand).
    pub(crate) fn sqrt_of_squares(&mut self, sq: Form) -> CResult<Form> {
        let root = self.root(sq, 2)?;
        if let Some(k) = self.square_root_kernel(root, sq) {
            self.square_roots.insert(k);
        }
        Ok(root)
    }

    /// True when `f` is shown real for every value of its symbols in `pt` (intervals: a box):
    /// as [`Store::is_real_shown`], except that a root or a logarithm counts as real when its
    /// argument is itself shown real and its enclosure over `pt` is certified positive (the
    /// principal root or logarithm of a positive real is real). `false` means "not shown".
    pub fn is_real_on(&mut self, f: Form, pt: &Point) -> bool {
        let mut self_conjugate = vec![f];
        for k in self.reachable_kernels(f) {
            match self.kernel(k).clone() {
                Kernel::Sym(_) | Kernel::Pi => {}
                Kernel::Atan(a) | Kernel::Func { arg: a, .. } => self_conjugate.push(a),
                Kernel::Root { radicand: a, .. } | Kernel::Log(a) => {
                    // Every kernel `a` reaches is reached from `f` too, so checked here as well.
                    match self.eval_interval(a, pt) {
                        Some(z) if z.re.lo() > 0.0 => self_conjugate.push(a),
                        _ => return false,
                    }
                }
            }
        }
        self_conjugate.sort();
        self_conjugate.dedup();
        for g in self_conjugate {
            let Ok(c) = self.conj_formal(g) else {
                return false;
            };
            if c != g && self.sub(g, c) != Ok(self.zero) {
                return false;
            }
        }
        true
    }

    /// The formal conjugate of `f`: every coefficient and every exponent conjugated, kernels
    /// kept as they are (so it is the complex conjugate when the kernels are real).
    pub fn conj_formal(&mut self, f: Form) -> CResult<Form> {
        let r = self.rats[f.0 as usize].clone();
        let plain = |st: &Store, p: &Poly| {
            p.iter()
                .all(|(m, c)| c.is_real() && st.monos[m.0 as usize].exp.is_none())
        };
        if plain(self, &r.num)
            && r.den
                .iter()
                .all(|(fid, _)| plain(self, &self.factors[fid.0 as usize]))
        {
            return Ok(f);
        }
        let num = self.conj_poly(&r.num)?;
        let mut den = self.one;
        for &(fid, e) in &r.den {
            let p = self.factors[fid.0 as usize].clone();
            let pc = self.conj_poly(&p)?;
            let pe = self.powi(pc, e as i64)?;
            den = self.mul(den, pe)?;
        }
        self.div(num, den)
    }

    fn conj_poly(&mut self, p: &Poly) -> CResult<Form> {
        let mut acc = self.zero;
        for (m, c) in p {
            let mono = self.monos[m.0 as usize].clone();
            let plain = self.intern_mono(Mono {
                pows: mono.pows,
                exp: None,
            });
            let mut t = self.intern_rat(Rat {
                num: vec![(plain, c.conj())],
                den: Vec::new(),
            });
            if let Some(e) = mono.exp {
                let ec = self.conj_formal(e)?;
                let x = self.exp(ec)?;
                t = self.mul(t, x)?;
            }
            acc = self.add(acc, t)?;
        }
        Ok(acc)
    }

    /// Substitutes forms for symbols: `f` with every symbol in `subs` replaced.
    pub fn substitute(&mut self, f: Form, subs: &FxHashMap<KernelId, Form>) -> CResult<Form> {
        let mut memo = FxHashMap::default();
        self.subst_form(f, subs, &mut memo)
    }

    fn subst_form(
        &mut self,
        f: Form,
        subs: &FxHashMap<KernelId, Form>,
        memo: &mut FxHashMap<Form, Form>,
    ) -> CResult<Form> {
        if let Some(&g) = memo.get(&f) {
            return Ok(g);
        }
        let deps = self.form_deps(f);
        if !deps.iter().any(|k| subs.contains_key(k)) {
            memo.insert(f, f);
            return Ok(f);
        }
        let r = self.rats[f.0 as usize].clone();
        let num = self.subst_poly(&r.num, subs, memo)?;
        let mut den = self.one;
        for &(fid, e) in &r.den {
            let p = self.factors[fid.0 as usize].clone();
            let pf = self.subst_poly(&p, subs, memo)?;
            let pe = self.powi(pf, e as i64)?;
            den = self.mul(den, pe)?;
        }
        let g = self.div(num, den)?;
        memo.insert(f, g);
        Ok(g)
    }

    fn subst_poly(
        &mut self,
        p: &Poly,
        subs: &FxHashMap<KernelId, Form>,
        memo: &mut FxHashMap<Form, Form>,
    ) -> CResult<Form> {
        let mut acc = self.zero;
        for (m, c) in p {
            let mono = self.monos[m.0 as usize].clone();
            let mut t = self.constant(c.clone());
            for (k, e) in mono.pows {
                let kf = self.subst_kernel(k, subs, memo)?;
                let ke = self.powi(kf, e as i64)?;
                t = self.mul(t, ke)?;
            }
            if let Some(e) = mono.exp {
                let es = self.subst_form(e, subs, memo)?;
                let x = self.exp(es)?;
                t = self.mul(t, x)?;
            }
            acc = self.add(acc, t)?;
        }
        Ok(acc)
    }

    fn subst_kernel(
        &mut self,
        k: KernelId,
        subs: &FxHashMap<KernelId, Form>,
        memo: &mut FxHashMap<Form, Form>,
    ) -> CResult<Form> {
        if let Some(&f) = subs.get(&k) {
            return Ok(f);
        }
        match self.kernel(k).clone() {
            Kernel::Sym(_) | Kernel::Pi => Ok(self.kernel_form(k)),
            Kernel::Root { radicand, q } => {
                let a = self.subst_form(radicand, subs, memo)?;
                self.root(a, q)
            }
            Kernel::Log(a) => {
                let a = self.subst_form(a, subs, memo)?;
                self.log(a)
            }
            Kernel::Atan(a) => {
                let a = self.subst_form(a, subs, memo)?;
                self.atan(a)
            }
            Kernel::Func { name, order, arg } => {
                let a = self.subst_form(arg, subs, memo)?;
                Ok(self.func(&name, order, a))
            }
        }
    }
}

/// `i*q`.
fn c_imag(q: &Q) -> Coeff {
    Coeff::i().mul(&Coeff::rational(q.clone()))
}

/// sqrt(r) exactly when r = (a/b)^2 * m with m in {1, 2, 3, 6}.
fn exact_sqrt(r: &Q) -> Option<Coeff> {
    let n = r.numer() * r.denom();
    // sqrt(n/d) = sqrt(n*d)/d
    let (k, m) = square_split(&n)?;
    let small = Coeff::sqrt_of_small(m)?;
    Some(small.mul(&Coeff::rational(Q::new(k, r.denom().clone()))))
}

/// Writes n = k^2 * m with m squarefree in {1, 2, 3, 6}, if possible.
fn square_split(n: &BigInt) -> Option<(BigInt, u32)> {
    for m in [1u32, 2, 3, 6] {
        let mm = BigInt::from(m);
        if (n % &mm).is_zero() {
            let rest = n / &mm;
            let s = rest.sqrt();
            if &s * &s == rest {
                return Some((s, m));
            }
        }
    }
    None
}

#[cfg(test)]
mod tests;
