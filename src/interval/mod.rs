//! Interval arithmetic with outward rounding, the ground for certified nonzero witnesses.
//!
//! The zero tester evaluates an expression at a sample point over intervals. If the
//! resulting interval excludes 0, the expression is certified nonzero at that point.
//! That certificate is only as good as one rule: every operation returns an interval that
//! contains the exact real result for every real value in its operands, never a narrower
//! one, so round-off can never make a true zero look nonzero.
//!
//! Key design decision: fallible operations return `Option`, and `None` means "cannot
//! evaluate here" (overflow to a non-finite bound, division by an interval containing 0, a
//! logarithm or square root outside its domain). Intervals are therefore always bounded and
//! finite, there is no "entire" interval or NaN state to propagate, and the caller (which
//! can pick another sample point) decides what an unevaluable point means. Operations that
//! cannot fail on finite input (negation, sin, cos, atan, abs) return the interval directly.
//!
//! Rounding model. The code assumes the default IEEE 754 environment (round to nearest).
//! `+ - * /` and `sqrt` are correctly rounded, so a computed bound is within half an ulp of
//! the exact one and one step of `next_down`/`next_up` encloses it. The transcendental
//! functions come from the platform libm, which is not correctly rounded: this module
//! assumes the platform libm is accurate to within 4 ulp for exp, ln, sin, cos and atan
//! (glibc documents at most a few ulp for these) and widens each such bound by
//! [`LIBM_ULPS`] steps of `next_down`/`next_up`. Stepping by ulps of the result (rather than
//! by a margin relative to the argument) is what libm error bounds are stated in, and it
//! stays meaningful for results near 0, down to the subnormals.
//!
//! Enclosures are not optimal: sin and cos use a mean-value form and complex products
//! ignore dependency between factors. Looser intervals only cost certificates, never
//! soundness.

use std::fmt;
use std::ops::Neg;

pub mod ball;
pub mod dd;

pub use ball::Ball;
pub use dd::DdBall;

/// Steps of `next_down`/`next_up` by which a libm result is widened on each side.
///
/// Sound as long as the platform libm is accurate to within this many ulp for exp, ln,
/// sin, cos and atan.
pub const LIBM_ULPS: u32 = 4;

/// Beyond this magnitude, sin and cos of an interval are just [-1, 1].
///
/// Keeps the enclosure independent of how well libm reduces huge arguments.
pub(crate) const TRIG_MAX_ARG: f64 = 1e6;

/// An interval wider than this (a safe over-estimate of 2π) covers a full period.
pub(crate) const TRIG_FULL_PERIOD: f64 = 6.3;

/// One ulp below: a lower bound on the exact result of a correctly rounded operation.
#[inline]
fn down(x: f64) -> f64 {
    x.next_down()
}

/// One ulp above: an upper bound on the exact result of a correctly rounded operation.
#[inline]
fn up(x: f64) -> f64 {
    x.next_up()
}

/// `n` ulp steps below `x`.
fn widen_down(x: f64, n: u32) -> f64 {
    (0..n).fold(x, |y, _| y.next_down())
}

/// `n` ulp steps above `x`.
fn widen_up(x: f64, n: u32) -> f64 {
    (0..n).fold(x, |y, _| y.next_up())
}

/// Smallest and largest of the four endpoint products or quotients (never NaN: the
/// operands are finite and a divisor never contains 0).
fn min_max(v: [f64; 4]) -> (f64, f64) {
    let lo = v.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    (lo, hi)
}

/// Lower and upper bounds on `a^n` for `a >= 0` and `n >= 1`, by repeated squaring with
/// every product rounded in the direction of its bound.
///
/// All factors are nonnegative, so products of lower bounds stay lower bounds. The upper
/// bound may come out infinite; the caller rejects it.
fn pow_bounds(a: f64, n: u64) -> (f64, f64) {
    debug_assert!(a >= 0.0 && n >= 1);
    if a == 0.0 || a == 1.0 {
        // Exact, and keeps 1^n from drifting away by an ulp per squaring.
        return (a, a);
    }
    pow_bounds_by_squaring(a, n)
}

/// The repeated squaring of [`pow_bounds`] without its exact cases (0 and 1): also the
/// export program's lanes' (which select those cases afterwards, without a branch).
#[inline(always)]
pub(crate) fn pow_bounds_by_squaring(a: f64, n: u64) -> (f64, f64) {
    let (mut base_lo, mut base_hi) = (a, a);
    let mut acc: Option<(f64, f64)> = None;
    let mut k = n;
    loop {
        if k & 1 == 1 {
            acc = Some(match acc {
                None => (base_lo, base_hi),
                Some((lo, hi)) => (down(lo * base_lo).max(0.0), up(hi * base_hi)),
            });
        }
        k >>= 1;
        if k == 0 {
            break;
        }
        base_lo = down(base_lo * base_lo).max(0.0);
        base_hi = up(base_hi * base_hi);
    }
    acc.unwrap_or((1.0, 1.0))
}

/// Closed real interval `[lo, hi]` with finite bounds and `lo <= hi`.
///
/// Stands for an unknown real number known to lie in it. Every operation returns an
/// interval containing the exact result for every choice of reals in its operands.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Interval {
    lo: f64,
    hi: f64,
}

#[allow(
    clippy::should_implement_trait,
    reason = "arithmetic returns Option (None: cannot evaluate here), which std::ops cannot express"
)]
impl Interval {
    /// The point interval `[0, 0]`.
    pub const ZERO: Interval = Interval { lo: 0.0, hi: 0.0 };

    /// The point interval `[1, 1]`.
    pub const ONE: Interval = Interval { lo: 1.0, hi: 1.0 };

    /// `[lo, hi]`, or `None` unless both bounds are finite and `lo <= hi`.
    #[inline]
    pub fn new(lo: f64, hi: f64) -> Option<Interval> {
        (lo.is_finite() && hi.is_finite() && lo <= hi).then_some(Interval { lo, hi })
    }

    /// The point interval `[x, x]` for an exactly known `x`; `None` if `x` is not finite.
    pub fn point(x: f64) -> Option<Interval> {
        Interval::new(x, x)
    }

