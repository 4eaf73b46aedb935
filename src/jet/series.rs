//! Truncated multivariate Taylor series ("jets") with enclosure coefficients.
//!
//! Model. A [`Jet`] of order `N` in `n` variables stands for the Taylor polynomial of a
//! smooth function `f` at a point `p`: the coefficients `c_alpha = (d^alpha f)(p) / alpha!`
//! for every multi-index `alpha` with `|alpha| <= N`. Arithmetic on jets is arithmetic on
//! these polynomials modulo terms of total degree above `N`, which is exactly how Taylor
//! coefficients of sums, products and compositions combine. Each coefficient is a
//! [`Scalar`] enclosure, so the result encloses the exact Taylor coefficients of the exact
//! function at the exact point.
//!
//! Key design decision: coefficients are stored in graded order (degree 0, then all of
//! degree 1, ...), so the coefficients of order `k` are a prefix of those of order `N`, and
//! one precomputed [`JetSpace`] (the monomials, a product table listing for each output
//! monomial the pairs of input monomials that multiply to it, and derivative tables) serves
//! every order up to its maximum. A product is then one tight loop over the table, and a
//! jet is truncated to a lower order by taking a prefix. The space is shared through `Rc`.
//!
//! Elementary functions use `f(a0 + d) = sum_k f^(k)(a0)/k! d^k`, where `a0` is the constant
//! coefficient and `d` the rest (nilpotent: `d^(N+1) = 0`), by Horner's rule. The univariate
//! coefficients `f^(k)(a0)/k!` come from closed forms (exp, log, powers, sin, cos, sinh,
//! cosh) or from the differential equations `t' = 1 + t^2` (tan) and `t' = 1 - t^2` (tanh).
//! The constant coefficient `a0` of `d` is exactly 0 by construction, not `a0 - a0` computed
//! in enclosure arithmetic, so the composition stays tight.
//!
//! `None` from any operation means "cannot evaluate here": a logarithm or even root of a
//! value that may be `<= 0`, a division by a value that may be 0, an overflow.

use super::scalar::{Scalar, factorial};
use num_bigint::BigInt;
use num_rational::BigRational;
use rustc_hash::FxHashMap;
use std::rc::Rc;

/// Most coefficients a jet may have.
pub const MAX_COEFFS: usize = 100_000;

/// Most entries of a product table (pairs of monomials), about 16 MB.
pub const MAX_PAIRS: usize = 2_000_000;

/// Why a [`JetSpace`] cannot be built.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum SpaceError {
    /// The jets would be too large.
    #[error(
        "jets of order {order} in {vars} variables need {coeffs} coefficients and {pairs} \
         product terms (at most {MAX_COEFFS} and {MAX_PAIRS}): too many derivatives"
    )]
    TooLarge {
        /// Number of variables.
        vars: usize,
        /// Highest total order.
        order: u32,
        /// Coefficients per jet (saturating).
        coeffs: usize,
        /// Entries of the product table (saturating).
        pairs: usize,
    },
}

/// `C(n + k, k)`, saturating.
fn binom_sat(n: usize, k: usize) -> usize {
    let mut r: u128 = 1;
    for i in 1..=k as u128 {
        r = r * (n as u128 + i) / i;
        if r > u128::from(u64::MAX) {
            return usize::MAX;
        }
    }
    usize::try_from(r).unwrap_or(usize::MAX)
}

/// The monomials of total degree `<= max_order` in `vars` variables, in graded order, with
/// the tables that jets over them share.
#[derive(Debug)]
pub struct JetSpace {
    vars: usize,
    max_order: u32,
    /// Exponents of monomial `i` at `exps[i * vars ..][.. vars]` (kept for the tests; the
    /// tables below are what jets use).
    #[cfg(test)]
    exps: Vec<u8>,
    /// `len_of[k]`: number of monomials of degree `<= k`.
    len_of: Vec<usize>,
    /// Pairs for output `c` are `pairs[pair_start[c] .. pair_start[c + 1]]`.
    pair_start: Vec<u32>,
    pairs: Vec<(u32, u32)>,
    /// `deriv[v][i] = (j, e)`: monomial `i` times `x_v` is monomial `j`, and `e` is the
    /// exponent of `x_v` in `j`; for `i` of degree below `max_order`.
    deriv: Vec<Vec<(u32, u32)>>,
    /// `pure[i]`: the variable `v` if monomial `i` is a power `x_v^p` with `p >= 1`,
    /// [`NOT_PURE`] otherwise (the constant and every mixed monomial).
    pure: Vec<u8>,
    /// `below[v][j]`: the monomial `i` with `i * x_v = j`, [`NO_MONOMIAL`] when `j` has
    /// no `x_v` (the inverse of `deriv[v]`).
    below: Vec<Vec<u32>>,
    index: FxHashMap<Vec<u8>, u32>,
}

/// [`JetSpace::below`] of a monomial without the variable.
const NO_MONOMIAL: u32 = u32::MAX;

/// [`JetSpace::pure`] of a monomial that is not a power of one variable.
const NOT_PURE: u8 = u8::MAX;

