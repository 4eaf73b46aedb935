//! The interval operations of the export program on one lane: a value `[lo, hi]` in two f64,
//! NaN in both for "cannot evaluate here".
//!
//! Design decision: each operation is written once, without branches (selects in order of
//! precedence, the last one winning), and both evaluators of [`super::program`] call it: the
//! block evaluator in loops over [`super::program::LANES`] points, which the compiler
//! vectorises, and the per-point evaluator one lane at a time. So the two agree bit for bit
//! (a proptest checks it). Addition, subtraction, multiplication, division, square roots and
//! integer powers mirror [`Interval`]'s operations case by case (exact point 0 included), so
//! they inherit its enclosures: a correctly rounded result is within half an ulp of the exact
//! one, and one step outward encloses it. Sine and cosine take the mean-value form of
//! [`Interval::sin`] with the value at the midpoint from the fdlibm kernel of
//! [`crate::tape::trig`] instead of libm: both are within one ulp of the exact value (tested
//! against multiprecision balls below), and the form widens by [`LIBM_ULPS`].
//!
//! **Invariants:** NaN in, NaN out; a finite result satisfies `lo <= hi` and encloses the
//! exact result for every real in the operands.

use crate::interval::{
    Interval, LIBM_ULPS, TRIG_FULL_PERIOD, TRIG_MAX_ARG, pow_bounds_by_squaring,
};
use crate::tape::trig;

/// One ulp above `x` for every finite `x` (equal to `f64::next_up` there, and at `-inf`),
/// NaN for NaN and `+inf`; branch-free, so that a loop over lanes vectorises.
///
/// Why it is right. `x + 0.0` is `x` except that `-0.0` becomes `+0.0` (round to nearest),
/// so the sign bit `s` of `b = bits(x + 0.0)` is set exactly when `x < 0`. IEEE 754 orders the
/// bit patterns of nonnegative doubles like their values, and those of negative doubles in
/// reverse; so the next double above is `b + 1` for `x >= 0` (`+0` goes to the smallest
/// subnormal, `f64::MAX` to `+inf`) and `b - 1` for `x < 0` (the smallest negative
/// subnormal goes to `-0.0`, `-inf` to `-f64::MAX`), which is `b + 1 - 2 s`. A NaN keeps
/// NaN (selected explicitly: a payload of all ones would otherwise wrap to `-0.0`).
#[inline(always)]
pub(super) fn up(x: f64) -> f64 {
    let b = (x + 0.0).to_bits();
    let r = f64::from_bits(b.wrapping_add(1).wrapping_sub((b >> 63) << 1));
    if x.is_nan() { x } else { r }
}

/// One ulp below `x`: `-up(-x)` (negation is exact), so `f64::next_down` for finite `x`.
#[inline(always)]
pub(super) fn down(x: f64) -> f64 {
    -up(-x)
}

/// The interval `[lo, hi]` if finite and ordered (as [`Interval::new`]), else NaN in both:
/// the lane cannot be evaluated.
#[inline(always)]
pub(super) fn checked(lo: f64, hi: f64) -> (f64, f64) {
    let ok = lo >= -f64::MAX && hi <= f64::MAX && lo <= hi;
    (sel(ok, lo, f64::NAN), sel(ok, hi, f64::NAN))
}

/// `if c { a } else { b }` on values already computed (a select, not a branch).
#[inline(always)]
pub(super) fn sel(c: bool, a: f64, b: f64) -> f64 {
    if c { a } else { b }
}

/// [`sel`] on both bounds.
#[inline(always)]
fn sel2(c: bool, a: (f64, f64), b: (f64, f64)) -> (f64, f64) {
    (sel(c, a.0, b.0), sel(c, a.1, b.1))
}

/// NaN in both bounds where `c`.
#[inline(always)]
fn invalid_if(c: bool, v: (f64, f64)) -> (f64, f64) {
    sel2(c, (f64::NAN, f64::NAN), v)
}

/// True for the exact point 0 (false for NaN).
#[inline(always)]
fn zero_point(lo: f64, hi: f64) -> bool {
    lo == 0.0 && hi == 0.0
}

/// [`Interval::add`].
#[inline(always)]
pub(super) fn add(al: f64, ah: f64, bl: f64, bh: f64) -> (f64, f64) {
    let mut v = checked(down(al + bl), up(ah + bh));
    // A point plus its negative is exactly 0.
    v = sel2(al == ah && bl == bh && al == -bl, (0.0, 0.0), v);
    // Adding the exact 0 is exact (b's zero first, as the scalar rule).
    v = sel2(zero_point(al, ah), (bl, bh), v);
    sel2(zero_point(bl, bh), (al, ah), v)
}

