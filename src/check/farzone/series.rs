//! Truncated Laurent series in `eps = 1/rho` whose coefficients are canonical forms, and the
//! expansion of a canonical form along a ray: the Cartesian `t = u + rho*s`, `x_i = rho*n_i`
//! ([`cartesian_ray`]) or the radial `t = u + rho`, `r = rho` ([`radial_ray`]). The ray is
//! given by the exact series of the coordinates that move along it; every other symbol is a
//! constant of the expansion.
//!
//! A [`Series`] `{v, prec, c}` stands for `sum_k c[k] eps^(v+k) + O(eps^prec)`: `v` is a
//! *lower bound* of the valuation (a coefficient that is not an empty form may still vanish
//! as a function, which addition and multiplication do not mind), coefficients past `c`'s end
//! and below `prec` are exactly zero, and `prec` may be [`INF`] (the series is exact: a
//! polynomial in eps and 1/eps). Only the operations that divide by a leading coefficient
//! (inverse, roots, logarithms) need to know it: they ask the zero test for a certified
//! nonzero value and record the coefficient as a [`Condition`] of the verdict.

use crate::canon::{CanonError, Coeff, Form, Kernel, KernelId, OwnedTerm, Q, Store};
use crate::zero::{Sampling, Verdict, decide};
use num_bigint::BigInt;
use rustc_hash::FxHashMap;

/// "No limit": the precision of an exact series, the valuation of zero.
pub(super) const INF: i64 = 1 << 40;

fn sat(x: i64) -> i64 {
    if x >= INF / 2 { INF } else { x }
}

/// Why an expansion stopped.
#[derive(Clone, Debug)]
pub(super) enum Stop {
    /// Not decidable this way (the reason, for the report).
    Undecided(String),
    /// The relative precision was too small to see past a cancellation: retry with more.
    Precision,
    /// An algebra limit.
    Limit(CanonError),
}

impl From<CanonError> for Stop {
    fn from(e: CanonError) -> Stop {
        if e.is_limit() {
            Stop::Limit(e)
        } else {
            Stop::Undecided(e.to_string())
        }
    }
}

type SResult<T> = Result<T, Stop>;

/// Where an expansion is valid: a leading coefficient that was divided by (it must not
/// vanish) or the leading coefficient of a root's radicand or a logarithm's argument (it
/// must not be a real number <= 0, so that the principal branches factor).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Condition {
    /// `f != 0`.
    NonZero(Form),
    /// `f` is not a real number <= 0.
    OffNegativeAxis(Form),
}

/// See the module docs.
#[derive(Clone, Debug)]
pub(super) struct Series {
    pub(super) v: i64,
    pub(super) prec: i64,
    pub(super) c: Vec<Form>,
}

impl Series {
    fn zero() -> Series {
        Series {
            v: INF,
            prec: INF,
            c: Vec::new(),
        }
    }

    /// The exact series `f eps^v`.
    fn monomial(f: Form, v: i64) -> Series {
        Series {
            v,
            prec: INF,
            c: vec![f],
        }
    }

    pub(super) fn is_zero(&self) -> bool {
        self.v >= INF
    }

    /// The coefficient of `eps^k` (`None` past the precision).
    pub(super) fn coef(&self, k: i64, store: &Store) -> Option<Form> {
        if k >= self.prec {
            return None;
        }
        if k < self.v {
            return Some(store.zero());
        }
        Some(
            self.c
                .get((k - self.v) as usize)
                .copied()
                .unwrap_or(store.zero()),
        )
    }
}

