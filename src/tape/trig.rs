//! Sine and cosine over blocks of `f64`, both from one argument reduction, in branch-free code
//! that the compiler vectorizes.
//!
//! Design decision: the arithmetic is the classic fdlibm route (FreeBSD's `e_rem_pio2.c`
//! medium case and `k_sin.c` / `k_cos.c`), whose error is below one ulp, the same assumption
//! [`super::Tape::eval_bounds`] makes of libm; so the running error bounds and the grid's
//! round-off floor stay valid whichever of the two computed a sample. The reduction
//! `x = n pi/2 + y0 + y1` always takes all three Cody-Waite steps (pi/2 split into 33-bit
//! pieces, so `n * piece` is exact for `|n| < 2^20`) instead of branching on cancellation:
//! the extra steps only add accuracy, and a loop without branches is vectorized. Arguments
//! beyond [`LIMIT`] and non-finite ones are recomputed by libm afterwards.

/// Largest |argument| reduced here; larger ones (and NaN, infinities) go to libm.
pub(crate) const LIMIT: f64 = 5.0e5;

use crate::interval::dd::two_sum;

const INV_PIO2: f64 = f64::from_bits(0x3FE4_5F30_6DC9_C883);
const PIO2_1: f64 = f64::from_bits(0x3FF9_21FB_5440_0000);
const PIO2_2: f64 = f64::from_bits(0x3DD0_B461_1A60_0000);
const PIO2_3: f64 = f64::from_bits(0x3BA3_198A_2E00_0000);
const PIO2_3T: f64 = f64::from_bits(0x397B_839A_2520_49C1);
/// 1.5 * 2^52: adding and subtracting it rounds to the nearest integer (ties to even).
const ROUNDER: f64 = 6_755_399_441_055_744.0;

const S1: f64 = f64::from_bits(0xBFC5_5555_5555_5549);
const S2: f64 = f64::from_bits(0x3F81_1111_1110_F8A6);
const S3: f64 = f64::from_bits(0xBF2A_01A0_19C1_61D5);
const S4: f64 = f64::from_bits(0x3EC7_1DE3_57B1_FE7D);
const S5: f64 = f64::from_bits(0xBE5A_E5E6_8A2B_9CEB);
const S6: f64 = f64::from_bits(0x3DE5_D93A_5ACF_D57C);

const C1: f64 = f64::from_bits(0x3FA5_5555_5555_554C);
const C2: f64 = f64::from_bits(0xBF56_C16C_16C1_5177);
const C3: f64 = f64::from_bits(0x3EFA_01A0_19CB_1590);
const C4: f64 = f64::from_bits(0xBE92_7E4F_809C_52AD);
const C5: f64 = f64::from_bits(0x3E21_EE9E_BDB4_B1C4);
const C6: f64 = f64::from_bits(0xBDA8_FAE9_BE88_38D4);

/// `(sin x, cos x)` for `|x| <= LIMIT`; meaningless (but no panic) beyond.
#[inline(always)]
pub(crate) fn kernel(x: f64) -> (f64, f64) {
    let shifted = x * INV_PIO2 + ROUNDER;
    let q = shifted.to_bits() & 3;
    let n = shifted - ROUNDER;
    // Cody-Waite reduction (as e_rem_pio2.c's medium case, with all three steps always):
    // `n * piece` is exact for each 33-bit piece of pi/2 and |n| < 2^20, the first difference
    // is exact (Sterbenz), and the rounding errors of the other two are kept exactly (two-sum)
    // in `w`, with the rest of pi/2.
    let r = x - n * PIO2_1;
    let (r, e2) = two_sum(r, -(n * PIO2_2));
    let (r, e3) = two_sum(r, -(n * PIO2_3));
    // Subtracting `w` (not adding its negation) keeps the sign of a zero argument.
    let w = n * PIO2_3T - (e2 + e3);
    let y0 = r - w;
    let y1 = (r - y0) - w;

    // sin and cos on [-pi/4, pi/4] of y0 + y1 (k_sin.c, k_cos.c).
    let z = y0 * y0;
    let zz = z * z;
    let rs = S2 + z * (S3 + z * S4) + z * zz * (S5 + z * S6);
    let v = z * y0;
    let ks = y0 - ((z * (0.5 * y1 - v * rs) - y1) - v * S1);
    let rc = z * (C1 + z * (C2 + z * C3)) + zz * zz * (C4 + z * (C5 + z * C6));
    let hz = 0.5 * z;
    let one_hz = 1.0 - hz;
    let kc = one_hz + (((1.0 - one_hz) - hz) + (z * rc - y0 * y1));

    // Quadrant q: sin = ks, kc, -ks, -kc; cos = kc, -ks, -kc, ks.
    let odd = 0u64.wrapping_sub(q & 1);
    let (sb, cb) = (ks.to_bits(), kc.to_bits());
    let s = ((sb & !odd) | (cb & odd)) ^ ((q & 2) << 62);
    let c = ((cb & !odd) | (sb & odd)) ^ (((q + 1) & 2) << 62);
    (f64::from_bits(s), f64::from_bits(c))
}

