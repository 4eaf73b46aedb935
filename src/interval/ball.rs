//! Arbitrary-precision ball arithmetic: a certified enclosure `mid ± rad` with a multiprecision
//! midpoint, for when an f64 [`Interval`](super::Interval) is too wide or out of range.
//!
//! A [`Ball`] stands for an unknown real `x` with `|x - mid| <= rad`. The midpoint is an exact
//! dyadic number `man * 2^exp` (`man` a `BigInt` of at most `prec` bits); the radius is a small
//! dyadic upper bound (a 30-bit mantissa times a power of two) that is always rounded up. Every
//! operation returns a ball containing the exact result for every choice of reals in its
//! operands: rounding the midpoint to `prec` bits adds the rounding error to the radius, and
//! every transcendental function adds a rigorous bound on its truncated series.
//!
//! Key design decision: soundness is obtained by composition. The transcendental functions are
//! written in ball arithmetic themselves (argument reduction, Taylor sums by Horner's rule,
//! reconstruction), so round-off in every intermediate step is tracked by the same four
//! arithmetic operations; the only error each function adds by hand is the tail of its series,
//! bounded by a geometric series. A monotone function of a ball is evaluated at the two end
//! points (tight), sine and cosine at the midpoint plus the radius (their derivatives are at
//! most 1 in magnitude).
//!
//! Like [`Interval`](super::Interval), fallible operations return `Option`, `None` meaning
//! "cannot evaluate here": division by a ball that may contain 0, a logarithm of a ball that is
//! not strictly positive, a square root of a ball reaching below 0, or a result beyond the
//! exponent cap (`|x| >= 2^(2^40)`; exp overflows there for arguments beyond about `2^36`).
//! Values below `2^-(2^40)` are not an error: they are absorbed into the radius.
//!
//! Precision. Each ball carries its working precision `prec` (bits of the midpoint, between
//! [`MIN_PREC`] and [`MAX_PREC`]); a result gets the largest precision of its operands.
//! Exactly known values made without a precision (`from_int`, `from_f64`, `one`, ...) carry
//! 64 bits, so they do not lower the precision of a computation. Raising precision is the
//! caller's job ([`Ball::with_prec`]); nothing here escalates on its own except argument
//! reduction of sin and cos, which retries with more bits of pi when the reduced argument lost
//! too many bits to cancellation.
//!
//! Time is bounded: precision is capped at [`MAX_PREC`] bits, series lengths follow from the
//! precision, and sin/cos of arguments beyond `2^MAX_PREC` just return `[-1, 1]`.

use num_bigint::{BigInt, BigUint, Sign};
use num_integer::Integer;
use num_rational::BigRational;
use num_traits::{One, Signed, ToPrimitive, Zero};
use std::cell::RefCell;
use std::cmp::Ordering;
use std::fmt;

/// Smallest working precision in bits; smaller requests are raised to it.
pub const MIN_PREC: u32 = 16;

/// Largest working precision in bits; larger requests are lowered to it (keeps time bounded).
/// Internal guard bits cannot go beyond it either, so functions evaluated at or near this
/// precision come out a few bits short of `2^-prec` relative (still enclosures).
pub const MAX_PREC: u32 = 1 << 16;

/// Precision of exactly known values built without one (`from_int`, `from_f64`, `one`).
const EXACT_PREC: u32 = 64;

/// Every ball satisfies `|mid| < 2^EXP_CAP` and `rad < 2^EXP_CAP`; results beyond are `None`.
/// Keeps all exponent arithmetic far from `i64` overflow.
pub const EXP_CAP: i64 = 1 << 40;

/// exp of an argument of magnitude at least `2^EXP_ARG_BITS` is not evaluated: it would overflow
/// [`EXP_CAP`] (upwards) or is bounded by `[0, 2^-(2^EXP_ARG_BITS)]` (downwards).
const EXP_ARG_BITS: i64 = 36;

/// Bits of a radius mantissa.
const MAG_BITS: u32 = 30;

/// Guard bits used inside the transcendental functions beyond the result precision.
const GUARD: u32 = 32;

// ---- radius: a small dyadic number rounded up ------------------------------------------------

/// A nonnegative dyadic number `m * 2^e` with `m <= 2^MAG_BITS`. Constructors and operations
/// are named by their rounding direction; radii are only ever rounded up.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct Mag {
    m: u64,
    e: i64,
}

impl Mag {
    const ZERO: Mag = Mag { m: 0, e: 0 };

    /// Exactly `2^e`.
    fn pow2(e: i64) -> Mag {
        Mag { m: 1, e }
    }

    fn is_zero(self) -> bool {
        self.m == 0
    }

    /// `|x| < 2^top` and (if nonzero) `|x| >= 2^(top-1)`.
    fn top(self) -> i64 {
        self.e + (64 - self.m.leading_zeros()) as i64
    }

    /// The smallest `Mag` >= `v * 2^e`.
    fn from_u128_up(v: u128, e: i64) -> Mag {
        Mag::from_u128(v, e, true)
    }

    /// The largest `Mag` <= `v * 2^e`.
    fn from_u128_down(v: u128, e: i64) -> Mag {
        Mag::from_u128(v, e, false)
    }

    fn from_u128(v: u128, e: i64, up: bool) -> Mag {
        if v == 0 {
            return Mag::ZERO;
        }
        let bits = 128 - v.leading_zeros();
        if bits <= MAG_BITS {
            return Mag { m: v as u64, e };
        }
        let s = bits - MAG_BITS;
        let inexact = v & ((1u128 << s) - 1) != 0;
        // At most 2^MAG_BITS after rounding up, which the invariant allows.
        let q = (v >> s) as u64 + u64::from(up && inexact);
        Mag {
            m: q,
            e: e + s as i64,
        }
    }

    /// A bound on `v * 2^e` rounded in the given direction.
    fn from_biguint(v: &BigUint, e: i64, up: bool) -> Mag {
        let bits = v.bits();
        if bits <= 128 {
            return Mag::from_u128(v.to_u128().expect("fits"), e, up);
        }
        let s = bits - 128;
        let q = (v >> s).to_u128().expect("fits");
        let sticky = v.trailing_zeros().is_some_and(|tz| tz < s);
        // Nonzero bits below the 128 kept ones: setting the lowest kept bit makes the
        // rounding to MAG_BITS below see an inexact value, so it rounds up past them.
        let q = if up && sticky { q | 1 } else { q };
        Mag::from_u128(q, e + s as i64, up)
    }

    /// Upper bound on `self + o`.
    fn add(self, o: Mag) -> Mag {
        if self.is_zero() {
            return o;
        }
        if o.is_zero() {
            return self;
        }
        let (hi, lo) = if self.e >= o.e { (self, o) } else { (o, self) };
        let d = (hi.e - lo.e) as u64;
        if d <= 64 {
            // hi.m < 2^31, so hi.m << 64 < 2^95: exact in u128.
            Mag::from_u128_up(((hi.m as u128) << d) + lo.m as u128, lo.e)
        } else {
            // lo < 2^(lo.e + 31) <= 2^hi.e: one unit of hi covers it.
            Mag::from_u128_up(hi.m as u128 + 1, hi.e)
        }
    }

    /// Upper bound on `self * o`.
    fn mul(self, o: Mag) -> Mag {
        if self.is_zero() || o.is_zero() {
            return Mag::ZERO;
        }
        Mag::from_u128_up(self.m as u128 * o.m as u128, self.e + o.e)
    }

    /// Upper bound on `self / d` for `d > 0`.
    fn div(self, d: Mag) -> Mag {
        debug_assert!(!d.is_zero());
        if self.is_zero() {
            return Mag::ZERO;
        }
        let n = (self.m as u128) << 64;
        let q = n.div_ceil(d.m as u128);
        Mag::from_u128_up(q, self.e - 64 - d.e)
    }

    /// Upper bound on `self / n` for an integer `n > 0`.
    fn div_int(self, n: u64) -> Mag {
        self.div(Mag::from_u128_down(n as u128, 0))
    }

    /// Exactly `self * 2^k`.
    fn mul_2exp(self, k: i64) -> Mag {
        if self.is_zero() {
            self
        } else {
            Mag {
                m: self.m,
                e: self.e + k,
            }
        }
    }

    /// Exact comparison.
    fn cmp(self, o: Mag) -> Ordering {
        match (self.is_zero(), o.is_zero()) {
            (true, true) => return Ordering::Equal,
            (true, false) => return Ordering::Less,
            (false, true) => return Ordering::Greater,
            _ => {}
        }
        match self.top().cmp(&o.top()) {
            Ordering::Equal => {}
            other => return other,
        }
        // Equal tops: exponents differ by less than MAG_BITS + 1, so the shift is small.
        let e = self.e.min(o.e);
        ((self.m as u128) << (self.e - e)).cmp(&((o.m as u128) << (o.e - e)))
    }