impl JetSpace {
    /// The space of jets in `vars` variables up to total order `max_order`.
    ///
    /// # Errors
    ///
    /// [`SpaceError::TooLarge`] beyond [`MAX_COEFFS`] coefficients or [`MAX_PAIRS`] table
    /// entries (checked before anything is allocated), or above order 255.
    pub fn new(vars: usize, max_order: u32) -> Result<Rc<JetSpace>, SpaceError> {
        let coeffs = binom_sat(vars, max_order as usize);
        // Pairs (alpha, beta) with |alpha| + |beta| <= N: monomials in 2n variables.
        let pairs = binom_sat(2 * vars, max_order as usize);
        if coeffs > MAX_COEFFS || pairs > MAX_PAIRS || max_order > 255 {
            return Err(SpaceError::TooLarge {
                vars,
                order: max_order,
                coeffs,
                pairs,
            });
        }
        let mut exps: Vec<u8> = Vec::with_capacity(coeffs * vars);
        let mut len_of = Vec::with_capacity(max_order as usize + 1);
        let mut cur = vec![0u8; vars];
        for deg in 0..=max_order {
            push_degree(&mut exps, &mut cur, 0, deg);
            len_of.push(exps.len().checked_div(vars).unwrap_or(1));
        }
        let len = *len_of.last().unwrap_or(&1);
        let mono = |i: usize| &exps[i * vars..(i + 1) * vars];
        let mut index = FxHashMap::default();
        for i in 0..len {
            index.insert(mono(i).to_vec(), i as u32);
        }
        let degree = |i: usize| mono(i).iter().map(|&e| u32::from(e)).sum::<u32>();
        // Product table, bucketed by output.
        let mut buckets: Vec<Vec<(u32, u32)>> = vec![Vec::new(); len];
        let mut sum = vec![0u8; vars];
        for i in 0..len {
            let di = degree(i);
            for j in 0..len_of[(max_order - di) as usize] {
                for ((s, a), b) in sum.iter_mut().zip(mono(i)).zip(mono(j)) {
                    *s = a + b;
                }
                let c = index[&sum];
                buckets[c as usize].push((i as u32, j as u32));
            }
        }
        let mut pair_start = Vec::with_capacity(len + 1);
        let mut table = Vec::with_capacity(pairs.min(MAX_PAIRS));
        for b in buckets {
            pair_start.push(table.len() as u32);
            table.extend(b);
        }
        pair_start.push(table.len() as u32);
        let below = if max_order == 0 {
            0
        } else {
            len_of[max_order as usize - 1]
        };
        let deriv: Vec<Vec<(u32, u32)>> = (0..vars)
            .map(|v| {
                (0..below)
                    .map(|i| {
                        let mut m = mono(i).to_vec();
                        m[v] += 1;
                        (index[&m], u32::from(m[v]))
                    })
                    .collect()
            })
            .collect();
        let pure = (0..len)
            .map(|i| {
                let m = mono(i);
                match m.iter().filter(|&&e| e > 0).count() {
                    1 => m
                        .iter()
                        .position(|&e| e > 0)
                        .and_then(|v| u8::try_from(v).ok())
                        .unwrap_or(NOT_PURE),
                    _ => NOT_PURE,
                }
            })
            .collect();
        let below_of = deriv
            .iter()
            .map(|table| {
                let mut down = vec![NO_MONOMIAL; len];
                for (i, &(j, _)) in table.iter().enumerate() {
                    down[j as usize] = i as u32;
                }
                down
            })
            .collect();
        Ok(Rc::new(JetSpace {
            vars,
            max_order,
            below: below_of,
            #[cfg(test)]
            exps,
            len_of,
            pair_start,
            pairs: table,
            deriv,
            pure,
            index,
        }))
    }

    /// Number of variables.
    pub fn vars(&self) -> usize {
        self.vars
    }

    /// Highest order of jets over this space.
    pub fn max_order(&self) -> u32 {
        self.max_order
    }

    /// Number of coefficients of a jet of order `order`.
    pub fn len(&self, order: u32) -> usize {
        self.len_of[order as usize]
    }

    /// Exponents of the `i`-th monomial.
    #[cfg(test)]
    pub fn monomial(&self, i: usize) -> &[u8] {
        &self.exps[i * self.vars..(i + 1) * self.vars]
    }

    /// The position of a monomial given by its exponents, if within the space.
    pub fn position(&self, exps: &[u8]) -> Option<usize> {
        self.index.get(exps).map(|&i| i as usize)
    }
}

/// All exponent vectors of total degree `deg` in the variables `v..`, lexicographically
/// descending, appended to `out`.
fn push_degree(out: &mut Vec<u8>, cur: &mut [u8], v: usize, deg: u32) {
    if v + 1 >= cur.len() {
        if let Some(last) = cur.len().checked_sub(1) {
            cur[last] = deg as u8;
            out.extend_from_slice(cur);
            cur[last] = 0;
        }
        return;
    }
    for e in (0..=deg).rev() {
        cur[v] = e as u8;
        push_degree(out, cur, v + 1, deg - e);
    }
    cur[v] = 0;
}

