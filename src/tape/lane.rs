//! Lane arithmetic: `f64` and a small complex type, with the principal branches that
//! [`crate::canon`] uses, and the broadcasting loops that apply one instruction to a block.
//!
//! Design decision: a value is stored on the sub-grid of the coordinates it depends on, so an
//! operand is either a full row of lanes or one value broadcast along that row ([`Shape`]).
//! The loops below branch on the broadcast pattern once per row, so the inner loops are plain
//! slices that the compiler vectorizes.

/// A complex number in double precision.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct C64 {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

impl C64 {
    /// `re + i im`.
    #[must_use]
    pub const fn new(re: f64, im: f64) -> C64 {
        C64 { re, im }
    }
    /// A real number.
    #[must_use]
    pub const fn real(re: f64) -> C64 {
        C64 { re, im: 0.0 }
    }
    /// The modulus.
    #[must_use]
    pub fn abs(self) -> f64 {
        self.re.hypot(self.im)
    }
    /// True if both parts are finite.
    #[must_use]
    pub fn is_finite(self) -> bool {
        self.re.is_finite() && self.im.is_finite()
    }
    fn add(self, o: C64) -> C64 {
        C64::new(self.re + o.re, self.im + o.im)
    }
    fn sub(self, o: C64) -> C64 {
        C64::new(self.re - o.re, self.im - o.im)
    }
    fn mul(self, o: C64) -> C64 {
        if self.im == 0.0 && o.im == 0.0 {
            return C64::real(self.re * o.re);
        }
        C64::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }
    fn div(self, o: C64) -> C64 {
        if o.im == 0.0 {
            return C64::new(self.re / o.re, self.im / o.re);
        }
        // Smith's algorithm: no overflow from squaring the divisor.
        if o.re.abs() >= o.im.abs() {
            let r = o.im / o.re;
            let d = o.re + o.im * r;
            C64::new((self.re + self.im * r) / d, (self.im - self.re * r) / d)
        } else {
            let r = o.re / o.im;
            let d = o.re * r + o.im;
            C64::new((self.re * r + self.im) / d, (self.im * r - self.re) / d)
        }
    }
    fn exp(self) -> C64 {
        let m = self.re.exp();
        if self.im == 0.0 {
            return C64::real(m);
        }
        C64::new(m * self.im.cos(), m * self.im.sin())
    }
    /// The principal logarithm; on the negative real axis (imaginary part zero of either
    /// sign) the imaginary part is +pi, as in the canonical forms' evaluation.
    fn ln(self) -> C64 {
        C64::new(self.abs().ln(), (self.im + 0.0).atan2(self.re))
    }
    fn sin(self) -> C64 {
        if self.im == 0.0 {
            return C64::real(self.re.sin());
        }
        C64::new(
            self.re.sin() * self.im.cosh(),
            self.re.cos() * self.im.sinh(),
        )
    }
    fn cos(self) -> C64 {
        if self.im == 0.0 {
            return C64::real(self.re.cos());
        }
        C64::new(
            self.re.cos() * self.im.cosh(),
            -self.re.sin() * self.im.sinh(),
        )
    }
    /// The principal square root (branch cut on the negative real axis, which maps to +i).
    fn sqrt(self) -> C64 {
        let im = self.im + 0.0;
        if im == 0.0 && self.re >= 0.0 {
            return C64::real(self.re.sqrt());
        }
        let r = self.abs();
        let s = ((r + self.re.abs()) / 2.0).sqrt();
        if s == 0.0 {
            return C64::real(0.0);
        }
        if self.re >= 0.0 {
            C64::new(s, im / (2.0 * s))
        } else {
            C64::new(im.abs() / (2.0 * s), s.copysign(im))
        }
    }
    /// The principal root `exp(log(z)/q)`.
    fn root(self, q: u32) -> C64 {
        if q == 2 {
            return self.sqrt();
        }
        if self.im == 0.0 && self.re >= 0.0 {
            return C64::real(real_root(self.re, q));
        }
        let l = self.ln();
        let qf = f64::from(q);
        C64::new(l.re / qf, l.im / qf).exp()
    }
    fn powi(self, n: i32) -> C64 {
        if self.im == 0.0 {
            return C64::real(self.re.powi(n));
        }
        let mut base = self;
        let mut e = n.unsigned_abs();
        let mut acc = C64::real(1.0);
        while e > 0 {
            if e & 1 == 1 {
                acc = acc.mul(base);
            }
            e >>= 1;
            if e > 0 {
                base = base.mul(base);
            }
        }
        if n < 0 { C64::real(1.0).div(acc) } else { acc }
    }
}