    /// An upper bound as an f64 (infinite beyond the f64 range).
    fn to_f64_up(self) -> f64 {
        if self.is_zero() {
            return 0.0;
        }
        // m has at most 31 bits, so the only rounding is in the scaling (subnormal range),
        // which the exact comparison in `directed` corrects.
        directed(&BigInt::from(self.m), self.e, true)
    }
}

// ---- exact dyadic helpers --------------------------------------------------------------------

/// `|man * 2^exp| < 2^top` and (if `man != 0`) `>= 2^(top-1)`.
fn top(man: &BigInt, exp: i64) -> i64 {
    exp + man.bits() as i64
}

/// `floor(x / 2^s)` (`up == false`) or `ceil(x / 2^s)` (`up == true`) for `s >= 0`.
fn shr_round(x: &BigInt, s: u64, up: bool) -> BigInt {
    if s == 0 || x.is_zero() {
        return x.clone();
    }
    let inexact = x.trailing_zeros().is_some_and(|tz| tz < s);
    let mag = x.magnitude() >> s;
    let (q, away) = match x.sign() {
        // For positive x, ceil rounds away from zero; for negative x, floor does.
        Sign::Minus => (-BigInt::from(mag), !up),
        _ => (BigInt::from(mag), up),
    };
    if inexact && away {
        if x.is_negative() { q - 1 } else { q + 1 }
    } else {
        q
    }
}

/// `x * 2^s`, rounded down or up to an integer when `s < 0`.
fn shift_round(x: &BigInt, s: i64, up: bool) -> BigInt {
    if s >= 0 {
        x << (s as u64)
    } else {
        shr_round(x, s.unsigned_abs(), up)
    }
}

/// `x * 2^s` rounded toward zero when `s < 0`, and whether that lost anything.
fn shift_trunc(x: &BigInt, s: i64) -> (BigInt, bool) {
    if s >= 0 {
        return (x << (s as u64), false);
    }
    let s = s.unsigned_abs();
    let inexact = x.trailing_zeros().is_some_and(|tz| tz < s);
    let mag = x.magnitude() >> s;
    (BigInt::from_biguint(x.sign(), mag), inexact)
}

/// Exact comparison of `a.0 * 2^a.1` with `b.0 * 2^b.1`. The alignment shift is at most the
/// larger mantissa's bit count, because unequal magnitudes are told apart by `top` first.
fn dy_cmp(a: (&BigInt, i64), b: (&BigInt, i64)) -> Ordering {
    let (sa, sb) = (a.0.sign(), b.0.sign());
    if sa != sb {
        let rank = |s: Sign| match s {
            Sign::Minus => 0,
            Sign::NoSign => 1,
            Sign::Plus => 2,
        };
        return rank(sa).cmp(&rank(sb));
    }
    if sa == Sign::NoSign {
        return Ordering::Equal;
    }
    let by_mag = match top(a.0, a.1).cmp(&top(b.0, b.1)) {
        Ordering::Equal => {
            let e = a.1.min(b.1);
            let x = a.0.magnitude() << ((a.1 - e) as u64);
            let y = b.0.magnitude() << ((b.1 - e) as u64);
            x.cmp(&y)
        }
        other => other,
    };
    if sa == Sign::Minus {
        by_mag.reverse()
    } else {
        by_mag
    }
}

/// The exact dyadic value of a finite f64 as `(man, exp)`.
fn f64_parts(x: f64) -> (BigInt, i64) {
    debug_assert!(x.is_finite());
    if x == 0.0 {
        return (BigInt::zero(), 0);
    }
    let bits = x.to_bits();
    let biased = ((bits >> 52) & 0x7ff) as i64;
    let frac = bits & ((1u64 << 52) - 1);
    let (m, e) = if biased == 0 {
        (frac, -1074)
    } else {
        (frac | (1u64 << 52), biased - 1075)
    };
    let m = BigInt::from(m);
    (if x < 0.0 { -m } else { m }, e)
}

/// `x * 2^e` in f64, by exact power-of-two steps (rounded only on underflow or overflow).
fn scale2(mut x: f64, e: i64) -> f64 {
    let mut e = e.clamp(-2400, 2400);
    while e != 0 {
        let step = e.clamp(-1000, 1000);
        x *= f64::from_bits(((step + 1023) as u64) << 52);
        e -= step;
    }
    x
}

/// The f64 nearest `man * 2^exp` up to one ulp (not a bound; see [`directed`]).
fn approx_f64(man: &BigInt, exp: i64) -> f64 {
    if man.is_zero() {
        return 0.0;
    }
    let bits = man.bits();
    let (q, e) = if bits > 64 {
        let s = bits - 64;
        (
            (man.magnitude() >> s).to_u64().expect("64 bits"),
            exp + s as i64,
        )
    } else {
        (man.magnitude().to_u64().expect("64 bits"), exp)
    };
    let a = scale2(q as f64, e);
    if man.is_negative() { -a } else { a }
}

/// An f64 upper (`up`) or lower bound on `man * 2^exp`, possibly infinite, never NaN.
///
/// Starts from the approximation and steps by ulps until an exact comparison confirms the
/// bound: correctness rests only on the comparison. The approximation is within about an ulp,
/// so this takes at most two steps; after 64 it gives up with an infinite bound (still sound).
fn directed(man: &BigInt, exp: i64, up: bool) -> f64 {
    let mut c = approx_f64(man, exp);
    for _ in 0..64 {
        let ok = if c.is_infinite() {
            (c > 0.0) == up
        } else {
            let (cm, ce) = f64_parts(c);
            let ord = dy_cmp((&cm, ce), (man, exp));
            if up {
                ord != Ordering::Less
            } else {
                ord != Ordering::Greater
            }
        };
        if ok {
            return c;
        }
        c = if c.is_infinite() {
            // An overflowed approximation of a value inside the f64 range.
            if up { -f64::MAX } else { f64::MAX }
        } else if up {
            c.next_up()
        } else {
            c.next_down()
        };
    }
    if up { f64::INFINITY } else { f64::NEG_INFINITY }
}

// ---- the ball ----------------------------------------------------------------------------------

/// A real ball `[mid - rad, mid + rad]` with an arbitrary-precision dyadic midpoint.
///
/// Stands for an unknown real number known to lie in it. Every operation returns a ball
/// containing the exact result for every choice of reals in its operands. See the module
/// documentation for the number model and the precision rules.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Ball {
    /// Midpoint mantissa: at most `prec` bits, no trailing zero bits (0 has `exp == 0`).
    man: BigInt,
    /// Midpoint exponent: the midpoint is `man * 2^exp`.
    exp: i64,
    /// Upper bound on the distance from the midpoint to the enclosed value.
    rad: Mag,
    /// Working precision in bits.
    prec: u32,
}

fn clamp_prec(prec: u32) -> u32 {
    prec.clamp(MIN_PREC, MAX_PREC)
}

#[allow(
    clippy::should_implement_trait,
    reason = "arithmetic returns Option (None: cannot evaluate here), which std::ops cannot express"
)]
impl Ball {
    // ---- construction ----------------------------------------------------------------------

    /// The normalised ball `man * 2^exp ± rad` at precision `prec`.
    ///
    /// Error analysis: a midpoint wider than `prec` bits is truncated toward zero after
    /// shifting right by `s`; the truncation error is below `2^(exp + s)`, which is added to
    /// the radius. A midpoint below `2^-EXP_CAP` is moved into the radius (`|mid| <
    /// 2^top`), and a radius below that is raised to `2^-EXP_CAP`; both only widen. `None` if
    /// the midpoint or the radius reaches `2^EXP_CAP`.
    fn make(man: BigInt, exp: i64, rad: Mag, prec: u32) -> Option<Ball> {
        let prec = clamp_prec(prec);
        let (mut man, mut exp, mut rad) = (man, exp, rad);
        let bits = man.bits();
        if bits > prec as u64 {
            let s = (bits - prec as u64) as i64;
            let (q, inexact) = shift_trunc(&man, -s);
            if inexact {
                rad = rad.add(Mag::pow2(exp + s));
            }
            man = q;
            exp += s;
        }
        if man.is_zero() {
            exp = 0;
        } else {
            let tz = man.trailing_zeros().unwrap_or(0);
            if tz > 0 {
                man >>= tz;
                exp += tz as i64;
            }
            let t = top(&man, exp);
            if t > EXP_CAP {
                return None;
            }
            if t < -EXP_CAP {
                rad = rad.add(Mag::pow2(t));
                man = BigInt::zero();
                exp = 0;
            }
        }
        if !rad.is_zero() {
            if rad.top() > EXP_CAP {
                return None;
            }
            if rad.top() < -EXP_CAP {
                rad = Mag::pow2(-EXP_CAP);
            }
        }
        Some(Ball {
            man,
            exp,
            rad,
            prec,
        })
    }