/// [`Interval::sub`].
#[inline(always)]
pub(super) fn sub(al: f64, ah: f64, bl: f64, bh: f64) -> (f64, f64) {
    let mut v = checked(down(al - bh), up(ah - bl));
    // A point minus itself is exactly 0.
    v = sel2(al == ah && bl == bh && al == bl, (0.0, 0.0), v);
    sel2(zero_point(bl, bh), (al, ah), v)
}

/// Smallest and largest of four values (none NaN where the result is used).
#[inline(always)]
fn min_max(p: [f64; 4]) -> (f64, f64) {
    (
        p[0].min(p[1]).min(p[2].min(p[3])),
        p[0].max(p[1]).max(p[2].max(p[3])),
    )
}

/// [`Interval::mul`].
#[inline(always)]
pub(super) fn mul(al: f64, ah: f64, bl: f64, bh: f64) -> (f64, f64) {
    let (mn, mx) = min_max([al * bl, al * bh, ah * bl, ah * bh]);
    let mut v = checked(down(mn), up(mx));
    v = sel2(zero_point(al, ah) || zero_point(bl, bh), (0.0, 0.0), v);
    invalid_if(al.is_nan() || bl.is_nan(), v)
}

/// [`Interval::div`]: NaN where the divisor contains 0.
#[inline(always)]
pub(super) fn div(al: f64, ah: f64, bl: f64, bh: f64) -> (f64, f64) {
    let (mn, mx) = min_max([al / bl, al / bh, ah / bl, ah / bh]);
    let mut v = checked(down(mn), up(mx));
    v = sel2(zero_point(al, ah), (0.0, 0.0), v);
    invalid_if(al.is_nan() || bl.is_nan() || (bl <= 0.0 && 0.0 <= bh), v)
}

/// Negation (exact).
#[inline(always)]
pub(super) fn neg(al: f64, ah: f64) -> (f64, f64) {
    (-ah, -al)
}

/// [`Interval::sqrt`]: NaN where the enclosure reaches below 0.
#[inline(always)]
pub(super) fn sqrt(al: f64, ah: f64) -> (f64, f64) {
    let v = checked(down(al.sqrt()).max(0.0), up(ah.sqrt()));
    invalid_if(al < 0.0, v)
}

/// Lower and upper bounds on `a^k` for `a >= 0`, `k >= 1`: the scalar rule's repeated
/// squaring (its loop depends on `k` only, so it runs outside the lanes), exact for 0 and 1.
#[inline(always)]
fn pow_bounds(a: f64, k: u32) -> (f64, f64) {
    let v = pow_bounds_by_squaring(a, u64::from(k));
    sel2(a == 0.0 || a == 1.0, (a, a), v)
}

/// [`Interval::powi`] with the exponent `n`.
#[inline(always)]
pub(super) fn powi(al: f64, ah: f64, n: i32) -> (f64, f64) {
    if n == 0 {
        return invalid_if(al.is_nan(), (1.0, 1.0));
    }
    let k = n.unsigned_abs();
    // The scalar rule's arguments of the repeated squaring, signed zeros included.
    let nonnegative = al >= 0.0;
    let x1 = sel(nonnegative, al, -al);
    let positive = if k % 2 == 1 {
        // Odd powers are increasing, and (-a)^k = -(a^k).
        let (l1, u1) = pow_bounds(x1, k);
        let (l2, u2) = pow_bounds(sel(ah >= 0.0, ah, -ah), k);
        checked(sel(nonnegative, l1, -u1), sel(ah >= 0.0, u2, -l2))
    } else {
        // [lo, hi] above 0, below 0, or around 0.
        let (l1, u1) = pow_bounds(x1, k);
        let (l2, u2) = pow_bounds(sel(nonnegative, ah, -ah), k);
        let around = (0.0, pow_bounds(al.abs().max(ah.abs()), k).1);
        let v = sel2(ah <= 0.0, (l2, u1), around);
        checked2(sel2(nonnegative, (l1, u2), v))
    };
    if n > 0 {
        positive
    } else {
        div(1.0, 1.0, positive.0, positive.1)
    }
}

/// [`checked`] on a pair.
#[inline(always)]
fn checked2(v: (f64, f64)) -> (f64, f64) {
    checked(v.0, v.1)
}

/// The midpoint of `[lo, hi]` as [`Interval::mid`] takes it (NaN for NaN).
#[inline(always)]
pub(super) fn mid(lo: f64, hi: f64) -> f64 {
    sel(lo == hi, lo, (lo / 2.0 + hi / 2.0).max(lo).min(hi))
}