/// A truncated Taylor series: see the module documentation.
#[derive(Clone, Debug)]
pub struct Jet<S: Scalar> {
    space: Rc<JetSpace>,
    order: u32,
    /// Coefficients in graded order; `len == space.len(order)`.
    c: Vec<S>,
    /// True when every coefficient but the first is an exact 0 by construction (not merely
    /// an enclosure containing 0): lets products and functions of constants skip the tables.
    constant: bool,
}

/// Exact rational `p/q` as an enclosure.
fn ratio<S: Scalar>(p: i64, q: i64, ctx: &S::Ctx) -> Option<S> {
    S::from_rational(&BigRational::new(BigInt::from(p), BigInt::from(q)), ctx)
}

impl<S: Scalar> Jet<S> {
    /// The constant `value` as a jet of order `order` (at most the space's maximum).
    pub fn constant(space: &Rc<JetSpace>, order: u32, value: S) -> Jet<S> {
        let order = order.min(space.max_order);
        let mut c = vec![S::zero(); space.len(order)];
        c[0] = value;
        Jet {
            space: space.clone(),
            order,
            c,
            constant: true,
        }
    }

    /// The variable `var` at the point `value`: `value + dx_var`.
    pub fn variable(space: &Rc<JetSpace>, order: u32, var: usize, value: S) -> Jet<S> {
        let mut j = Jet::constant(space, order, value);
        if order >= 1 && var < space.vars {
            // Degree-1 monomials come right after the constant, in variable order.
            j.c[1 + var] = S::one();
            j.constant = false;
        }
        j
    }

    /// The space this jet lives in.
    pub fn space(&self) -> &Rc<JetSpace> {
        &self.space
    }

    /// The truncation order.
    pub fn order(&self) -> u32 {
        self.order
    }

    /// The coefficients `c_alpha = d^alpha f / alpha!` in graded order.
    pub fn coeffs(&self) -> &[S] {
        &self.c
    }

    /// The constant coefficient: the value at the point.
    pub fn value(&self) -> &S {
        &self.c[0]
    }

    /// True if the jet is a constant by construction.
    pub fn is_constant(&self) -> bool {
        self.constant
    }

    /// The coefficient of the monomial with exponents `exps` (`c_alpha`), if it is within
    /// the order.
    pub fn coeff(&self, exps: &[u8]) -> Option<&S> {
        let i = self.space.position(exps)?;
        self.c.get(i)
    }

    /// The partial derivative `d^alpha f` at the point: `c_alpha * alpha!`, or `None` if
    /// `alpha` is beyond the order or the product overflows.
    pub fn partial(&self, exps: &[u8], ctx: &S::Ctx) -> Option<S> {
        let c = self.coeff(exps)?;
        if exps.iter().all(|&e| e <= 1) {
            // alpha! = 1: no rounding step.
            return Some(c.clone());
        }
        // alpha! as an exact f64 while it is below 2^53 (it usually is), else exactly.
        let mut small: Option<u64> = Some(1);
        for &e in exps {
            for k in 2..=u64::from(e) {
                small = small
                    .and_then(|f| f.checked_mul(k))
                    .filter(|&f| f < 1 << 53);
            }
        }
        let f = match small {
            Some(f) => S::from_f64(f as f64)?,
            None => {
                let mut f = BigRational::from_integer(1.into());
                for &e in exps {
                    f *= factorial(u32::from(e));
                }
                S::from_rational(&f, ctx)?
            }
        };
        c.mul(&f)
    }

    /// The same jet truncated to `order` (no change if already at or below it).
    pub fn truncate(&self, order: u32) -> Jet<S> {
        if order >= self.order {
            return self.clone();
        }
        Jet {
            space: self.space.clone(),
            order,
            c: self.c[..self.space.len(order)].to_vec(),
            constant: self.constant,
        }
    }