    /// The exact ball `man * 2^exp` (`None` beyond the exponent cap).
    fn exact(man: BigInt, exp: i64, prec: u32) -> Option<Ball> {
        let prec = prec.max(man.bits().min(MAX_PREC as u64) as u32);
        Ball::make(man, exp, Mag::ZERO, prec)
    }

    /// The exact point 0 (precision 64).
    pub fn zero() -> Ball {
        Ball {
            man: BigInt::zero(),
            exp: 0,
            rad: Mag::ZERO,
            prec: EXACT_PREC,
        }
    }

    /// The exact point 1 (precision 64).
    pub fn one() -> Ball {
        Ball::from_int(1)
    }

    /// The exact integer `n` (precision 64).
    pub fn from_int(n: i64) -> Ball {
        Ball::exact(BigInt::from(n), 0, EXACT_PREC).expect("an i64 is within the exponent cap")
    }

    /// The integer `n`, exact if it fits in the larger of 64 bits and [`MAX_PREC`], else
    /// enclosed.
    pub fn from_bigint(n: &BigInt) -> Ball {
        Ball::exact(n.clone(), 0, EXACT_PREC).expect("fewer than 2^40 bits")
    }

    /// The exact value of a finite f64 (precision 64); `None` for NaN and infinities.
    pub fn from_f64(x: f64) -> Option<Ball> {
        if !x.is_finite() {
            return None;
        }
        let (m, e) = f64_parts(x);
        Ball::exact(m, e, EXACT_PREC)
    }

    /// A ball for the rational `q` at precision `prec`: exact when `q` is dyadic and its
    /// numerator fits in `prec` bits, else an enclosure of width about `2^-prec` relative.
    ///
    /// Error analysis: for a non-dyadic `q = n/d`, the midpoint is `trunc(n * 2^s / d) * 2^-s`
    /// with `s` chosen so that the quotient has at least `prec + 1` bits; the truncation error
    /// is below one unit `2^-s`, which is the radius (before rounding to `prec`, which adds its
    /// own error as in every operation). `None` only beyond the exponent cap.
    pub fn from_rational(q: &BigRational, prec: u32) -> Option<Ball> {
        let prec = clamp_prec(prec);
        let (n, d) = (q.numer(), q.denom());
        if n.is_zero() {
            return Some(Ball::zero().with_prec(prec));
        }
        let dz = d.trailing_zeros().unwrap_or(0);
        if d.bits() == dz + 1 {
            // d is a power of two: q is dyadic.
            return Ball::make(n.clone(), -(dz as i64), Mag::ZERO, prec);
        }
        let s = (prec as i64 + 2 + d.bits() as i64 - n.bits() as i64).max(0);
        let quotient = (n << (s as u64)) / d; // truncates toward zero
        Ball::make(quotient, -s, Mag::pow2(-s), prec)
    }

    /// An enclosure of pi at precision `prec` (Machin's formula, cached per thread).
    pub fn pi(prec: u32) -> Ball {
        constant(&PI_CACHE, clamp_prec(prec), pi_fixed)
    }

    /// An enclosure of ln 2 at precision `prec` (cached per thread).
    pub fn ln2(prec: u32) -> Ball {
        constant(&LN2_CACHE, clamp_prec(prec), ln2_fixed)
    }

    /// The smallest ball containing `[lo, hi]` (two exact dyadics with `lo <= hi`), with the
    /// midpoint rounded to `prec` bits.
    ///
    /// Error analysis: both ends are first rounded outward (lo down, hi up) to a common
    /// exponent `prec + 8` bits below the larger end, so the enclosed set only grows; then the
    /// midpoint `(lo + hi) / 2` and radius `(hi - lo) / 2` are exact, and the radius is
    /// rounded up.
    fn from_bounds(lo: (BigInt, i64), hi: (BigInt, i64), prec: u32) -> Option<Ball> {
        debug_assert!(dy_cmp((&lo.0, lo.1), (&hi.0, hi.1)) != Ordering::Greater);
        let t = match (lo.0.is_zero(), hi.0.is_zero()) {
            (true, true) => return Some(Ball::zero().with_prec(prec)),
            (true, false) => top(&hi.0, hi.1),
            (false, true) => top(&lo.0, lo.1),
            (false, false) => top(&lo.0, lo.1).max(top(&hi.0, hi.1)),
        };
        let e0 = t - prec as i64 - 8;
        // The shifts are at most prec + 8 + (bits of the end) to the left: bounded.
        let l = shift_round(&lo.0, lo.1 - e0, false);
        let h = shift_round(&hi.0, hi.1 - e0, true);
        let width = (&h - &l).magnitude().clone();
        Ball::make(
            &l + &h,
            e0 - 1,
            Mag::from_biguint(&width, e0 - 1, true),
            prec,
        )
    }

    // ---- accessors -------------------------------------------------------------------------

    /// The working precision in bits.
    pub fn prec(&self) -> u32 {
        self.prec
    }

    /// The same ball at another working precision (clamped to [`MIN_PREC`]..=[`MAX_PREC`]).
    /// Raising it changes nothing but later results; lowering it rounds the midpoint and adds
    /// the rounding error to the radius.
    pub fn with_prec(&self, prec: u32) -> Ball {
        // Rounding can push a radius already at the exponent cap past it; the ball is then
        // kept unrounded (still sound: only the midpoint's length exceeds prec).
        Ball::make(self.man.clone(), self.exp, self.rad, prec).unwrap_or_else(|| Ball {
            prec: clamp_prec(prec),
            ..self.clone()
        })
    }

    /// The exact midpoint as `(man, exp)`, meaning `man * 2^exp` (for exports and outside
    /// checks that need the value itself, not an f64 rounding of it).
    pub fn mid_dyadic(&self) -> (BigInt, i64) {
        (self.man.clone(), self.exp)
    }

    /// The exact radius as `(m, e)`, meaning `m * 2^e` with `m < 2^31`.
    pub fn rad_dyadic(&self) -> (u64, i64) {
        (self.rad.m, self.rad.e)
    }

    /// Whether the radius is 0 (the ball is one exactly known number).
    pub fn is_exact(&self) -> bool {
        self.rad.is_zero()
    }

    /// Whether the ball is exactly the point 0.
    pub fn is_exact_zero(&self) -> bool {
        self.rad.is_zero() && self.man.is_zero()
    }

    /// Whether 0 may lie in the ball (`|mid| <= rad`, decided exactly).
    pub fn contains_zero(&self) -> bool {
        !self.excludes_zero()
    }

    /// Whether every point of the ball is strictly nonzero (`|mid| > rad`, decided exactly):
    /// a certificate that the enclosed value is nonzero.
    pub fn excludes_zero(&self) -> bool {
        if self.man.is_zero() {
            return false;
        }
        if self.rad.is_zero() {
            return true;
        }
        let rad = BigInt::from(self.rad.m);
        dy_cmp((&self.man.abs(), self.exp), (&rad, self.rad.e)) == Ordering::Greater
    }

    /// Whether every point of the ball is strictly positive.
    pub fn is_positive(&self) -> bool {
        self.man.is_positive() && self.excludes_zero()
    }

    /// Whether every point of the ball is strictly negative.
    pub fn is_negative(&self) -> bool {
        self.man.is_negative() && self.excludes_zero()
    }

    /// The midpoint as an f64, within about an ulp (not a bound; infinite beyond the range).
    pub fn mid_f64(&self) -> f64 {
        approx_f64(&self.man, self.exp)
    }

    /// An upper bound on the radius as an f64 (infinite beyond the f64 range).
    pub fn rad_f64(&self) -> f64 {
        self.rad.to_f64_up()
    }

    /// Outward-rounded f64 bounds `(lo, hi)` with `lo <= x <= hi` for every `x` in the ball.
    ///
    /// Never NaN. A bound beyond the f64 range is infinite (`lo` can be `-inf`, `hi` `+inf`;
    /// a ball entirely above `f64::MAX` gives `(f64::MAX, inf)`). Bounds are directed: the
    /// exact value of each is compared with the exact end of the ball, so an exact f64 point
    /// gives `(x, x)` and a value below the subnormals gives a bound of 0 or `±2^-1074`.
    pub fn lo_hi_f64(&self) -> (f64, f64) {
        let (lm, le) = self.bound(false, 64);
        let (hm, he) = self.bound(true, 64);
        (directed(&lm, le, false), directed(&hm, he, true))
    }

    /// Width relative to the midpoint, `2 rad / |mid|`, rounded up; 0 for an exact ball and
    /// infinite when the midpoint is 0 and the radius is not (or beyond the f64 range). Never
    /// below `2^-1074` for an inexact ball (the smallest f64): above about 1000 bits use
    /// [`Ball::accuracy_bits`].
    pub fn rel_width(&self) -> f64 {
        if self.rad.is_zero() {
            return 0.0;
        }
        if self.man.is_zero() {
            return f64::INFINITY;
        }
        let mid = Mag::from_biguint(self.man.magnitude(), self.exp, false);
        self.rad.mul_2exp(1).div(mid).to_f64_up()
    }