/// `(sin m, cos m)` within one ulp each: the fdlibm kernel, libm beyond its range.
#[inline(always)]
pub(super) fn sin_cos(m: f64) -> (f64, f64) {
    if trig::outside(m) {
        (m.sin(), m.cos())
    } else {
        trig::kernel(m)
    }
}

/// The enclosure of sin or cos over `[lo, hi]` from `fm`, their value at `m = mid(lo, hi)`
/// within one ulp: the mean-value form of [`Interval::sin`] (`|f'| <= 1`, values in
/// [-1, 1]), `[-1, 1]` for huge or wide arguments, exactly `at_zero` at the exact point 0.
#[inline(always)]
pub(super) fn unit_mean_value(lo: f64, hi: f64, m: f64, fm: f64, at_zero: f64) -> (f64, f64) {
    let r = sel(lo == hi, 0.0, up(m - lo).max(up(hi - m)));
    let (mut below, mut above) = (fm, fm);
    for _ in 0..LIBM_ULPS {
        below = down(below);
        above = up(above);
    }
    let mut v = (down(below - r).max(-1.0), up(above + r).min(1.0));
    let wide = lo.abs().max(hi.abs()) > TRIG_MAX_ARG || hi - lo > TRIG_FULL_PERIOD;
    v = sel2(wide, (-1.0, 1.0), v);
    v = sel2(zero_point(lo, hi), (at_zero, at_zero), v);
    invalid_if(lo.is_nan() || hi.is_nan(), v)
}

/// Sine (`cosine == false`) or cosine of the lane interval `[lo, hi]`, one lane.
#[inline(always)]
pub(super) fn sin_or_cos(lo: f64, hi: f64, cosine: bool) -> (f64, f64) {
    let m = mid(lo, hi);
    let (s, c) = sin_cos(m);
    if cosine {
        unit_mean_value(lo, hi, m, c, 1.0)
    } else {
        unit_mean_value(lo, hi, m, s, 0.0)
    }
}

/// [`sin_or_cos`] over lanes: `(lo, hi)` from `(alo, ahi)`, with the kernel in its own
/// vectorised loop and libm only for the lanes beyond its range.
#[inline(always)]
pub(super) fn sin_or_cos_lanes(
    alo: &[f64],
    ahi: &[f64],
    lo: &mut [f64],
    hi: &mut [f64],
    cosine: bool,
) {
    // The midpoints in `lo`, the kernel's values at them in `hi`.
    for ((m, &l), &h) in lo.iter_mut().zip(alo).zip(ahi) {
        *m = mid(l, h);
    }
    for (f, &m) in hi.iter_mut().zip(lo.iter()) {
        let (s, c) = trig::kernel(m);
        *f = sel(cosine, c, s);
    }
    if lo.iter().fold(false, |acc, &m| acc | trig::outside(m)) {
        for (f, &m) in hi.iter_mut().zip(lo.iter()) {
            if trig::outside(m) {
                *f = if cosine { m.cos() } else { m.sin() };
            }
        }
    }
    let at_zero = sel(cosine, 1.0, 0.0);
    for (((l, h), &al), &ah) in lo.iter_mut().zip(hi.iter_mut()).zip(alo).zip(ahi) {
        (*l, *h) = unit_mean_value(al, ah, *l, *h, at_zero);
    }
}