    /// An interval containing every real whose nearest `f64` is `x`, i.e. one ulp either
    /// side. Use it for a value that was rounded once, such as a decimal literal.
    pub fn around(x: f64) -> Option<Interval> {
        Interval::new(down(x), up(x))
    }

    /// Lower bound.
    pub fn lo(self) -> f64 {
        self.lo
    }

    /// Upper bound.
    pub fn hi(self) -> f64 {
        self.hi
    }

    /// A point inside the interval near its centre (inside, but not a certified centre).
    pub fn mid(self) -> f64 {
        if self.lo == self.hi {
            return self.lo;
        }
        // Halving first cannot overflow; the clamp guards against rounding at the ends.
        (self.lo / 2.0 + self.hi / 2.0).clamp(self.lo, self.hi)
    }

    /// An upper bound on the distance from [`Interval::mid`] to either bound.
    pub fn rad(self) -> f64 {
        if self.lo == self.hi {
            return 0.0;
        }
        let m = self.mid();
        up(m - self.lo).max(up(self.hi - m))
    }

    /// An upper bound on `hi - lo` (infinite only for intervals wider than `f64::MAX`).
    pub fn width(self) -> f64 {
        if self.lo == self.hi {
            return 0.0;
        }
        up(self.hi - self.lo)
    }

    /// The largest absolute value in the interval.
    pub fn mag(self) -> f64 {
        self.lo.abs().max(self.hi.abs())
    }

    /// The smallest absolute value in the interval (0 if it contains 0).
    pub fn mig(self) -> f64 {
        if self.contains_zero() {
            0.0
        } else {
            self.lo.abs().min(self.hi.abs())
        }
    }

    /// Whether `x` lies in the interval.
    pub fn contains(self, x: f64) -> bool {
        self.lo <= x && x <= self.hi
    }

    /// Whether 0 lies in the interval.
    pub fn contains_zero(self) -> bool {
        self.lo <= 0.0 && 0.0 <= self.hi
    }

    /// Whether every point of the interval is strictly nonzero: a certificate that the
    /// enclosed value is nonzero.
    pub fn excludes_zero(self) -> bool {
        self.lo > 0.0 || self.hi < 0.0
    }

    /// Sum; `None` on overflow.
    #[inline]
    pub fn add(self, rhs: Interval) -> Option<Interval> {
        // Adding the exact 0 is exact (and keeps zeros exact, which sparse jets rely on).
        if rhs.is_zero_point() {
            return Some(self);
        }
        if self.is_zero_point() {
            return Some(rhs);
        }
        // A point plus its negative is exactly 0.
        if self.lo == self.hi && rhs.lo == rhs.hi && self.lo == -rhs.lo {
            return Some(Interval::ZERO);
        }
        Interval::new(down(self.lo + rhs.lo), up(self.hi + rhs.hi))
    }

    /// True for the exact point 0.
    #[inline]
    fn is_zero_point(self) -> bool {
        self.lo == 0.0 && self.hi == 0.0
    }

    /// Difference; `None` on overflow.
    #[inline]
    pub fn sub(self, rhs: Interval) -> Option<Interval> {
        if rhs.is_zero_point() {
            return Some(self);
        }
        // A point minus itself is exactly 0 (a phase t - x at t = x, say).
        if self.lo == self.hi && rhs.lo == rhs.hi && self.lo == rhs.lo {
            return Some(Interval::ZERO);
        }
        Interval::new(down(self.lo - rhs.hi), up(self.hi - rhs.lo))
    }

    /// Product; `None` on overflow.
    #[inline]
    pub fn mul(self, rhs: Interval) -> Option<Interval> {
        // A product with the exact 0 is the exact 0.
        if self.is_zero_point() || rhs.is_zero_point() {
            return Some(Interval::ZERO);
        }
        let (lo, hi) = min_max([
            self.lo * rhs.lo,
            self.lo * rhs.hi,
            self.hi * rhs.lo,
            self.hi * rhs.hi,
        ]);
        Interval::new(down(lo), up(hi))
    }

    /// Quotient; `None` if the divisor contains 0 or on overflow. The exact 0 divided by
    /// anything else is the exact 0.
    pub fn div(self, rhs: Interval) -> Option<Interval> {
        if rhs.contains_zero() {
            return None;
        }
        if self.is_zero_point() {
            return Some(Interval::ZERO);
        }
        let (lo, hi) = min_max([
            self.lo / rhs.lo,
            self.lo / rhs.hi,
            self.hi / rhs.lo,
            self.hi / rhs.hi,
        ]);
        Interval::new(down(lo), up(hi))
    }

    /// `1 / self`; `None` if the interval contains 0 or on overflow.
    pub fn recip(self) -> Option<Interval> {
        Interval::ONE.div(self)
    }

    /// Product with an exactly known `c`; `None` if `c` is not finite or on overflow.
    pub fn scale(self, c: f64) -> Option<Interval> {
        self.mul(Interval::point(c)?)
    }

    /// Absolute value (exact).
    pub fn abs(self) -> Interval {
        if self.lo >= 0.0 {
            self
        } else if self.hi <= 0.0 {
            -self
        } else {
            Interval {
                lo: 0.0,
                hi: self.mag(),
            }
        }
    }

    /// Integer power by repeated squaring; `self^0` is `[1, 1]`.
    ///
    /// Even powers of an interval containing 0 have lower bound exactly 0, not the
    /// (possibly negative) product of the bounds. Negative powers are reciprocals, so they
    /// give `None` if the interval contains 0. `None` on overflow.
    pub fn powi(self, n: i64) -> Option<Interval> {
        if n == 0 {
            return Some(Interval::ONE);
        }
        let k = n.unsigned_abs();
        let positive = if k % 2 == 1 {
            // Odd powers are increasing, and (-a)^k = -(a^k).
            let lo = if self.lo >= 0.0 {
                pow_bounds(self.lo, k).0
            } else {
                -pow_bounds(-self.lo, k).1
            };
            let hi = if self.hi >= 0.0 {
                pow_bounds(self.hi, k).1
            } else {
                -pow_bounds(-self.hi, k).0
            };
            Interval::new(lo, hi)?
        } else if self.lo >= 0.0 {
            Interval::new(pow_bounds(self.lo, k).0, pow_bounds(self.hi, k).1)?
        } else if self.hi <= 0.0 {
            Interval::new(pow_bounds(-self.hi, k).0, pow_bounds(-self.lo, k).1)?
        } else {
            Interval::new(0.0, pow_bounds(self.mag(), k).1)?
        };
        if n > 0 {
            Some(positive)
        } else {
            positive.recip()
        }
    }