    /// Relative accuracy in bits: an integer `a` with `rad <= 2^-a |mid|` (from the leading
    /// bits, so within 2 of the best such integer). `i64::MAX` for an exact ball, `i64::MIN`
    /// when the midpoint is 0 and the radius is not. Unlike [`Ball::rel_width`] it does not
    /// saturate, so precision escalation can compare it with any `prec`.
    pub fn accuracy_bits(&self) -> i64 {
        if self.rad.is_zero() {
            return i64::MAX;
        }
        if self.man.is_zero() {
            return i64::MIN;
        }
        // |mid| >= 2^(top - 1) and rad < 2^rad.top.
        top(&self.man, self.exp) - 1 - self.rad.top()
    }

    /// Upper bound on `|mid|`.
    fn mid_mag(&self) -> Mag {
        Mag::from_biguint(self.man.magnitude(), self.exp, true)
    }

    /// Upper bound on `|x|` over the ball.
    fn mag(&self) -> Mag {
        self.mid_mag().add(self.rad)
    }

    /// A positive lower bound on `|x|` over the ball, or `None` when the ball may contain 0
    /// (or excludes it by less than about `2^-(prec + 96)` relative).
    ///
    /// Computed as `floor(|mid|) - ceil(rad)` at a common exponent at most `prec + 96` bits
    /// below the midpoint's leading bit, so it is a lower bound.
    fn mig(&self) -> Option<Mag> {
        if self.man.is_zero() {
            return None;
        }
        let t = top(&self.man, self.exp);
        if self.rad.is_zero() {
            return Some(Mag::from_biguint(self.man.magnitude(), self.exp, false));
        }
        if self.rad.top() > t {
            return None;
        }
        let e0 = self.exp.min(self.rad.e).max(t - self.prec as i64 - 96);
        let m = shift_round(&self.man.abs(), self.exp - e0, false);
        let r = shift_round(&BigInt::from(self.rad.m), self.rad.e - e0, true);
        let diff = m - r;
        if diff.is_positive() {
            Some(Mag::from_biguint(diff.magnitude(), e0, false))
        } else {
            None
        }
    }

    /// An exact lower (`upper == false`) or upper end of the ball with about `bits` bits:
    /// `floor(mid) - ceil(rad)` or `ceil(mid) + ceil(rad)` at an exponent `bits + 2` below the
    /// larger of the leading bits of `mid` and `rad`. Exact when the radius is 0.
    fn bound(&self, upper: bool, bits: u32) -> (BigInt, i64) {
        if self.rad.is_zero() {
            return (self.man.clone(), self.exp);
        }
        let t = if self.man.is_zero() {
            self.rad.top()
        } else {
            top(&self.man, self.exp).max(self.rad.top())
        };
        let e0 = t - bits as i64 - 2;
        let m = shift_round(&self.man, self.exp - e0, upper);
        let r = shift_round(&BigInt::from(self.rad.m), self.rad.e - e0, true);
        (if upper { m + r } else { m - r }, e0)
    }

    /// The ball widened by `r`.
    fn add_error(mut self, r: Mag) -> Option<Ball> {
        self.rad = self.rad.add(r);
        if self.rad.top() > EXP_CAP {
            return None;
        }
        Some(self)
    }

    /// Exactly `self * 2^k`; `None` beyond the exponent cap.
    pub fn mul_2exp(&self, k: i64) -> Option<Ball> {
        if k.unsigned_abs() > 4 * EXP_CAP as u64 {
            return None;
        }
        let exp = if self.man.is_zero() { 0 } else { self.exp + k };
        Ball::make(self.man.clone(), exp, self.rad.mul_2exp(k), self.prec)
    }

    // ---- arithmetic ------------------------------------------------------------------------

    /// Negation (exact).
    pub fn neg(&self) -> Ball {
        Ball {
            man: -&self.man,
            ..self.clone()
        }
    }

    /// Absolute value: the ball itself or its negation when it excludes 0, else the ball
    /// `[0, mag]` around `mag / 2`.
    pub fn abs(&self) -> Ball {
        if self.excludes_zero() || self.rad.is_zero() {
            return if self.man.is_negative() {
                self.neg()
            } else {
                self.clone()
            };
        }
        let (m, e) = self.mag_bound();
        // [0, mag] as mag/2 ± mag/2, or (at the exponent cap) the cruder 0 ± mag.
        Ball::from_bounds((BigInt::zero(), 0), (m, e), self.prec).unwrap_or_else(|| Ball {
            man: BigInt::zero(),
            exp: 0,
            rad: self.mag(),
            prec: self.prec,
        })
    }

    /// `mag` as an exact dyadic upper bound.
    fn mag_bound(&self) -> (BigInt, i64) {
        let (hm, he) = self.bound(true, self.prec + 8);
        let (lm, le) = self.bound(false, self.prec + 8);
        let (hm, lm) = (hm.abs(), lm.abs());
        if dy_cmp((&hm, he), (&lm, le)) == Ordering::Less {
            (lm, le)
        } else {
            (hm, he)
        }
    }

    /// Sum; `None` beyond the exponent cap.
    ///
    /// Error analysis: the midpoints are added exactly (then rounded to `prec` by `make`) and
    /// the radii added rounding up. When one midpoint is below the other's last bit by more
    /// than `prec + 4` bits, it is not added but moved into the radius (bounded by its
    /// magnitude, rounded up); this keeps the exact sum to about `3 prec` bits.
    pub fn add(&self, rhs: &Ball) -> Option<Ball> {
        let prec = self.prec.max(rhs.prec);
        let rad = self.rad.add(rhs.rad);
        if rhs.man.is_zero() {
            return Ball::make(self.man.clone(), self.exp, rad, prec);
        }
        if self.man.is_zero() {
            return Ball::make(rhs.man.clone(), rhs.exp, rad, prec);
        }
        let (ta, tb) = (top(&self.man, self.exp), top(&rhs.man, rhs.exp));
        let far = prec as i64 + 4;
        if tb < ta - far {
            return Ball::make(self.man.clone(), self.exp, rad.add(rhs.mid_mag()), prec);
        }
        if ta < tb - far {
            return Ball::make(rhs.man.clone(), rhs.exp, rad.add(self.mid_mag()), prec);
        }
        let e = self.exp.min(rhs.exp);
        let man = (&self.man << ((self.exp - e) as u64)) + (&rhs.man << ((rhs.exp - e) as u64));
        Ball::make(man, e, rad, prec)
    }

    /// Difference; `None` beyond the exponent cap. Same error analysis as [`Ball::add`].
    pub fn sub(&self, rhs: &Ball) -> Option<Ball> {
        self.add(&rhs.neg())
    }

    /// Product; `None` beyond the exponent cap.
    ///
    /// Error analysis: for `x = a + s`, `y = b + t` with `|s| <= ra`, `|t| <= rb`,
    /// `xy - ab = at + bs + st`, so `|xy - ab| <= |a| rb + |b| ra + ra rb`, each term rounded
    /// up. The product of midpoints is exact, then rounded to `prec`.
    pub fn mul(&self, rhs: &Ball) -> Option<Ball> {
        let prec = self.prec.max(rhs.prec);
        let rad = self
            .mid_mag()
            .mul(rhs.rad)
            .add(rhs.mid_mag().mul(self.rad))
            .add(self.rad.mul(rhs.rad));
        let exp = if self.man.is_zero() || rhs.man.is_zero() {
            0
        } else {
            self.exp + rhs.exp
        };
        Ball::make(&self.man * &rhs.man, exp, rad, prec)
    }

    /// Quotient; `None` if the divisor may contain 0 or beyond the exponent cap.
    ///
    /// Error analysis: for `x = a + s`, `y = b + t`, `x/y - a/b = (s b - a t) / (y b)`, so
    /// `|x/y - a/b| <= (ra + |a/b| rb) / min|y|`, with `min|y|` a certified lower bound.
    /// The midpoint `q` is `trunc(a * 2^k / b)` for `k` giving at least `prec + 2` bits; its
    /// error `|a/b - q|` is below one unit `u` of `q`, added to the radius, and `|a/b| <=
    /// |q| + u` in the propagated term.
    pub fn div(&self, rhs: &Ball) -> Option<Ball> {
        let prec = self.prec.max(rhs.prec);
        let mig = rhs.mig()?;
        if self.man.is_zero() {
            return Ball::make(BigInt::zero(), 0, self.rad.div(mig), prec);
        }
        let k = (prec as i64 + 2 + rhs.man.bits() as i64 - self.man.bits() as i64).max(0);
        let q = (&self.man << (k as u64)) / &rhs.man; // truncates toward zero
        let qexp = self.exp - rhs.exp - k;
        let unit = Mag::pow2(qexp);
        let q_mag = Mag::from_biguint(q.magnitude(), qexp, true).add(unit);
        let rad = self.rad.add(q_mag.mul(rhs.rad)).div(mig).add(unit);
        Ball::make(q, qexp, rad, prec)
    }

