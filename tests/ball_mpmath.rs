//! An outside check of the multiprecision balls against a reference library: every enclosure
//! lingrav computes at 200 bits must contain mpmath's value.
//!
//! Design decision: the arguments are exact dyadic numbers generated here from a seed and
//! written, with lingrav's enclosures (midpoint and radius as exact `mantissa * 2^exponent`),
//! as JSON lines; `tests/mpmath/ball_check.py` recomputes each function with mpmath from the
//! same exact argument and checks containment in exact rational arithmetic. The Rust side
//! checks the widths (near `2^-200` relative). `LINGRAV_BALL_PREC` runs it at another precision.
//!
//! Arguments cover the hard cases of each function: tiny and huge magnitudes, points within
//! `2^-200` of multiples of pi/2 (sin, cos, tan), points near 1 (ln), near ±1 (atan), large
//! arguments of exp, plus pi itself at several precisions.
//!
//! The seed is printed; `LINGRAV_BALL_SEED` reruns another one. `LINGRAV_PYTHON` names the
//! interpreter (default `python3`); `LINGRAV_BALL_CASES=path` keeps the case file there.
//! Without python3 and mpmath the check prints "skipped: ..."
//! and passes, except under CI (`CI` set and not `false`/`0`), where it fails.

use lingrav::interval::Ball;
use lingrav::zero::SplitMix64;
use num_bigint::BigInt;
use serde_json::{Value, json};
use std::io::Write as _;
use std::path::Path;
use std::process::Command;

const DEFAULT_SEED: u64 = 0xba11_c0de_2026;

/// Working precision of the check: 200 bits, or `LINGRAV_BALL_PREC` (64..=4096) for a manual
/// run at another precision.
fn prec() -> u32 {
    static PREC: std::sync::OnceLock<u32> = std::sync::OnceLock::new();
    *PREC.get_or_init(|| {
        std::env::var("LINGRAV_BALL_PREC")
            .ok()
            .map(|s| {
                s.trim()
                    .parse()
                    .ok()
                    .filter(|p| (64..=4096).contains(p))
                    .unwrap_or_else(|| panic!("LINGRAV_BALL_PREC={s:?} is not in 64..=4096"))
            })
            .unwrap_or(200)
    })
}

/// Arguments per function.
const PER_FUNCTION: usize = 40;

/// A random `bits`-bit odd mantissa times `2^e`, as an exact ball at `prec()`.
fn dyadic(rng: &mut SplitMix64, bits: u32, e: i64, negative: bool) -> Ball {
    let mut m = BigInt::from(1u8);
    for _ in 0..bits.div_ceil(64) {
        m = (m << 64u8) + rng.next_u64();
    }
    let extra = m.bits() - bits as u64;
    let m: BigInt = (m >> extra) | BigInt::from(1u8);
    let m = if negative { -m } else { m };
    Ball::from_bigint(&m)
        .mul_2exp(e - bits as i64)
        .expect("inside the exponent cap")
        .with_prec(prec())
}

/// A random 200-bit number of magnitude about `2^e` for `e` in `lo..hi`.
fn number_in(rng: &mut SplitMix64, lo: i64, hi: i64, negative: bool) -> Ball {
    let e = int_in(rng, lo, hi);
    dyadic(rng, prec(), e, negative)
}

fn coin(rng: &mut SplitMix64) -> bool {
    rng.next_u64() & 1 == 1
}

/// An integer in `lo..hi`.
fn int_in(rng: &mut SplitMix64, lo: i64, hi: i64) -> i64 {
    lo + (rng.next_u64() % (hi - lo) as u64) as i64
}

/// The midpoint of `b` rounded to `prec()` bits, as an exact point.
fn exact_point(b: &Ball) -> Ball {
    let (m, e) = b.with_prec(prec()).mid_dyadic();
    Ball::from_bigint(&m)
        .mul_2exp(e)
        .expect("inside the exponent cap")
        .with_prec(prec())
}