    /// Both operands at the lower of their orders.
    fn common<'a>(&'a self, rhs: &'a Jet<S>) -> (u32, &'a [S], &'a [S]) {
        debug_assert!(
            Rc::ptr_eq(&self.space, &rhs.space),
            "jets of different spaces"
        );
        let order = self.order.min(rhs.order);
        let n = self.space.len(order);
        (order, &self.c[..n], &rhs.c[..n])
    }

    fn with(&self, order: u32, c: Vec<S>, constant: bool) -> Jet<S> {
        Jet {
            space: self.space.clone(),
            order,
            c,
            constant,
        }
    }

    /// Sum.
    pub fn add(&self, rhs: &Jet<S>) -> Option<Jet<S>> {
        let (order, a, b) = self.common(rhs);
        let c = if self.constant || rhs.constant {
            // Only the constant coefficient changes.
            let (base, k) = if rhs.constant { (a, &b[0]) } else { (b, &a[0]) };
            let mut c = base.to_vec();
            c[0] = c[0].add(k)?;
            c
        } else {
            a.iter()
                .zip(b)
                .map(|(x, y)| x.add(y))
                .collect::<Option<_>>()?
        };
        Some(self.with(order, c, self.constant && rhs.constant))
    }

    /// Difference.
    pub fn sub(&self, rhs: &Jet<S>) -> Option<Jet<S>> {
        self.add(&rhs.neg())
    }

    /// Sum, reusing this jet's coefficients: the same operations as [`Jet::add`], so the
    /// same enclosures, without allocating a new jet (the evaluation of a long sum).
    pub fn add_into(mut self, rhs: &Jet<S>) -> Option<Jet<S>> {
        debug_assert!(
            Rc::ptr_eq(&self.space, &rhs.space),
            "jets of different spaces"
        );
        if self.constant && !rhs.constant {
            return self.add(rhs);
        }
        let order = self.order.min(rhs.order);
        let n = self.space.len(order);
        self.c.truncate(n);
        if rhs.constant {
            self.c[0] = self.c[0].add(&rhs.c[0])?;
        } else {
            for (x, y) in self.c.iter_mut().zip(&rhs.c[..n]) {
                *x = x.add(y)?;
            }
        }
        self.order = order;
        self.constant = self.constant && rhs.constant;
        Some(self)
    }

    /// Difference, reusing this jet's coefficients: `self + (-rhs)` as [`Jet::sub`]
    /// computes it (negation is exact), without the two new jets.
    pub fn sub_into(mut self, rhs: &Jet<S>) -> Option<Jet<S>> {
        debug_assert!(
            Rc::ptr_eq(&self.space, &rhs.space),
            "jets of different spaces"
        );
        if self.constant && !rhs.constant {
            return self.sub(rhs);
        }
        let order = self.order.min(rhs.order);
        let n = self.space.len(order);
        self.c.truncate(n);
        if rhs.constant {
            self.c[0] = self.c[0].add(&rhs.c[0].neg())?;
        } else {
            for (x, y) in self.c.iter_mut().zip(&rhs.c[..n]) {
                *x = x.add(&y.neg())?;
            }
        }
        self.order = order;
        self.constant = self.constant && rhs.constant;
        Some(self)
    }

    /// Negation.
    pub fn neg(&self) -> Jet<S> {
        self.with(
            self.order,
            self.c.iter().map(S::neg).collect(),
            self.constant,
        )
    }

    /// Every coefficient times the enclosure `k`.
    #[cfg(test)]
    pub fn scale(&self, k: &S) -> Option<Jet<S>> {
        let c = if self.constant {
            let mut c = self.c.clone();
            c[0] = c[0].mul(k)?;
            c
        } else {
            self.c.iter().map(|x| x.mul(k)).collect::<Option<_>>()?
        };
        Some(self.with(self.order, c, self.constant))
    }

    /// Product, reusing the coefficients of a non-constant factor when the other is a
    /// constant (the same operations as [`Jet::mul`]).
    pub fn mul_into(self, rhs: Jet<S>) -> Option<Jet<S>> {
        if self.constant {
            let k = self.c[0].clone();
            return rhs.scale_prefix_into(self.order, &k);
        }
        if rhs.constant {
            return self.scale_prefix_into(rhs.order, &rhs.c[0]);
        }
        self.mul(&rhs)
    }

    /// The product by the variable `var` at the point `value`, in place: the same
    /// operations, so the same enclosures, as [`Jet::mul`] by
    /// `Jet::variable(space, order, var, value)` when this jet is not a constant (the shift
    /// product of `mul_linear`), without allocating the variable's jet or a new one; `None`
    /// on overflow. `Err(self)` when this jet is a constant or the order is 0: the caller
    /// takes the general road.
    pub(super) fn mul_variable_into(
        self,
        order: u32,
        var: usize,
        value: &S,
    ) -> Result<Option<Self>, Self> {
        let order = order.min(self.space.max_order).min(self.order);
        // At order 0 the variable's jet is a constant: the general road scales.
        if self.constant || var >= self.space.vars || order == 0 {
            return Err(self);
        }
        Ok(self.shifted_by_variable(order, var, value))
    }

    fn shifted_by_variable(mut self, order: u32, var: usize, value: &S) -> Option<Self> {
        let n = self.space.len(order);
        self.c.truncate(n);
        self.order = order;
        // mul_linear with lin = value + dx_var: c[j] = a[j] value (if neither is an exact
        // 0), then + a[i] * 1 where j = i + e_var (if a[i] is not an exact 0). Every a[i] has
        // a smaller index than its j, so going down the indices reads only coefficients not
        // yet overwritten.
        let one = S::one();
        let below = &self.space.below[var];
        for j in (0..n).rev() {
            let scaled = if value.is_exact_zero() || self.c[j].is_exact_zero() {
                None
            } else {
                Some(self.c[j].mul(value)?)
            };
            let shifted = match below.get(j) {
                Some(&i) if i != NO_MONOMIAL && !self.c[i as usize].is_exact_zero() => {
                    Some(times(&self.c[i as usize], &one)?)
                }
                _ => None,
            };
            self.c[j] = match (scaled, shifted) {
                (Some(x), Some(p)) => x.add(&p)?,
                (Some(x), None) | (None, Some(x)) => x,
                (None, None) => S::zero(),
            };
        }
        Some(self)
    }

    /// [`Jet::scaled_prefix`] in place.
    pub(super) fn scale_prefix_into(mut self, order: u32, k: &S) -> Option<Jet<S>> {
        let order = order.min(self.order);
        self.c.truncate(self.space.len(order));
        self.order = order;
        if self.constant {
            self.c[0] = self.c[0].mul(k)?;
        } else {
            for x in &mut self.c {
                *x = x.mul(k)?;
            }
        }
        Some(self)
    }

    /// `self.truncate(order).scale(k)` in one step (one new jet instead of two).
    fn scaled_prefix(&self, order: u32, k: &S) -> Option<Jet<S>> {
        let order = order.min(self.order);
        let n = self.space.len(order);
        let c = if self.constant {
            let mut c = self.c[..n].to_vec();
            c[0] = c[0].mul(k)?;
            c
        } else {
            self.c[..n]
                .iter()
                .map(|x| x.mul(k))
                .collect::<Option<_>>()?
        };
        Some(self.with(order, c, self.constant))
    }

    /// Product, by the space's table.
    pub fn mul(&self, rhs: &Jet<S>) -> Option<Jet<S>> {
        if self.constant {
            return rhs.scaled_prefix(self.order, &self.c[0]);
        }
        if rhs.constant {
            return self.scaled_prefix(rhs.order, &rhs.c[0]);
        }
        let (order, a, b) = self.common(rhs);
        let sp = &*self.space;
        if order >= 1 {
            // A factor of degree at most 1 (a variable, a phase, a retarded time) multiplies
            // through the shift table in O(len * vars) instead of the pairs table.
            let l1 = sp.len(1);
            let linear = |x: &[S]| x[l1..].iter().all(Scalar::is_exact_zero);
            if linear(b) {
                return Some(self.with(order, mul_linear(sp, order, a, b)?, false));
            }
            if linear(a) {
                return Some(self.with(order, mul_linear(sp, order, b, a)?, false));
            }
            // A factor in one variable (a power of a coordinate, a function of one
            // coordinate) multiplies through the shift table too, in O(len * order).
            if let Some(v) = univariate(sp, b) {
                return Some(self.with(order, mul_univariate(sp, order, a, b, v)?, false));
            }
            if let Some(v) = univariate(sp, a) {
                return Some(self.with(order, mul_univariate(sp, order, b, a, v)?, false));
            }
        }
        Self::mul_pairs(sp, a, b).map(|c| self.with(order, c, false))
    }

    /// The product by the pairs table (every pair of monomials whose degrees add up to at most
    /// `order`), skipping exact zeros.
    fn mul_pairs(sp: &JetSpace, a: &[S], b: &[S]) -> Option<Vec<S>> {
        let mut c = Vec::with_capacity(a.len());
        // Exact zeros (a variable a factor does not depend on) contribute nothing: skipping
        // their products is exact and saves most of the work for sparse jets.
        for k in 0..a.len() {
            let (s, e) = (sp.pair_start[k] as usize, sp.pair_start[k + 1] as usize);
            let mut acc: Option<S> = None;
            for &(i, j) in &sp.pairs[s..e] {
                let (x, y) = (&a[i as usize], &b[j as usize]);
                if x.is_exact_zero() || y.is_exact_zero() {
                    continue;
                }
                let p = x.mul(y)?;
                acc = Some(match acc {
                    None => p,
                    Some(x) => x.add(&p)?,
                });
            }
            c.push(match acc {
                Some(x) => x,
                None => S::zero(),
            });
        }
        Some(c)
    }

    /// `sum_k coeffs[k] d^k` with `d` this jet minus its constant coefficient (Horner).
    ///
    /// `coeffs` must have at least `order + 1` entries: the univariate Taylor coefficients of
    /// a function at the constant coefficient.
    pub fn compose(&self, coeffs: &[S]) -> Option<Jet<S>> {
        let n = self.order as usize;
        if self.constant || n == 0 {
            return Some(self.with(
                self.order,
                {
                    let mut c = vec![S::zero(); self.c.len()];
                    c[0] = coeffs.first()?.clone();
                    c
                },
                true,
            ));
        }
        if coeffs.len() <= n {
            return None;
        }
        let mut d = self.clone();
        d.c[0] = S::zero();
        let mut r = Jet::constant(&self.space, self.order, coeffs[n].clone());
        for k in (0..n).rev() {
            r = r.mul(&d)?;
            r.c[0] = r.c[0].add(&coeffs[k])?;
        }
        Some(r)
    }

    /// Reciprocal `1/self`; `None` if the value may be 0.
    pub fn recip(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        self.powi(-1, ctx)
    }

    /// Quotient; `None` if the divisor's value may be 0.
    pub fn div(&self, rhs: &Jet<S>, ctx: &S::Ctx) -> Option<Jet<S>> {
        if rhs.constant {
            let c = if self.constant {
                let mut c = self.c.clone();
                c[0] = c[0].div(&rhs.c[0])?;
                c
            } else {
                self.c
                    .iter()
                    .map(|x| x.div(&rhs.c[0]))
                    .collect::<Option<_>>()?
            };
            let order = self.order.min(rhs.order);
            return Some(self.with(self.order, c, self.constant).truncate(order));
        }
        self.mul(&rhs.recip(ctx)?)
    }

    /// Integer power: `binom(n, k) a0^(n - k)` composed; negative `n` needs a value that
    /// excludes 0.
    pub fn powi(&self, n: i64, ctx: &S::Ctx) -> Option<Jet<S>> {
        let a0 = &self.c[0];
        if n < 0 && a0.contains_zero() {
            return None;
        }
        if self.constant {
            return Some(self.with(
                self.order,
                {
                    let mut c = self.c.clone();
                    c[0] = a0.powi(n)?;
                    c
                },
                true,
            ));
        }
        let order = self.order as i64;
        let mut coeffs = Vec::with_capacity(order as usize + 1);
        // binom(n, k), updated by (n - k + 1)/k: exactly in machine integers while it fits
        // (each step's quotient is exact, as binom(n, k) is an integer), else as a rational.
        let mut small: Option<i128> = Some(1);
        let mut b = BigRational::from_integer(1.into());
        for k in 0..=order {
            if k > 0 {
                let step = || BigRational::new(BigInt::from(n - k + 1), BigInt::from(k));
                match small {
                    Some(v) => match v.checked_mul(i128::from(n - k + 1)) {
                        Some(p) => small = Some(p / i128::from(k)),
                        None => {
                            b = BigRational::from_integer(BigInt::from(v)) * step();
                            small = None;
                        }
                    },
                    None => b *= step(),
                }
            }
            if n >= 0 && k > n {
                coeffs.push(S::zero());
                continue;
            }
            let binom = match small {
                Some(v) => match i64::try_from(v) {
                    Ok(v) => S::from_i64(v, ctx)?,
                    Err(_) => S::from_rational(&BigRational::from_integer(BigInt::from(v)), ctx)?,
                },
                None => S::from_rational(&b, ctx)?,
            };
            coeffs.push(binom.mul(&a0.powi(n - k)?)?);
        }
        self.compose(&coeffs)
    }

    /// Real power `self^(p/q)` for a rational exponent: integer exponents as [`Jet::powi`];
    /// otherwise the value must be certified positive.
    pub fn pow_rational(&self, r: &BigRational, ctx: &S::Ctx) -> Option<Jet<S>> {
        if r.is_integer() {
            let n: i64 = r.to_integer().try_into().ok()?;
            return self.powi(n, ctx);
        }
        let a0 = &self.c[0];
        if !a0.is_positive() {
            return None;
        }
        let half = BigRational::new(1.into(), 2.into());
        let base = if *r == half {
            a0.sqrt()?
        } else {
            S::from_rational(r, ctx)?.mul(&a0.ln()?)?.exp()?
        };
        self.by_coeffs(|order| {
            let inv = a0.recip()?;
            let mut out = vec![base.clone()];
            let mut b = BigRational::from_integer(1.into());
            for k in 1..=order as i64 {
                b *= (r - BigRational::from_integer(BigInt::from(k - 1)))
                    / BigRational::from_integer(BigInt::from(k));
                // binom(r, k) a0^(r - k), with a0^(r - k) = a0^r a0^-k.
                out.push(S::from_rational(&b, ctx)?.mul(&base)?.mul(&inv.powi(k)?)?);
            }
            Some(out)
        })
    }

    /// Composes with the univariate coefficients produced by `coeffs(order)`, or applies the
    /// function to the constant of a constant jet.
    fn by_coeffs(&self, coeffs: impl FnOnce(u32) -> Option<Vec<S>>) -> Option<Jet<S>> {
        let order = if self.constant { 0 } else { self.order };
        let c = coeffs(order)?;
        self.compose(&c)
    }

    /// Coefficients `v / k!` for `k = 0..=order`, with `v` cycling through `cycle`.
    fn cyclic(cycle: &[S], order: u32, ctx: &S::Ctx) -> Option<Vec<S>> {
        let mut out = Vec::with_capacity(order as usize + 1);
        let mut fact = 1.0f64; // k!, exact in f64 up to 18!
        for k in 0..=order {
            if k > 1 {
                fact *= f64::from(k);
            }
            let f = if k <= 18 {
                S::from_f64(fact)?
            } else {
                S::from_rational(&factorial(k), ctx)?
            };
            out.push(cycle[k as usize % cycle.len()].div(&f)?);
        }
        Some(out)
    }

    /// Exponential.
    pub fn exp(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let e = self.c[0].exp()?;
        self.by_coeffs(|n| Self::cyclic(&[e], n, ctx))
    }

    /// Natural logarithm; `None` unless the value is certified positive.
    pub fn ln(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let a0 = &self.c[0];
        if !a0.is_positive() {
            return None;
        }
        self.by_coeffs(|n| {
            let inv = a0.recip()?;
            let mut out = vec![a0.ln()?];
            for k in 1..=i64::from(n) {
                let sign = if k % 2 == 1 { 1 } else { -1 };
                out.push(inv.powi(k)?.mul(&ratio::<S>(sign, k, ctx)?)?);
            }
            Some(out)
        })
    }

    /// Square root; `None` unless the value is certified positive (a constant jet may have
    /// value 0).
    pub fn sqrt(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        if self.constant {
            let v = self.c[0].sqrt()?;
            return Some(Jet::constant(&self.space, self.order, v));
        }
        self.pow_rational(&BigRational::new(1.into(), 2.into()), ctx)
    }

    /// Sine.
    pub fn sin(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let (s, c) = (self.c[0].sin()?, self.c[0].cos()?);
        self.by_coeffs(|n| Self::cyclic(&[s.clone(), c.clone(), s.neg(), c.neg()], n, ctx))
    }

    /// Cosine.
    pub fn cos(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let (s, c) = (self.c[0].sin()?, self.c[0].cos()?);
        self.by_coeffs(|n| Self::cyclic(&[c.clone(), s.neg(), c.neg(), s.clone()], n, ctx))
    }

    /// Hyperbolic sine.
    pub fn sinh(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let (s, c) = self.c[0].sinh_cosh()?;
        self.by_coeffs(|n| Self::cyclic(&[s, c], n, ctx))
    }

    /// Hyperbolic cosine.
    pub fn cosh(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let (s, c) = self.c[0].sinh_cosh()?;
        self.by_coeffs(|n| Self::cyclic(&[c, s], n, ctx))
    }

    /// Coefficients of `t(a0 + s)` with `t' = 1 + sign t^2`, `t(a0) = t0`.
    fn riccati(t0: S, sign: i64, order: u32, ctx: &S::Ctx) -> Option<Vec<S>> {
        let mut t = vec![t0];
        for k in 0..order as usize {
            let mut sq = S::zero();
            for i in 0..=k {
                sq = sq.add(&t[i].mul(&t[k - i])?)?;
            }
            let mut rhs = if sign > 0 { sq } else { sq.neg() };
            if k == 0 {
                rhs = rhs.add(&S::one())?;
            }
            t.push(rhs.div(&S::from_i64(k as i64 + 1, ctx)?)?);
        }
        Some(t)
    }

    /// Tangent; `None` if the cosine of the value may be 0.
    pub fn tan(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let t0 = self.c[0].sin()?.div(&self.c[0].cos()?)?;
        self.by_coeffs(|n| Self::riccati(t0, 1, n, ctx))
    }

    /// Hyperbolic tangent.
    pub fn tanh(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let (s, c) = self.c[0].sinh_cosh()?;
        let t0 = s.div(&c)?;
        self.by_coeffs(|n| Self::riccati(t0, -1, n, ctx))
    }

    /// Absolute value (of a real jet): `self` or `-self` when the value is certified nonzero
    /// (the sign is constant near the point); at order 0 (or for a constant jet) the
    /// enclosure of `|value|`; `None` when the value may be 0 and derivatives are wanted.
    pub fn abs(&self) -> Option<Jet<S>> {
        let v = &self.c[0];
        if v.is_positive() {
            return Some(self.clone());
        }
        if v.neg().is_positive() {
            return Some(self.neg());
        }
        if self.constant || self.order == 0 {
            let m = v.abs()?;
            return Some(Jet::constant(&self.space, self.order, m));
        }
        None
    }

    /// Arctangent (real). The univariate coefficients at `a`: `atan(a)`, then `g_(k-1)/k` with
    /// `g` the Taylor coefficients of `atan' = 1/(1 + (a + d)^2)`, from
    /// `(q + 2 a d + d^2) g = 1`, `q = 1 + a^2 >= 1`: `g_0 = 1/q`, `g_1 = -2 a g_0 / q`,
    /// `g_k = -(2 a g_(k-1) + g_(k-2)) / q`; every step is an enclosure operation.
    pub fn atan(&self, ctx: &S::Ctx) -> Option<Jet<S>> {
        let a = self.c[0].clone();
        self.by_coeffs(|n| {
            let q = S::one().add(&a.mul(&a)?)?;
            let two_a = a.add(&a)?;
            let mut g: Vec<S> = vec![q.recip()?];
            for k in 1..n as usize {
                let mut s = two_a.mul(&g[k - 1])?;
                if k >= 2 {
                    s = s.add(&g[k - 2])?;
                }
                g.push(s.neg().div(&q)?);
            }
            let mut out = vec![a.atan()?];
            for (k, gk) in g.iter().enumerate().take(n as usize) {
                out.push(gk.div(&S::from_i64(k as i64 + 1, ctx)?)?);
            }
            Some(out)
        })
    }

    /// General power `self^e = exp(e ln self)`; `None` unless the base is certified positive.
    pub fn pow(&self, e: &Jet<S>, ctx: &S::Ctx) -> Option<Jet<S>> {
        self.ln(ctx)?.mul(e)?.exp(ctx)
    }

    /// `d/dx_var`: the jet of the derivative, one order lower. `None` for a jet of order 0
    /// (its derivative is not known) or an overflow.
    pub fn derivative(&self, var: usize) -> Option<Jet<S>> {
        if self.order == 0 || var >= self.space.vars {
            return None;
        }
        let order = self.order - 1;
        let n = self.space.len(order);
        if self.constant {
            return Some(Jet::constant(&self.space, order, S::zero()));
        }
        let table = &self.space.deriv[var];
        let c = (0..n)
            .map(|i| {
                let (j, e) = table[i];
                let f = S::from_f64(f64::from(e))?;
                self.c[j as usize].mul(&f)
            })
            .collect::<Option<_>>()?;
        Some(self.with(order, c, false))
    }
}