    /// Quotient by a positive machine integer `d` (cheap: one pass over the mantissa).
    ///
    /// Error analysis: the midpoint is `trunc(man * 2^k / d) 2^(exp-k)` with `k` giving at
    /// least `prec` bits, off by less than one unit `2^(exp-k)`; the radius becomes `rad / d`
    /// rounded up, plus that unit. `None` only when the radius is at the exponent cap.
    fn div_int(&self, d: u64) -> Option<Ball> {
        debug_assert!(d >= 1);
        if self.man.is_zero() {
            return Some(Ball {
                rad: self.rad.div_int(d),
                ..self.clone()
            });
        }
        let k = 64 + (self.prec as i64 - self.man.bits() as i64).max(0);
        let q = (&self.man << (k as u64)) / d; // truncates toward zero
        let exp = self.exp - k;
        let rad = self.rad.div_int(d).add(Mag::pow2(exp));
        Ball::make(q, exp, rad, self.prec)
    }

    /// `1 / self`; `None` if the ball may contain 0.
    pub fn recip(&self) -> Option<Ball> {
        Ball::one().with_prec(self.prec).div(self)
    }

    /// Integer power; `self^0` is exactly 1. Negative powers are reciprocals of the positive
    /// power (`None` if that ball, at this precision, may contain 0: for a wide ball that
    /// excludes 0 too); `None` beyond the exponent cap.
    ///
    /// Error analysis: `x^k` is increasing for odd `k`, and for even `k` increasing in `|x|`,
    /// so the result is the hull of the powers of the outward-rounded ends (for even `k` and
    /// ends of both signs, `[0, max(|lo|, |hi|)^k]`). Each end's power is computed by repeated
    /// squaring of an exact point with [`Ball::mul`] at `prec + 32 + log2 k` bits, so the
    /// relative error growth of about `k 2^-wp` stays below the result precision.
    pub fn powi(&self, n: i64) -> Option<Ball> {
        let k = n.unsigned_abs();
        if k == 0 {
            return Some(Ball::one().with_prec(self.prec));
        }
        let wp = self.prec + GUARD + (64 - k.leading_zeros());
        let pow = |v: (BigInt, i64), upper: bool| -> Option<(BigInt, i64)> {
            Some(pow_point(&Ball::exact(v.0, v.1, wp + 8)?, k)?.bound(upper, wp))
        };
        let (lo, hi) = (self.bound(false, wp), self.bound(true, wp));
        let positive = if k % 2 == 1 || !lo.0.is_negative() {
            Ball::from_bounds(pow(lo, false)?, pow(hi, true)?, self.prec)?
        } else if !hi.0.is_positive() {
            let neg = |v: (BigInt, i64)| (-v.0, v.1);
            Ball::from_bounds(pow(neg(hi), false)?, pow(neg(lo), true)?, self.prec)?
        } else {
            let far = if dy_cmp((&-&lo.0, lo.1), (&hi.0, hi.1)) == Ordering::Greater {
                (-lo.0, lo.1)
            } else {
                hi
            };
            Ball::from_bounds((BigInt::zero(), 0), pow(far, true)?, self.prec)?
        };
        if n < 0 {
            positive.recip()
        } else {
            Some(positive)
        }
    }

    /// Square root; `None` if the ball reaches below 0 (the square root of a ball with lower
    /// end exactly 0 is defined).
    ///
    /// Error analysis: sqrt is increasing, so the result is `[floor sqrt(lo), ceil sqrt(hi)]`
    /// for outward-rounded ends `lo`, `hi`; each is an integer square root (exact floor) of
    /// the end scaled to at least `2 (prec + 32)` bits, and `ceil = floor + 1` unless the
    /// scaled end is a perfect square.
    pub fn sqrt(&self) -> Option<Ball> {
        let wp = self.prec + GUARD;
        if self.rad.is_zero() {
            if self.man.is_negative() {
                return None;
            }
            let (f, e, exact) = sqrt_floor(&(self.man.clone(), self.exp), wp);
            let hi = if exact { f.clone() } else { &f + 1u8 };
            return Ball::from_bounds((f, e), (hi, e), self.prec);
        }
        let lo = self.bound(false, wp);
        if lo.0.is_negative() {
            return None;
        }
        let hi = self.bound(true, wp);
        Ball::from_bounds(
            sqrt_dyadic(&lo, wp, false),
            sqrt_dyadic(&hi, wp, true),
            self.prec,
        )
    }

    // ---- transcendental functions ----------------------------------------------------------

    /// Evaluates an increasing function `f` given as a ball evaluator at the two ends of the
    /// ball (at `prec + GUARD` bits) and returns the hull: `[lower end of f(lo), upper end of
    /// f(hi)]`, rounded to `prec`. Sound because `f(x)` lies between `f(lo)` and `f(hi)` for
    /// every `x` in `[lo, hi]`, and `f(lo)`, `f(hi)` lie in their enclosures.
    fn increasing(&self, f: impl Fn(&Ball, u32) -> Option<Ball>) -> Option<Ball> {
        let wp = self.prec + GUARD;
        if self.rad.is_zero() {
            return Some(f(&self.with_prec(wp), wp)?.with_prec(self.prec));
        }
        let point = |(m, e): (BigInt, i64)| Ball::exact(m, e, wp + 8);
        let lo = f(&point(self.bound(false, wp))?, wp)?;
        let hi = f(&point(self.bound(true, wp))?, wp)?;
        Ball::from_bounds(lo.bound(false, wp), hi.bound(true, wp), self.prec)
    }

    /// Exponential; `None` if the ball reaches `2^36` or more (the result would pass the
    /// exponent cap). Below `-2^36` the lower bound is 0 and the upper bound `2^(-2^36)`.
    ///
    /// Error analysis (per end point `x`, see `exp_point`): `x = n ln2 + r` with `ln2` an
    /// enclosure at enough bits that `n ln2` is accurate to the working precision; `r` is
    /// scaled by `2^-k`, the Taylor series is summed by Horner's rule in ball arithmetic with
    /// the tail bound `2 |y|^N / N!` (valid for `|y| <= 1/2`, where successive terms shrink
    /// by at least half), then squared `k` times (ball multiplication, which tracks the
    /// relative error growth of `2^k`, compensated by `k` extra bits) and scaled by `2^n`.
    pub fn exp(&self) -> Option<Ball> {
        let limit = BigInt::one();
        let (hm, he) = self.bound(true, self.prec + GUARD);
        if dy_cmp((&hm, he), (&limit, EXP_ARG_BITS)) != Ordering::Less {
            return None;
        }
        let (lm, le) = self.bound(false, self.prec + GUARD);
        if dy_cmp((&lm, le), (&-limit.clone(), EXP_ARG_BITS)) == Ordering::Greater {
            return self.increasing(exp_point);
        }
        // The ball reaches below -2^36, where exp(x) < 2^x (e > 2): lower bound 0.
        let upper = if dy_cmp((&hm, he), (&-limit, EXP_ARG_BITS)) == Ordering::Greater {
            let p = Ball::exact(hm, he, self.prec + GUARD + 8)?;
            exp_point(&p, self.prec + GUARD)?.bound(true, self.prec + GUARD)
        } else {
            (BigInt::one(), -(1i64 << EXP_ARG_BITS))
        };
        Ball::from_bounds((BigInt::zero(), 0), upper, self.prec)
    }

    /// Natural logarithm; `None` unless the ball is strictly positive.
    ///
    /// Error analysis (per end point, see `ln_point`): `x = 2^e y` with `y` in about
    /// `[0.7, 1.42]` (exact scaling); `s` square roots in ball arithmetic bring `y` within
    /// about `2^-sqrt(prec)/8` of 1 (`ln y = 2^s ln y^(1/2^s)`, fewer roots when `y` is
    /// already near 1, extra bits for the roots' absolute error); then `ln y_s = 2 atanh(z)`
    /// with `z = (y_s-1)/(y_s+1)` (`y - 1` is exact, so arguments near 1 keep their relative
    /// accuracy), the series of atanh in `z^2` summed by Horner's rule with the tail bound
    /// `2 |z|^(2N+1)` (geometric with ratio `z^2 <= 1/2`), times `2^s`, plus `e ln2`.
    pub fn ln(&self) -> Option<Ball> {
        let (lm, _) = self.bound(false, self.prec + GUARD);
        if !lm.is_positive() {
            return None;
        }
        self.increasing(ln_point)
    }

