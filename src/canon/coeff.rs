//! Exact coefficients in the number field Q(sqrt 2, sqrt 3, i).
//!
//! Why this field: it is the smallest field that holds exp(i*pi*k/12) for every integer k,
//! so sin, cos and exp at rational multiples of pi with denominators 1, 2, 3, 4, 6 and 12 have
//! exact values, and sqrt(2), sqrt(3), sqrt(6) and i are exact constants. It is a vector
//! space of dimension 8 over Q with basis sqrt(2)^a * sqrt(3)^b * i^c (a, b, c in {0, 1}), so
//! a coefficient is zero exactly when its eight rational components are: the zero test of a
//! coefficient is exact.
//!
//! **Invariant:** components are stored sparsely, sorted by basis index, never zero.

use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::{One, Signed, ToPrimitive, Zero};
use std::fmt;

/// An exact rational number.
pub type Q = BigRational;

/// Basis index bits: 1 = sqrt(2), 2 = sqrt(3), 4 = i.
const SQRT2: u8 = 1;
const SQRT3: u8 = 2;
const IMAG: u8 = 4;

/// A basis element `sqrt(2)^a * sqrt(3)^b * i^c` (a, b, c in {0, 1}) of Q(sqrt 2, sqrt 3, i)
/// over Q: a coefficient is exactly the sum of its [`Coeff::components`], each a rational
/// times one basis element.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug)]
pub struct Basis(u8);

impl Basis {
    /// The basis element 1.
    pub const ONE: Basis = Basis(0);

    /// True if the element has the factor i.
    #[must_use]
    pub fn is_imaginary(self) -> bool {
        self.0 & IMAG != 0
    }

    /// The integer `m` in {1, 2, 3, 6} whose square root the element has as its real factor:
    /// the element is `sqrt(m)`, or `i*sqrt(m)` when [`Basis::is_imaginary`].
    #[must_use]
    pub fn radicand(self) -> u32 {
        match self.0 & (SQRT2 | SQRT3) {
            SQRT2 => 2,
            SQRT3 => 3,
            3 => 6,
            _ => 1,
        }
    }

    /// The element as a coefficient.
    #[must_use]
    pub fn to_coeff(self) -> Coeff {
        Coeff::basis(self.0, Q::one())
    }
}

/// An element of Q(sqrt 2, sqrt 3, i).
///
/// Three representations, chosen canonically so that derived equality is value equality. A
/// rational is *small* when its numerator fits an `i64` (other than `i64::MIN`) and its
/// denominator a `u64` (lowest terms, positive denominator). A single basis element times a
/// small rational is always `Small(n, d, basis)` (zero is `Small(0, 1, 0)`); two or more
/// components, all small, are always `Multi`; everything else is `Parts`. `Multi` and `Parts`
/// are sorted by basis index with no zero component. The small cases (nearly every
/// coefficient of a polynomial computation, the `±i/2` of every sine and the `a/2 ± b i/2` of
/// every `a cos + b sin` in exponentials) add and multiply in machine words, with exact
/// overflow to big integers.
#[derive(Clone, PartialEq, Eq, Debug)]
pub struct Coeff {
    repr: Repr,
}

#[derive(Clone, PartialEq, Eq, Debug)]
enum Repr {
    Small(i64, u64, u8),
    /// `(basis, numerator, denominator)`, two to eight of them. Boxed slices, not vectors, keep
    /// a coefficient at 24 bytes (a term at 32).
    Multi(Box<[(u8, i64, u64)]>),
    Parts(Box<[(u8, Q)]>),
}

/// The components of a coefficient whose components are all small: `(basis, numerator,
/// denominator)`, sorted by basis, no zeros; at most 8 (the field's dimension).
enum SmallView<'a> {
    One([(u8, i64, u64); 1]),
    Many(&'a [(u8, i64, u64)]),
}

impl SmallView<'_> {
    fn as_slice(&self) -> &[(u8, i64, u64)] {
        match self {
            SmallView::One(p) if p[0].1 == 0 => &[],
            SmallView::One(p) => p,
            SmallView::Many(p) => p,
        }
    }
}

/// The canonical coefficient of small components, sorted by basis, no zeros.
fn of_small_parts(mut parts: Vec<(u8, i64, u64)>) -> Coeff {
    match parts.len() {
        0 => Coeff::zero(),
        1 => {
            let (b, n, d) = parts.pop().expect("one part");
            Coeff {
                repr: Repr::Small(n, d, b),
            }
        }
        _ => Coeff {
            repr: Repr::Multi(parts.into_boxed_slice()),
        },
    }
}

/// `n/d` (d > 0) in lowest terms as a small rational, if it fits (zero is `(0, 1)`).
fn small_pair(n: i128, d: u128) -> Option<(i64, u64)> {
    if n == 0 {
        return Some((0, 1));
    }
    let (n, d) = if d == 1 {
        (n, d)
    } else {
        let g = gcd_u128(n.unsigned_abs(), d);
        (n / g as i128, d / g)
    };
    let n = i64::try_from(n).ok().filter(|&n| n != i64::MIN)?;
    Some((n, u64::try_from(d).ok()?))
}

/// `a/b + c/d` as a small rational, if it fits.
fn small_add(a: i64, b: u64, c: i64, d: u64) -> Option<(i64, u64)> {
    // |a d|, |c b| < 2^127: exact in 128 bits, the sum checked.
    let (a, b, c, d) = (a as i128, b as u128, c as i128, d as u128);
    if b == d {
        return small_pair(a + c, b);
    }
    let n = a
        .checked_mul(d as i128)?
        .checked_add(c.checked_mul(b as i128)?)?;
    small_pair(n, b.checked_mul(d)?)
}

/// `(a/b) (c/d) f` as a small rational, if it fits.
fn small_mul(a: i64, b: u64, c: i64, d: u64, f: i64) -> Option<(i64, u64)> {
    // |a c| < 2^126 and b d < 2^128: exact in 128 bits; the factor f is checked.
    let n = ((a as i128) * (c as i128)).checked_mul(i128::from(f))?;
    small_pair(n, (b as u128) * (d as u128))
}

