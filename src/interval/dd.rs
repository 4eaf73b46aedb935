//! Balls with a double-double centre: about 106 bits for the arithmetic of algebraic
//! expressions, at a few dozen f64 operations each, between f64 intervals and the
//! multiprecision [`super::Ball`].
//!
//! Model. A [`DdBall`] is the set of reals `v` with `|v - (hi + lo)| <= rad`, where `hi`,
//! `lo` and `rad` are finite f64 and the sum `hi + lo` is exact (not rounded). The centre of
//! a result is computed with error-free transformations (two-sum; two-product by a fused
//! multiply-add) wherever they are exact, and every other rounding is paid for in the
//! radius: a rounded-to-nearest result `y` of one operation is within `u |y| + eta` of the
//! exact one (`u = 2^-53`; `eta = 2^-1074` covers the subnormal range, where the relative
//! bound fails). The radius itself is summed with every operation rounded up (one ulp
//! above the rounded result). Division and square root take their centre from a Newton
//! correction and their radius from the residual `x - q y` (or `x - s^2`), itself a ball
//! of this arithmetic: `|x/y - q| <= |x - q y| / |y|`, `|sqrt x - s| <= |x - s^2| / s`.
//!
//! Design decision: this is a plain error analysis, not the published tight bounds of
//! double-word arithmetic, so that each step can be checked by reading it; the radius is a
//! few u^2 relative to the operands rather than to the result, which is what the export
//! needs (a value left too wide by f64 intervals through cancellation). Transcendental
//! functions are not provided (`None`): those values go on to [`super::Ball`].
//!
//! **Invariants:** `hi`, `lo`, `rad` finite, `rad >= 0`; every operation returns a ball
//! containing the exact result for every choice of reals in its operands, or `None` (an
//! overflow, a divisor or root argument not certified away from 0 or below it).

use num_rational::BigRational;
use num_traits::{Signed, ToPrimitive, Zero};

/// The unit roundoff of f64: a rounded-to-nearest `y` is within `U |y|` of the exact
/// result (normal range).
const U: f64 = 1.0 / 9_007_199_254_740_992.0; // 2^-53
/// Covers one rounding in the subnormal range (where the error is at most 2^-1075).
const ETA: f64 = f64::from_bits(1); // 2^-1074

/// A ball `hi + lo ± rad` (see the module's doc).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DdBall {
    hi: f64,
    lo: f64,
    rad: f64,
}

/// `a + b = s + e` exactly (Knuth's two-sum; no condition on the operands but no overflow).
#[inline(always)]
pub(crate) fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    (s, (a - (s - bb)) + (b - bb))
}

/// `p = RN(a b)` and `e = RN(a b - p)` (one fused multiply-add): `a b = p + e` exactly
/// unless `e` falls in the subnormal range, and then within `ETA`.
#[inline(always)]
fn two_prod(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    (p, a.mul_add(b, -p))
}

/// An upper bound on `a + b` for nonnegative `a`, `b`.
#[inline(always)]
fn add_up(a: f64, b: f64) -> f64 {
    (a + b).next_up()
}

/// An upper bound on `a b` for nonnegative `a`, `b`.
#[inline(always)]
fn mul_up(a: f64, b: f64) -> f64 {
    (a * b).next_up()
}

/// An upper bound on the error of one rounding to nearest whose result is `y`.
#[inline(always)]
fn rounding(y: f64) -> f64 {
    add_up(mul_up(U, y.abs()), ETA)
}

/// An upper bound on the sum of nonnegative terms.
fn sum_up(terms: &[f64]) -> f64 {
    terms.iter().fold(0.0, |acc, &t| add_up(acc, t))
}

impl DdBall {
    /// The exact `x` (`None` if not finite).
    #[must_use]
    pub fn point(x: f64) -> Option<DdBall> {
        DdBall::new(x, 0.0, 0.0)
    }

    /// `hi + lo ± rad` if all are finite and `rad >= 0`, else `None`.
    fn new(hi: f64, lo: f64, rad: f64) -> Option<DdBall> {
        (hi.is_finite() && lo.is_finite() && rad.is_finite() && rad >= 0.0).then_some(DdBall {
            hi,
            lo,
            rad,
        })
    }

    /// The exact centre `hi + lo` as a normalised pair, with `rad` (the centre's two parts
    /// are summed exactly, so this only moves bits between them).
    fn normalised(hi: f64, lo: f64, rad: f64) -> Option<DdBall> {
        let (h, l) = two_sum(hi, lo);
        DdBall::new(h, l, rad)
    }

