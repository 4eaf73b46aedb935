//! Enclosure arithmetic: the numbers a jet's coefficients are made of.
//!
//! Model. A [`Scalar`] stands for an unknown real number known to lie in a set it describes
//! (an interval, a ball). Every operation returns an enclosure of the exact result for every
//! choice of reals in its operands, or `None` when it cannot ("cannot evaluate here": a
//! logarithm of a set reaching 0 or below, a division by a set containing 0, an overflow).
//! Nothing else is promised: an enclosure may be wide, never wrong.
//!
//! Key design decision: the trait is the smallest set of operations that jets need, all
//! taking `&self` and returning `Option`, with constructors that take a context
//! ([`Scalar::Ctx`]: nothing for f64 intervals, a precision in bits for a multiprecision ball).
//! A ball type with inherent `add, sub, mul, div, neg, sqrt, exp, ln, sin, cos, powi`,
//! `from_rational(q, prec)`, `from_f64`, `pi(prec)`, `contains_zero`, `excludes_zero`,
//! `mid_f64`, `rad_f64` then fits with an impl that forwards each method. Everything else
//! jets need (reciprocals, hyperbolic functions, exact small integers) is derived here from
//! those, so a new scalar type cannot get it subtly wrong.
//!
//! The f64 [`Interval`] impl has its own exact enclosure of a rational
//! ([`rational_interval`]): exact integer arithmetic scales the rational so that its integer
//! part has about 64 bits, and only the final conversion to f64 rounds, outward.

use crate::interval::Interval;
use num_bigint::{BigInt, BigUint, Sign};
use num_rational::BigRational;
use num_traits::{One, ToPrimitive, Zero};
use std::fmt;

/// A certified enclosure of a real number, as jet coefficients need it.
///
/// Every method must return an enclosure of the exact result over all reals in its operands
/// (or `None`), and the predicates must be certified: `excludes_zero` true only if no real in
/// the enclosure is 0.
pub trait Scalar: Clone + fmt::Debug {
    /// What constructors need besides the value: nothing for f64 intervals, the working
    /// precision for a multiprecision type.
    type Ctx: Clone + fmt::Debug;

    /// The exactly known `x`; `None` if `x` is not finite.
    fn from_f64(x: f64) -> Option<Self>;
    /// An enclosure of the exact rational `q`; `None` if it cannot be represented (overflow).
    fn from_rational(q: &BigRational, ctx: &Self::Ctx) -> Option<Self>;
    /// An enclosure of π.
    fn pi(ctx: &Self::Ctx) -> Option<Self>;

    /// Sum.
    fn add(&self, rhs: &Self) -> Option<Self>;
    /// Difference.
    fn sub(&self, rhs: &Self) -> Option<Self>;
    /// Product.
    fn mul(&self, rhs: &Self) -> Option<Self>;
    /// Quotient; `None` if `rhs` contains 0.
    fn div(&self, rhs: &Self) -> Option<Self>;
    /// Negation (exact for intervals and balls).
    fn neg(&self) -> Self;
    /// Integer power; negative powers are `None` if the enclosure contains 0.
    fn powi(&self, n: i64) -> Option<Self>;
    /// Square root; `None` unless every point is `>= 0`.
    fn sqrt(&self) -> Option<Self>;
    /// Exponential.
    fn exp(&self) -> Option<Self>;
    /// Natural logarithm; `None` unless every point is `> 0`.
    fn ln(&self) -> Option<Self>;
    /// Sine.
    fn sin(&self) -> Option<Self>;
    /// Cosine.
    fn cos(&self) -> Option<Self>;
    /// Arctangent (real, values in (-pi/2, pi/2)).
    fn atan(&self) -> Option<Self>;
    /// Absolute value; by default only where the sign is certified (or the value is exactly
    /// 0), else `None`.
    fn abs(&self) -> Option<Self> {
        if self.is_exact_zero() {
            Some(Self::zero())
        } else if self.is_positive() {
            Some(self.clone())
        } else if self.neg().is_positive() {
            Some(self.neg())
        } else {
            None
        }
    }

    /// Whether 0 may be the enclosed value.
    fn contains_zero(&self) -> bool;
    /// Certified: the enclosed value is not 0.
    fn excludes_zero(&self) -> bool;
    /// A point near the centre (not certified).
    fn mid_f64(&self) -> f64;
    /// An upper bound on the distance from the centre to the ends (may be infinite).
    fn rad_f64(&self) -> f64;
    /// Certified outward f64 bounds `(lo, hi)`: every point of the enclosure lies in
    /// `[lo, hi]` (either may be infinite beyond the f64 range).
    fn bounds_f64(&self) -> (f64, f64);