    /// Sine; always defined (at worst `[-1, 1]`).
    ///
    /// Error analysis: `sin(m) ± rad` is sound because `|sin'| <= 1`. `sin(m)` (see
    /// `sin_cos_point`) reduces `m` by the nearest multiple `k` of pi/2 with pi enclosed at
    /// the working precision plus the bits of `m`'s integer part plus 32 (more when the
    /// reduced argument has lost bits to cancellation), then sums the Taylor series of sin or
    /// cos by Horner's rule with the tail bound `2 |t|^M / M!`, where `M` is the first omitted
    /// power and the series is cut only where the ratio of successive omitted terms is below
    /// 1/4. Arguments beyond `2^MAX_PREC` or a radius of 1 or more give `[-1, 1]`.
    pub fn sin(&self) -> Ball {
        self.sin_or_cos(false)
    }

    /// Cosine; always defined (at worst `[-1, 1]`). Same analysis as [`Ball::sin`].
    pub fn cos(&self) -> Ball {
        self.sin_or_cos(true)
    }

    fn sin_or_cos(&self, cos: bool) -> Ball {
        let unit = Ball {
            man: BigInt::zero(),
            exp: 0,
            rad: Mag::pow2(0),
            prec: self.prec,
        };
        if self.rad.cmp(Mag::pow2(0)) != Ordering::Less {
            return unit;
        }
        let wp = self.prec + GUARD;
        let mid = Ball::exact(self.man.clone(), self.exp, wp).expect("the midpoint is valid");
        sin_cos_point(&mid, wp, cos)
            .and_then(|v| v.add_error(self.rad))
            .map(|v| v.with_prec(self.prec))
            .unwrap_or(unit)
    }

    /// Arctangent; always defined (at worst `[-pi/2, pi/2]`).
    ///
    /// Error analysis (per end point, see `atan_point`): for `|x| > 1`, `atan x = ±pi/2 -
    /// atan(1/x)`; then `k` halvings `y -> y / (1 + sqrt(1 + y^2))` (each `atan y = 2 atan y'`)
    /// in ball arithmetic, the alternating series summed by Horner's rule with the tail bound
    /// `2 |y|^(2N+1) / (2N+1)` (geometric, ratio `y^2 <= 1/4`), times `2^k`.
    pub fn atan(&self) -> Ball {
        self.increasing(atan_point).unwrap_or_else(|| {
            let half_pi = Ball::pi(self.prec).mul_2exp(-1).expect("small");
            Ball {
                man: BigInt::zero(),
                exp: 0,
                rad: half_pi.mag(),
                prec: self.prec,
            }
        })
    }

    /// Tangent `sin / cos` (evaluated with 8 extra bits, then rounded); `None` where the
    /// cosine's ball may contain 0.
    pub fn tan(&self) -> Option<Ball> {
        let x = self.with_prec(self.prec + 8);
        Some(x.sin().div(&x.cos())?.with_prec(self.prec))
    }

    /// Extra bits that make up for cancellation in `e^x - e^-x` or `e^2x - 1` near 0: about
    /// the number of leading zero bits of `|x|` below 1, capped at [`MAX_PREC`].
    fn small_arg_bits(&self) -> u32 {
        let t = self.mag().top();
        (-t).clamp(0, MAX_PREC as i64) as u32 + 8
    }

    // The derived functions below are evaluated with 8 extra bits (more for small
    // arguments) and rounded once at the end, so their widths stay near `2^-prec`.

    /// Hyperbolic sine `(e^x - e^-x) / 2`, at extra precision for small `|x|` so that the
    /// cancellation does not cost relative accuracy; `None` where exp fails.
    pub fn sinh(&self) -> Option<Ball> {
        let x = self.with_prec(self.prec + self.small_arg_bits());
        let e = x.exp()?;
        let s = e.sub(&e.recip()?)?.mul_2exp(-1)?;
        Some(s.with_prec(self.prec))
    }

    /// Hyperbolic cosine `(e^x + e^-x) / 2`; `None` where exp fails.
    pub fn cosh(&self) -> Option<Ball> {
        let e = self.with_prec(self.prec + 8).exp()?;
        Some(e.add(&e.recip()?)?.mul_2exp(-1)?.with_prec(self.prec))
    }

    /// Hyperbolic tangent `(e^2x - 1) / (e^2x + 1)`, at extra precision for small `|x|`;
    /// for a ball at or beyond `±2^20` it is `±1` within `2^-(2^21)` (since `1 - tanh x <
    /// 2 e^-2x`). `None` where exp fails on a ball reaching both signs far out.
    pub fn tanh(&self) -> Option<Ball> {
        let far = BigInt::one();
        let (lm, le) = self.bound(false, self.prec + GUARD);
        let (hm, he) = self.bound(true, self.prec + GUARD);
        let saturated =
            |sign: i64| Ball::make(BigInt::from(sign), 0, Mag::pow2(-(1 << 21)), self.prec);
        if dy_cmp((&lm, le), (&far, 20)) != Ordering::Less {
            return saturated(1);
        }
        if dy_cmp((&hm, he), (&-far, 20)) != Ordering::Greater {
            return saturated(-1);
        }
        let x = self.with_prec(self.prec + self.small_arg_bits());
        let e = x.mul_2exp(1)?.exp()?;
        let one = Ball::one();
        let t = e.sub(&one)?.div(&e.add(&one)?)?;
        Some(t.with_prec(self.prec))
    }

    // ---- printing --------------------------------------------------------------------------

    /// The midpoint in decimal scientific notation with `digits` significant digits, rounded
    /// to nearest (a display, not a bound). Midpoints beyond `2^±1000000` are printed as
    /// `man*2^exp` instead.
    pub fn mid_decimal(&self, digits: usize) -> String {
        let digits = digits.clamp(1, 100_000);
        if self.man.is_zero() {
            return "0".into();
        }
        let t = top(&self.man, self.exp);
        if t.abs() > 1_000_000 {
            return format!("{}*2^{}", self.man, self.exp);
        }
        let sign = if self.man.is_negative() { "-" } else { "" };
        let abs = self.man.abs();
        // Decimal exponent estimate, corrected below if the digit count comes out wrong.
        let mut e10 = ((t - 1) as f64 * std::f64::consts::LOG10_2).floor() as i64;
        for _ in 0..4 {
            let d = digits as i64 - 1 - e10;
            let ten = BigInt::from(10u32);
            let (mut num, mut den) = (abs.clone(), BigInt::one());
            if d >= 0 {
                num *= num_traits::pow(ten, d as usize);
            } else {
                den *= num_traits::pow(ten, (-d) as usize);
            }
            if self.exp >= 0 {
                num <<= self.exp as u64;
            } else {
                den <<= self.exp.unsigned_abs();
            }
            // Round to nearest: floor((2 num + den) / (2 den)).
            let n = ((num << 1u8) + &den) / (den << 1u8);
            let text = n.to_string();
            let carried = text.len() == digits + 1 && text[1..].bytes().all(|b| b == b'0');
            let (text, e10) = match text.len().cmp(&digits) {
                Ordering::Equal => (text, e10),
                // Rounding carried into a new digit: 10^digits, printed as 1.00.. e(e10+1).
                Ordering::Greater if carried => (text[..digits].to_string(), e10 + 1),
                Ordering::Greater => {
                    e10 += 1;
                    continue;
                }
                Ordering::Less => {
                    e10 -= 1;
                    continue;
                }
            };
            let (head, tail) = text.split_at(1);
            return if tail.is_empty() {
                format!("{sign}{head}e{e10}")
            } else {
                format!("{sign}{head}.{tail}e{e10}")
            };
        }
        format!("{}*2^{}", self.man, self.exp)
    }
}

impl fmt::Display for Ball {
    /// `[mid +/- rad]`: the midpoint with the formatter's precision in significant digits
    /// (default: as many as `prec` bits carry), the radius rounded up to 3 digits.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let digits = f
            .precision()
            .unwrap_or((self.prec as f64 * std::f64::consts::LOG10_2).ceil() as usize + 1);
        let mid = self.mid_decimal(digits);
        if self.rad.is_zero() {
            return write!(f, "[{mid} +/- 0]");
        }
        // Three significant digits round by at most 0.5%, so printing 1.01 r keeps the
        // printed radius at or above r.
        let r = self.rad_f64() * 1.01;
        if r.is_finite() && r >= f64::MIN_POSITIVE {
            write!(f, "[{mid} +/- {r:.2e}]")
        } else {
            write!(f, "[{mid} +/- {}*2^{}]", self.rad.m, self.rad.e)
        }
    }
}

// ---- constants -----------------------------------------------------------------------------

thread_local! {
    static PI_CACHE: RefCell<Option<Ball>> = const { RefCell::new(None) };
    static LN2_CACHE: RefCell<Option<Ball>> = const { RefCell::new(None) };
}

/// A constant at precision `prec`, from the thread's cache when it holds at least that many
/// bits (rounding a cached ball adds its rounding error to the radius, so it stays sound).
fn constant(
    cache: &'static std::thread::LocalKey<RefCell<Option<Ball>>>,
    prec: u32,
    compute: fn(u32) -> Ball,
) -> Ball {
    cache.with(|c| {
        if let Some(b) = c.borrow().as_ref()
            && b.prec >= prec
        {
            return b.with_prec(prec);
        }
        let b = compute(prec);
        *c.borrow_mut() = Some(b.clone());
        b
    })
}