impl Default for Coeff {
    fn default() -> Coeff {
        Coeff::zero()
    }
}

/// Hashes numerator and denominator directly. `BigRational`'s own `Hash` walks the continued
/// fraction recursively (one stack frame per partial quotient), which overflows the stack on a
/// rational such as (1 + 10^-20)^2000; our rationals are always in lowest terms with a
/// positive denominator, so hashing the pair agrees with equality (and a value has one
/// representation, so hashing by representation does too).
impl std::hash::Hash for Coeff {
    fn hash<H: std::hash::Hasher>(&self, h: &mut H) {
        match &self.repr {
            Repr::Small(n, d, b) => {
                h.write_u8(0xf0 | b);
                h.write_i64(*n);
                h.write_u64(*d);
            }
            Repr::Multi(parts) => {
                h.write_usize(parts.len());
                for (b, n, d) in parts {
                    h.write_u8(*b);
                    h.write_i64(*n);
                    h.write_u64(*d);
                }
            }
            Repr::Parts(parts) => {
                h.write_usize(parts.len());
                for (b, q) in parts {
                    h.write_u8(*b);
                    q.numer().hash(h);
                    q.denom().hash(h);
                }
            }
        }
    }
}

/// Greatest common divisor by num-integer's binary (Stein) algorithm, in machine words when
/// both fit: no 128-bit division, which is a slow library call.
fn gcd_u128(a: u128, b: u128) -> u128 {
    use num_integer::Integer;
    match (u64::try_from(a), u64::try_from(b)) {
        (Ok(a), Ok(b)) => u128::from(a.gcd(&b)),
        _ => a.gcd(&b),
    }
}

fn big_q(n: i64, d: u64) -> Q {
    Q::new_raw(BigInt::from(n), BigInt::from(d))
}

#[inline]
fn basis_product(a: u8, b: u8) -> (u8, i64) {
    let both = a & b;
    let mut f = 1i64;
    if both & SQRT2 != 0 {
        f *= 2;
    }
    if both & SQRT3 != 0 {
        f *= 3;
    }
    if both & IMAG != 0 {
        f = -f;
    }
    (a ^ b, f)
}

impl Coeff {
    /// The canonical coefficient of sorted, merged, nonzero parts.
    fn from_normal(parts: Vec<(u8, Q)>) -> Coeff {
        let small = |q: &Q| match (q.numer().to_i64(), q.denom().to_u64()) {
            (Some(n), Some(d)) if n != i64::MIN => Some((n, d)),
            _ => None,
        };
        if parts.len() <= 8 {
            let mut out = Vec::with_capacity(parts.len());
            for (b, q) in &parts {
                match small(q) {
                    Some((n, d)) => out.push((*b, n, d)),
                    None => {
                        return Coeff {
                            repr: Repr::Parts(parts.into_boxed_slice()),
                        };
                    }
                }
            }
            return of_small_parts(out);
        }
        Coeff {
            repr: Repr::Parts(parts.into_boxed_slice()),
        }
    }