/// The real principal root of `x >= 0`.
fn real_root(x: f64, q: u32) -> f64 {
    match q {
        2 => x.sqrt(),
        3 => x.cbrt(),
        _ => x.powf(1.0 / f64::from(q)),
    }
}

/// One lane of evaluation: `f64` for the fast path, [`C64`] for the exact branches.
///
/// The real lane follows the complex semantics wherever the complex result is real; where it
/// is not (the log or root of a negative number) it gives NaN, which sends the block to the
/// complex lane.
pub trait Lane: Copy + Default + Send + Sync + 'static {
    /// From a complex constant (the real lane keeps the real part; it is used only for tapes
    /// whose constants are all real).
    fn from_c64(c: C64) -> Self;
    /// From a real number.
    fn from_f64(x: f64) -> Self;
    /// As a complex number.
    fn to_c64(self) -> C64;
    /// `a + b`.
    fn add(a: Self, b: Self) -> Self;
    /// `a - b`.
    fn sub(a: Self, b: Self) -> Self;
    /// `a * b`.
    fn mul(a: Self, b: Self) -> Self;
    /// `a / b`.
    fn div(a: Self, b: Self) -> Self;
    /// `-a`.
    fn neg(a: Self) -> Self;
    /// `a^n`.
    fn powi(a: Self, n: i32) -> Self;
    /// `exp(a)`.
    fn exp(a: Self) -> Self;
    /// The principal `log(a)`.
    fn ln(a: Self) -> Self;
    /// `sin(a)`.
    fn sin(a: Self) -> Self;
    /// `cos(a)`.
    fn cos(a: Self) -> Self;
    /// The principal `a^(1/q)`.
    fn root(a: Self, q: u32) -> Self;
    /// `d[i] = sin(a[i])` over a block (same lengths).
    fn sin_block(d: &mut [Self], a: &[Self]) {
        map1(d, a, Self::sin);
    }
    /// `d[i] = cos(a[i])` over a block (same lengths).
    fn cos_block(d: &mut [Self], a: &[Self]) {
        map1(d, a, Self::cos);
    }
    /// `s[i] = sin(a[i])` and `c[i] = cos(a[i])` over a block (same lengths): for the real
    /// lane, one argument reduction serves both.
    fn sincos_block(s: &mut [Self], c: &mut [Self], a: &[Self]) {
        map1(s, a, Self::sin);
        map1(c, a, Self::cos);
    }
}

impl Lane for f64 {
    fn from_c64(c: C64) -> f64 {
        c.re
    }
    fn from_f64(x: f64) -> f64 {
        x
    }
    fn to_c64(self) -> C64 {
        C64::real(self)
    }
    #[inline]
    fn add(a: f64, b: f64) -> f64 {
        a + b
    }
    #[inline]
    fn sub(a: f64, b: f64) -> f64 {
        a - b
    }
    #[inline]
    fn mul(a: f64, b: f64) -> f64 {
        a * b
    }
    #[inline]
    fn div(a: f64, b: f64) -> f64 {
        a / b
    }
    #[inline]
    fn neg(a: f64) -> f64 {
        -a
    }
    #[inline]
    fn powi(a: f64, n: i32) -> f64 {
        a.powi(n)
    }
    #[inline]
    fn exp(a: f64) -> f64 {
        a.exp()
    }
    #[inline]
    fn ln(a: f64) -> f64 {
        // NaN for a negative argument: the principal log is not real there.
        a.ln()
    }
    #[inline]
    fn sin(a: f64) -> f64 {
        a.sin()
    }
    #[inline]
    fn cos(a: f64) -> f64 {
        a.cos()
    }
    #[inline]
    fn root(a: f64, q: u32) -> f64 {
        if a >= 0.0 { real_root(a, q) } else { f64::NAN }
    }
    // Blocks go through the vectorized kernels of `trig` (within one ulp, like libm).
    fn sin_block(d: &mut [f64], a: &[f64]) {
        super::trig::sin_block(d, a);
    }
    fn cos_block(d: &mut [f64], a: &[f64]) {
        super::trig::cos_block(d, a);
    }
    fn sincos_block(s: &mut [f64], c: &mut [f64], a: &[f64]) {
        super::trig::sincos_block(s, c, a);
    }
}