    /// Certified: the enclosure is the single point 0 (products with it may be skipped).
    fn is_exact_zero(&self) -> bool {
        false
    }

    /// Certified: the enclosure is the single point 1, and a product with it may be taken
    /// as the other factor unchanged (an enclosure of `x` encloses `x * 1`). False unless
    /// both hold (a ball's product also rounds to its precision, so it keeps the product).
    fn is_exact_one(&self) -> bool {
        false
    }

    /// The exactly known `x` as an input at the context's working precision (for a
    /// multiprecision type, later operations on it keep that precision).
    fn input(x: f64, _ctx: &Self::Ctx) -> Option<Self> {
        Self::from_f64(x)
    }

    /// Certified: every point is `> 0`.
    fn is_positive(&self) -> bool {
        // If 0 is excluded, all points have one sign, and a rounded centre keeps it (or
        // becomes 0, which answers "no": conservative).
        self.excludes_zero() && self.mid_f64() > 0.0
    }

    /// The exact integer `n`.
    fn from_i64(n: i64, ctx: &Self::Ctx) -> Option<Self> {
        Self::from_rational(&BigRational::from_integer(BigInt::from(n)), ctx)
    }

    /// `0`.
    fn zero() -> Self {
        Self::from_f64(0.0).expect("0 is finite")
    }

    /// `1`.
    fn one() -> Self {
        Self::from_f64(1.0).expect("1 is finite")
    }

    /// `1 / self`.
    fn recip(&self) -> Option<Self> {
        Self::one().div(self)
    }

    /// Hyperbolic sine and cosine `(sinh, cosh)` from one exponential.
    ///
    /// `(e - 1/e)/2` loses absolute accuracy near 0 (about one ulp of 1), which costs
    /// certificates for tiny arguments, never soundness.
    fn sinh_cosh(&self) -> Option<(Self, Self)> {
        let e = self.exp()?;
        let ei = self.neg().exp()?;
        let half = Self::from_f64(0.5)?;
        let s = e.sub(&ei)?.mul(&half)?;
        let c = e.add(&ei)?.mul(&half)?;
        Some((s, c))
    }
}

#[allow(
    clippy::should_implement_trait,
    reason = "the trait's methods mirror Interval's inherent ones"
)]
impl Scalar for Interval {
    type Ctx = ();

    fn from_f64(x: f64) -> Option<Self> {
        Interval::point(x)
    }
    fn from_rational(q: &BigRational, _: &()) -> Option<Self> {
        rational_interval(q)
    }
    fn from_i64(n: i64, _: &()) -> Option<Self> {
        // Below 2^53 in magnitude the integer is an f64: the point rational_interval gives.
        if n.unsigned_abs() < 1 << 53 {
            return Interval::point(n as f64);
        }
        rational_interval(&BigRational::from_integer(BigInt::from(n)))
    }
    fn pi(_: &()) -> Option<Self> {
        // PI is the double nearest to π (below it); one ulp either side encloses π.
        Interval::around(std::f64::consts::PI)
    }
    #[inline]
    fn add(&self, rhs: &Self) -> Option<Self> {
        Interval::add(*self, *rhs)
    }
    #[inline]
    fn sub(&self, rhs: &Self) -> Option<Self> {
        Interval::sub(*self, *rhs)
    }
    #[inline]
    fn mul(&self, rhs: &Self) -> Option<Self> {
        Interval::mul(*self, *rhs)
    }
    fn div(&self, rhs: &Self) -> Option<Self> {
        Interval::div(*self, *rhs)
    }
    #[inline]
    fn neg(&self) -> Self {
        -*self
    }
    fn powi(&self, n: i64) -> Option<Self> {
        Interval::powi(*self, n)
    }
    fn sqrt(&self) -> Option<Self> {
        Interval::sqrt(*self)
    }
    fn exp(&self) -> Option<Self> {
        Interval::exp(*self)
    }
    fn ln(&self) -> Option<Self> {
        Interval::ln(*self)
    }
    fn atan(&self) -> Option<Self> {
        Some(Interval::atan(*self))
    }
    fn abs(&self) -> Option<Self> {
        Some(Interval::abs(*self))
    }
    fn sin(&self) -> Option<Self> {
        Some(Interval::sin(*self))
    }
    fn cos(&self) -> Option<Self> {
        Some(Interval::cos(*self))
    }
    fn contains_zero(&self) -> bool {
        Interval::contains_zero(*self)
    }
    fn excludes_zero(&self) -> bool {
        Interval::excludes_zero(*self)
    }
    fn mid_f64(&self) -> f64 {
        self.mid()
    }
    fn rad_f64(&self) -> f64 {
        self.rad()
    }
    fn bounds_f64(&self) -> (f64, f64) {
        (self.lo(), self.hi())
    }
    fn is_exact_zero(&self) -> bool {
        self.lo() == 0.0 && self.hi() == 0.0
    }
    fn is_exact_one(&self) -> bool {
        self.lo() == 1.0 && self.hi() == 1.0
    }
    fn is_positive(&self) -> bool {
        self.lo() > 0.0
    }
}