/// A point within about `2^-(prec() - 10)` relative of `k pi / 2`.
fn near_half_pi_multiple(rng: &mut SplitMix64, k: i64) -> Ball {
    let x = Ball::pi(prec() + 64)
        .mul(&Ball::from_int(k))
        .and_then(|x| x.mul_2exp(-1))
        .expect("small");
    let (m, e) = exact_point(&x).mid_dyadic();
    // A few units in the last place away.
    let moved = Ball::from_bigint(&(m + int_in(rng, -512, 512)))
        .mul_2exp(e)
        .expect("small");
    exact_point(&moved)
}

/// `sign (1 + t)` with `|t|` about `2^-j`, exact in `prec()` bits.
fn near_one(rng: &mut SplitMix64, j: i64, negative: bool) -> Ball {
    let sign = coin(rng);
    let t = dyadic(rng, prec() - j as u32 - 1, -j, sign);
    let x = Ball::one().with_prec(prec()).add(&t).expect("small");
    assert!(x.is_exact());
    if negative { x.neg() } else { x }
}

/// Arguments for one function.
fn arguments(rng: &mut SplitMix64, f: &str) -> Vec<Ball> {
    let mut v = Vec::new();
    for i in 0..PER_FUNCTION {
        let neg = coin(rng);
        let x = match (f, i % 5) {
            // exp: moderate, tiny, large (exp(±1e5) is far outside f64), near 0.
            ("exp", 0) => number_in(rng, -3, 10, neg),
            ("exp", 1) => number_in(rng, -699, -19, neg),
            ("exp", 2) => number_in(rng, 10, 24, neg),
            ("exp", _) => number_in(rng, -2, 3, neg),
            // ln: magnitudes 2^-1000..2^1000, and 1 + tiny.
            ("ln", 0 | 1) => number_in(rng, -1000, 1000, false),
            ("ln", 2 | 3) => {
                let j = int_in(rng, 1, 150.min(prec() as i64 - 20));
                near_one(rng, j, false)
            }
            ("ln", _) => number_in(rng, -3, 4, false),
            // sin, cos, tan: ordinary, tiny, huge, near multiples of pi/2.
            ("sin" | "cos" | "tan", 0) => number_in(rng, -2, 5, neg),
            ("sin" | "cos" | "tan", 1) => number_in(rng, -499, -9, neg),
            ("sin" | "cos" | "tan", 2) => number_in(rng, 20, 300, neg),
            ("sin" | "cos" | "tan", _) => {
                let k = int_in(rng, 1, 2_000_000) * if neg { -1 } else { 1 };
                near_half_pi_multiple(rng, k)
            }
            // atan: tiny, huge, near ±1, ordinary.
            ("atan", 0) => number_in(rng, -899, 0, neg),
            ("atan", 1) => number_in(rng, 2, 900, neg),
            ("atan", 2) => {
                let j = int_in(rng, 1, 100.min(prec() as i64 - 20));
                near_one(rng, j, neg)
            }
            ("atan", _) => number_in(rng, -3, 4, neg),
            // sqrt: magnitudes 2^-1000..2^1000 and near 1.
            ("sqrt", 0..=2) => number_in(rng, -1000, 1000, false),
            ("sqrt", _) => number_in(rng, 0, 2, false),
            // sinh, cosh, tanh: small (cancellation in sinh, tanh), moderate, large.
            (_, 0 | 1) => number_in(rng, -199, 0, neg),
            (_, 2 | 3) => number_in(rng, -2, 5, neg),
            (_, _) => number_in(rng, 5, 12, neg),
        };
        v.push(exact_point(&x));
    }
    v
}

fn eval(f: &str, x: &Ball) -> Option<Ball> {
    match f {
        "exp" => x.exp(),
        "ln" => x.ln(),
        "sin" => Some(x.sin()),
        "cos" => Some(x.cos()),
        "tan" => x.tan(),
        "atan" => Some(x.atan()),
        "sqrt" => x.sqrt(),
        "sinh" => x.sinh(),
        "cosh" => x.cosh(),
        "tanh" => x.tanh(),
        _ => unreachable!("{f}"),
    }
}

fn dyadic_json(b: &Ball) -> Value {
    let (m, e) = b.mid_dyadic();
    json!([m.to_string(), e])
}