/// A lane value as an [`Interval`] (`None` for NaN).
#[inline]
pub(super) fn interval(v: (f64, f64)) -> Option<Interval> {
    Interval::new(v.0, v.1)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::interval::Ball;
    use crate::jet::Scalar;
    use proptest::prelude::*;

    fn bits(v: (f64, f64)) -> (u64, u64) {
        (v.0.to_bits(), v.1.to_bits())
    }

    fn lane(v: Option<Interval>) -> (f64, f64) {
        v.map_or((f64::NAN, f64::NAN), |i| (i.lo(), i.hi()))
    }

    /// Interval endpoints for the mirrors: exact zeros, ones, small, large and negative.
    fn endpoint() -> impl Strategy<Value = f64> {
        prop_oneof![
            Just(0.0),
            Just(-0.0),
            Just(1.0),
            Just(-1.0),
            Just(0.5),
            -3.0..3.0f64,
            -1e-300..1e-300f64,
            -1e150..1e150f64,
        ]
    }

    fn pair() -> impl Strategy<Value = (f64, f64)> {
        (endpoint(), endpoint(), any::<bool>()).prop_map(|(a, b, point)| {
            if point { (a, a) } else { (a.min(b), a.max(b)) }
        })
    }

    /// `x` within one ulp of the exact value enclosed by `b`.
    fn within_one_ulp(x: f64, b: &Ball) -> bool {
        let (lo, hi) = b.bounds_f64();
        x.next_down() <= hi && lo <= x.next_up()
    }

    proptest! {
        /// Division, square root and integer powers give, bit for bit, what [`Interval`]'s
        /// operations give (NaN where they give `None`).
        #[test]
        fn mirrors_are_the_interval_operations(a in pair(), b in pair(), n in -9i32..=9) {
            let (x, y) = (Interval::new(a.0, a.1).unwrap(), Interval::new(b.0, b.1).unwrap());
            prop_assert_eq!(bits(div(a.0, a.1, b.0, b.1)), bits(lane(x.div(y))));
            prop_assert_eq!(bits(sqrt(a.0, a.1)), bits(lane(x.sqrt())));
            prop_assert_eq!(bits(powi(a.0, a.1, n)), bits(lane(x.powi(i64::from(n)))));
            prop_assert_eq!(bits(add(a.0, a.1, b.0, b.1)), bits(lane(x.add(y))));
            prop_assert_eq!(bits(sub(a.0, a.1, b.0, b.1)), bits(lane(x.sub(y))));
            prop_assert_eq!(bits(mul(a.0, a.1, b.0, b.1)), bits(lane(x.mul(y))));
            // NaN spreads.
            let nan = (f64::NAN, f64::NAN);
            prop_assert!(div(nan.0, nan.1, b.0, b.1).0.is_nan());
            prop_assert!(div(a.0, a.1, nan.0, nan.1).0.is_nan());
            prop_assert!(powi(nan.0, nan.1, n).0.is_nan());
            prop_assert!(sqrt(nan.0, nan.1).0.is_nan());
            prop_assert!(sin_or_cos(nan.0, nan.1, true).0.is_nan());
        }

        /// The kernel is within one ulp of sin and cos (200-bit balls, an independent
        /// route), on the whole range it is used for, near multiples of pi/2 (where the
        /// reduction cancels) included.
        #[test]
        fn kernel_is_within_one_ulp(
            x in prop_oneof![
                -4.0..4.0f64,
                -trig::LIMIT..trig::LIMIT,
                (-300_000i32..300_000, -1e-6..1e-6f64)
                    .prop_map(|(k, e)| f64::from(k) * std::f64::consts::FRAC_PI_2 + e),
            ],
        ) {
            let (s, c) = sin_cos(x);
            let b = Ball::input(x, &200).unwrap();
            let (bs, bc) = (Scalar::sin(&b).unwrap(), Scalar::cos(&b).unwrap());
            prop_assert!(within_one_ulp(s, &bs), "sin {:e}: {:e} vs {:?}", x, s, bs.bounds_f64());
            prop_assert!(within_one_ulp(c, &bc), "cos {:e}: {:e} vs {:?}", x, c, bc.bounds_f64());
        }

        /// The lane sine and cosine enclose the 200-bit ball of every point of the
        /// interval's ends, and the lane loop gives the one-lane function's bits.
        #[test]
        fn sine_and_cosine_enclose(v in proptest::collection::vec(pair(), 1..64)) {
            let (alo, ahi): (Vec<f64>, Vec<f64>) = v.iter().copied().unzip();
            for cosine in [false, true] {
                let (mut lo, mut hi) = (vec![0.0; v.len()], vec![0.0; v.len()]);
                sin_or_cos_lanes(&alo, &ahi, &mut lo, &mut hi, cosine);
                for (k, &(a, b)) in v.iter().enumerate() {
                    let one = sin_or_cos(a, b, cosine);
                    prop_assert_eq!(bits((lo[k], hi[k])), bits(one));
                    prop_assert!(one.0 <= one.1);
                    for end in [a, b] {
                        let e = Ball::input(end, &200).unwrap();
                        let f = if cosine { Scalar::cos(&e) } else { Scalar::sin(&e) }.unwrap();
                        // The exact value is in the ball and in [-1, 1].
                        let (fl, fh) = f.bounds_f64();
                        let (fl, fh) = (fl.max(-1.0), fh.min(1.0));
                        prop_assert!(one.0 <= fl && fh <= one.1,
                            "{} [{:e}, {:e}] at {:e}: [{:e}, {:e}] vs [{:e}, {:e}]",
                            if cosine { "cos" } else { "sin" }, a, b, end, one.0, one.1, fl, fh);
                    }
                }
            }
        }
    }
}