/// `x * 2^e` for `x` in `[2^62, 2^67]`, with at most the last multiplication inexact (only
/// when the result is subnormal or overflows). Returns the product and whether it may be
/// inexact; an infinite product is returned as is.
fn scale_pow2(x: f64, e: i64) -> (f64, bool) {
    debug_assert!((4.0e18..=1.5e20).contains(&x));
    // Chunks of 2^±1000 are normal and keep x normal until the last step.
    let pow2 = |k: i64| f64::from_bits(((k + 1023) as u64) << 52);
    let (mut y, mut e) = (x, e);
    while e > 1000 {
        y *= pow2(1000);
        e -= 1000;
        if y.is_infinite() {
            return (y, true);
        }
    }
    while e < -1000 {
        y *= pow2(-1000);
        e += 1000;
    }
    let r = y * pow2(e);
    // A product that is normal (strictly above the smallest normal) was exact; anything at or
    // below may have been rounded in the subnormal range.
    (r, r.is_infinite() || r.abs() <= f64::MIN_POSITIVE)
}

/// The f64 nearest below (`up == false`) or above the integer `m < 2^100`.
fn u128_to_f64(m: u128, up: bool) -> f64 {
    let f = m as f64; // round to nearest
    // f is an integer-valued double below 2^101, so the conversion back is exact.
    let back = f as u128;
    if up && back < m {
        f.next_up()
    } else if !up && back > m {
        f.next_down()
    } else {
        f
    }
}

/// A finite f64 interval containing the exact rational `q`, within about two ulp; `None` if
/// its magnitude is beyond `f64::MAX`.
///
/// Method: with `q = n/d` and `k` chosen so that `m = floor(|n| 2^k / d)` lies in
/// `[2^63, 2^65)` (exact big-integer arithmetic), `|q|` lies in `[m, m + 1] 2^-k`, or equals
/// `m 2^-k` when the division is exact. The bounds `m` and `m + 1` are rounded outward to
/// f64 and multiplied by `2^-k`, which is exact except in the subnormal range, where one more
/// ulp step outward covers the rounding (a positive value below the smallest subnormal gets
/// the lower bound 0).
pub fn rational_interval(q: &BigRational) -> Option<Interval> {
    let (n, d) = (q.numer(), q.denom());
    if n.is_zero() {
        return Some(Interval::ZERO);
    }
    // Fast path: numerator and denominator exact in f64, so one correctly rounded division
    // is within half an ulp, and one step outward encloses it.
    if n.bits() <= 53
        && d.bits() <= 53
        && let (Some(nf), Some(df)) = (n.to_f64(), d.to_f64())
    {
        let v = nf / df;
        // Division by a power of two (no underflow here: |v| >= 2^-53) is exact.
        if d.magnitude().count_ones() == 1 {
            return Interval::point(v);
        }
        if v != 0.0 && v.abs() >= f64::MIN_POSITIVE {
            return Interval::new(v.next_down(), v.next_up());
        }
    }
    // BigRational keeps the denominator positive.
    let negative = (n.sign() == Sign::Minus) != (d.sign() == Sign::Minus);
    let n: BigUint = n.magnitude().clone();
    let d: BigUint = d.magnitude().clone();
    let (bn, bd) = (n.bits() as i64, d.bits() as i64);
    // n/d in (2^(bn-bd-1), 2^(bn-bd+1)); times 2^k lands in (2^63, 2^65).
    let k = 64 - bn + bd;
    let e = -k; // |q| in [m, m+1] * 2^e
    if e > 1100 {
        return None;
    }
    let (lo, hi) = if e < -1200 {
        // |q| < 2^65 * 2^-1200: below the smallest subnormal.
        (0.0, f64::from_bits(1))
    } else {
        let (num, den) = if k >= 0 {
            (n << (k as u64), d)
        } else {
            (n, d << ((-k) as u64))
        };
        let m = &num / &den;
        let exact = (&m * &den) == num;
        let m: u128 = u128::try_from(&m).ok()?;
        let m_hi = if exact { m } else { m + 1 };
        let (lo, lo_inexact) = scale_pow2(u128_to_f64(m, false), e);
        let (hi, hi_inexact) = scale_pow2(u128_to_f64(m_hi, true), e);
        if !hi.is_finite() {
            return None;
        }
        let lo = if lo_inexact {
            lo.next_down().max(0.0)
        } else {
            lo
        };
        let hi = if hi_inexact { hi.next_up() } else { hi };
        (lo, hi)
    };
    let iv = Interval::new(lo, hi)?;
    Some(if negative { -iv } else { iv })
}

