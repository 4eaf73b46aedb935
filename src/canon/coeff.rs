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

/// An element of Q(sqrt 2, sqrt 3, i).
#[derive(Clone, PartialEq, Eq, Debug, Default)]
pub struct Coeff {
    parts: Vec<(u8, Q)>,
}

/// Hashes numerator and denominator directly. `BigRational`'s own `Hash` walks the continued
/// fraction recursively (one stack frame per partial quotient), which overflows the stack on a
/// rational such as (1 + 10^-20)^2000; our rationals are always in lowest terms with a
/// positive denominator, so hashing the pair agrees with equality.
impl std::hash::Hash for Coeff {
    fn hash<H: std::hash::Hasher>(&self, h: &mut H) {
        h.write_usize(self.parts.len());
        for (b, q) in &self.parts {
            h.write_u8(*b);
            q.numer().hash(h);
            q.denom().hash(h);
        }
    }
}

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
    /// Zero.
    pub fn zero() -> Coeff {
        Coeff { parts: Vec::new() }
    }
    /// One.
    pub fn one() -> Coeff {
        Coeff::rational(Q::one())
    }
    /// The imaginary unit.
    pub fn i() -> Coeff {
        Coeff {
            parts: vec![(IMAG, Q::one())],
        }
    }
    /// A rational number.
    pub fn rational(q: Q) -> Coeff {
        if q.is_zero() {
            Coeff::zero()
        } else {
            Coeff {
                parts: vec![(0, q)],
            }
        }
    }
    /// An integer.
    pub fn int(n: i64) -> Coeff {
        Coeff::rational(Q::from_integer(BigInt::from(n)))
    }
    /// `q * sqrt(2)^a * sqrt(3)^b * i^c` for the basis index `a + 2b + 4c`.
    fn basis(index: u8, q: Q) -> Coeff {
        if q.is_zero() {
            Coeff::zero()
        } else {
            Coeff {
                parts: vec![(index, q)],
            }
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
        Coeff { parts: out }
    }

    /// True for zero.
    pub fn is_zero(&self) -> bool {
        self.parts.is_empty()
    }
    /// True for one.
    pub fn is_one(&self) -> bool {
        self.parts.len() == 1 && self.parts[0].0 == 0 && self.parts[0].1.is_one()
    }
    /// The value if this is a rational number.
    pub fn as_rational(&self) -> Option<Q> {
        match self.parts.as_slice() {
            [] => Some(Q::zero()),
            [(0, q)] => Some(q.clone()),
            _ => None,
        }
    }
    /// True if the imaginary part is zero.
    pub fn is_real(&self) -> bool {
        self.parts.iter().all(|p| p.0 & IMAG == 0)
    }
    /// The real part.
    pub fn re(&self) -> Coeff {
        Coeff {
            parts: self
                .parts
                .iter()
                .filter(|p| p.0 & IMAG == 0)
                .cloned()
                .collect(),
        }
    }
    /// The imaginary part (a real number).
    pub fn im(&self) -> Coeff {
        Coeff {
            parts: self
                .parts
                .iter()
                .filter(|p| p.0 & IMAG != 0)
                .map(|(b, q)| (b & !IMAG, q.clone()))
                .collect(),
        }
    }
    /// If this is `i*q` with q rational, returns q.
    pub fn as_imag_rational(&self) -> Option<Q> {
        match self.parts.as_slice() {
            [(IMAG, q)] => Some(q.clone()),
            _ => None,
        }
    }

    /// Sum.
    pub fn add(&self, o: &Coeff) -> Coeff {
        if o.is_zero() {
            return self.clone();
        }
        if self.is_zero() {
            return o.clone();
        }
        let mut v = self.parts.clone();
        v.extend(o.parts.iter().cloned());
        Coeff::from_parts(v)
    }
    /// Negation.
    pub fn neg(&self) -> Coeff {
        Coeff {
            parts: self.parts.iter().map(|(b, q)| (*b, -q)).collect(),
        }
    }
    /// Difference.
    pub fn sub(&self, o: &Coeff) -> Coeff {
        self.add(&o.neg())
    }
    /// Product.
    pub fn mul(&self, o: &Coeff) -> Coeff {
        if self.is_zero() || o.is_zero() {
            return Coeff::zero();
        }
        if let [(0, q)] = o.parts.as_slice() {
            if q.is_one() {
                return self.clone();
            }
            return Coeff {
                parts: self.parts.iter().map(|(b, p)| (*b, p * q)).collect(),
            };
        }
        if let [(0, q)] = self.parts.as_slice() {
            return Coeff {
                parts: o.parts.iter().map(|(b, p)| (*b, p * q)).collect(),
            };
        }
        let mut v = Vec::with_capacity(self.parts.len() * o.parts.len());
        for (a, p) in &self.parts {
            for (b, q) in &o.parts {
                let (c, f) = basis_product(*a, *b);
                v.push((c, p * q * Q::from_integer(BigInt::from(f))));
            }
        }
        Coeff::from_parts(v)
    }
    /// The Galois conjugate flipping the sign of every basis element with a bit of `mask`.
    fn conj_by(&self, mask: u8) -> Coeff {
        Coeff {
            parts: self
                .parts
                .iter()
                .map(|(b, q)| {
                    if (b & mask).count_ones() % 2 == 1 {
                        (*b, -q)
                    } else {
                        (*b, q.clone())
                    }
                })
                .collect(),
        }
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
        for (b, q) in &self.parts {
            let mut v = rational_interval(q)?;
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
        }
        Some(CInterval::new(re, im))
    }

    /// A plain f64 approximation (real, imaginary), for diagnostics only.
    pub fn to_f64(&self) -> (f64, f64) {
        let mut re = 0.0;
        let mut im = 0.0;
        for (b, q) in &self.parts {
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
        match self.parts.first() {
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
        self.parts
            .iter()
            .map(|(_, q)| q.numer().bits().max(q.denom().bits()))
            .max()
            .unwrap_or(0)
    }

    /// Number of nonzero rational components.
    pub fn len(&self) -> usize {
        self.parts.len()
    }
    /// True for zero.
    pub fn is_empty(&self) -> bool {
        self.parts.is_empty()
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
        if self.parts.is_empty() {
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
        let single = self.parts.len() == 1;
        if !single {
            write!(f, "(")?;
        }
        for (n, (b, q)) in self.parts.iter().enumerate() {
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
}
