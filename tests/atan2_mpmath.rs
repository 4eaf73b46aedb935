//! An outside check of `atan2` (issue 14) and of `abs` of arguments shown real by a root,
//! against mpmath's own `atan2`, `fabs` and numerical derivative (`mpmath.diff`).
//!
//! Each case is a lingrav expression and the same function written independently in mpmath
//! syntax. At seeded random points `(x, y)` in [-3, 3]^2 (the seed printed;
//! `LINGRAV_ATAN2_SEED` reruns another) the canonical form's certified enclosure
//! (`Store::eval_interval`) and the parsed tree's direct f64 value (`Expr::eval`, which uses
//! Rust's `f64::atan2`) are written as JSON lines; `tests/mpmath/atan2_check.py` evaluates the
//! mpmath text at 50 digits at the same (exact) point and checks that the value lies in the
//! enclosure and within 1e-12 (relative) of the f64 value. Points where lingrav cannot evaluate
//! (on or very near the cut x <= 0, y = 0) are skipped and counted; most points must be
//! judged. Without python3 and mpmath it prints "skipped: ..." and passes, except under CI.

use lingrav::canon::{Names, Point, Store};
use lingrav::expr::Evaluator;
use lingrav::interval::{CInterval, Interval};
use lingrav::zero::SplitMix64;
use serde_json::json;

const DEFAULT_SEED: u64 = 0xa7a2_2014;

/// (lingrav text, the same function in mpmath, with `x`, `y` mpf values in scope).
const CASES: [(&str, &str); 8] = [
    ("atan2(y, x)", "atan2(y, x)"),
    ("atan2(x*y - 1, x + y^2)", "atan2(x*y - 1, x + y**2)"),
    ("atan2(-y, -x) + 3", "atan2(-y, -x) + 3"),
    ("d_x(atan2(y, x))", "diff(lambda s: atan2(y, s), x)"),
    (
        "d_y(atan2(x^2 - y, x + 2*y))",
        "diff(lambda s: atan2(x**2 - s, x + 2*s), y)",
    ),
    ("abs(abs(x) - y)", "fabs(fabs(x) - y)"),
    ("abs(sqrt(x^2 + 1) - 2)*y", "fabs(sqrt(x**2 + 1) - 2)*y"),
    (
        "d_x(abs(sqrt(x^2 + y^2) - 1))",
        "diff(lambda s: fabs(sqrt(s**2 + y**2) - 1), x)",
    ),
];

fn uniform(rng: &mut SplitMix64, lo: f64, hi: f64) -> f64 {
    let u = (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
    lo + (hi - lo) * u
}

#[test]
fn atan2_and_abs_agree_with_mpmath() {
    let seed = crate::support::env_u64("LINGRAV_ATAN2_SEED").unwrap_or(DEFAULT_SEED);
    println!("atan2 mpmath check seed: {seed:#x} (rerun with LINGRAV_ATAN2_SEED={seed:#x})");
    let mut rng = SplitMix64::new(seed);
    let mut st = Store::new();
    let (kx, ky) = (st.symbol_kernel("x"), st.symbol_kernel("y"));
    let mut records = Vec::new();
    let mut skipped = 0;
    for (text, mp) in CASES {
        let e = lingrav::parse::parse(text).expect("parses");
        let f = st.build(&e, &Names::free()).expect("builds");
        for k in 0..60 {
            // A few points just off the cut (tiny y, negative x), where the half-angle
            // formula's denominator is small.
            let x = uniform(&mut rng, -3.0, 3.0);
            let y = if k % 10 == 0 {
                uniform(&mut rng, -1e-6, 1e-6)
            } else {
                uniform(&mut rng, -3.0, 3.0)
            };
            let mut pt = Point::default();
            for (kk, v) in [(kx, x), (ky, y)] {
                let iv = Interval::point(v).expect("finite");
                pt.values.insert(kk, CInterval::from_real(iv));
            }
            let Some(v) = st.eval_interval(f, &pt) else {
                skipped += 1;
                continue;
            };
            let values = |n: &str| match n {
                "x" => Some(x),
                "y" => Some(y),
                _ => None,
            };
            let ev = Evaluator {
                values: &values,
                functions: &|_, _, _| None,
            };
            // The tree's evaluator has no derivative operator: only plain cases compare.
            let direct = e.eval(&ev).ok();
            records.push(json!({
                "text": text, "mp": mp, "x": x, "y": y,
                "re": [v.re.lo(), v.re.hi()], "im": [v.im.lo(), v.im.hi()],
                "f64": direct,
            }));
        }
    }
    assert!(
        records.len() >= CASES.len() * 50,
        "too many points skipped ({skipped}): the check would say little"
    );

    let dir = tempfile::tempdir().expect("a temporary directory");
    let path = dir.path().join("atan2.jsonl");
    crate::support::write_jsonl(&path, &records);
    let Some(stdout) = crate::support::outside_check(
        "atan2 mpmath check",
        "mpmath",
        "tests/mpmath/atan2_check.py",
        &[path.as_os_str()],
    ) else {
        return;
    };
    let summary = stdout
        .lines()
        .find_map(|l| l.strip_prefix("mpmath atan2 check: "))
        .expect("a summary line");
    let n: usize = summary
        .split_whitespace()
        .next()
        .and_then(|w| w.parse().ok())
        .expect("a count");
    assert_eq!(n, records.len(), "points judged by the script");
}