/// `sum_k (∓1)^k / ((2k+1) n^(2k+1))` (atan(1/n), or atanh(1/n) when `hyperbolic`) as an
/// integer `S` with `|S 2^-w - value| <= err 2^-w`.
///
/// Error analysis: `floor(floor(a)/b) = floor(a/b)` for integers `b`, so every computed term
/// is exactly `floor(2^w / ((2k+1) n^(2k+1)))`, off by less than 1 unit. Summation stops at
/// the first term that is 0, so the omitted tail starts with a term below 1 unit and, the
/// terms shrinking by at least `n^2 >= 9`, is below 2 units in total. Hence `err = K + 2`
/// for `K` summed terms.
fn atan_inv_fixed(n: u64, w: u64, hyperbolic: bool) -> (BigInt, u64) {
    let n2 = BigInt::from(n * n);
    let mut power = (BigInt::one() << w) / n;
    let mut sum = BigInt::zero();
    let mut k: u64 = 0;
    loop {
        let term = &power / (2 * k + 1);
        if term.is_zero() {
            break;
        }
        if hyperbolic || k.is_multiple_of(2) {
            sum += term;
        } else {
            sum -= term;
        }
        power /= &n2;
        k += 1;
    }
    (sum, k + 2)
}

/// pi by Machin's formula `pi = 16 atan(1/5) - 4 atan(1/239)`, with the error bounds of
/// [`atan_inv_fixed`] scaled by 16 and 4.
fn pi_fixed(prec: u32) -> Ball {
    let w = prec as u64 + 32;
    let (a, ea) = atan_inv_fixed(5, w, false);
    let (b, eb) = atan_inv_fixed(239, w, false);
    let err = 16 * ea + 4 * eb;
    Ball::make(
        a * 16 - b * 4,
        -(w as i64),
        Mag::from_u128_up(err as u128, -(w as i64)),
        prec,
    )
    .expect("pi is small")
}

/// ln 2 = 2 atanh(1/3), with twice the error bound of [`atan_inv_fixed`].
fn ln2_fixed(prec: u32) -> Ball {
    let w = prec as u64 + 32;
    let (a, ea) = atan_inv_fixed(3, w, true);
    Ball::make(
        a * 2,
        -(w as i64),
        Mag::from_u128_up(2 * ea as u128, -(w as i64)),
        prec,
    )
    .expect("ln 2 is small")
}

// ---- point evaluators (sound on any ball; used on exact points) -----------------------------

/// `floor` (or `ceil` when `up`) of `sqrt(v)` for the dyadic `v >= 0`, with at least `wp`
/// bits: `v` is scaled by an even power of two to at least `2 wp` bits, so the integer square
/// root is exact up to its last unit.
fn sqrt_dyadic(v: &(BigInt, i64), wp: u32, up: bool) -> (BigInt, i64) {
    let (r, e, exact) = sqrt_floor(v, wp);
    (if up && !exact { r + 1 } else { r }, e)
}

/// `floor(sqrt(v))` for the dyadic `v >= 0` as `(r, e)` meaning `r 2^e`, with at least `wp`
/// bits, and whether it is exact.
fn sqrt_floor(v: &(BigInt, i64), wp: u32) -> (BigInt, i64, bool) {
    let (m, e) = v;
    if m.is_zero() {
        return (BigInt::zero(), 0, true);
    }
    let mut s = (2 * wp as i64 - m.bits() as i64).max(0);
    if (e - s).rem_euclid(2) != 0 {
        s += 1;
    }
    let scaled = m.magnitude() << (s as u64);
    let r = scaled.sqrt();
    let exact = &r * &r == scaled;
    (BigInt::from(r), (e - s) / 2, exact)
}

/// The number of series terms and the tail bound: starting from the bound `b0` on the term
/// of power `m0`, the next bound is `b * x / ((m+1)...(m+step))`; stops at the first omitted
/// term `b` with `b < target` and ratio to the next below 1/4 from there on (which holds once
/// `(m+1)(m+2) >= 4x` for `x = |t|^2` and `step == 2`, or `m + 1 >= 4x` for `x = |t|`,
/// `step == 1`); the tail is then at most `b (1 + 1/4 + ...) < 2 b`. Returns `(m, 2b)` with
/// `m` the first omitted power, or `None` past a cap on the length.
fn taylor_cut(x: Mag, b0: Mag, m0: u64, step: u64, target: Mag) -> Option<(u64, Mag)> {
    let mut b = b0;
    let mut m = m0;
    let four_x = x.mul_2exp(2);
    for _ in 0..200_000 {
        let denom = if step == 2 { (m + 1) * (m + 2) } else { m + 1 };
        let ratio_ok = four_x.cmp(Mag::from_u128_down(denom as u128, 0)) != Ordering::Greater;
        if ratio_ok && b.cmp(target) == Ordering::Less {
            return Some((m, b.mul_2exp(1)));
        }
        b = b.mul(x).div_int(denom);
        m += step;
    }
    None
}

/// `x^k` for `k >= 1` by repeated squaring with [`Ball::mul`].
fn pow_point(x: &Ball, k: u64) -> Option<Ball> {
    let mut k = k;
    let mut acc: Option<Ball> = None;
    let mut base = x.clone();
    loop {
        if k & 1 == 1 {
            acc = Some(match acc {
                None => base.clone(),
                Some(a) => a.mul(&base)?,
            });
        }
        k >>= 1;
        if k == 0 {
            return acc;
        }
        base = base.mul(&base)?;
    }
}

/// exp of a ball with `|x| < 2^37`; `None` otherwise (the exact cap of 2^36 is applied by
/// [`Ball::exp`]; the magnitude here is rounded up to 30 bits, hence the extra bit). See
/// [`Ball::exp`] for the analysis.
fn exp_point(x: &Ball, wp: u32) -> Option<Ball> {
    if x.mag().top() > EXP_ARG_BITS + 1 {
        return None;
    }
    if x.man.is_zero() && x.rad.is_zero() {
        return Some(Ball::one().with_prec(wp));
    }
    let n = (x.mid_f64() / std::f64::consts::LN_2).round() as i64;
    // k halvings before the series, compensated by k extra bits (squaring doubles the relative
    // error k times).
    let k = (wp as f64).sqrt() as u32 / 2 + 2;
    let wq = wp + k + 16;
    let x = x.with_prec(wq + 40);
    let r = if n == 0 {
        x
    } else {
        // n has at most 38 bits; ln2 at wq + 48 bits keeps n ln2 accurate to wq bits.
        x.sub(&Ball::ln2(wq + 48).mul(&Ball::from_int(n))?)?
    };
    let y = r.mul_2exp(-(k as i64))?.with_prec(wq);
    let ym = y.mag();
    // |r| <= ln2/2 + tiny, so |y| <= 1/2 for k >= 1; checked, since the tail bound needs it.
    if ym.cmp(Mag::pow2(-1)) == Ordering::Greater {
        return None;
    }
    let (big_n, tail) = taylor_cut(ym, Mag::pow2(0), 0, 1, Mag::pow2(-(wq as i64) - 4))?;
    // Horner: s = 1 + y/1 (1 + y/2 (1 + ... (1 + y/(N-1)))).
    let one = Ball::one().with_prec(wq);
    let mut s = one.clone();
    for j in (1..big_n).rev() {
        s = one.add(&y.mul(&s)?.div_int(j)?)?;
    }
    let mut s = s.add_error(tail)?;
    for _ in 0..k {
        s = s.mul(&s)?;
    }
    s.mul_2exp(n)
}