    /// Square root; `None` unless `lo >= 0`.
    pub fn sqrt(self) -> Option<Interval> {
        if self.lo < 0.0 {
            return None;
        }
        Interval::new(down(self.lo.sqrt()).max(0.0), up(self.hi.sqrt()))
    }

    /// Exponential (increasing), exactly 1 at the exact point 0; `None` on overflow.
    pub fn exp(self) -> Option<Interval> {
        if self.is_zero_point() {
            return Some(Interval::ONE);
        }
        let lo = widen_down(self.lo.exp(), LIBM_ULPS).max(0.0);
        let hi = widen_up(self.hi.exp(), LIBM_ULPS);
        Interval::new(lo, hi)
    }

    /// Natural logarithm (increasing); `None` unless `lo > 0`.
    pub fn ln(self) -> Option<Interval> {
        if self.lo <= 0.0 {
            return None;
        }
        let lo = widen_down(self.lo.ln(), LIBM_ULPS);
        let hi = widen_up(self.hi.ln(), LIBM_ULPS);
        Interval::new(lo, hi)
    }

    /// Real power `self^y = exp(y ln self)`; `None` unless `lo > 0`, or on overflow.
    pub fn pow(self, y: Interval) -> Option<Interval> {
        y.mul(self.ln()?)?.exp()
    }

    /// Arctangent (increasing, values in (-π/2, π/2)).
    pub fn atan(self) -> Interval {
        Interval {
            lo: widen_down(self.lo.atan(), LIBM_ULPS),
            hi: widen_up(self.hi.atan(), LIBM_ULPS),
        }
    }

    /// Sine, by the mean-value form `sin(m) ± r` intersected with [-1, 1], where `m` is a
    /// point inside and `r` bounds the half-width; [-1, 1] if wider than 2π or if
    /// `|x| > 1e6`.
    ///
    /// The exact point 0 gives the exact 0 (sin 0 = 0), so a phase that vanishes exactly
    /// keeps an exact value instead of a few ulp of width around it.
    pub fn sin(self) -> Interval {
        if self.is_zero_point() {
            return Interval::ZERO;
        }
        self.mean_value_unit(f64::sin)
    }

    /// Cosine, by the mean-value form, like [`Interval::sin`]; exactly 1 at the exact point
    /// 0.
    pub fn cos(self) -> Interval {
        if self.is_zero_point() {
            return Interval::ONE;
        }
        self.mean_value_unit(f64::cos)
    }

    /// Enclosure of `f` over the interval for `f` with values in [-1, 1] and `|f'| <= 1`
    /// (sin and cos): `f(m) ± r`, intersected with [-1, 1], where `m` is a point inside and
    /// `r` bounds the distance from `m` to the ends.
    ///
    /// Wide intervals and huge arguments just give [-1, 1]; that is always true.
    fn mean_value_unit(self, f: fn(f64) -> f64) -> Interval {
        let unit = Interval { lo: -1.0, hi: 1.0 };
        if self.mag() > TRIG_MAX_ARG || self.hi - self.lo > TRIG_FULL_PERIOD {
            return unit;
        }
        let fm = f(self.mid());
        let r = self.rad();
        // libm keeps sin and cos in [-1, 1], so lo <= fm <= hi survives the clamps.
        let lo = down(widen_down(fm, LIBM_ULPS) - r).max(-1.0);
        let hi = up(widen_up(fm, LIBM_ULPS) + r).min(1.0);
        Interval { lo, hi }
    }
}

impl Neg for Interval {
    type Output = Interval;

    /// Negation (exact).
    fn neg(self) -> Interval {
        Interval {
            lo: -self.hi,
            hi: -self.lo,
        }
    }
}

impl fmt::Display for Interval {
    /// `[lo, hi]`, each bound printed exactly (shortest round-trip form).
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        // Debug form of f64: round-trip exact, and scientific for very small or large.
        write!(f, "[{:?}, {:?}]", self.lo, self.hi)
    }
}

/// Rectangular complex interval `re + i*im`: the set of complex numbers whose real and
/// imaginary parts lie in `re` and `im`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CInterval {
    /// Real part.
    pub re: Interval,
    /// Imaginary part.
    pub im: Interval,
}

#[allow(
    clippy::should_implement_trait,
    reason = "arithmetic returns Option (None: cannot evaluate here), which std::ops cannot express"
)]
impl CInterval {
    /// The point `0`.
    pub const ZERO: CInterval = CInterval {
        re: Interval::ZERO,
        im: Interval::ZERO,
    };

    /// The point `1`.
    pub const ONE: CInterval = CInterval {
        re: Interval::ONE,
        im: Interval::ZERO,
    };

    /// `re + i*im`.
    pub fn new(re: Interval, im: Interval) -> CInterval {
        CInterval { re, im }
    }

    /// A real interval as a complex one with imaginary part exactly 0.
    pub fn from_real(re: Interval) -> CInterval {
        CInterval {
            re,
            im: Interval::ZERO,
        }
    }

    /// The point `re + i*im`; `None` if either part is not finite.
    pub fn point(re: f64, im: f64) -> Option<CInterval> {
        Some(CInterval {
            re: Interval::point(re)?,
            im: Interval::point(im)?,
        })
    }

    /// Whether 0 lies in the rectangle.
    pub fn contains_zero(self) -> bool {
        self.re.contains_zero() && self.im.contains_zero()
    }

    /// Whether every point of the rectangle is nonzero: a certificate that the enclosed
    /// value is nonzero.
    pub fn excludes_zero(self) -> bool {
        !self.contains_zero()
    }