/// True if `x` is outside `[-LIMIT, LIMIT]` or NaN: both go to libm.
#[inline]
#[allow(
    clippy::neg_cmp_op_on_partial_ord,
    reason = "the negated comparison is what makes NaN count as outside"
)]
pub(crate) fn outside(x: f64) -> bool {
    !(x.abs() <= LIMIT)
}

/// True if some value of `a` is outside `[-LIMIT, LIMIT]` or NaN (branch-free over blocks).
#[inline(always)]
fn any_outside(a: &[f64]) -> bool {
    a.chunks(16)
        .any(|c| c.iter().fold(false, |acc, &x| acc | outside(x)))
}

/// `s[i] = sin(a[i])`, `c[i] = cos(a[i])` (over the shortest of the three).
pub(crate) fn sincos_block(s: &mut [f64], c: &mut [f64], a: &[f64]) {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx512f") {
        // SAFETY: detected just above.
        unsafe { sincos_block_avx512(s, c, a) };
        return;
    }
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (detected just above), the only requirement.
        unsafe { sincos_block_avx2(s, c, a) };
        return;
    }
    sincos_block_lanes(s, c, a);
}

/// [`sincos_block`] compiled for AVX2 (the same operations, so the same bits; see
/// [`super::apply`]).
///
/// # Safety
///
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn sincos_block_avx2(s: &mut [f64], c: &mut [f64], a: &[f64]) {
    sincos_block_lanes(s, c, a);
}

/// AVX-512.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
unsafe fn sincos_block_avx512(s: &mut [f64], c: &mut [f64], a: &[f64]) {
    sincos_block_lanes(s, c, a);
}

#[inline(always)]
fn sincos_block_lanes(s: &mut [f64], c: &mut [f64], a: &[f64]) {
    for ((so, co), &x) in s.iter_mut().zip(c.iter_mut()).zip(a) {
        (*so, *co) = kernel(x);
    }
    if any_outside(a) {
        for ((so, co), &x) in s.iter_mut().zip(c.iter_mut()).zip(a) {
            if outside(x) {
                (*so, *co) = (x.sin(), x.cos());
            }
        }
    }
}

/// `d[i] = sin(a[i])`.
pub(crate) fn sin_block(d: &mut [f64], a: &[f64]) {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (detected just above), the only requirement.
        unsafe { sin_block_avx2(d, a) };
        return;
    }
    sin_block_lanes(d, a);
}

/// [`sin_block`] compiled for AVX2 (the same operations, so the same bits; see
/// [`super::apply`]).
///
/// # Safety
///
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn sin_block_avx2(d: &mut [f64], a: &[f64]) {
    sin_block_lanes(d, a);
}

#[inline(always)]
fn sin_block_lanes(d: &mut [f64], a: &[f64]) {
    for (o, &x) in d.iter_mut().zip(a) {
        *o = kernel(x).0;
    }
    if any_outside(a) {
        for (o, &x) in d.iter_mut().zip(a) {
            if outside(x) {
                *o = x.sin();
            }
        }
    }
}

/// `d[i] = cos(a[i])`.
pub(crate) fn cos_block(d: &mut [f64], a: &[f64]) {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (detected just above), the only requirement.
        unsafe { cos_block_avx2(d, a) };
        return;
    }
    cos_block_lanes(d, a);
}

/// [`cos_block`] compiled for AVX2 (the same operations, so the same bits; see
/// [`super::apply`]).
///
/// # Safety
///
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn cos_block_avx2(d: &mut [f64], a: &[f64]) {
    cos_block_lanes(d, a);
}