/// `a * lin` where `lin` has degree at most 1: `lin_0 a + sum_v lin_v x_v a`, each `x_v a`
/// by the shift table (`deriv[v][i]`: monomial `i` times `x_v`), so the cost is
/// `O(len * vars)`. Exact zeros are skipped and stay exact; every coefficient is a sum of
/// enclosed products, so it encloses the exact coefficient as the pairs product does.
fn mul_linear<S: Scalar>(sp: &JetSpace, order: u32, a: &[S], lin: &[S]) -> Option<Vec<S>> {
    let n = a.len();
    let mut c: Vec<Option<S>> = vec![None; n];
    let b0 = &lin[0];
    if !b0.is_exact_zero() {
        for (ck, ak) in c.iter_mut().zip(a) {
            if !ak.is_exact_zero() {
                *ck = Some(ak.mul(b0)?);
            }
        }
    }
    let below = sp.len(order - 1);
    for v in 0..sp.vars {
        let table = &sp.deriv[v];
        let bv = &lin[table[0].0 as usize];
        if bv.is_exact_zero() {
            continue;
        }
        for (i, ai) in a[..below].iter().enumerate() {
            if ai.is_exact_zero() {
                continue;
            }
            let j = table[i].0 as usize;
            let p = times(ai, bv)?;
            c[j] = Some(match c[j].take() {
                None => p,
                Some(x) => x.add(&p)?,
            });
        }
    }
    Some(c.into_iter().map(|x| x.unwrap_or_else(S::zero)).collect())
}