/// ln of a positive ball. See [`Ball::ln`] for the analysis.
fn ln_point(x: &Ball, wp: u32) -> Option<Ball> {
    if !x.is_positive() {
        return None;
    }
    let mut e = top(&x.man, x.exp) - 1;
    let mut y = x.mul_2exp(-e)?; // in [1, 2) up to the radius
    if y.mid_f64() > std::f64::consts::SQRT_2 {
        e += 1;
        y = y.mul_2exp(-1)?;
    }
    // Square roots bring y to within about 2^-kmax of 1 (ln y = 2^s ln y^(1/2^s)), so the
    // series is short. Each root has an absolute error near 2^-wq, which is relative to
    // y_s - 1 ~ 2^-kmax, hence kmax extra bits; y already near 1 takes fewer roots, so its
    // relative accuracy near 1 is kept.
    let kmax = (wp as f64).sqrt() as i64 / 8;
    let wq = wp + kmax as u32 + 16;
    let one = Ball::one().with_prec(wq);
    let mut y = y.with_prec(wq);
    let near = y.sub(&one)?.mag().top();
    let roots = (kmax + near).max(0);
    for _ in 0..roots {
        y = y.sqrt()?;
    }
    let z = y.sub(&one)?.div(&y.add(&one)?)?;
    let z2 = z.mul(&z)?;
    let z2m = z2.mag();
    if z2m.cmp(Mag::pow2(-1)) == Ordering::Greater {
        return None;
    }
    // Terms z^(2j+1)/(2j+1) <= z2^j |z|: cut the series in z2 where the term bound is tiny
    // relative to |z| (the sum is at least |z|); the tail bound is 2 z2^N / (2N+1) <= 2 z2^N,
    // times |z|.
    let (big_n, tail) = geometric_cut(z2m, Mag::pow2(-(wq as i64) - 4))?;
    // Horner in z2: s = 1/1 + z2 (1/3 + z2 (1/5 + ...)).
    let mut s = one.div_int(2 * big_n - 1)?;
    for j in (0..big_n - 1).rev() {
        s = one.div_int(2 * j + 1)?.add(&z2.mul(&s)?)?;
    }
    let s = s.add_error(tail)?;
    let ln_y = z.mul(&s)?.mul_2exp(1 + roots)?;
    if e == 0 {
        Some(ln_y)
    } else {
        ln_y.add(&Ball::ln2(wq + 64).mul(&Ball::from_int(e))?)
    }
}

/// For `q <= 1/2`: the smallest `N` with `q^N < target`, and `2 q^N` bounding
/// `sum_{j >= N} q^j` (geometric). `None` past a cap on the length.
fn geometric_cut(q: Mag, target: Mag) -> Option<(u64, Mag)> {
    let mut b = Mag::pow2(0);
    for n in 1..400_000u64 {
        b = b.mul(q);
        if b.cmp(target) == Ordering::Less {
            return Some((n, b.mul_2exp(1)));
        }
    }
    None
}

/// sin (or cos) of a ball of moderate radius. See [`Ball::sin`] for the analysis.
fn sin_cos_point(x: &Ball, wp: u32, cos: bool) -> Option<Ball> {
    let (k, t) = reduce_half_pi(x, wp)?;
    // sin(t + k pi/2) and cos(t + k pi/2) by k mod 4.
    let (use_cos, negate) = match (cos, k) {
        (false, 0) => (false, false),
        (false, 1) => (true, false),
        (false, 2) => (false, true),
        (false, _) => (true, true),
        (true, 0) => (true, false),
        (true, 1) => (false, true),
        (true, 2) => (true, true),
        (true, _) => (false, false),
    };
    let wq = t.prec;
    let t2 = t.mul(&t)?;
    let t2m = t2.mag();
    let one = Ball::one().with_prec(wq);
    let v = if use_cos {
        // Relative to 1 (|cos t| >= cos(pi/4 + tiny) after a good reduction).
        let (m, tail) = taylor_cut(t2m, Mag::pow2(0), 0, 2, Mag::pow2(-(wq as i64) - 4))?;
        // c = 1 - t2/(1*2) (1 - t2/(3*4) (...)); m = 2N is the first omitted power.
        let n = m / 2;
        let mut c = one.clone();
        for j in (1..n).rev() {
            c = one.sub(&t2.mul(&c)?.div_int((2 * j - 1) * (2 * j))?)?;
        }
        c.add_error(tail)?
    } else {
        if t.man.is_zero() && t.rad.is_zero() {
            return Some(Ball::zero().with_prec(wq));
        }
        // Relative to |t| (|sin t| >= |t| / 2 for |t| <= 2): the target scales with |t|.
        let tm = t.mag();
        let target = tm.mul(Mag::pow2(-(wq as i64) - 4));
        let (m, tail) = taylor_cut(t2m, tm, 1, 2, target)?;
        // s = 1 - t2/(2*3) (1 - t2/(4*5) (...)); sin = t s; m = 2N + 1.
        let n = (m - 1) / 2;
        let mut s = one.clone();
        for j in (1..n).rev() {
            s = one.sub(&t2.mul(&s)?.div_int((2 * j) * (2 * j + 1))?)?;
        }
        t.mul(&s)?.add_error(tail)?
    };
    Some(if negate { v.neg() } else { v })
}

/// `x = k pi/2 + t` with `k mod 4` and `t` (a ball at working precision `>= wp`) such that
/// the reduced argument keeps about `wp` bits relative; `None` for `|x| >= 2^MAX_PREC`.
///
/// `k` is the nearest integer to the midpoint of `x / (pi/2)`; any integer gives a correct
/// identity, so only `t = x - k pi/2` (computed in ball arithmetic with pi enclosed) matters
/// for soundness. When cancellation left `t` with fewer than `wp` good bits, the reduction is
/// repeated with that many more bits of pi, as the loss is known. Ball operations work at
/// most at [`MAX_PREC`] bits, so when `prec + log2|x|` (plus the cancellation) exceeds it, the
/// reduced argument keeps fewer bits: the result is still an enclosure, only wider.
fn reduce_half_pi(x: &Ball, wp: u32) -> Option<(u8, Ball)> {
    let xm = x.mag();
    if xm.cmp(Mag::from_u128_down(3, -2)) == Ordering::Less {
        return Some((0, x.with_prec(wp + 8)));
    }
    let xt = xm.top();
    if xt > MAX_PREC as i64 {
        return None;
    }
    let mut extra = xt as u32 + GUARD;
    let mut best: Option<(u8, Ball)> = None;
    for _ in 0..4 {
        let wq = (wp + extra).min(MAX_PREC);
        let half_pi = Ball::pi(wq).mul_2exp(-1)?;
        let xq = x.with_prec(wq);
        let q = xq.div(&half_pi)?;
        // k = round(mid(q)) = floor(mid(q) + 1/2).
        let (qm, qe) = (&q.man, q.exp);
        let k = if qe >= 0 {
            qm << (qe as u64)
        } else {
            shr_round(
                &((qm << 1u8) + (BigInt::one() << qe.unsigned_abs())),
                qe.unsigned_abs() + 1,
                false,
            )
        };
        let t = xq.sub(&half_pi.mul(&Ball::from_bigint(&k).with_prec(wq))?)?;
        let kmod = k.mod_floor(&BigInt::from(4)).to_u8().expect("0..4");
        // Good bits of t; stop once at least wp.
        let good = t.accuracy_bits();
        best = Some((kmod, t));
        if good >= wp as i64 || wq >= MAX_PREC {
            break;
        }
        // A reduced argument that may be 0 says nothing about the loss: double the bits.
        let lost = if good == i64::MIN {
            extra + wp
        } else {
            (wp as i64 - good).clamp(0, MAX_PREC as i64) as u32
        };
        extra = extra.saturating_add(lost + 16).min(MAX_PREC);
    }
    best
}

/// atan of a ball; `None` when the reduction cannot certify its preconditions (the caller
/// falls back to `[-pi/2, pi/2]`). See [`Ball::atan`] for the analysis.
fn atan_point(x: &Ball, wp: u32) -> Option<Ball> {
    if x.man.is_zero() && x.rad.is_zero() {
        return Some(Ball::zero().with_prec(wp));
    }
    let wq = wp + 24;
    let x = x.with_prec(wq);
    // |x| > 1 on the whole ball: reflect.
    if x.mig()
        .is_some_and(|m| m.cmp(Mag::pow2(0)) == Ordering::Greater)
    {
        let inner = atan_point(&x.recip()?, wp)?;
        let half_pi = Ball::pi(wq + 8).mul_2exp(-1)?;
        let side = if x.man.is_positive() {
            half_pi
        } else {
            half_pi.neg()
        };
        return side.sub(&inner);
    }
    // Halvings cost a square root and a division each, series terms a multiplication: a
    // handful of halvings is the cheaper balance.
    let k = (wp as f64).sqrt() as u32 / 8 + 3;
    let one = Ball::one().with_prec(wq);
    let mut y = x;
    for _ in 0..k {
        let root = one.add(&y.mul(&y)?)?.sqrt()?;
        y = y.div(&one.add(&root)?)?;
    }
    let y2 = y.mul(&y)?;
    let y2m = y2.mag();
    if y2m.cmp(Mag::pow2(-2)) == Ordering::Greater {
        return None;
    }
    // Terms y^(2j+1)/(2j+1) <= y2^j |y|; the sum is at least |y| (1 - y2/3) >= |y|/2, so a
    // term bound relative to |y| is a relative accuracy.
    let (big_n, tail) = geometric_cut(y2m, Mag::pow2(-(wq as i64) - 4))?;
    // Horner in y2: s = 1/1 - y2 (1/3 - y2 (1/5 - ...)).
    let mut s = one.div_int(2 * big_n - 1)?;
    for j in (0..big_n - 1).rev() {
        s = one.div_int(2 * j + 1)?.sub(&y2.mul(&s)?)?;
    }
    let s = s.add_error(tail)?;
    y.mul(&s)?.mul_2exp(k as i64)
}

#[cfg(test)]
mod tests;