#[inline(always)]
fn cos_block_lanes(d: &mut [f64], a: &[f64]) {
    for (o, &x) in d.iter_mut().zip(a) {
        *o = kernel(x).1;
    }
    if any_outside(a) {
        for (o, &x) in d.iter_mut().zip(a) {
            if outside(x) {
                *o = x.cos();
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Distance in units of the last place of `want` (of the smallest normal, for tiny values).
    fn ulps(got: f64, want: f64) -> f64 {
        let unit = f64::EPSILON * want.abs().max(f64::MIN_POSITIVE);
        (got - want).abs() / unit
    }

    fn check(x: f64) -> Result<(), TestCaseError> {
        let (mut s, mut c) = ([0.0], [0.0]);
        sincos_block(&mut s, &mut c, &[x]);
        let (mut s1, mut c1) = ([0.0], [0.0]);
        sin_block(&mut s1, &[x]);
        cos_block(&mut c1, &[x]);
        prop_assert_eq!(s[0].to_bits(), s1[0].to_bits());
        prop_assert_eq!(c[0].to_bits(), c1[0].to_bits());
        // Both this and libm are within one ulp of the exact value: within two of each other.
        prop_assert!(
            ulps(s[0], x.sin()) <= 2.0,
            "sin {x}: {} vs {}",
            s[0],
            x.sin()
        );
        prop_assert!(
            ulps(c[0], x.cos()) <= 2.0,
            "cos {x}: {} vs {}",
            c[0],
            x.cos()
        );
        Ok(())
    }

    #[test]
    fn every_compiled_variant_gives_the_same_bits() {
        // The blocks run a variant chosen at run time (AVX-512, AVX2, or the baseline build);
        // each must give exactly what the baseline kernel gives, lane by lane, at every
        // alignment, including the values that go to libm.
        let seed = 0x7416_5eed_u64;
        let mut rng = crate::zero::SplitMix64::new(seed);
        let mut a: Vec<f64> = (0..997)
            .map(|_| (rng.next_f64() * 2.0 - 1.0) * 10f64.powi((rng.next_u64() % 12) as i32 - 4))
            .collect();
        a.extend([0.0, -0.0, f64::NAN, f64::INFINITY, 1e7, -3e6, LIMIT]);
        for start in 0..4 {
            let a = &a[start..];
            let (mut s, mut c) = (vec![0.0; a.len()], vec![0.0; a.len()]);
            sincos_block(&mut s, &mut c, a);
            let (mut s1, mut c1) = (vec![0.0; a.len()], vec![0.0; a.len()]);
            sin_block(&mut s1, a);
            cos_block(&mut c1, a);
            for (i, &x) in a.iter().enumerate() {
                let (ws, wc) = if outside(x) {
                    (x.sin(), x.cos())
                } else {
                    kernel(x)
                };
                for (got, want) in [(s[i], ws), (c[i], wc), (s1[i], ws), (c1[i], wc)] {
                    assert_eq!(got.to_bits(), want.to_bits(), "seed {seed:#x} x = {x:e}");
                }
            }
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(20_000))]
        #[test]
        fn agrees_with_libm_within_two_ulps(x in -1.0e3f64..1.0e3) {
            check(x)?;
        }

        #[test]
        fn agrees_with_libm_up_to_the_limit_and_beyond(x in -1.0e6f64..1.0e6) {
            check(x)?;
        }

        #[test]
        fn agrees_with_libm_near_multiples_of_half_pi(k in -300_000i64..300_000, e in -40i32..0) {
            // Where sin or cos is near 0 the reduction cancels most of x.
            let x = k as f64 * std::f64::consts::FRAC_PI_2 * (1.0 + 2f64.powi(e));
            check(x)?;
            check(k as f64 * std::f64::consts::FRAC_PI_2)?;
        }
    }

    #[test]
    fn special_values_follow_libm() {
        for x in [
            0.0,
            -0.0,
            1e-300,
            -5e-324,
            f64::MIN_POSITIVE,
            LIMIT,
            -LIMIT,
            LIMIT * 1.5,
            1e300,
        ] {
            check(x).unwrap();
        }
        let mut s = [0.0; 3];
        let mut c = [0.0; 3];
        sincos_block(
            &mut s,
            &mut c,
            &[f64::NAN, f64::INFINITY, f64::NEG_INFINITY],
        );
        assert!(s.iter().chain(&c).all(|v| v.is_nan()));
        // Signed zero: sin(-0) = -0.
        let mut s = [1.0];
        sin_block(&mut s, &[-0.0]);
        assert_eq!(s[0].to_bits(), (-0.0f64).to_bits());
    }
}