    /// The parts as `(basis index, rational)`, sorted, no zeros.
    fn parts(&self) -> std::borrow::Cow<'_, [(u8, Q)]> {
        match &self.repr {
            Repr::Small(0, _, _) => std::borrow::Cow::Owned(Vec::new()),
            Repr::Small(n, d, b) => std::borrow::Cow::Owned(vec![(*b, big_q(*n, *d))]),
            Repr::Multi(p) => {
                std::borrow::Cow::Owned(p.iter().map(|&(b, n, d)| (b, big_q(n, d))).collect())
            }
            Repr::Parts(p) => std::borrow::Cow::Borrowed(p),
        }
    }

    /// `(n/d) * basis` from a small rational in lowest terms.
    #[inline]
    fn small(n: i64, d: u64, basis: u8) -> Coeff {
        if n == 0 {
            Coeff::zero()
        } else {
            Coeff {
                repr: Repr::Small(n, d, basis),
            }
        }
    }

    /// The parts in machine words, when every one is small.
    fn small_parts(&self) -> Option<SmallView<'_>> {
        match &self.repr {
            Repr::Small(n, d, b) => Some(SmallView::One([(*b, *n, *d)])),
            Repr::Multi(p) => Some(SmallView::Many(p)),
            Repr::Parts(_) => None,
        }
    }

    /// The sum in machine words, when both sides' parts and the result's are small.
    fn add_small(&self, o: &Coeff) -> Option<Coeff> {
        let (a, b) = (self.small_parts()?, o.small_parts()?);
        let (a, b) = (a.as_slice(), b.as_slice());
        let mut out = Vec::with_capacity(a.len() + b.len());
        let (mut i, mut j) = (0, 0);
        while i < a.len() || j < b.len() {
            let take_a = j == b.len() || (i < a.len() && a[i].0 < b[j].0);
            let take_b = i == a.len() || (j < b.len() && b[j].0 < a[i].0);
            if take_a {
                out.push(a[i]);
                i += 1;
            } else if take_b {
                out.push(b[j]);
                j += 1;
            } else {
                let (n, d) = small_add(a[i].1, a[i].2, b[j].1, b[j].2)?;
                if n != 0 {
                    out.push((a[i].0, n, d));
                }
                i += 1;
                j += 1;
            }
        }
        Some(of_small_parts(out))
    }

    /// The product in machine words, when both sides' parts, every partial product and
    /// every partial sum are small.
    fn mul_small(&self, o: &Coeff) -> Option<Coeff> {
        let (a, b) = (self.small_parts()?, o.small_parts()?);
        let (a, b) = (a.as_slice(), b.as_slice());
        if let [(eb, nb, db)] = b {
            // Times one basis element: a permutation of the basis, each part scaled.
            let mut out = Vec::with_capacity(a.len());
            for &(ea, na, da) in a {
                let (e, f) = basis_product(ea, *eb);
                let (n, d) = small_mul(na, da, *nb, *db, f)?;
                out.push((e, n, d));
            }
            out.sort_unstable_by_key(|p| p.0);
            return Some(of_small_parts(out));
        }
        if a.len() == 1 {
            return o.mul_small(self);
        }
        // One slot per basis element: (numerator, denominator), zero as (0, 1).
        let mut slot = [(0i64, 1u64); 8];
        for &(ea, na, da) in a {
            for &(eb, nb, db) in b {
                let (e, f) = basis_product(ea, eb);
                let (n, d) = small_mul(na, da, nb, db, f)?;
                let s = &mut slot[e as usize];
                *s = small_add(s.0, s.1, n, d)?;
            }
        }
        let out = slot
            .iter()
            .enumerate()
            .filter(|(_, p)| p.0 != 0)
            .map(|(e, &(n, d))| (e as u8, n, d))
            .collect();
        Some(of_small_parts(out))
    }

    /// Zero.
    pub fn zero() -> Coeff {
        Coeff {
            repr: Repr::Small(0, 1, 0),
        }
    }
    /// One.
    pub fn one() -> Coeff {
        Coeff {
            repr: Repr::Small(1, 1, 0),
        }
    }
    /// The imaginary unit.
    pub fn i() -> Coeff {
        Coeff::from_normal(vec![(IMAG, Q::one())])
    }
    /// A rational number.
    pub fn rational(q: Q) -> Coeff {
        if q.is_zero() {
            Coeff::zero()
        } else {
            Coeff::from_normal(vec![(0, q)])
        }
    }
    /// An integer.
    pub fn int(n: i64) -> Coeff {
        if n == i64::MIN {
            return Coeff::rational(Q::from_integer(BigInt::from(n)));
        }
        Coeff {
            repr: Repr::Small(n, 1, 0),
        }
    }
    /// `q * sqrt(2)^a * sqrt(3)^b * i^c` for the basis index `a + 2b + 4c`.
    fn basis(index: u8, q: Q) -> Coeff {
        if q.is_zero() {
            Coeff::zero()
        } else {
            Coeff::from_normal(vec![(index, q)])
        }
    }
    /// sqrt(m) for m in {2, 3, 6}; `None` otherwise.
    pub fn sqrt_of_small(m: u32) -> Option<Coeff> {
        match m {
            1 => Some(Coeff::one()),
            2 => Some(Coeff::basis(SQRT2, Q::one())),
            3 => Some(Coeff::basis(SQRT3, Q::one())),
            6 => Some(Coeff::basis(SQRT2 | SQRT3, Q::one())),
            _ => None,
        }
    }

    fn from_parts(mut v: Vec<(u8, Q)>) -> Coeff {
        v.sort_by_key(|p| p.0);
        let mut out: Vec<(u8, Q)> = Vec::with_capacity(v.len());
        for (b, q) in v {
            match out.last_mut() {
                Some((lb, lq)) if *lb == b => *lq += q,
                _ => out.push((b, q)),
            }
        }
        out.retain(|p| !p.1.is_zero());
        Coeff::from_normal(out)
    }

    /// The exact components: `self` is the sum of `q * basis` over them. Sorted by basis,
    /// with no zero rational (zero has none).
    #[must_use]
    pub fn components(&self) -> Vec<(Basis, Q)> {
        self.parts()
            .iter()
            .map(|(b, q)| (Basis(*b), q.clone()))
            .collect()
    }

    /// True for zero.
    pub fn is_zero(&self) -> bool {
        matches!(self.repr, Repr::Small(0, _, _))
    }
    /// True for one.
    pub fn is_one(&self) -> bool {
        matches!(self.repr, Repr::Small(1, 1, 0))
    }
    /// The value if this is a rational number.
    pub fn as_rational(&self) -> Option<Q> {
        match &self.repr {
            Repr::Small(0, _, _) => Some(Q::zero()),
            Repr::Small(n, d, 0) => Some(big_q(*n, *d)),
            Repr::Small(..) | Repr::Multi(_) => None,
            Repr::Parts(p) => match &**p {
                [(0, q)] => Some(q.clone()),
                _ => None,
            },
        }
    }
    /// True if the imaginary part is zero.
    pub fn is_real(&self) -> bool {
        match &self.repr {
            Repr::Small(_, _, b) => self.is_zero() || b & IMAG == 0,
            Repr::Multi(p) => p.iter().all(|p| p.0 & IMAG == 0),
            Repr::Parts(p) => p.iter().all(|p| p.0 & IMAG == 0),
        }
    }

    /// The parts whose basis element has (`imag`) or lacks the factor i, with it divided out.
    fn part_by_i(&self, imag: bool) -> Coeff {
        let keep = |b: u8| (b & IMAG != 0) == imag;
        match &self.repr {
            Repr::Small(n, d, b) => {
                if keep(*b) {
                    Coeff::small(*n, *d, b & !IMAG)
                } else {
                    Coeff::zero()
                }
            }
            Repr::Multi(p) => of_small_parts(
                p.iter()
                    .filter(|p| keep(p.0))
                    .map(|&(b, n, d)| (b & !IMAG, n, d))
                    .collect(),
            ),
            Repr::Parts(p) => Coeff::from_normal(
                p.iter()
                    .filter(|(b, _)| keep(*b))
                    .map(|(b, q)| (b & !IMAG, q.clone()))
                    .collect(),
            ),
        }
    }
    /// The real part.
    pub fn re(&self) -> Coeff {
        self.part_by_i(false)
    }
    /// The imaginary part (a real number).
    pub fn im(&self) -> Coeff {
        self.part_by_i(true)
    }
    /// If this is `i*q` with q rational, returns q.
    pub fn as_imag_rational(&self) -> Option<Q> {
        match &self.repr {
            Repr::Small(0, _, _) | Repr::Multi(_) => return None,
            Repr::Small(n, d, IMAG) => return Some(big_q(*n, *d)),
            Repr::Small(..) => return None,
            Repr::Parts(_) => {}
        }
        match self.parts().as_ref() {
            [(IMAG, q)] => Some(q.clone()),
            _ => None,
        }
    }

    /// Sum.
    #[inline]
    pub fn add(&self, o: &Coeff) -> Coeff {
        // Integers times one basis element (nearly every coefficient of a polynomial), inline.
        if let (Repr::Small(a, 1, e1), Repr::Small(c, 1, e2)) = (&self.repr, &o.repr)
            && e1 == e2
            && let Some(n) = a.checked_add(*c)
            && n != i64::MIN
        {
            return Coeff::small(n, 1, *e1);
        }
        self.add_general(o)
    }

    fn add_general(&self, o: &Coeff) -> Coeff {
        if o.is_zero() {
            return self.clone();
        }
        if self.is_zero() {
            return o.clone();
        }
        if let (Repr::Small(a, b, e1), Repr::Small(c, d, e2)) = (&self.repr, &o.repr)
            && e1 == e2
        {
            if let Some((n, d)) = small_add(*a, *b, *c, *d) {
                return Coeff::small(n, d, *e1);
            }
        } else if let Some(r) = self.add_small(o) {
            return r;
        }
        let mut v = self.parts().into_owned();
        v.extend(o.parts().iter().cloned());
        Coeff::from_parts(v)
    }
    /// Negation.
    pub fn neg(&self) -> Coeff {
        match &self.repr {
            Repr::Small(n, d, b) => Coeff {
                repr: Repr::Small(-n, *d, *b),
            },
            Repr::Multi(p) => Coeff {
                repr: Repr::Multi(p.iter().map(|&(b, n, d)| (b, -n, d)).collect()),
            },
            Repr::Parts(p) => Coeff {
                repr: Repr::Parts(p.iter().map(|(b, q)| (*b, -q)).collect()),
            },
        }
    }
    /// Difference.
    pub fn sub(&self, o: &Coeff) -> Coeff {
        self.add(&o.neg())
    }
    /// Product.
    #[inline]
    pub fn mul(&self, o: &Coeff) -> Coeff {
        // Integers times one basis element, inline.
        if let (Repr::Small(a, 1, e1), Repr::Small(c, 1, e2)) = (&self.repr, &o.repr) {
            let (e, f) = basis_product(*e1, *e2);
            if let Some(n) = a.checked_mul(*c).and_then(|n| n.checked_mul(f))
                && n != i64::MIN
            {
                return Coeff::small(n, 1, e);
            }
        }
        self.mul_general(o)
    }

    fn mul_general(&self, o: &Coeff) -> Coeff {
        if self.is_zero() || o.is_zero() {
            return Coeff::zero();
        }
        if o.is_one() {
            return self.clone();
        }
        if self.is_one() {
            return o.clone();
        }
        if let (Repr::Small(a, b, e1), Repr::Small(c, d, e2)) = (&self.repr, &o.repr) {
            let (e, f) = basis_product(*e1, *e2);
            if let Some((n, d)) = small_mul(*a, *b, *c, *d, f) {
                return Coeff::small(n, d, e);
            }
        } else if let Some(r) = self.mul_small(o) {
            return r;
        }
        let (sp, op) = (self.parts(), o.parts());
        if let [(0, q)] = op.as_ref() {
            return Coeff::from_normal(sp.iter().map(|(b, p)| (*b, p * q)).collect());
        }
        if let [(0, q)] = sp.as_ref() {
            return Coeff::from_normal(op.iter().map(|(b, p)| (*b, p * q)).collect());
        }
        let mut v = Vec::with_capacity(sp.len() * op.len());
        for (a, p) in sp.iter() {
            for (b, q) in op.iter() {
                let (c, f) = basis_product(*a, *b);
                v.push((c, p * q * Q::from_integer(BigInt::from(f))));
            }
        }
        Coeff::from_parts(v)
    }
    /// The Galois conjugate flipping the sign of every basis element with a bit of `mask`.
    fn conj_by(&self, mask: u8) -> Coeff {
        if let Repr::Small(n, d, b) = self.repr {
            return if (b & mask).count_ones() % 2 == 1 {
                Coeff {
                    repr: Repr::Small(-n, d, b),
                }
            } else {
                self.clone()
            };
        }
        if let Repr::Multi(p) = &self.repr {
            let flip = |b: u8, n: i64| {
                if (b & mask).count_ones() % 2 == 1 {
                    -n
                } else {
                    n
                }
            };
            return Coeff {
                repr: Repr::Multi(p.iter().map(|&(b, n, d)| (b, flip(b, n), d)).collect()),
            };
        }
        Coeff::from_normal(
            self.parts()
                .iter()
                .map(|(b, q)| {
                    if (b & mask).count_ones() % 2 == 1 {
                        (*b, -q)
                    } else {
                        (*b, q.clone())
                    }
                })
                .collect(),
        )
    }
    /// Complex conjugate.
    pub fn conj(&self) -> Coeff {
        self.conj_by(IMAG)
    }
    /// Multiplicative inverse; `None` for zero.
    pub fn inv(&self) -> Option<Coeff> {
        if self.is_zero() {
            return None;
        }
        if let Some(q) = self.as_rational() {
            return Some(Coeff::rational(q.recip()));
        }
        // x * conj_i(x) lies in Q(sqrt2, sqrt3); times its sqrt3-conjugate, in Q(sqrt2); and so on.
        let c1 = self.conj_by(IMAG);
        let y = self.mul(&c1);
        let c2 = y.conj_by(SQRT3);
        let z = y.mul(&c2);
        let c3 = z.conj_by(SQRT2);
        let w = z.mul(&c3);
        let n = w
            .as_rational()
            .expect("norm of a field element is rational");
        Some(c1.mul(&c2).mul(&c3).mul(&Coeff::rational(n.recip())))
    }
    /// Quotient; `None` when dividing by zero.
    pub fn div(&self, o: &Coeff) -> Option<Coeff> {
        Some(self.mul(&o.inv()?))
    }

    /// exp(i*pi*k/12) exactly.
    pub fn unit_root24(k: i64) -> Coeff {
        // cos and sin of pi*j/12 for j = 0..=6 as (rational, sqrt2, sqrt3, sqrt6) quarters.
        // cos(pi/12) = (sqrt6 + sqrt2)/4, cos(pi/6) = sqrt3/2, cos(pi/4) = sqrt2/2,
        // cos(pi/3) = 1/2, cos(5pi/12) = (sqrt6 - sqrt2)/4.
        const COS_Q: [[i64; 4]; 7] = [
            [4, 0, 0, 0],
            [0, 1, 0, 1],
            [0, 0, 2, 0],
            [0, 2, 0, 0],
            [2, 0, 0, 0],
            [0, -1, 0, 1],
            [0, 0, 0, 0],
        ];
        let quarter = |v: [i64; 4]| -> Coeff {
            let mut parts = Vec::new();
            for (idx, n) in [0u8, SQRT2, SQRT3, SQRT2 | SQRT3].iter().zip(v) {
                if n != 0 {
                    parts.push((*idx, Q::new(BigInt::from(n), BigInt::from(4))));
                }
            }
            Coeff::from_parts(parts)
        };
        let k = k.rem_euclid(24);
        // cos(pi*k/12) and sin(pi*k/12) from the first-quadrant table by symmetry.
        let cos_j = |j: i64| -> Coeff {
            let j = j.rem_euclid(24);
            let (jj, sign) = match j {
                0..=6 => (j, 1),
                7..=12 => (12 - j, -1),
                13..=18 => (j - 12, -1),
                _ => (24 - j, 1),
            };
            let c = quarter(COS_Q[jj as usize]);
            if sign < 0 { c.neg() } else { c }
        };
        let cos = cos_j(k);
        let sin = cos_j(k - 6); // sin(a) = cos(a - pi/2)
        cos.add(&sin.mul(&Coeff::i()))
    }

    /// A certified enclosure of the value, for interval evaluation; `None` on overflow.
    pub fn to_interval(&self) -> Option<crate::interval::CInterval> {
        use crate::interval::{CInterval, Interval};
        // The correctly rounded f64 values, one ulp outward on each side, bracket the exact
        // square roots.
        let s2 = std::f64::consts::SQRT_2;
        let s3 = 3f64.sqrt();
        let sqrt2 = Interval::new(s2.next_down(), s2.next_up())?;
        let sqrt3 = Interval::new(s3.next_down(), s3.next_up())?;
        let mut re = Interval::ZERO;
        let mut im = Interval::ZERO;
        let mut part = |b: u8, mut v: Interval| -> Option<()> {
            if b & SQRT2 != 0 {
                v = v.mul(sqrt2)?;
            }
            if b & SQRT3 != 0 {
                v = v.mul(sqrt3)?;
            }
            if b & IMAG != 0 {
                im = im.add(v)?;
            } else {
                re = re.add(v)?;
            }
            Some(())
        };
        match &self.repr {
            Repr::Small(0, _, _) => {}
            // The machine-word form without a big rational: the same enclosure.
            Repr::Small(n, d, b) => part(*b, small_rational_interval(*n, *d)?)?,
            Repr::Multi(p) => {
                for &(b, n, d) in p {
                    part(b, small_rational_interval(n, d)?)?;
                }
            }
            Repr::Parts(p) => {
                for (b, q) in p {
                    part(*b, rational_interval(q)?)?;
                }
            }
        }
        Some(CInterval::new(re, im))
    }

    /// A plain f64 approximation (real, imaginary), for diagnostics only.
    pub fn to_f64(&self) -> (f64, f64) {
        let mut re = 0.0;
        let mut im = 0.0;
        for (b, q) in self.parts().iter() {
            let mut v = q.to_f64().unwrap_or(f64::NAN);
            if b & SQRT2 != 0 {
                v *= std::f64::consts::SQRT_2;
            }
            if b & SQRT3 != 0 {
                v *= 3f64.sqrt();
            }
            if b & IMAG != 0 {
                im += v;
            } else {
                re += v;
            }
        }
        (re, im)
    }

    /// True if this is a negative rational, or a real number whose first component is negative
    /// (used only to print `a - b` instead of `a + -b`).
    pub fn looks_negative(&self) -> bool {
        if let Repr::Small(n, _, _) = self.repr {
            return n < 0;
        }
        match self.parts().first() {
            Some((b, q)) => {
                if self.is_real() {
                    q.is_negative()
                } else if self.re().is_zero() {
                    *b & IMAG != 0 && q.is_negative()
                } else {
                    false
                }
            }
            None => false,
        }
    }

    /// The size in bits of the largest numerator or denominator (a cost measure: the limits
    /// refuse products of coefficients that would grow past a cap).
    pub fn bits(&self) -> u64 {
        let small = |n: i64, d: u64| {
            u64::from(64 - n.unsigned_abs().leading_zeros()).max(u64::from(64 - d.leading_zeros()))
        };
        match &self.repr {
            Repr::Small(n, d, _) => return small(*n, *d),
            Repr::Multi(p) => return p.iter().map(|&(_, n, d)| small(n, d)).max().unwrap_or(0),
            Repr::Parts(_) => {}
        }
        self.parts()
            .iter()
            .map(|(_, q)| q.numer().bits().max(q.denom().bits()))
            .max()
            .unwrap_or(0)
    }

    /// Number of nonzero rational components.
    pub fn len(&self) -> usize {
        self.parts().len()
    }
    /// True for zero.
    pub fn is_empty(&self) -> bool {
        self.is_zero()
    }
}