/// The Cartesian ray `t = u + rho*s`, `(x, y, z) = rho*n`, `s = sqrt(n.n)` (a root kernel):
/// the exact series of the kernels of t, x, y, z.
pub(super) fn cartesian_ray(
    store: &mut Store,
    coords: [KernelId; 4],
    u: Form,
    n: [Form; 3],
) -> Result<Vec<(KernelId, Series)>, CanonError> {
    let sq: Vec<Form> = n
        .iter()
        .map(|&f| store.mul(f, f))
        .collect::<Result<_, _>>()?;
    let nn = store.sum(&sq)?;
    let s = store.root(nn, 2)?;
    let t = Series {
        v: -1,
        prec: INF,
        c: vec![s, u],
    };
    Ok(vec![
        (coords[0], t),
        (coords[1], Series::monomial(n[0], -1)),
        (coords[2], Series::monomial(n[1], -1)),
        (coords[3], Series::monomial(n[2], -1)),
    ])
}

/// The radial ray `t = u + rho`, `r = rho` (every other coordinate fixed): the exact series
/// of the kernels of t and r.
pub(super) fn radial_ray(
    store: &mut Store,
    time: KernelId,
    radius: KernelId,
    u: Form,
) -> Vec<(KernelId, Series)> {
    let one = store.one();
    let t = Series {
        v: -1,
        prec: INF,
        c: vec![one, u],
    };
    vec![(time, t), (radius, Series::monomial(one, -1))]
}

/// Expands forms along the ray at one relative precision `p` (the number of terms kept after
/// each result's leading one, where a result is not exact).
pub(super) struct Expander<'a> {
    pub(super) sampling: &'a Sampling,
    /// The kernels of the coordinates that move along the ray and their exact series.
    coords: Vec<(KernelId, Series)>,
    p: usize,
    kernels: FxHashMap<KernelId, Series>,
    forms: FxHashMap<Form, Series>,
    certified: FxHashMap<Form, bool>,
    /// Every condition the expansions so far rest on.
    pub(super) conditions: Vec<Condition>,
}