    /// An upper bound on `|hi + lo|`.
    fn magnitude(&self) -> f64 {
        add_up(self.hi.abs(), self.lo.abs())
    }

    /// The enclosing ball of `q` (exact rational arithmetic for the residuals).
    #[must_use]
    pub fn from_rational(q: &BigRational) -> Option<DdBall> {
        let hi = q.to_f64()?;
        let r1 = q - BigRational::from_float(hi)?;
        let lo = r1.to_f64()?;
        let r2 = r1 - BigRational::from_float(lo)?;
        // Twice any sane approximation of |r2| bounds it, and ETA what rounds to 0.
        let rad = add_up(mul_up(2.0, r2.abs().to_f64()?), ETA);
        let rad = if r2.is_zero() { 0.0 } else { rad };
        DdBall::new(hi, lo, rad)
    }

    /// Pi: its double-double digits (from memory: 0x400921FB54442D18 and
    /// 0x3CA1A62633145C07, the usual pair), within 1e-32, which the tests check against
    /// a 2048-bit [`super::Ball`].
    #[must_use]
    pub fn pi() -> DdBall {
        DdBall {
            hi: f64::from_bits(0x4009_21FB_5444_2D18),
            lo: f64::from_bits(0x3CA1_A626_3314_5C07),
            rad: 1e-32,
        }
    }

    /// Sum.
    #[must_use]
    pub fn add(&self, y: &DdBall) -> Option<DdBall> {
        let (s, e) = two_sum(self.hi, y.hi);
        let t1 = self.lo + y.lo;
        let t = t1 + e;
        let rad = sum_up(&[self.rad, y.rad, rounding(t1), rounding(t)]);
        DdBall::normalised(s, t, rad)
    }

    /// Negation (exact).
    #[must_use]
    pub fn neg(&self) -> DdBall {
        DdBall {
            hi: -self.hi,
            lo: -self.lo,
            rad: self.rad,
        }
    }

    /// Difference.
    #[must_use]
    pub fn sub(&self, y: &DdBall) -> Option<DdBall> {
        self.add(&y.neg())
    }

    /// Product. With centres `X = xh + xl`, `Y = yh + yl`: `XY = xh yh + xh yl + xl yh +
    /// xl yl`, the first exactly (two-product), the next two rounded, the last left to the
    /// radius; and `|x' y' - XY| <= |X| ry + |Y| rx + rx ry` for the operands' points.
    #[must_use]
    pub fn mul(&self, y: &DdBall) -> Option<DdBall> {
        let (p, e) = two_prod(self.hi, y.hi);
        let a = self.hi * y.lo;
        let b = self.lo * y.hi;
        let c = a + b;
        let t = c + e;
        let rad = sum_up(&[
            ETA,
            rounding(a),
            rounding(b),
            rounding(c),
            rounding(t),
            mul_up(self.lo.abs(), y.lo.abs()),
            mul_up(self.magnitude(), y.rad),
            mul_up(y.magnitude(), self.rad),
            mul_up(self.rad, y.rad),
        ]);
        DdBall::normalised(p, t, rad)
    }

    /// A lower bound on `|v|` over the ball (0 or below when it may contain 0).
    fn lower_magnitude(&self) -> f64 {
        // |hi + lo| >= |hi| - |lo|, and every point is within rad of the centre.
        ((self.hi.abs() - self.lo.abs()).next_down() - self.rad).next_down()
    }

    /// Quotient; `None` unless the divisor is certified away from 0. The centre is
    /// `q1 + q2`, `q1 = xh / yh` and `q2` its Newton correction from the residual; the
    /// radius `(|X - Q Y| + rx + |Q| ry) / min |y'|`, with `X - Q Y` a ball of this
    /// arithmetic.
    #[must_use]
    pub fn div(&self, y: &DdBall) -> Option<DdBall> {
        let m = y.lower_magnitude();
        if m.is_nan() || m <= 0.0 {
            return None;
        }
        let q1 = self.hi / y.hi;
        let (p, e) = two_prod(q1, y.hi);
        let r = (((self.hi - p) - e) + self.lo) - q1 * y.lo;
        let q2 = r / y.hi;
        let (qh, ql) = two_sum(q1, q2);
        let q = DdBall::new(qh, ql, 0.0)?;
        let residual = self.centre().sub(&q.mul(&y.centre())?)?;
        let numerator = sum_up(&[
            residual.magnitude(),
            residual.rad,
            self.rad,
            mul_up(q.magnitude(), y.rad),
        ]);
        DdBall::new(qh, ql, (numerator / m).next_up())
    }