/// A certified enclosure of a rational number; `None` if it is beyond the f64 range.
///
/// Exact integer arithmetic, no floating-point conversion of big integers: with
/// `k` chosen so that `m = floor(|n| 2^k / d)` has about 64 bits, the value lies in
/// `[m, m + 1] 2^-k`; both ends are rounded outward to f64 and scaled by powers of two with
/// outward rounding (an underflow gives the bound 0 or the smallest subnormal on the right
/// side, never a bound on the wrong side).
pub fn rational_interval(q: &Q) -> Option<crate::interval::Interval> {
    use crate::interval::Interval;
    if q.is_zero() {
        return Some(Interval::ZERO);
    }
    let n = q.numer().magnitude();
    let d = q.denom().magnitude();
    // Small exact cases: both parts exactly representable and a power-of-two divisor.
    if n.bits() <= 53 && d.bits() <= 53 && d.count_ones() == 1 {
        let v = n.to_f64()? / d.to_f64()?;
        let v = if q.is_negative() { -v } else { v };
        return Interval::point(v);
    }
    let k: i64 = 64 - (n.bits() as i64 - d.bits() as i64);
    let scaled_n = if k >= 0 {
        n << (k as usize)
    } else {
        n >> ((-k) as usize)
    };
    // With k < 0 the shift truncates n, so floor(n 2^k) / d still bounds from below, and
    // (floor(n 2^k) + 1) / d from above; the quotient's floor keeps both directions.
    let m = &scaled_n / d; // floor, since both are nonnegative
    let m = m.to_u128()?;
    // True value |q| in [m, m + 2] * 2^-k (one unit for each truncation).
    let lo = (m as f64).next_down().max(0.0);
    let hi = ((m + 2) as f64).next_up();
    let lo = scale_pow2(lo, -k, false);
    let hi = scale_pow2(hi, -k, true);
    if !hi.is_finite() {
        return None;
    }
    if q.is_negative() {
        Interval::new(-hi, -lo)
    } else {
        Interval::new(lo, hi)
    }
}