/// `n!` as an exact rational.
pub(crate) fn factorial(n: u32) -> BigRational {
    let mut f = BigInt::one();
    for i in 2..=n {
        f *= BigInt::from(i);
    }
    BigRational::from_integer(f)
}

#[cfg(test)]
mod tests {
    use super::*;
    use num_traits::Pow;
    use proptest::prelude::*;

    fn q(n: i64, d: i64) -> BigRational {
        BigRational::new(BigInt::from(n), BigInt::from(d))
    }

    fn exact(x: f64) -> BigRational {
        BigRational::from_float(x).expect("finite")
    }

    fn pow(b: i64, e: u32) -> BigRational {
        BigRational::from_integer(BigInt::from(b).pow(e))
    }

    /// `lo <= q <= hi` exactly, and the interval is tight: at most `ulps` steps wide unless
    /// in the subnormal range.
    fn encloses(q: &BigRational, ulps: u32) {
        let iv = rational_interval(q).unwrap_or_else(|| panic!("{q} has no enclosure"));
        assert!(
            exact(iv.lo()) <= *q,
            "{q}: lower bound {} too high",
            iv.lo()
        );
        assert!(*q <= exact(iv.hi()), "{q}: upper bound {} too low", iv.hi());
        if iv.lo().abs() >= f64::MIN_POSITIVE || iv.hi().abs() >= f64::MIN_POSITIVE {
            let mut x = iv.lo();
            for _ in 0..ulps {
                x = x.next_up();
            }
            assert!(iv.hi() <= x, "{q}: {iv} wider than {ulps} ulp");
        }
    }

    #[test]
    fn small_rationals_are_enclosed_tightly() {
        for (n, d) in [
            (1, 3),
            (-1, 3),
            (2, 1),
            (-7, 2),
            (1, 10),
            (22, 7),
            (1, 1 << 40),
        ] {
            encloses(&q(n, d), 3);
        }
        // Dyadics are exact.
        let iv = rational_interval(&q(-7, 4)).expect("finite");
        assert_eq!((iv.lo(), iv.hi()), (-1.75, -1.75));
        assert_eq!(rational_interval(&q(0, 5)), Some(Interval::ZERO));
    }

    #[test]
    fn huge_and_tiny_rationals() {
        // 3 * 2^199 / 2^1100 = 3 * 2^-901: exact.
        let v = pow(2, 199) * q(3, 1) / pow(2, 1100);
        let iv = rational_interval(&v).expect("finite");
        assert_eq!(exact(iv.lo()), v);
        assert_eq!(exact(iv.hi()), v);
        // 10^-400 is below every subnormal: [0, smallest subnormal].
        let tiny = pow(10, 400).recip();
        let iv = rational_interval(&tiny).expect("finite");
        assert_eq!((iv.lo(), iv.hi()), (0.0, f64::from_bits(1)));
        encloses(&tiny, 1);
        encloses(&-tiny.clone(), 1);
        // 10^-310 is subnormal.
        encloses(&pow(10, 310).recip(), 2);
        encloses(&(q(-1, 3) / pow(10, 310)), 2);
        // 10^400 overflows; 10^308 does not.
        assert_eq!(rational_interval(&pow(10, 400)), None);
        assert_eq!(rational_interval(&-pow(10, 400)), None);
        encloses(&pow(10, 308), 2);
        encloses(&(q(1, 7) * pow(10, 300)), 3);
        // Near f64::MAX: exactly MAX fits, twice MAX does not.
        let max = exact(f64::MAX);
        encloses(&max, 1);
        assert_eq!(rational_interval(&(max.clone() * q(2, 1))), None);
        // Smallest subnormal and half of it.
        let sub = exact(f64::from_bits(1));
        encloses(&sub, 1);
        encloses(&(sub * q(1, 2)), 1);
    }