impl Lane for C64 {
    fn from_c64(c: C64) -> C64 {
        c
    }
    fn from_f64(x: f64) -> C64 {
        C64::real(x)
    }
    fn to_c64(self) -> C64 {
        self
    }
    fn add(a: C64, b: C64) -> C64 {
        a.add(b)
    }
    fn sub(a: C64, b: C64) -> C64 {
        a.sub(b)
    }
    fn mul(a: C64, b: C64) -> C64 {
        a.mul(b)
    }
    fn div(a: C64, b: C64) -> C64 {
        a.div(b)
    }
    fn neg(a: C64) -> C64 {
        C64::new(-a.re, -a.im)
    }
    fn powi(a: C64, n: i32) -> C64 {
        a.powi(n)
    }
    fn exp(a: C64) -> C64 {
        a.exp()
    }
    fn ln(a: C64) -> C64 {
        a.ln()
    }
    fn sin(a: C64) -> C64 {
        a.sin()
    }
    fn cos(a: C64) -> C64 {
        a.cos()
    }
    fn root(a: C64, q: u32) -> C64 {
        a.root(q)
    }
}

/// The extent of a block of values: `ny` rows of `nz` lanes; each is 1 (the value does not
/// depend on that coordinate: broadcast) or the full extent.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) struct Shape {
    pub ny: usize,
    pub nz: usize,
}

impl Shape {
    pub const ONE: Shape = Shape { ny: 1, nz: 1 };
    pub fn len(self) -> usize {
        self.ny * self.nz
    }
}

/// `d = f(a, b)` elementwise over `ds`, broadcasting `a` and `b` where their shape is 1.
#[inline(always)]
pub(crate) fn zip2<T: Lane>(
    d: &mut [T],
    ds: Shape,
    (a, sa): (&[T], Shape),
    (b, sb): (&[T], Shape),
    f: impl Fn(T, T) -> T,
) {
    let nz = ds.nz;
    // Each operand either of the result's shape or one value: one run over the whole block
    // (rows are contiguous), not one per row.
    let n = ds.len();
    let whole = |s: Shape| s == ds || s == Shape::ONE;
    if ds.ny > 1 && whole(sa) && whole(sb) {
        match (sa == Shape::ONE, sb == Shape::ONE) {
            (false, false) => {
                for ((o, &x), &y) in d[..n].iter_mut().zip(&a[..n]).zip(&b[..n]) {
                    *o = f(x, y);
                }
            }
            (true, false) => {
                let x = a[0];
                for (o, &y) in d[..n].iter_mut().zip(&b[..n]) {
                    *o = f(x, y);
                }
            }
            (false, true) => {
                let y = b[0];
                for (o, &x) in d[..n].iter_mut().zip(&a[..n]) {
                    *o = f(x, y);
                }
            }
            (true, true) => d[..n].fill(f(a[0], b[0])),
        }
        return;
    }
    for iy in 0..ds.ny {
        let ra = if sa.ny == 1 { 0 } else { iy * sa.nz };
        let rb = if sb.ny == 1 { 0 } else { iy * sb.nz };
        let row = &mut d[iy * nz..(iy + 1) * nz];
        match (sa.nz == 1, sb.nz == 1) {
            (false, false) => {
                for ((o, &x), &y) in row.iter_mut().zip(&a[ra..ra + nz]).zip(&b[rb..rb + nz]) {
                    *o = f(x, y);
                }
            }
            (true, false) => {
                let x = a[ra];
                for (o, &y) in row.iter_mut().zip(&b[rb..rb + nz]) {
                    *o = f(x, y);
                }
            }
            (false, true) => {
                let y = b[rb];
                for (o, &x) in row.iter_mut().zip(&a[ra..ra + nz]) {
                    *o = f(x, y);
                }
            }
            (true, true) => row.fill(f(a[ra], b[rb])),
        }
    }
}

/// `d = f(a)` elementwise (same shape).
#[inline(always)]
pub(crate) fn map1<T: Lane>(d: &mut [T], a: &[T], f: impl Fn(T) -> T) {
    for (o, &x) in d.iter_mut().zip(a) {
        *o = f(x);
    }
}

/// Copies `a` into `d` of shape `ds`, broadcasting where `a`'s shape is 1.
#[inline(always)]
pub(crate) fn spread<T: Lane>(d: &mut [T], ds: Shape, a: &[T], sa: Shape) {
    for iy in 0..ds.ny {
        let ra = if sa.ny == 1 { 0 } else { iy * sa.nz };
        let row = &mut d[iy * ds.nz..(iy + 1) * ds.nz];
        if sa.nz == 1 {
            row.fill(a[ra]);
        } else {
            row.copy_from_slice(&a[ra..ra + ds.nz]);
        }
    }
}