/// [`rational_interval`] of `n / d` (`d > 0`, `n != i64::MIN`), the same steps in machine
/// integers: `n << k` has `64 + bits(d) <= 128` bits, so nothing is truncated or allocated.
fn small_rational_interval(n: i64, d: u64) -> Option<crate::interval::Interval> {
    use crate::interval::Interval;
    if n == 0 {
        return Some(Interval::ZERO);
    }
    let m = n.unsigned_abs();
    let bits = |x: u64| 64 - i64::from(x.leading_zeros());
    let (bn, bd) = (bits(m), bits(d));
    if bn <= 53 && bd <= 53 && d.count_ones() == 1 {
        let v = m as f64 / d as f64;
        return Interval::point(if n < 0 { -v } else { v });
    }
    // k = 64 - (bn - bd) is in [2, 127]: a left shift, as in rational_interval.
    let k = 64 - (bn - bd);
    let q = (u128::from(m) << k) / u128::from(d);
    let lo = (q as f64).next_down().max(0.0);
    let hi = ((q + 2) as f64).next_up();
    let lo = scale_pow2(lo, -k, false);
    let hi = scale_pow2(hi, -k, true);
    if !hi.is_finite() {
        return None;
    }
    if n < 0 {
        Interval::new(-hi, -lo)
    } else {
        Interval::new(lo, hi)
    }
}