    #[test]
    fn a_big_continued_fraction() {
        // (1 + 10^-20)^2000 = 1 + 2e-17 + ...: numerator and denominator of 40000 digits.
        let ten20 = BigInt::from(10).pow(20u32);
        let num: BigInt = &ten20 + BigInt::one();
        let v = BigRational::new(num.pow(2000u32), ten20.pow(2000u32));
        encloses(&v, 3);
        let iv = rational_interval(&v).expect("finite");
        assert!(iv.lo() >= 1.0 && iv.hi() <= 1.0 + 4.0 * f64::EPSILON);
        encloses(&v.recip(), 3);
    }

    proptest! {
        #[test]
        fn random_rationals_are_enclosed(n in any::<i64>(), d in 1i64..i64::MAX, e in -1300i32..1300) {
            let mut v = q(n, d);
            let two = q(2, 1);
            if e >= 0 { v *= two.pow(e); } else { v /= two.pow(-e); }
            match rational_interval(&v) {
                Some(_) => encloses(&v, 3),
                None => prop_assert!(num_traits::Signed::abs(&v) > exact(f64::MAX), "{} refused", v),
            }
        }
    }
}

/// The multiprecision ball: the context is the working precision in bits.
impl Scalar for crate::interval::Ball {
    type Ctx = u32;
    fn from_f64(x: f64) -> Option<Self> {
        crate::interval::Ball::from_f64(x)
    }
    fn from_rational(q: &BigRational, ctx: &u32) -> Option<Self> {
        crate::interval::Ball::from_rational(q, *ctx)
    }
    fn pi(ctx: &u32) -> Option<Self> {
        Some(crate::interval::Ball::pi(*ctx))
    }
    fn add(&self, rhs: &Self) -> Option<Self> {
        crate::interval::Ball::add(self, rhs)
    }
    fn sub(&self, rhs: &Self) -> Option<Self> {
        crate::interval::Ball::sub(self, rhs)
    }
    fn mul(&self, rhs: &Self) -> Option<Self> {
        crate::interval::Ball::mul(self, rhs)
    }
    fn div(&self, rhs: &Self) -> Option<Self> {
        crate::interval::Ball::div(self, rhs)
    }
    fn neg(&self) -> Self {
        crate::interval::Ball::neg(self)
    }
    fn powi(&self, n: i64) -> Option<Self> {
        crate::interval::Ball::powi(self, n)
    }
    fn sqrt(&self) -> Option<Self> {
        crate::interval::Ball::sqrt(self)
    }
    fn exp(&self) -> Option<Self> {
        crate::interval::Ball::exp(self)
    }
    fn ln(&self) -> Option<Self> {
        crate::interval::Ball::ln(self)
    }
    fn atan(&self) -> Option<Self> {
        Some(crate::interval::Ball::atan(self))
    }
    fn sin(&self) -> Option<Self> {
        Some(crate::interval::Ball::sin(self))
    }
    fn cos(&self) -> Option<Self> {
        Some(crate::interval::Ball::cos(self))
    }
    fn contains_zero(&self) -> bool {
        crate::interval::Ball::contains_zero(self)
    }
    fn excludes_zero(&self) -> bool {
        crate::interval::Ball::excludes_zero(self)
    }
    fn mid_f64(&self) -> f64 {
        crate::interval::Ball::mid_f64(self)
    }
    fn rad_f64(&self) -> f64 {
        crate::interval::Ball::rad_f64(self)
    }
    fn bounds_f64(&self) -> (f64, f64) {
        crate::interval::Ball::lo_hi_f64(self)
    }
    fn is_exact_zero(&self) -> bool {
        crate::interval::Ball::is_exact_zero(self)
    }
    fn input(x: f64, ctx: &u32) -> Option<Self> {
        crate::interval::Ball::from_f64(x).map(|b| b.with_prec(*ctx))
    }
}