    /// A certified lower bound on `|z|` over the rectangle (0 if it contains 0).
    pub fn abs_lower_bound(self) -> f64 {
        let (dre, dim) = (self.re.mig(), self.im.mig());
        // Each step rounds down, so the result stays below the exact distance; an overflow
        // to infinity rounds down to f64::MAX, still a valid lower bound.
        let sum = down(down(dre * dre).max(0.0) + down(dim * dim).max(0.0)).max(0.0);
        down(sum.sqrt()).max(0.0)
    }

    /// An enclosure of `|z|^2 = re^2 + im^2`; `None` on overflow.
    pub fn norm_sqr(self) -> Option<Interval> {
        self.re.powi(2)?.add(self.im.powi(2)?)
    }

    /// Complex conjugate (exact).
    pub fn conj(self) -> CInterval {
        CInterval {
            re: self.re,
            im: -self.im,
        }
    }

    /// Sum; `None` on overflow.
    pub fn add(self, rhs: CInterval) -> Option<CInterval> {
        Some(CInterval {
            re: self.re.add(rhs.re)?,
            im: self.im.add(rhs.im)?,
        })
    }

    /// Difference; `None` on overflow.
    pub fn sub(self, rhs: CInterval) -> Option<CInterval> {
        Some(CInterval {
            re: self.re.sub(rhs.re)?,
            im: self.im.sub(rhs.im)?,
        })
    }

    /// Product `(ac - bd) + i(ad + bc)`; `None` on overflow.
    pub fn mul(self, rhs: CInterval) -> Option<CInterval> {
        let (a, b, c, d) = (self.re, self.im, rhs.re, rhs.im);
        Some(CInterval {
            re: a.mul(c)?.sub(b.mul(d)?)?,
            im: a.mul(d)?.add(b.mul(c)?)?,
        })
    }

    /// Quotient `z * conj(w) / |w|^2`; `None` unless the enclosure of `|w|^2` is strictly
    /// positive, or on overflow.
    pub fn div(self, rhs: CInterval) -> Option<CInterval> {
        let n = rhs.norm_sqr()?;
        if n.lo <= 0.0 {
            return None;
        }
        let (a, b, c, d) = (self.re, self.im, rhs.re, rhs.im);
        Some(CInterval {
            re: a.mul(c)?.add(b.mul(d)?)?.div(n)?,
            im: b.mul(c)?.sub(a.mul(d)?)?.div(n)?,
        })
    }

    /// Product with an exactly known real `c`; `None` if `c` is not finite or on overflow.
    pub fn scale(self, c: f64) -> Option<CInterval> {
        Some(CInterval {
            re: self.re.scale(c)?,
            im: self.im.scale(c)?,
        })
    }

    /// `z^2 = (a^2 - b^2) + i 2ab`, tighter than `z * z` because `a^2` and `b^2` are
    /// squares rather than products of independent factors.
    fn square(self) -> Option<CInterval> {
        Some(CInterval {
            re: self.re.powi(2)?.sub(self.im.powi(2)?)?,
            im: self.re.mul(self.im)?.scale(2.0)?,
        })
    }

    /// Integer power by repeated squaring; `z^0` is `1`. Negative powers are reciprocals
    /// (`None` if that division is refused). `None` on overflow.
    pub fn powi(self, n: i64) -> Option<CInterval> {
        if n == 0 {
            return Some(CInterval::ONE);
        }
        let mut base = self;
        let mut acc: Option<CInterval> = None;
        let mut k = n.unsigned_abs();
        loop {
            if k & 1 == 1 {
                acc = Some(match acc {
                    None => base,
                    Some(a) => a.mul(base)?,
                });
            }
            k >>= 1;
            if k == 0 {
                break;
            }
            base = base.square()?;
        }
        let positive = acc?;
        if n > 0 {
            Some(positive)
        } else {
            CInterval::ONE.div(positive)
        }
    }

    /// Exponential `e^re (cos im + i sin im)`; `None` on overflow.
    pub fn exp(self) -> Option<CInterval> {
        let e = self.re.exp()?;
        Some(CInterval {
            re: e.mul(self.im.cos())?,
            im: e.mul(self.im.sin())?,
        })
    }

    /// Principal arctangent; `None` unless `|im| <= 1/2` everywhere in the box.
    ///
    /// Certification. On the strip `|Im z| <= 1/2` the principal `atan` is analytic (its
    /// branch cuts are the imaginary half-lines `|Im z| >= 1`, `Re z = 0`) with
    /// `|atan'(z)| = 1/|1 + z^2|`; for `z = x + iy`, `Re(1 + z^2) = 1 + x^2 - y^2 >= 3/4`, so
    /// `|atan'| <= 4/3` there. Along the vertical segment from `x` to `x + iy` (inside the strip)
    /// `|atan(x + iy) - atan(x)| <= (4/3)|y|`, and `atan(x)` is real: the real part lies in
    /// `atan(re) ± (4/3) max|y|` and the imaginary part in `± (4/3) max|y|`. A real box
    /// (`im` exactly 0) gives the real enclosure with an exact zero imaginary part.
    pub fn atan(self) -> Option<CInterval> {
        let re = self.re.atan();
        if self.im == Interval::ZERO {
            return Some(CInterval::from_real(re));
        }
        let m = self.im.mag();
        if m.is_nan() || m > 0.5 {
            return None;
        }
        // (4/3) m, rounded up.
        let w = Interval::point(m)?
            .mul(Interval::point(4.0)?.div(Interval::point(3.0)?)?)?
            .hi();
        let spread = Interval::new(-w, w)?;
        Some(CInterval {
            re: re.add(spread)?,
            im: spread,
        })
    }

    /// Principal logarithm `ln|z| + i atan(im/re)`; `None` unless the real part is strictly
    /// positive (so the branch cut is far away and `arg z = atan(im/re)`).
    pub fn log(self) -> Option<CInterval> {
        if self.re.lo <= 0.0 {
            return None;
        }
        Some(CInterval {
            re: self.norm_sqr()?.ln()?.scale(0.5)?,
            im: self.im.div(self.re)?.atan(),
        })
    }
}