/// `x * 2^e` rounded down (`up = false`) or up, for `x >= 0`: scaling by a power of two is
/// exact unless it overflows or leaves the normal range, where the step is widened by one ulp.
fn scale_pow2(mut x: f64, mut e: i64, up: bool) -> f64 {
    while e != 0 {
        let step = e.clamp(-1000, 1000);
        let y = x * 2f64.powi(step as i32);
        x = if up {
            y.next_up()
        } else {
            y.next_down().max(0.0)
        };
        e -= step;
    }
    x
}

/// `10^k` as `Some(k)` for k >= 6.
pub(crate) fn big_power_of_ten(n: &BigInt) -> Option<usize> {
    let s = n.to_string();
    let k = s.len() - 1;
    (k >= 6 && s.starts_with('1') && s[1..].bytes().all(|b| b == b'0')).then_some(k)
}

/// Rationals print as `p/q`, except that a very large or small power of ten uses exponent
/// notation (`3e-30`, `2e12`), which the parser reads back exactly.
fn fmt_rational(q: &Q, f: &mut fmt::Formatter<'_>) -> fmt::Result {
    if q.is_integer() {
        let n = q.numer();
        let s = n.magnitude().to_string();
        let zeros = s.len() - s.trim_end_matches('0').len();
        if zeros >= 6 {
            let sign = if n.is_negative() { "-" } else { "" };
            return write!(f, "{sign}{}e{zeros}", &s[..s.len() - zeros]);
        }
        return write!(f, "{n}");
    }
    if let Some(k) = big_power_of_ten(q.denom()) {
        return write!(f, "{}e-{k}", q.numer());
    }
    write!(f, "{}/{}", q.numer(), q.denom())
}