fn record(f: &str, x: Option<&Ball>, y: &Ball) -> Value {
    let (rm, re) = y.rad_dyadic();
    json!({
        "f": f,
        "x": x.map(dyadic_json),
        "prec": y.prec(),
        "mid": dyadic_json(y),
        "rad": [rm.to_string(), re],
    })
}

fn on_ci() -> bool {
    crate::support::in_ci()
}

/// Why python3 with mpmath cannot be used, if it cannot.
fn python_missing(python: &str) -> Option<String> {
    crate::support::python_missing(python, "mpmath")
}

#[test]
fn ball_enclosures_contain_mpmath_values() {
    let seed = crate::support::env_u64("LINGRAV_BALL_SEED").unwrap_or(DEFAULT_SEED);
    println!("ball mpmath check seed: {seed:#x} (rerun with LINGRAV_BALL_SEED={seed:#x})");
    let mut rng = SplitMix64::new(seed);

    let mut records = Vec::new();
    let mut worst = i64::MAX;
    let funcs = [
        "exp", "ln", "sin", "cos", "tan", "atan", "sqrt", "sinh", "cosh", "tanh",
    ];
    for f in funcs {
        for x in arguments(&mut rng, f) {
            assert!(x.is_exact() && x.prec() == prec());
            let y = eval(f, &x).unwrap_or_else(|| panic!("{f}({x}) could not be evaluated"));
            // Width near 2^-prec relative: the midpoint is rounded to prec bits (up to
            // 2^-(prec-1) relative) plus the guarded evaluation error. Measured in bits
            // (`accuracy_bits`: rad <= 2^-a |mid|), as an f64 width saturates past 2^-1074.
            let a = y.accuracy_bits();
            worst = worst.min(a);
            assert!(
                a >= prec() as i64 - 5,
                "{f}({x:.70}) = {y:.70}: relative accuracy {a} bits"
            );
            records.push(record(f, Some(&x), &y));
        }
    }
    for prec in [64, 200, 333, 1000] {
        let pi = Ball::pi(prec);
        assert!(pi.accuracy_bits() >= prec as i64 - 5);
        records.push(record("pi", None, &pi));
    }
    println!(
        "lingrav: {} enclosures at {} bits, worst relative accuracy {} bits (rad <= 2^-a |mid|)",
        records.len(),
        prec(),
        worst
    );

    let python = std::env::var("LINGRAV_PYTHON").unwrap_or_else(|_| "python3".into());
    if let Some(why) = python_missing(&python) {
        if on_ci() {
            panic!("CI is set, so the mpmath check must run, but {why} (pip install mpmath)");
        }
        println!("skipped: ball mpmath check: {why}");
        return;
    }
    let dir = tempfile::tempdir().expect("a temporary directory");
    // LINGRAV_BALL_CASES keeps the case file at a chosen path, for rerunning the script by hand.
    let path = std::env::var_os("LINGRAV_BALL_CASES")
        .map(std::path::PathBuf::from)
        .unwrap_or_else(|| dir.path().join("balls.jsonl"));
    {
        let mut file =
            std::io::BufWriter::new(std::fs::File::create(&path).expect("create the case file"));
        for r in &records {
            writeln!(file, "{r}").expect("write the cases");
        }
        file.flush().expect("write the cases");
    }
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/mpmath/ball_check.py");
    let out = Command::new(&python)
        .arg(&script)
        .arg(&path)
        .output()
        .expect("run the mpmath script");
    let stdout = String::from_utf8_lossy(&out.stdout);
    print!("{stdout}");
    eprint!("{}", String::from_utf8_lossy(&out.stderr));
    assert!(
        out.status.success(),
        "the mpmath check failed (exit status {}): see its output above",
        out.status
    );
    let summary = stdout
        .lines()
        .find_map(|l| l.strip_prefix("mpmath ball check: "))
        .expect("a summary line");
    let n: usize = summary
        .split_whitespace()
        .next()
        .and_then(|w| w.parse().ok())
        .expect("a count in the summary");
    assert_eq!(n, records.len(), "enclosures judged by the script");
}