impl Neg for CInterval {
    type Output = CInterval;

    /// Negation (exact).
    fn neg(self) -> CInterval {
        CInterval {
            re: -self.re,
            im: -self.im,
        }
    }
}

impl fmt::Display for CInterval {
    /// `[re.lo, re.hi] + i[im.lo, im.hi]`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} + i{}", self.re, self.im)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use num_bigint::BigInt;
    use num_rational::BigRational;
    use proptest::prelude::*;

    // ---- helpers ----------------------------------------------------------------------

    fn iv(lo: f64, hi: f64) -> Interval {
        Interval::new(lo, hi).expect("test interval")
    }

    fn pt(x: f64) -> Interval {
        Interval::point(x).expect("test point")
    }

    fn cpt(re: f64, im: f64) -> CInterval {
        CInterval::point(re, im).expect("test point")
    }

    /// The exact rational value of a finite f64.
    fn q(x: f64) -> BigRational {
        BigRational::from_float(x).expect("finite")
    }

    /// Whether the exact rational `v` lies in the interval.
    fn holds(i: Interval, v: &BigRational) -> bool {
        q(i.lo()) <= *v && *v <= q(i.hi())
    }

    /// Exact `x^n` in rationals.
    fn q_pow(x: &BigRational, n: i64) -> BigRational {
        let mut acc = BigRational::from_integer(BigInt::from(1));
        for _ in 0..n.unsigned_abs() {
            acc *= x;
        }
        if n < 0 { acc.recip() } else { acc }
    }

    /// Exact complex product in rationals.
    fn q_cmul(
        a: &(BigRational, BigRational),
        b: &(BigRational, BigRational),
    ) -> (BigRational, BigRational) {
        (&a.0 * &b.0 - &a.1 * &b.1, &a.0 * &b.1 + &a.1 * &b.0)
    }

    fn cholds(z: CInterval, v: &(BigRational, BigRational)) -> bool {
        holds(z.re, &v.0) && holds(z.im, &v.1)
    }

    /// An interval with lower end in `[min, max)`, of zero, very narrow, narrow or
    /// unit-relative width, and a point inside it, often exactly at an end.
    fn with_point(min: f64, max: f64) -> impl Strategy<Value = (Interval, f64)> {
        let width = prop_oneof![Just(0.0), 0.0..1e-12, 0.0..1e-6, 0.0..1.0];
        let t = prop_oneof![Just(0.0), Just(1.0), 0.0..1.0];
        (min..max, width, t).prop_map(|(lo, w, t)| {
            let hi = lo + w * lo.abs().max(1.0);
            let x = (lo + t * (hi - lo)).clamp(lo, hi);
            (iv(lo, hi), x)
        })
    }

    fn complex_with_point(
        re: (f64, f64),
        im: (f64, f64),
    ) -> impl Strategy<Value = (CInterval, (f64, f64))> {
        (with_point(re.0, re.1), with_point(im.0, im.1))
            .prop_map(|((a, x), (b, y))| (CInterval::new(a, b), (x, y)))
    }

    // ---- construction and accessors ---------------------------------------------------

    #[test]
    fn new_rejects_reversed_and_non_finite_bounds() {
        assert_eq!(Interval::new(2.0, 1.0), None);
        assert_eq!(Interval::new(f64::NAN, 1.0), None);
        assert_eq!(Interval::new(0.0, f64::INFINITY), None);
        assert_eq!(Interval::point(f64::NEG_INFINITY), None);
        assert_eq!(CInterval::point(1.0, f64::NAN), None);
        assert_eq!(Interval::around(f64::MAX), None);
        assert_eq!(
            Interval::new(1.0, 2.0).map(|i| (i.lo(), i.hi())),
            Some((1.0, 2.0))
        );
    }

    #[test]
    fn accessors_describe_the_interval() {
        let i = iv(-1.0, 3.0);
        assert_eq!(i.mid(), 1.0);
        assert!(i.rad() >= 2.0 && i.rad() < 2.0 + 1e-15);
        assert!(i.width() >= 4.0);
        assert_eq!((i.mag(), i.mig()), (3.0, 0.0));
        assert_eq!(iv(-5.0, -2.0).mig(), 2.0);
        assert!(i.contains_zero() && !i.excludes_zero());
        assert!(iv(1e-300, 1.0).excludes_zero());
        assert!(!iv(0.0, 1.0).excludes_zero());
        assert_eq!((pt(7.0).rad(), pt(7.0).width()), (0.0, 0.0));
        let huge = iv(-f64::MAX, f64::MAX);
        assert!(huge.contains(huge.mid()));
        assert_eq!(huge.width(), f64::INFINITY);
    }

    #[test]
    fn around_encloses_the_decimal_it_was_rounded_from() {
        // The real 1/10 is not an f64; around(0.1) must still contain it.
        let tenth = BigRational::new(BigInt::from(1), BigInt::from(10));
        assert!(holds(Interval::around(0.1).unwrap(), &tenth));
    }

    #[test]
    fn display_prints_exact_bounds() {
        assert_eq!(iv(-1.0, 0.5).to_string(), "[-1.0, 0.5]");
        assert_eq!(pt(1e-300).to_string(), "[1e-300, 1e-300]");
        assert_eq!(
            CInterval::new(pt(1.0), iv(-2.0, 2.0)).to_string(),
            "[1.0, 1.0] + i[-2.0, 2.0]"
        );
    }

    // ---- arithmetic -------------------------------------------------------------------

    #[test]
    fn add_widens_an_inexact_sum_by_one_ulp() {
        let s = pt(0.1).add(pt(0.2)).unwrap();
        assert!(holds(s, &(q(0.1) + q(0.2))));
        assert_eq!(s.lo(), (0.1f64 + 0.2).next_down());
        assert_eq!(s.hi(), (0.1f64 + 0.2).next_up());
    }

