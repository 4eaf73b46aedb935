//! An outside check of the certified complex arctangent (`CInterval::atan`, used by the
//! canonical evaluator for the `atan` kernel) and of the real enclosures behind `abs` and
//! `atan` (`Interval::abs`, `Interval::atan`) against mpmath.
//!
//! Random boxes (seeded, the seed printed; `LINGRAV_ATAN_SEED` reruns another) with real parts
//! anywhere in [-40, 40] and imaginary parts in [-0.5, 0.5] (the strip where the enclosure is
//! defined) are written with lingrav's enclosures as JSON lines (every bound an f64, exact in
//! mpmath); `tests/mpmath/atan_check.py` evaluates mpmath's principal `atan` at 50 digits at the
//! corners, the midpoints of the edges and random interior points of each box and checks that
//! every value lies in the enclosure. Without python3 and mpmath it prints "skipped: ..." and
//! passes, except under CI.

use lingrav::interval::{CInterval, Interval};
use lingrav::zero::SplitMix64;
use serde_json::json;

const DEFAULT_SEED: u64 = 0xa7a2_2026;

fn uniform(rng: &mut SplitMix64, lo: f64, hi: f64) -> f64 {
    let u = (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
    lo + (hi - lo) * u
}

#[test]
fn atan_and_abs_enclosures_contain_mpmath_values() {
    let seed = crate::support::env_u64("LINGRAV_ATAN_SEED").unwrap_or(DEFAULT_SEED);
    println!("atan mpmath check seed: {seed:#x} (rerun with LINGRAV_ATAN_SEED={seed:#x})");
    let mut rng = SplitMix64::new(seed);
    let mut records = Vec::new();
    for k in 0..300 {
        let scale = [1e-3, 0.3, 1.0, 5.0, 40.0][k % 5];
        let a = uniform(&mut rng, -scale, scale);
        let w = uniform(&mut rng, 0.0, scale / 4.0) * f64::from(u8::from(k % 3 != 0));
        let b = uniform(&mut rng, -0.5, 0.5);
        let h = uniform(&mut rng, 0.0, 0.5 - b.abs()) * f64::from(u8::from(k % 4 != 0));
        let (im_lo, im_hi) = if k % 7 == 0 {
            (0.0, 0.0)
        } else {
            (b - h, b + h)
        };
        let z = CInterval::new(
            Interval::new(a, a + w).unwrap(),
            Interval::new(im_lo.max(-0.5), im_hi.min(0.5)).unwrap(),
        );
        let e = z.atan().expect("inside the strip: an enclosure");
        records.push(json!({
            "f": "catan",
            "re": [z.re.lo(), z.re.hi()], "im": [z.im.lo(), z.im.hi()],
            "out_re": [e.re.lo(), e.re.hi()], "out_im": [e.im.lo(), e.im.hi()],
        }));
        let r = Interval::new(a, a + w).unwrap();
        let (t, m) = (r.atan(), r.abs());
        records.push(json!({"f": "atan", "x": [r.lo(), r.hi()], "out": [t.lo(), t.hi()]}));
        records.push(json!({"f": "abs", "x": [r.lo(), r.hi()], "out": [m.lo(), m.hi()]}));
    }
    // Outside the strip: no enclosure (the sound answer "cannot evaluate").
    let off = CInterval::new(
        Interval::point(0.0).unwrap(),
        Interval::new(0.2, 0.6).unwrap(),
    );
    assert!(off.atan().is_none());

    let dir = tempfile::tempdir().expect("a temporary directory");
    let path = dir.path().join("atan.jsonl");
    crate::support::write_jsonl(&path, &records);
    let seed_arg = seed.to_string();
    let Some(stdout) = crate::support::outside_check(
        "atan mpmath check",
        "mpmath",
        "tests/mpmath/atan_check.py",
        &[path.as_os_str(), seed_arg.as_ref()],
    ) else {
        return;
    };
    let summary = stdout
        .lines()
        .find_map(|l| l.strip_prefix("mpmath atan check: "))
        .expect("a summary line");
    let n: usize = summary
        .split_whitespace()
        .next()
        .and_then(|w| w.parse().ok())
        .expect("a count");
    assert_eq!(n, records.len(), "enclosures judged by the script");
}