    /// The centre alone (radius 0).
    fn centre(&self) -> DdBall {
        DdBall { rad: 0.0, ..*self }
    }

    /// Square root; `None` unless the ball is certified to be `>= 0` and its root away from
    /// 0 (the exact point 0 gives 0). The centre is `s1 + s2`, `s1 = sqrt(xh)` and `s2` its
    /// Newton correction; the radius `(|X - S^2| + rx) / S`, since
    /// `|sqrt x' - S| = |x' - S^2| / (sqrt x' + S)`.
    #[must_use]
    pub fn sqrt(&self) -> Option<DdBall> {
        if self.hi == 0.0 && self.lo == 0.0 && self.rad == 0.0 {
            return Some(*self);
        }
        if !(self.hi > 0.0 && self.lower_magnitude() >= 0.0) {
            return None;
        }
        let s1 = self.hi.sqrt();
        let (p, e) = two_prod(s1, s1);
        let r = ((self.hi - p) - e) + self.lo;
        let s2 = r / (2.0 * s1);
        let (sh, sl) = two_sum(s1, s2);
        let s = DdBall::new(sh, sl, 0.0)?;
        let smin = (sh - sl.abs()).next_down();
        if smin.is_nan() || smin <= 0.0 {
            return None;
        }
        let residual = self.centre().sub(&s.mul(&s)?)?;
        let numerator = sum_up(&[residual.magnitude(), residual.rad, self.rad]);
        DdBall::new(sh, sl, (numerator / smin).next_up())
    }

    /// `self^n`, by repeated squaring (`n < 0`: the reciprocal of `self^-n`).
    #[must_use]
    pub fn powi(&self, n: i64) -> Option<DdBall> {
        let mut k = n.unsigned_abs();
        let mut base = *self;
        let mut acc = DdBall::point(1.0)?;
        while k > 0 {
            if k & 1 == 1 {
                acc = acc.mul(&base)?;
            }
            k >>= 1;
            if k > 0 {
                base = base.mul(&base)?;
            }
        }
        if n < 0 {
            DdBall::point(1.0)?.div(&acc)
        } else {
            Some(acc)
        }
    }

    /// Certified: the ball is the single point 0.
    #[must_use]
    pub fn is_exact_zero(&self) -> bool {
        self.hi == 0.0 && self.lo == 0.0 && self.rad == 0.0
    }

    /// A point near the centre (`hi + lo` rounded; not certified).
    #[must_use]
    pub fn mid_f64(&self) -> f64 {
        self.hi + self.lo
    }