    #[test]
    fn cancellation_of_a_true_zero_contains_zero_with_tiny_width() {
        // 3 * (1/10) - 3/10 is exactly 0 in the reals; the enclosures of 1/10 and 3/10
        // come from correctly rounded divisions.
        let tenth = pt(1.0).div(pt(10.0)).unwrap();
        let three_tenths = pt(3.0).div(pt(10.0)).unwrap();
        let d = tenth.scale(3.0).unwrap().sub(three_tenths).unwrap();
        assert!(d.contains_zero(), "{d}");
        assert!(d.width() < 1e-15, "{d}");
        // The same with the one-ulp enclosures of the decimals.
        let d = Interval::around(0.1)
            .unwrap()
            .mul(pt(3.0))
            .unwrap()
            .sub(Interval::around(0.3).unwrap())
            .unwrap();
        assert!(d.contains_zero() && d.width() < 1e-15, "{d}");
    }

    #[test]
    fn a_tiny_nonzero_product_still_excludes_zero() {
        for x in [1.0, -1.0, 0.3, -123.456, 1e-200, 7e300] {
            assert!(pt(1e-30).mul(pt(x)).unwrap().excludes_zero(), "{x}");
            assert!(pt(x).scale(1e-30).unwrap().excludes_zero(), "{x}");
        }
    }

    #[test]
    fn mul_and_div_handle_mixed_signs() {
        let p = iv(-2.0, 3.0).mul(iv(-5.0, 4.0)).unwrap();
        assert!(p.lo() <= -15.0 && p.hi() >= 12.0 && p.lo() > -15.0001 && p.hi() < 12.0001);
        let d = iv(1.0, 2.0).div(iv(-8.0, -4.0)).unwrap();
        assert!(d.lo() <= -0.5 && d.hi() >= -0.125 && d.hi() < 0.0);
    }

    #[test]
    fn division_by_an_interval_containing_zero_is_refused() {
        assert_eq!(pt(1.0).div(iv(-1.0, 1.0)), None);
        assert_eq!(pt(1.0).div(iv(0.0, 1.0)), None);
        assert_eq!(pt(1.0).div(Interval::ZERO), None);
        assert_eq!(iv(-1.0, 2.0).recip(), None);
        assert_eq!(
            CInterval::ONE.div(CInterval::new(iv(-1.0, 1.0), pt(0.0))),
            None
        );
        // This rectangle avoids 0 although its real part does not: |w|^2 >= 1 on it.
        assert!(
            CInterval::ONE
                .div(CInterval::new(iv(-1.0, 1.0), pt(1.0)))
                .is_some()
        );
    }

    #[test]
    fn overflow_gives_none() {
        let big = pt(f64::MAX);
        assert_eq!(big.add(big), None);
        assert_eq!(big.mul(pt(2.0)), None);
        assert_eq!(big.scale(f64::INFINITY), None);
        assert_eq!(pt(1.0).div(pt(1e-310)), None);
        assert_eq!(pt(10.0).powi(400), None);
        assert_eq!(pt(710.0).exp(), None);
        assert_eq!(cpt(1e200, 1e200).mul(cpt(1e200, 0.0)), None);
    }

    #[test]
    fn neg_and_abs_are_exact() {
        assert_eq!(-iv(-1.0, 2.0), iv(-2.0, 1.0));
        assert_eq!(iv(-3.0, 2.0).abs(), iv(0.0, 3.0));
        assert_eq!(iv(-3.0, -2.0).abs(), iv(2.0, 3.0));
        assert_eq!(-cpt(1.0, -2.0), cpt(-1.0, 2.0));
        assert_eq!(cpt(1.0, -2.0).conj(), cpt(1.0, 2.0));
    }

    #[test]
    fn powi_even_powers_of_intervals_containing_zero_start_at_zero() {
        let p = iv(-2.0, 3.0).powi(2).unwrap();
        assert_eq!(p.lo(), 0.0);
        assert!(p.hi() >= 9.0 && p.hi() < 9.0001);
        let p = iv(-3.0, 2.0).powi(4).unwrap();
        assert_eq!(p.lo(), 0.0);
        assert!(p.hi() >= 81.0);
        let p = iv(-3.0, -2.0).powi(2).unwrap();
        assert!(p.lo() <= 4.0 && p.lo() > 3.9999 && p.hi() >= 9.0);
    }

    #[test]
    fn powi_odd_zero_and_negative_exponents() {
        let p = iv(-3.0, 2.0).powi(3).unwrap();
        assert!(p.lo() <= -27.0 && p.hi() >= 8.0 && p.lo() > -27.001 && p.hi() < 8.001);
        assert_eq!(iv(-3.0, 2.0).powi(1), Some(iv(-3.0, 2.0)));
        assert_eq!(iv(-3.0, 2.0).powi(0), Some(Interval::ONE));
        assert_eq!(iv(-3.0, 2.0).powi(-2), None);
        let p = pt(2.0).powi(-3).unwrap();
        assert!(p.contains(0.125) && p.width() < 1e-15);
        // No overflow in the exponent itself; 2^(2^63) overflows and is refused.
        assert_eq!(pt(2.0).powi(i64::MIN), None);
        assert!(pt(1.0).powi(i64::MIN).unwrap().contains(1.0));
        assert!(pt(-1.0).powi(i64::MAX).unwrap().contains(-1.0));
        assert_eq!(CInterval::ZERO.powi(-1), None);
        assert_eq!(cpt(3.0, 4.0).powi(0), Some(CInterval::ONE));
    }

    #[test]
    fn sqrt_requires_a_nonnegative_interval() {
        assert_eq!(iv(-1e-300, 4.0).sqrt(), None);
        let s = iv(0.0, 4.0).sqrt().unwrap();
        assert_eq!(s.lo(), 0.0);
        assert!(s.hi() >= 2.0);
        let s = pt(2.0).sqrt().unwrap();
        assert!(s.powi(2).unwrap().contains(2.0));
    }

    // ---- elementary functions ---------------------------------------------------------