/// Prints in the input syntax: `3/4`, `sqrt(2)/2`, `(1 + sqrt(3))/4`, `i/2`.
impl fmt::Display for Coeff {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let parts = self.parts();
        if parts.is_empty() {
            return write!(f, "0");
        }
        let basis_name = |b: u8| -> String {
            let mut s = Vec::new();
            match b & (SQRT2 | SQRT3) {
                SQRT2 => s.push("sqrt(2)"),
                SQRT3 => s.push("sqrt(3)"),
                3 => s.push("sqrt(6)"),
                _ => {}
            }
            if b & IMAG != 0 {
                s.push("i");
            }
            s.join("*")
        };
        let single = parts.len() == 1;
        if !single {
            write!(f, "(")?;
        }
        for (n, (b, q)) in parts.iter().enumerate() {
            let neg = q.is_negative();
            if n > 0 {
                write!(f, "{}", if neg { " - " } else { " + " })?;
            } else if neg {
                write!(f, "-")?;
            }
            let a = q.abs();
            let name = basis_name(*b);
            if name.is_empty() {
                fmt_rational(&a, f)?;
            } else {
                if !a.numer().is_one() {
                    write!(f, "{}*", a.numer())?;
                }
                write!(f, "{name}")?;
                if !a.denom().is_one() {
                    write!(f, "/{}", a.denom())?;
                }
            }
        }
        if !single {
            write!(f, ")")?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn components_sum_back_to_the_coefficient() {
        let half = Q::new(1.into(), 2.into());
        let big = Q::new(num_traits::pow(BigInt::from(10), 30), 7.into());
        let cases = [
            Coeff::zero(),
            Coeff::one(),
            Coeff::i(),
            Coeff::int(-3),
            Coeff::rational(big.clone()),
            Coeff::unit_root24(1),
            Coeff::unit_root24(7).mul(&Coeff::rational(big)),
            Coeff::sqrt_of_small(6).unwrap().add(&Coeff::rational(half)),
        ];
        for c in cases {
            let parts = c.components();
            assert_eq!(parts.len(), c.len(), "{c}");
            assert!(parts.windows(2).all(|w| w[0].0 < w[1].0), "{c}");
            let mut sum = Coeff::zero();
            for (b, q) in &parts {
                assert!(!q.is_zero());
                assert!([1, 2, 3, 6].contains(&b.radicand()));
                let sqrt = Coeff::sqrt_of_small(b.radicand()).unwrap();
                let unit = if b.is_imaginary() {
                    sqrt.mul(&Coeff::i())
                } else {
                    sqrt
                };
                assert_eq!(unit, b.to_coeff());
                sum = sum.add(&unit.mul(&Coeff::rational(q.clone())));
            }
            assert_eq!(sum, c);
        }
        assert_eq!(Basis::ONE.to_coeff(), Coeff::one());
    }

    #[test]
    fn unit_roots_are_exact() {
        // exp(i pi/2) = i, exp(i pi) = -1, exp(i pi/3)^6 = 1, exp(i pi/12)^24 = 1.
        assert_eq!(Coeff::unit_root24(6), Coeff::i());
        assert_eq!(Coeff::unit_root24(12), Coeff::int(-1));
        let z = Coeff::unit_root24(4);
        let mut p = Coeff::one();
        for _ in 0..6 {
            p = p.mul(&z);
        }
        assert!(p.is_one());
        let z = Coeff::unit_root24(1);
        let mut p = Coeff::one();
        for k in 1..=24 {
            p = p.mul(&z);
            assert_eq!(p, Coeff::unit_root24(k), "k = {k}");
        }
        assert!(p.is_one());
    }

    #[test]
    fn cos_pi_over_3_is_one_half() {
        // Abramowitz & Stegun 1964, Table 4.1 (common practice): cos(pi/3) = 1/2, sin(pi/6) = 1/2.
        let z = Coeff::unit_root24(4);
        assert_eq!(z.re(), Coeff::rational(Q::new(1.into(), 2.into())));
        let z = Coeff::unit_root24(2);
        assert_eq!(z.im(), Coeff::rational(Q::new(1.into(), 2.into())));
    }

    #[test]
    fn inverse_of_mixed_element() {
        let x = Coeff::unit_root24(1)
            .add(&Coeff::int(3))
            .add(&Coeff::sqrt_of_small(6).unwrap());
        let y = x.inv().unwrap();
        assert!(x.mul(&y).is_one());
        assert!(Coeff::zero().inv().is_none());
    }

    #[test]
    fn display_forms() {
        assert_eq!(Coeff::unit_root24(3).re().to_string(), "sqrt(2)/2");
        assert_eq!(Coeff::i().neg().to_string(), "-i");
        assert_eq!(
            Coeff::rational(Q::new((-3).into(), 4.into())).to_string(),
            "-3/4"
        );
    }

    /// The machine-word fast path agrees with big-rational arithmetic, including across the
    /// overflow boundary, and keeps one representation per value (equal values compare and
    /// hash equal).
    mod small {
        use super::*;
        use proptest::prelude::*;
        use std::hash::{Hash, Hasher};

        fn big(n: i64, d: u64) -> Q {
            Q::new(BigInt::from(n), BigInt::from(d))
        }

        fn via_parts(q: &Q) -> Coeff {
            // Forced through the general path: a zero sqrt(2) part added and removed.
            let s2 = Coeff::sqrt_of_small(2).unwrap();
            Coeff::rational(q.clone()).add(&s2).sub(&s2)
        }

        fn hash(c: &Coeff) -> u64 {
            let mut h = rustc_hash::FxHasher::default();
            c.hash(&mut h);
            h.finish()
        }

        fn edge() -> impl Strategy<Value = i64> {
            prop_oneof![
                any::<i64>(),
                -1000i64..1000,
                Just(i64::MAX),
                Just(i64::MIN + 1),
                Just(1i64 << 62),
            ]
        }

        proptest! {
            #[test]
            fn binary_gcd_agrees_with_euclid(
                a in prop_oneof![any::<u128>(), any::<u64>().prop_map(u128::from), 0u128..100],
                b in prop_oneof![any::<u128>(), any::<u64>().prop_map(u128::from), 0u128..100],
                k in 0u32..64,
            ) {
                let euclid = |mut x: u128, mut y: u128| {
                    while y != 0 {
                        (x, y) = (y, x % y);
                    }
                    x
                };
                prop_assert_eq!(gcd_u128(a, b), euclid(a, b));
                // Shared powers of two (the binary method's shift).
                let (a2, b2) = (a.wrapping_shl(k) >> k << k, b.wrapping_shl(k) >> k << k);
                prop_assert_eq!(gcd_u128(a2, b2), euclid(a2, b2));
            }
        }

        proptest! {
            #[test]
            fn add_and_mul_agree_with_big_rationals(
                a in edge(), b in 1u64.., c in edge(), d in 1u64..,
            ) {
                let (x, y) = (big(a, b), big(c, d));
                let (cx, cy) = (Coeff::rational(x.clone()), Coeff::rational(y.clone()));
                let sum = cx.add(&cy);
                let prod = cx.mul(&cy);
                prop_assert_eq!(sum.as_rational().unwrap(), &x + &y);
                prop_assert_eq!(prod.as_rational().unwrap(), &x * &y);
                prop_assert_eq!(cx.neg().as_rational().unwrap(), -x.clone());
                // One representation per value, whichever path made it.
                let s2 = via_parts(&(&x + &y));
                prop_assert_eq!(&sum, &s2);
                prop_assert_eq!(hash(&sum), hash(&s2));
                prop_assert_eq!(sum.is_zero(), (&x + &y).is_zero());
                prop_assert_eq!(prod.is_one(), (&x * &y) == Q::one());
            }
        }

        proptest! {
            #[test]
            fn basis_multiples_agree_with_big_rationals(
                a in edge(), b in 1u64.., e1 in 0u8..8, c in edge(), d in 1u64.., e2 in 0u8..8,
            ) {
                let (x, y) = (big(a, b), big(c, d));
                let (cx, cy) = (Coeff::basis(e1, x.clone()), Coeff::basis(e2, y.clone()));
                let (e, f) = basis_product(e1, e2);
                let want = Coeff::basis(e, &x * &y * Q::from_integer(BigInt::from(f)));
                let got = cx.mul(&cy);
                prop_assert_eq!(&got, &want);
                prop_assert_eq!(hash(&got), hash(&want));
                if e1 == e2 {
                    prop_assert_eq!(cx.add(&cy), Coeff::basis(e1, &x + &y));
                }
                prop_assert_eq!(cx.conj().add(&cx).is_zero(), e1 & IMAG != 0 || x.is_zero());
                let (re, im) = (cx.re(), cx.im());
                prop_assert_eq!(re.add(&im.mul(&Coeff::i())), cx.clone());
            }
        }

        proptest! {
            /// The machine-word enclosure is the big-rational one, bit for bit, on both
            /// sides of every fast path (53-bit parts, power-of-two denominators).
            #[test]
            fn small_enclosure_is_the_rational_one(
                n in prop_oneof![edge(), -(1i64 << 54)..(1i64 << 54)],
                d in prop_oneof![1u64.., 1u64..1000, (0u32..64).prop_map(|k| 1u64 << k),
                                 Just(u64::MAX), Just((1u64 << 53) - 1)],
                e in 0u8..8,
            ) {
                prop_assume!(n != i64::MIN);
                let want = rational_interval(&Q::new_raw(BigInt::from(n), BigInt::from(d)));
                let got = small_rational_interval(n, d);
                let bits = |v: Option<crate::interval::Interval>| {
                    v.map(|v| (v.lo().to_bits(), v.hi().to_bits()))
                };
                prop_assert_eq!(bits(got), bits(want));
                // And through a coefficient, against the general representation.
                let q = big(n, d);
                let c = Coeff::basis(e, q.clone());
                let general = via_parts(&q).mul(&Coeff::basis(e, Q::one()));
                prop_assert_eq!(c.to_interval(), general.to_interval());
            }
        }

        /// A coefficient from up to eight `(basis, n, d)` components with edge values.
        fn coeff_parts() -> impl Strategy<Value = Vec<(u8, i64, u64)>> {
            proptest::collection::vec(
                (
                    0u8..8,
                    prop_oneof![edge(), -20i64..20],
                    prop_oneof![1u64.., 1u64..12, Just(u64::MAX)],
                ),
                0..8,
            )
        }

        /// The reference: big rationals per basis element, summed without any fast path.
        fn reference(parts: &[(u8, i64, u64)]) -> Vec<Q> {
            let mut v = vec![Q::zero(); 8];
            for &(b, n, d) in parts {
                v[b as usize] += big(n, d);
            }
            v
        }

        fn build(parts: &[(u8, i64, u64)]) -> Coeff {
            parts.iter().fold(Coeff::zero(), |acc, &(b, n, d)| {
                acc.add(&Coeff::basis(b, big(n, d)))
            })
        }

        fn of_reference(v: &[Q]) -> Coeff {
            Coeff::from_parts(
                v.iter()
                    .enumerate()
                    .filter(|(_, q)| !q.is_zero())
                    .map(|(b, q)| (b as u8, q.clone()))
                    .collect(),
            )
        }

        proptest! {
            /// Coefficients of several components (the `a/2 - b i/2` of `a cos + b sin` in
            /// exponentials) add, multiply, negate, conjugate and invert in machine words
            /// exactly as big rationals do, across the overflow boundary, with one
            /// representation per value.
            #[test]
            fn several_components_agree_with_big_rationals(
                pa in coeff_parts(), pb in coeff_parts(),
            ) {
                let (x, y) = (build(&pa), build(&pb));
                let (rx, ry) = (reference(&pa), reference(&pb));
                prop_assert_eq!(&x, &of_reference(&rx));
                let sum: Vec<Q> = rx.iter().zip(&ry).map(|(a, b)| a + b).collect();
                let mut prod = vec![Q::zero(); 8];
                for (ea, qa) in rx.iter().enumerate() {
                    for (eb, qb) in ry.iter().enumerate() {
                        let (e, f) = basis_product(ea as u8, eb as u8);
                        prod[e as usize] += qa * qb * Q::from_integer(BigInt::from(f));
                    }
                }
                let (s, p) = (x.add(&y), x.mul(&y));
                let (ws, wp) = (of_reference(&sum), of_reference(&prod));
                prop_assert_eq!(&s, &ws);
                prop_assert_eq!(hash(&s), hash(&ws));
                prop_assert_eq!(&p, &wp);
                prop_assert_eq!(hash(&p), hash(&wp));
                prop_assert!(x.sub(&x).is_zero());
                prop_assert_eq!(x.neg().add(&x), Coeff::zero());
                let conj: Vec<Q> = rx
                    .iter()
                    .enumerate()
                    .map(|(b, q)| if b as u8 & IMAG != 0 { -q.clone() } else { q.clone() })
                    .collect();
                prop_assert_eq!(x.conj(), of_reference(&conj));
                prop_assert_eq!(x.bits(), of_reference(&rx).bits());
                prop_assert_eq!(x.to_interval(), of_reference(&rx).to_interval());
                if !x.is_zero() {
                    prop_assert!(x.mul(&x.inv().unwrap()).is_one());
                }
            }
        }

        #[test]
        fn a_coefficient_is_24_bytes() {
            // Every term of every form holds one: boxed slices keep the heap variants at 16
            // bytes of payload, so the enum is as small as its machine-word variant.
            assert!(std::mem::size_of::<Coeff>() <= 24);
        }

        #[test]
        fn overflow_goes_to_big_integers() {
            let m = Coeff::int(i64::MAX);
            let sq = m.mul(&m);
            let want = Q::from_integer(BigInt::from(i64::MAX) * BigInt::from(i64::MAX));
            assert_eq!(sq.as_rational().unwrap(), want);
            assert_eq!(sq.div(&m).unwrap(), m);
            assert_eq!(
                Coeff::int(i64::MIN).as_rational().unwrap(),
                Q::from_integer(BigInt::from(i64::MIN))
            );
            assert_eq!(Coeff::int(i64::MIN).neg().neg(), Coeff::int(i64::MIN));
        }
    }
}