    /// Certified f64 bounds of the ball.
    #[must_use]
    pub fn bounds(&self) -> (f64, f64) {
        // Each step rounds to nearest and then one ulp outward, below (or above) its exact
        // value; the ball's ends are hi + (lo - rad) and hi + (lo + rad).
        let lo = (self.hi + (self.lo - self.rad).next_down()).next_down();
        let hi = (self.hi + (self.lo + self.rad).next_up()).next_up();
        (lo, hi)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::interval::Ball;
    use crate::jet::Scalar;
    use num_bigint::BigInt;
    use proptest::prelude::*;

    /// The precision of the reference balls: enough for every bit of the operands below
    /// (from 2^-1074 to 2^500 apart), so that the reference is far narrower than 106 bits.
    const REF: u32 = 2048;

    /// The reference ball of the same computation lies inside, at the double-double's own
    /// resolution: every point of `b` is within `rad` of the exact centre `hi + lo` (both
    /// contain the exact value, and the reference is far narrower, so this is what
    /// soundness looks like). Also the f64 bounds contain `b`'s.
    fn inside(d: &DdBall, b: &Ball) -> bool {
        let centre = Ball::input(d.hi, &REF)
            .unwrap()
            .add(&Ball::input(d.lo, &REF).unwrap())
            .unwrap();
        let (off_lo, off_hi) = b.sub(&centre).unwrap().bounds_f64();
        let (dl, dh) = d.bounds();
        let (bl, bh) = b.bounds_f64();
        -d.rad <= off_lo && off_hi <= d.rad && dl <= bl && bh <= dh
    }

    /// Operands: exact f64 values (small, large, tiny, cancelling), and balls made by
    /// adding a rational's enclosure (so `lo` and `rad` are not 0).
    fn value() -> impl Strategy<Value = f64> {
        prop_oneof![
            Just(0.0),
            Just(1.0),
            Just(-1.0),
            -10.0..10.0f64,
            -1e-150..1e-150f64,
            -1e150..1e150f64,
            -1e-310..1e-310f64,
        ]
    }

    fn operand() -> impl Strategy<Value = (f64, i64, i64)> {
        (value(), -50i64..50, 1i64..1000)
    }

    fn both((x, n, d): (f64, i64, i64)) -> (DdBall, Ball) {
        let q = BigRational::new(n.into(), d.into());
        let dd = DdBall::point(x)
            .unwrap()
            .add(&DdBall::from_rational(&q).unwrap())
            .unwrap();
        let b = Ball::input(x, &REF)
            .unwrap()
            .add(&Ball::from_rational(&q, REF).unwrap())
            .unwrap();
        (dd, b)
    }

    #[test]
    fn pi_and_rationals_enclose_their_values() {
        assert!(inside(&DdBall::pi(), &Ball::pi(REF)));
        for (n, d) in [(1, 3), (-5, 7), (2, 1), (1, 10), (123_456_789, 1000)] {
            let q = BigRational::new(BigInt::from(n), BigInt::from(d));
            let dd = DdBall::from_rational(&q).unwrap();
            assert!(
                inside(&dd, &Ball::from_rational(&q, REF).unwrap()),
                "{n}/{d}"
            );
            assert!(dd.rad < 1e-30 * (n as f64 / d as f64).abs(), "{dd:?}");
        }
        // Where f64 intervals lose everything, 106 bits keep most digits: (1 + 1e-20) - 1.
        let one = DdBall::point(1.0).unwrap();
        let tiny =
            DdBall::from_rational(&BigRational::new(1.into(), BigInt::from(10).pow(20))).unwrap();
        let d = one.add(&tiny).unwrap().sub(&one).unwrap();
        let (lo, hi) = d.bounds();
        assert!(lo > 0.99999e-20 && hi < 1.00001e-20, "{lo:e} {hi:e}");
    }

    proptest! {
        /// Every operation encloses what the reference balls compute from the same operands.
        #[test]
        fn operations_enclose_the_reference_balls(a in operand(), b in operand(), n in -7i64..=7) {
            let ((x, xb), (y, yb)) = (both(a), both(b));
            let check = |d: Option<DdBall>, b: Option<Ball>, what: &str| -> Result<(), TestCaseError> {
                if let (Some(d), Some(b)) = (d, b) {
                    prop_assert!(inside(&d, &b), "{}: {:?} vs {:?}", what, d.bounds(), b.bounds_f64());
                }
                Ok(())
            };
            check(x.add(&y), xb.add(&yb), "add")?;
            check(x.sub(&y), xb.sub(&yb), "sub")?;
            check(x.mul(&y), xb.mul(&yb), "mul")?;
            check(x.div(&y), xb.div(&yb), "div")?;
            check(x.sqrt(), xb.sqrt(), "sqrt")?;
            check(x.powi(n), Scalar::powi(&xb, n), "powi")?;
            // A chain with cancellation: (x + y) * (x - y) - (x^2 - y^2) is 0.
            let c = x.add(&y).and_then(|s| s.mul(&x.sub(&y)?))
                .and_then(|p| p.sub(&x.mul(&x)?.sub(&y.mul(&y)?)?));
            if let Some(c) = c {
                let (lo, hi) = c.bounds();
                prop_assert!(lo <= 0.0 && 0.0 <= hi, "{:?}", c);
            }
        }

        /// Division and square root are as tight as 106 bits allow on exact operands.
        #[test]
        fn quotients_and_roots_are_tight(x in 0.01..100.0f64, y in 0.01..100.0f64) {
            let (dx, dy) = (DdBall::point(x).unwrap(), DdBall::point(y).unwrap());
            let q = dx.div(&dy).unwrap();
            prop_assert!(q.rad <= 1e-30 * q.hi.abs(), "{:?}", q);
            let s = dx.sqrt().unwrap();
            prop_assert!(s.rad <= 1e-30 * s.hi, "{:?}", s);
            prop_assert!(inside(&q, &Ball::input(x, &REF).unwrap().div(&Ball::input(y, &REF).unwrap()).unwrap()));
        }
    }
}