impl<'a> Expander<'a> {
    /// The expander for the ray on which the coordinates `moving` (kernels) have the exact
    /// series given; every other symbol is fixed along it. `p` is the relative precision.
    pub(super) fn new(
        sampling: &'a Sampling,
        moving: Vec<(KernelId, Series)>,
        p: usize,
    ) -> Expander<'a> {
        Expander {
            sampling,
            coords: moving,
            p: p.max(1),
            kernels: FxHashMap::default(),
            forms: FxHashMap::default(),
            certified: FxHashMap::default(),
            conditions: Vec::new(),
        }
    }

    fn depends(&self, store: &mut Store, f: Form) -> bool {
        let syms = store.free_symbols(f);
        self.coords.iter().any(|(k, _)| {
            matches!(store.kernel(*k), Kernel::Sym(name) if syms.iter().any(|s| s == name))
        })
    }

    fn constant(&self, store: &Store, f: Form) -> Series {
        if store.is_zero(f) {
            Series::zero()
        } else {
            Series::monomial(f, 0)
        }
    }

    /// Drops leading coefficients that are empty forms and trailing ones, and keeps at most
    /// `p` coefficients of a series that is not exact.
    fn normalize(&self, store: &Store, mut a: Series) -> Series {
        let lead = a.c.iter().take_while(|f| store.is_zero(**f)).count();
        a.c.drain(..lead);
        a.v = sat(a.v + lead as i64);
        while a.c.last().is_some_and(|f| store.is_zero(*f)) {
            a.c.pop();
        }
        if a.c.is_empty() {
            a.v = a.prec;
        }
        if a.c.len() > self.p {
            a.c.truncate(self.p);
            a.prec = a.prec.min(a.v + self.p as i64);
        }
        if a.prec >= INF && a.c.is_empty() {
            return Series::zero();
        }
        a
    }

    pub(super) fn add(&mut self, store: &mut Store, a: &Series, b: &Series) -> SResult<Series> {
        if a.is_zero() {
            return Ok(b.clone());
        }
        if b.is_zero() {
            return Ok(a.clone());
        }
        let v = a.v.min(b.v);
        let prec = a.prec.min(b.prec);
        let end = (a.v + a.c.len() as i64)
            .max(b.v + b.c.len() as i64)
            .min(prec);
        let mut c = Vec::new();
        for k in v..end {
            let x = a.coef(k, store).unwrap_or(store.zero());
            let y = b.coef(k, store).unwrap_or(store.zero());
            c.push(store.add(x, y)?);
        }
        Ok(self.normalize(store, Series { v, prec, c }))
    }

    fn scale(&mut self, store: &mut Store, a: &Series, f: Form) -> SResult<Series> {
        let b = self.constant(store, f);
        self.mul(store, a, &b)
    }

    pub(super) fn mul(&mut self, store: &mut Store, a: &Series, b: &Series) -> SResult<Series> {
        if a.is_zero() || b.is_zero() {
            return Ok(Series::zero());
        }
        let v = a.v + b.v;
        let prec = sat(a.v + b.prec).min(sat(b.v + a.prec));
        if a.c.is_empty() || b.c.is_empty() {
            return Ok(self.normalize(
                store,
                Series {
                    v,
                    prec,
                    c: Vec::new(),
                },
            ));
        }
        let len = (a.c.len() + b.c.len() - 1).min(usize::try_from(prec - v).unwrap_or(0));
        let mut c = Vec::with_capacity(len);
        for k in 0..len {
            let mut terms = Vec::new();
            for i in 0..=k {
                let (Some(&x), Some(&y)) = (a.c.get(i), b.c.get(k - i)) else {
                    continue;
                };
                terms.push(store.mul(x, y)?);
            }
            c.push(store.sum(&terms)?);
            if crate::budget::over_budget() {
                return Err(Stop::Limit(CanonError::MemoryCap(
                    (crate::budget::cap() >> 20) as u64,
                )));
            }
        }
        Ok(self.normalize(store, Series { v, prec, c }))
    }

    /// Certifies that `f` is not identically zero (the zero test's witness), else stops.
    fn certify_nonzero(&mut self, store: &mut Store, f: Form, what: &str) -> SResult<()> {
        if let Some(&ok) = self.certified.get(&f) {
            return if ok {
                Ok(())
            } else {
                Err(Stop::Undecided(format!(
                    "the leading coefficient of {what} is not certified nonzero"
                )))
            };
        }
        let ok = matches!(decide(store, f, self.sampling), Verdict::Nonzero(_));
        self.certified.insert(f, ok);
        if ok {
            Ok(())
        } else {
            Err(Stop::Undecided(format!(
                "the leading coefficient of {what} is not certified nonzero, so the expansion \
                 in 1/r cannot divide by it"
            )))
        }
    }

    fn note(&mut self, store: &mut Store, c: Condition) {
        let f = match c {
            Condition::NonZero(f) | Condition::OffNegativeAxis(f) => f,
        };
        if store.as_constant(f).is_some() && matches!(c, Condition::NonZero(_)) {
            return;
        }
        if !self.conditions.contains(&c) {
            self.conditions.push(c);
        }
    }

    /// The leading coefficient and `w = a / (c0 eps^v) - 1` (valuation >= 1), for an `a` with
    /// a certified nonzero leading coefficient.
    fn split_leading(
        &mut self,
        store: &mut Store,
        a: &Series,
        what: &str,
    ) -> SResult<(Form, Series)> {
        if a.is_zero() {
            return Err(Stop::Undecided(format!("{what} is identically zero")));
        }
        if a.c.is_empty() {
            return Err(Stop::Precision);
        }
        let c0 = a.c[0];
        self.certify_nonzero(store, c0, what)?;
        self.note(store, Condition::NonZero(c0));
        let inv = store.inv(c0)?;
        let mut c = vec![store.zero()];
        for &ck in &a.c[1..] {
            c.push(store.mul(ck, inv)?);
        }
        let w = self.normalize(
            store,
            Series {
                v: 0,
                prec: sat(a.prec - a.v),
                c,
            },
        );
        Ok((c0, w))
    }

    /// `sum_j coeffs[j] w^j + O(eps^len)` for `w` of valuation >= 1.
    fn compose(&mut self, store: &mut Store, coeffs: &[Form], w: &Series) -> SResult<Series> {
        let mut r = Series::zero();
        for &cj in coeffs.iter().rev() {
            let rw = self.mul(store, &r, w)?;
            let cj = self.constant(store, cj);
            r = self.add(store, &rw, &cj)?;
        }
        if !w.is_zero() {
            r.prec = r.prec.min(coeffs.len() as i64);
            r = self.normalize(store, r);
        }
        Ok(r)
    }

    fn rational(store: &mut Store, n: i64, d: i64) -> Form {
        store.constant(Coeff::rational(Q::new(BigInt::from(n), BigInt::from(d))))
    }

    fn inv(&mut self, store: &mut Store, a: &Series) -> SResult<Series> {
        let (c0, w) = self.split_leading(store, a, "a denominator")?;
        let lead = store.inv(c0)?;
        // 1/(1 + w) = sum (-1)^j w^j.
        let coeffs: Vec<Form> = (0..self.p)
            .map(|j| Self::rational(store, if j % 2 == 0 { 1 } else { -1 }, 1))
            .collect();
        let g = self.compose(store, &coeffs, &w)?;
        let g = self.scale(store, &g, lead)?;
        Ok(shift(g, -a.v))
    }

    fn powi(&mut self, store: &mut Store, a: &Series, e: i64) -> SResult<Series> {
        let base = if e < 0 {
            self.inv(store, a)?
        } else {
            a.clone()
        };
        let mut n = e.unsigned_abs();
        let one = store.one();
        let mut out = self.constant(store, one);
        let mut b = base;
        while n > 0 {
            if n & 1 == 1 {
                out = self.mul(store, &out, &b)?;
            }
            n >>= 1;
            if n > 0 {
                b = self.mul(store, &b, &b)?;
            }
        }
        Ok(out)
    }

    /// True when `f` is a sum of terms, each a positive rational times even powers of
    /// symbols (all real): then `f >= 0` at every real point.
    fn manifestly_nonnegative(store: &Store, f: Form) -> bool {
        let view = store.view(f);
        view.is_polynomial()
            && !view.numerator().is_empty()
            && view.numerator().terms().all(|t| {
                t.coeff()
                    .as_rational()
                    .is_some_and(|q| q > Q::from_integer(0.into()))
                    && t.monomial().exp().is_none()
                    && t.monomial()
                        .powers()
                        .iter()
                        .all(|(k, e)| e % 2 == 0 && matches!(store.kernel(*k), Kernel::Sym(_)))
            })
    }

    /// The branch condition of a root or logarithm whose argument has leading coefficient
    /// `c0` (certified nonzero).
    fn branch(&mut self, store: &mut Store, c0: Form, what: &str) -> SResult<()> {
        if Self::manifestly_nonnegative(store, c0) {
            return Ok(());
        }
        if let Some(c) = store.as_constant(c0) {
            // A constant on the negative real axis would make the condition false everywhere.
            return match c.as_rational() {
                Some(q) if q < Q::from_integer(0.into()) => Err(Stop::Undecided(format!(
                    "the leading coefficient of {what} is a negative number"
                ))),
                _ => {
                    self.note(store, Condition::OffNegativeAxis(c0));
                    Ok(())
                }
            };
        }
        self.note(store, Condition::OffNegativeAxis(c0));
        Ok(())
    }

    fn root(&mut self, store: &mut Store, a: &Series, q: u32) -> SResult<Series> {
        if a.is_zero() {
            return Ok(Series::zero());
        }
        let what = "a root's radicand";
        let (c0, w) = self.split_leading(store, a, what)?;
        if a.v.rem_euclid(i64::from(q)) != 0 {
            return Err(Stop::Undecided(format!(
                "a root of order {q} of a quantity growing or decaying as r^{} (a fractional \
                 power of r)",
                -a.v
            )));
        }
        self.branch(store, c0, what)?;
        let lead = store.root(c0, q)?;
        // (1 + w)^(1/q) = sum binom(1/q, j) w^j.
        let mut coeffs = Vec::new();
        let mut b = Q::from_integer(1.into());
        let alpha = Q::new(1.into(), i64::from(q).into());
        for j in 0..self.p {
            coeffs.push(store.constant(Coeff::rational(b.clone())));
            let jq = Q::from_integer(BigInt::from(j as i64));
            b = b * (alpha.clone() - jq.clone()) / (jq + Q::from_integer(1.into()));
        }
        let g = self.compose(store, &coeffs, &w)?;
        let g = self.scale(store, &g, lead)?;
        Ok(shift(g, a.v / i64::from(q)))
    }

    fn log(&mut self, store: &mut Store, a: &Series) -> SResult<Series> {
        let what = "a logarithm's argument";
        let (c0, w) = self.split_leading(store, a, what)?;
        if a.v != 0 {
            return Err(Stop::Undecided(
                "a logarithm of a quantity that grows or decays with r (log r terms are not \
                 powers of 1/r)"
                    .into(),
            ));
        }
        self.branch(store, c0, what)?;
        let lead = store.log(c0)?;
        // log(1 + w) = sum_{j>=1} (-1)^(j+1) w^j / j.
        let mut coeffs = vec![store.zero()];
        for j in 1..self.p as i64 {
            coeffs.push(Self::rational(store, if j % 2 == 1 { 1 } else { -1 }, j));
        }
        let g = self.compose(store, &coeffs, &w)?;
        let l = self.constant(store, lead);
        self.add(store, &g, &l)
    }

    /// The part of `a` of order 0 and the rest (valuation >= 1), for an `a` that does not
    /// grow; `what` names it for the report, `consequence` says what growth would mean.
    fn bounded_split(
        &mut self,
        store: &mut Store,
        a: &Series,
        what: &str,
        consequence: &str,
    ) -> SResult<(Form, Series)> {
        if a.is_zero() {
            return Ok((store.zero(), Series::zero()));
        }
        if a.c.is_empty() {
            if a.prec <= 0 {
                return Err(Stop::Precision);
            }
            return Ok((store.zero(), a.clone()));
        }
        if a.v < 0 {
            let lead = a.c[0];
            return Err(match decide(store, lead, self.sampling) {
                Verdict::Nonzero(_) => Stop::Undecided(format!(
                    "{what} grows like r^{} at fixed t - r, so {consequence} (not a series in \
                     1/r)",
                    -a.v
                )),
                _ => Stop::Undecided(format!(
                    "{what} may grow like r^{} at fixed t - r (its coefficient is not reduced \
                     to 0)",
                    -a.v
                )),
            });
        }
        if a.prec <= 0 {
            return Err(Stop::Precision);
        }
        let a0 = a.coef(0, store).unwrap_or(store.zero());
        let mut rest = a.clone();
        if rest.v == 0 {
            rest.c[0] = store.zero();
        }
        Ok((a0, self.normalize(store, rest)))
    }

    fn exp(&mut self, store: &mut Store, e: &Series) -> SResult<Series> {
        let (e0, d) = self.bounded_split(
            store,
            e,
            "an exponent",
            "the field grows, oscillates or decays exponentially in r",
        )?;
        let lead = store.exp(e0)?;
        let coeffs: Vec<Form> = (0..self.p)
            .map(|j| store.constant(Coeff::rational(inv_factorial(j))))
            .collect();
        let g = self.compose(store, &coeffs, &d)?;
        self.scale(store, &g, lead)
    }

    fn func(&mut self, store: &mut Store, name: &str, order: u32, arg: &Series) -> SResult<Series> {
        let what = format!("the argument of {name}");
        let (a0, d) = self.bounded_split(
            store,
            arg,
            &what,
            "the function is not evaluated near a fixed argument",
        )?;
        // F^(k)(a0 + d) = sum_j F^(k+j)(a0) d^j / j!  (F smooth; d = O(1/r)).
        let mut coeffs = Vec::new();
        let terms = if d.is_zero() { 1 } else { self.p };
        for j in 0..terms {
            let fj = store.func(name, order + j as u32, a0);
            coeffs.push(store.scale(fj, &Coeff::rational(inv_factorial(j)))?);
        }
        self.compose(store, &coeffs, &d)
    }

    fn kernel_series(&mut self, store: &mut Store, k: KernelId) -> SResult<Series> {
        if let Some(s) = self.kernels.get(&k) {
            return Ok(s.clone());
        }
        if let Some((_, s)) = self.coords.iter().find(|(c, _)| *c == k) {
            return Ok(s.clone());
        }
        let kf = store.term_form(&OwnedTerm {
            coeff: Coeff::one(),
            powers: vec![(k, 1)],
            exp: None,
        });
        let s = if !self.depends(store, kf) {
            self.constant(store, kf)
        } else {
            match store.kernel(k).clone() {
                Kernel::Sym(_) | Kernel::Pi => self.constant(store, kf),
                Kernel::Root { radicand, q } => {
                    let a = self.expand(store, radicand)?;
                    self.root(store, &a, q)?
                }
                Kernel::Log(arg) => {
                    let a = self.expand(store, arg)?;
                    self.log(store, &a)?
                }
                Kernel::Atan(_) => {
                    return Err(Stop::Undecided(
                        "an arctangent of a quantity that depends on r (not expanded in 1/r)"
                            .into(),
                    ));
                }
                Kernel::Func { name, order, arg } => {
                    let a = self.expand(store, arg)?;
                    self.func(store, &name, order, &a)?
                }
            }
        };
        self.kernels.insert(k, s.clone());
        Ok(s)
    }

    fn poly(&mut self, store: &mut Store, terms: &[OwnedTerm]) -> SResult<Series> {
        let mut acc = Series::zero();
        for t in terms {
            let c = store.constant(t.coeff.clone());
            let mut s = self.constant(store, c);
            for &(k, e) in &t.powers {
                let ks = self.kernel_series(store, k)?;
                let p = self.powi(store, &ks, i64::from(e))?;
                s = self.mul(store, &s, &p)?;
            }
            if let Some(ex) = t.exp {
                let es = self.expand(store, ex)?;
                let es = self.exp(store, &es)?;
                s = self.mul(store, &s, &es)?;
            }
            acc = self.add(store, &acc, &s)?;
        }
        Ok(acc)
    }

    /// The series of `f` along the ray.
    pub(super) fn expand(&mut self, store: &mut Store, f: Form) -> SResult<Series> {
        if let Some(s) = self.forms.get(&f) {
            return Ok(s.clone());
        }
        let s = if !self.depends(store, f) {
            self.constant(store, f)
        } else {
            let view = store.view(f);
            let num = view.numerator().owned_terms();
            let den: Vec<(Vec<OwnedTerm>, u32)> = view
                .denominator()
                .map(|(p, e)| (p.owned_terms(), e))
                .collect();
            let mut s = self.poly(store, &num)?;
            for (terms, e) in den {
                let d = self.poly(store, &terms)?;
                let d = self.powi(store, &d, -i64::from(e))?;
                s = self.mul(store, &s, &d)?;
            }
            s
        };
        self.forms.insert(f, s.clone());
        Ok(s)
    }
}

/// `1/j!`, exact.
fn inv_factorial(j: usize) -> Q {
    let mut f = BigInt::from(1);
    for i in 2..=j {
        f *= BigInt::from(i);
    }
    Q::new(1.into(), f)
}

/// `a * eps^k`.
pub(super) fn shift(mut a: Series, k: i64) -> Series {
    if a.is_zero() {
        return a;
    }
    a.v += k;
    a.prec = sat(a.prec + k);
    a
}