    #[test]
    fn exp_and_ln_domains_and_fixed_points() {
        assert!(pt(0.0).exp().unwrap().contains(1.0));
        assert_eq!(pt(-1000.0).exp().unwrap().lo(), 0.0);
        assert_eq!(pt(0.0).ln(), None);
        assert_eq!(iv(-1.0, 1.0).ln(), None);
        let l = pt(1.0).ln().unwrap();
        assert!(l.contains_zero() && l.width() < 1e-300);
        // ln of a number just above 1 is small but certifiably positive.
        assert!(pt(1.0 + 1e-12).ln().unwrap().excludes_zero());
        let e = pt(1.0).exp().unwrap();
        assert!(e.contains(std::f64::consts::E));
        assert!(
            pt(2.0)
                .pow(pt(0.5))
                .unwrap()
                .contains(std::f64::consts::SQRT_2)
        );
        assert_eq!(pt(-2.0).pow(pt(2.0)), None);
    }

    #[test]
    fn exact_zero_stays_exact_through_sin_cos_exp_division_and_cancelling_points() {
        let z = Interval::ZERO;
        assert_eq!(z.sin(), Interval::ZERO);
        assert_eq!(z.cos(), Interval::ONE);
        assert_eq!(z.exp(), Some(Interval::ONE));
        let d = Interval::new(-3.0, -0.5).unwrap();
        assert_eq!(z.div(d), Some(Interval::ZERO));
        assert_eq!(z.div(Interval::new(-1.0, 1.0).unwrap()), None);
        let a = Interval::point(0.3).unwrap();
        assert_eq!(a.sub(a), Some(Interval::ZERO));
        assert_eq!(a.add(-a), Some(Interval::ZERO));
        let w = Interval::new(0.3, 0.4).unwrap();
        assert!(
            w.sub(w).unwrap().lo() < 0.0,
            "an interval minus itself is not 0"
        );
        // Not exact zeros: enclosures of positive width.
        let t = Interval::new(0.0, 1e-300).unwrap();
        assert!(t.sin().lo() < 0.0 && t.cos().hi() >= 1.0);
        assert!(t.div(d).unwrap().lo() < 0.0);
    }

    #[test]
    fn sin_cos_of_wide_or_huge_intervals_are_the_unit_interval() {
        let unit = iv(-1.0, 1.0);
        assert_eq!(iv(0.0, 7.0).sin(), unit);
        assert_eq!(iv(0.0, 7.0).cos(), unit);
        assert_eq!(pt(2e6).sin(), unit);
        assert_eq!(pt(-2e6).cos(), unit);
    }

    #[test]
    fn sin_cos_near_zeros_and_extrema() {
        // sin(0) = 0 exactly: the enclosure must contain 0.
        assert!(pt(0.0).sin().contains_zero());
        // The f64 nearest π is not π, so its sine is truly nonzero (about 1.22e-16).
        let s = pt(std::f64::consts::PI).sin();
        assert!(
            s.excludes_zero() && s.contains(1.2246467991473532e-16),
            "{s}"
        );
        assert!(pt(0.0).cos().hi() == 1.0 && pt(0.0).cos().contains(1.0));
        let c = iv(-0.5, 0.5).cos();
        assert!(c.lo() <= 0.5f64.cos() && c.hi() == 1.0);
    }

    #[test]
    fn atan_is_monotone_and_bounded() {
        let a = iv(-1.0, 1.0).atan();
        assert!(
            a.contains(-std::f64::consts::FRAC_PI_4) && a.contains(std::f64::consts::FRAC_PI_4)
        );
        assert!(pt(0.0).atan().contains_zero());
        assert!(pt(1e300).atan().hi() < 1.571);
    }

    // ---- complex ----------------------------------------------------------------------

    #[test]
    fn complex_arithmetic_on_known_values() {
        let i = cpt(0.0, 1.0);
        let m = i.mul(i).unwrap();
        assert!(m.re.contains(-1.0) && m.im.contains_zero());
        let d = cpt(1.0, 0.0).div(i).unwrap();
        assert!(d.re.contains_zero() && d.im.contains(-1.0));
        let p = cpt(1.0, 1.0).powi(4).unwrap();
        assert!(p.re.contains(-4.0) && p.im.contains_zero());
        let p = cpt(1.0, 1.0).powi(-2).unwrap();
        assert!(p.re.contains_zero() && p.im.contains(-0.5));
        assert!(cpt(1e-30, 0.0).mul(cpt(0.0, 3.0)).unwrap().excludes_zero());
    }

    #[test]
    fn complex_exp_and_log() {
        let e = cpt(0.0, std::f64::consts::PI).exp().unwrap();
        assert!(e.re.contains(-1.0) && e.im.excludes_zero());
        assert!(cpt(1.0, 0.0).log().unwrap().contains_zero());
        let l = cpt(1.0, 1.0).log().unwrap();
        assert!(l.re.contains(0.5 * 2f64.ln()) && l.im.contains(std::f64::consts::FRAC_PI_4));
        assert_eq!(cpt(0.0, 1.0).log(), None);
        assert_eq!(cpt(-1.0, 0.0).log(), None);
        assert_eq!(CInterval::new(iv(-1.0, 1.0), pt(1.0)).log(), None);
    }

    #[test]
    fn abs_lower_bound_is_a_certified_lower_bound() {
        assert_eq!(
            CInterval::new(iv(-1.0, 1.0), iv(-1.0, 2.0)).abs_lower_bound(),
            0.0
        );
        let b = CInterval::new(iv(3.0, 4.0), iv(4.0, 5.0)).abs_lower_bound();
        assert!(b <= 5.0 && b > 4.999999);
        let b = CInterval::new(iv(-1.0, 1.0), iv(-5.0, -2.0)).abs_lower_bound();
        assert!(b <= 2.0 && b > 1.999999);
        let b = cpt(1e200, 1e200).abs_lower_bound();
        assert!(b.is_finite() && b > 1e154);
        assert!(cpt(1e-200, 0.0).abs_lower_bound() <= 1e-200);
    }

    // ---- properties: exact rational reference -----------------------------------------