/// Double-double balls ([`crate::interval::DdBall`]): arithmetic, powers and square roots;
/// no transcendental functions (`None`, so that a caller moves on to [`crate::interval::Ball`]).
impl Scalar for crate::interval::DdBall {
    type Ctx = ();
    fn from_f64(x: f64) -> Option<Self> {
        crate::interval::DdBall::point(x)
    }
    fn from_rational(q: &BigRational, _: &()) -> Option<Self> {
        crate::interval::DdBall::from_rational(q)
    }
    fn pi(_: &()) -> Option<Self> {
        Some(crate::interval::DdBall::pi())
    }
    fn add(&self, rhs: &Self) -> Option<Self> {
        crate::interval::DdBall::add(self, rhs)
    }
    fn sub(&self, rhs: &Self) -> Option<Self> {
        crate::interval::DdBall::sub(self, rhs)
    }
    fn mul(&self, rhs: &Self) -> Option<Self> {
        crate::interval::DdBall::mul(self, rhs)
    }
    fn div(&self, rhs: &Self) -> Option<Self> {
        crate::interval::DdBall::div(self, rhs)
    }
    fn neg(&self) -> Self {
        crate::interval::DdBall::neg(self)
    }
    fn powi(&self, n: i64) -> Option<Self> {
        crate::interval::DdBall::powi(self, n)
    }
    fn sqrt(&self) -> Option<Self> {
        crate::interval::DdBall::sqrt(self)
    }
    fn exp(&self) -> Option<Self> {
        None
    }
    fn ln(&self) -> Option<Self> {
        None
    }
    fn sin(&self) -> Option<Self> {
        None
    }
    fn cos(&self) -> Option<Self> {
        None
    }
    fn atan(&self) -> Option<Self> {
        None
    }
    fn contains_zero(&self) -> bool {
        let (lo, hi) = self.bounds();
        lo <= 0.0 && 0.0 <= hi
    }
    fn excludes_zero(&self) -> bool {
        let (lo, hi) = self.bounds();
        lo > 0.0 || hi < 0.0
    }
    fn mid_f64(&self) -> f64 {
        crate::interval::DdBall::mid_f64(self)
    }
    fn rad_f64(&self) -> f64 {
        let (lo, hi) = self.bounds();
        let m = self.mid_f64();
        (m - lo).next_up().max((hi - m).next_up())
    }
    fn bounds_f64(&self) -> (f64, f64) {
        self.bounds()
    }
    fn is_exact_zero(&self) -> bool {
        crate::interval::DdBall::is_exact_zero(self)
    }
    fn from_i64(n: i64, _: &()) -> Option<Self> {
        crate::interval::DdBall::from_rational(&BigRational::from_integer(BigInt::from(n)))
    }
}

#[cfg(test)]
mod ball_tests {
    use crate::interval::{Ball, Interval};
    use crate::jet::{Jet, series::JetSpace};

    /// Where f64 intervals lose everything to cancellation, balls at 256 bits still decide:
    /// d/dx of exp(x) - exp(x)*(1 + 1e-30) is -1e-30 exp(x) (precision widening, issue 9).
    #[test]
    fn issue9_balls_resolve_what_f64_intervals_cannot() {
        let space = JetSpace::new(1, 1).unwrap();
        let x = 0.75;
        let tiny = num_rational::BigRational::new(
            1.into(),
            num_traits::pow(num_bigint::BigInt::from(10), 30),
        );
        // f64 intervals: the difference encloses 0.
        let xi = Jet::variable(&space, 1, 0, Interval::point(x).unwrap());
        let e = xi.exp(&()).unwrap();
        let c = super::rational_interval(
            &(tiny.clone() + num_rational::BigRational::from_integer(1.into())),
        )
        .unwrap();
        let d = e.sub(&e.scale(&c).unwrap()).unwrap();
        assert!(d.partial(&[1], &()).unwrap().contains_zero());
        // Balls at 256 bits: certified nonzero, with the right sign.
        let prec = 256;
        let xb = Jet::variable(&space, 1, 0, Ball::from_f64(x).unwrap().with_prec(prec));
        let eb = xb.exp(&prec).unwrap();
        let cb = Ball::from_rational(
            &(tiny + num_rational::BigRational::from_integer(1.into())),
            prec,
        )
        .unwrap();
        let db = eb.sub(&eb.scale(&cb).unwrap()).unwrap();
        let v = db.partial(&[1], &prec).unwrap();
        assert!(v.excludes_zero() && v.mid_f64() < 0.0, "{v}");
        let want = -1e-30 * x.exp();
        assert!((v.mid_f64() - want).abs() < 1e-40);
    }
}