/// `a * b` in the shift products: `a` itself when `b` is an exact 1 (the product is
/// exact), else the enclosed product.
fn times<S: Scalar>(a: &S, b: &S) -> Option<S> {
    if b.is_exact_one() {
        Some(a.clone())
    } else {
        a.mul(b)
    }
}

/// The variable `v` if every coefficient of `x` beyond the constant that is not an exact 0
/// belongs to a power of `x_v` (and at least one does), else `None`.
fn univariate<S: Scalar>(sp: &JetSpace, x: &[S]) -> Option<usize> {
    let mut var = None;
    for (i, c) in x.iter().enumerate().skip(1) {
        if c.is_exact_zero() {
            continue;
        }
        let v = sp.pure[i];
        if v == NOT_PURE || var.is_some_and(|w| w != v) {
            return None;
        }
        var = Some(v);
    }
    var.map(usize::from)
}

/// `a * u` where `u`'s coefficients are exact zeros except at the powers `x_v^p`
/// ([`univariate`]): `sum_p u_p x_v^p a`, each `x_v^p a` by `p` steps of the shift table
/// (`deriv[v][i]`: monomial `i` times `x_v`), so the cost is `O(len * order)` instead of the
/// pairs table's. As in [`mul_linear`], exact zeros are skipped and stay exact, and every
/// coefficient is a sum of enclosed products, so it encloses the exact coefficient.
fn mul_univariate<S: Scalar>(
    sp: &JetSpace,
    order: u32,
    a: &[S],
    u: &[S],
    v: usize,
) -> Option<Vec<S>> {
    let n = a.len();
    let table = &sp.deriv[v];
    let mut c: Vec<Option<S>> = vec![None; n];
    // `at[i]`: the monomial `i` times `x_v^p`, for every `i` of degree at most `order - p`;
    // `up`: the position of `x_v^p` itself.
    let mut at: Vec<u32> = (0..n as u32).collect();
    let mut up = 0usize;
    for p in 0..=order {
        if p > 0 {
            for t in &mut at[..sp.len(order - p)] {
                *t = table[*t as usize].0;
            }
            up = table[up].0 as usize;
        }
        let up_coeff = &u[up];
        if up_coeff.is_exact_zero() {
            continue;
        }
        let m = sp.len(order - p);
        for (ai, &j) in a[..m].iter().zip(&at[..m]) {
            if ai.is_exact_zero() {
                continue;
            }
            let prod = times(ai, up_coeff)?;
            let j = j as usize;
            c[j] = Some(match c[j].take() {
                None => prod,
                Some(x) => x.add(&prod)?,
            });
        }
    }
    Some(c.into_iter().map(|x| x.unwrap_or_else(S::zero)).collect())
}

#[cfg(test)]
mod tests;