    proptest! {
        #[test]
        fn add_sub_mul_contain_the_exact_result(
            (a, x) in with_point(-1e3, 1e3),
            (b, y) in with_point(-1e3, 1e3),
        ) {
            let (qx, qy) = (q(x), q(y));
            prop_assert!(holds(a.add(b).unwrap(), &(&qx + &qy)));
            prop_assert!(holds(a.sub(b).unwrap(), &(&qx - &qy)));
            prop_assert!(holds(a.mul(b).unwrap(), &(&qx * &qy)));
            prop_assert!(holds(a.scale(y).unwrap(), &(&qx * &qy)));
        }

        #[test]
        fn div_contains_the_exact_result(
            (a, x) in with_point(-1e3, 1e3),
            (b, y) in with_point(-1e3, 1e3),
        ) {
            prop_assume!(!b.contains_zero());
            prop_assert!(holds(a.div(b).unwrap(), &(q(x) / q(y))));
        }

        #[test]
        fn powi_contains_the_exact_result((a, x) in with_point(-10.0, 10.0), n in -8i64..=8) {
            match a.powi(n) {
                Some(p) => prop_assert!(holds(p, &q_pow(&q(x), n)), "{} ^ {} = {}", a, n, p),
                None => prop_assert!(n < 0 && a.contains_zero()),
            }
        }

        #[test]
        fn sqrt_contains_the_exact_root((a, x) in with_point(0.0, 1e3)) {
            // lo <= sqrt(x) <= hi  iff  lo^2 <= x <= hi^2, for lo, hi >= 0.
            let s = a.sqrt().unwrap();
            let qx = q(x);
            prop_assert!(s.lo() >= 0.0);
            prop_assert!(q(s.lo()) * q(s.lo()) <= qx && qx <= q(s.hi()) * q(s.hi()));
        }

        #[test]
        fn complex_mul_div_powi_contain_the_exact_result(
            (z, (x, y)) in complex_with_point((-1e3, 1e3), (-1e3, 1e3)),
            (w, (u, v)) in complex_with_point((-1e3, 1e3), (-1e3, 1e3)),
            n in -4i64..=4,
        ) {
            let zq = (q(x), q(y));
            let wq = (q(u), q(v));
            prop_assert!(cholds(z.mul(w).unwrap(), &q_cmul(&zq, &wq)));
            let nw = &wq.0 * &wq.0 + &wq.1 * &wq.1;
            if let Some(d) = z.div(w) {
                let num = q_cmul(&zq, &(wq.0.clone(), -wq.1.clone()));
                prop_assert!(cholds(d, &(&num.0 / &nw, &num.1 / &nw)));
            } else {
                prop_assert!(w.norm_sqr().unwrap().contains_zero());
            }
            if let Some(p) = z.powi(n) {
                let mut acc = (BigRational::from_integer(BigInt::from(1)), q(0.0));
                for _ in 0..n.unsigned_abs() {
                    acc = q_cmul(&acc, &zq);
                }
                if n < 0 {
                    let m = &acc.0 * &acc.0 + &acc.1 * &acc.1;
                    acc = (&acc.0 / &m, -&acc.1 / &m);
                }
                prop_assert!(cholds(p, &acc), "{} ^ {} = {}", z, n, p);
            }
        }

        // ---- properties: libm reference at a point inside -----------------------------

        #[test]
        fn exp_ln_atan_contain_libm_values((a, x) in with_point(-50.0, 50.0)) {
            prop_assert!(a.exp().unwrap().contains(x.exp()));
            prop_assert!(a.atan().contains(x.atan()));
            if a.lo() > 0.0 {
                prop_assert!(a.ln().unwrap().contains(x.ln()));
            }
        }

        #[test]
        fn sin_cos_contain_libm_values((a, x) in with_point(-1e3, 1e3)) {
            prop_assert!(a.sin().contains(x.sin()), "sin {} = {}", a, a.sin());
            prop_assert!(a.cos().contains(x.cos()), "cos {} = {}", a, a.cos());
        }

        #[test]
        fn complex_exp_log_contain_libm_values(
            (z, (x, y)) in complex_with_point((-50.0, 50.0), (-1e3, 1e3)),
        ) {
            let e = z.exp().unwrap();
            prop_assert!(e.re.contains(x.exp() * y.cos()), "exp {} = {}", z, e);
            prop_assert!(e.im.contains(x.exp() * y.sin()), "exp {} = {}", z, e);
            if let Some(l) = z.log() {
                prop_assert!(l.re.contains(x.hypot(y).ln()), "log {} = {}", z, l);
                prop_assert!(l.im.contains(y.atan2(x)), "log {} = {}", z, l);
            } else {
                prop_assert!(z.re.lo() <= 0.0);
            }
        }

        // ---- properties: true zeros stay possible, nonzeros get certified -------------

        #[test]
        fn identities_that_are_zero_evaluate_to_intervals_containing_zero(
            (a, _) in with_point(-1e3, 1e3),
            (b, _) in with_point(-1e3, 1e3),
        ) {
            // (a + b)^2 - a^2 - 2ab - b^2
            let lhs = a.add(b).unwrap().powi(2).unwrap();
            let rhs = a.powi(2).unwrap()
                .add(a.mul(b).unwrap().scale(2.0).unwrap()).unwrap()
                .add(b.powi(2).unwrap()).unwrap();
            prop_assert!(lhs.sub(rhs).unwrap().contains_zero());
            // sin^2 + cos^2 - 1
            let pyth = a.sin().powi(2).unwrap().add(a.cos().powi(2).unwrap()).unwrap();
            prop_assert!(pyth.sub(Interval::ONE).unwrap().contains_zero());
            // exp(ln p) - p, for p = |a| + 1 > 0
            let p = a.abs().add(Interval::ONE).unwrap();
            let lhs = p.ln().unwrap().exp().unwrap();
            prop_assert!(lhs.sub(p).unwrap().contains_zero());
        }

        #[test]
        fn a_tiny_multiple_of_a_nonzero_point_excludes_zero(x in -1e3..1e3f64) {
            prop_assume!(x != 0.0);
            prop_assert!(pt(x).scale(1e-30).unwrap().excludes_zero());
            prop_assert!(pt(1e-30).mul(pt(x)).unwrap().excludes_zero());
        }
    }
}
