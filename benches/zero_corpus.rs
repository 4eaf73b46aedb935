//! Times the zero test on the handbook corpus `tests/data/identities.txt` (the list that
//! `tests/handbook.rs` checks): one zero test is parse + build of both sides in a fresh store,
//! then `decide` on their difference.
//!
//! Benchmarks: a few representative identities one by one (a polynomial trig identity, one
//! with a quotient, exact values, a hyperbolic one, and the two heaviest differential ones),
//! the whole corpus as one batch, and the whole corpus off by 1e-30, which takes the
//! certified-witness path instead of the cancellation path.
//!
//! Run with `cargo bench --bench zero_corpus`.

use lingrav::canon::{Names, Store};
use lingrav::zero::{Sampling, Verdict, decide};

// The binary's allocator, so that the time is the time `lingrav` spends.
#[global_allocator]
static ALLOCATOR: lingrav::budget::Counting = lingrav::budget::Counting;

fn main() {
    divan::main();
}

const CORPUS: &str = include_str!("../tests/data/identities.txt");

/// `(lhs, rhs)` of every corpus line (blank lines and `#` comments skipped).
fn corpus() -> Vec<(&'static str, &'static str)> {
    CORPUS
        .lines()
        .filter_map(|line| {
            let body = line.split('#').next().unwrap_or("").trim();
            let (l, r) = body.split_once(";;")?;
            Some((l.trim(), r.trim()))
        })
        .collect()
}

/// A short name for a benchmark, and the left side of its corpus line.
const REPRESENTATIVE: &[(&str, &str)] = &[
    ("sin_sum", "sin(u + v)"),
    ("cos_4z", "cos(4*z)"),
    ("tan_sum", "tan(u + v)"),
    ("sin_pi_12", "sin(pi/12)"),
    ("coth_sum", "1/tanh(u + v)"),
    ("binomial_4", "(x - y)^4"),
    ("laplacian_inv_r", "d_x_x(1/sqrt(x^2+y^2+z^2))"),
    ("spherical_wave", "-d_t_t(F(t - sqrt(x^2+y^2+z^2))"),
];

/// The corpus line whose left side starts with `lhs_start`.
fn row(lhs_start: &str) -> (&'static str, &'static str) {
    corpus()
        .into_iter()
        .find(|(l, _)| l.starts_with(lhs_start))
        .unwrap_or_else(|| panic!("no corpus line starts with {lhs_start:?}"))
}

/// One zero test of `lhs - rhs`, from text to verdict.
fn zero_test(lhs: &str, rhs: &str) -> Verdict {
    let mut st = Store::new();
    let mut build = |s: &str| {
        let e = lingrav::parse::parse(s).expect("corpus lines parse");
        st.build(&e, &Names::free()).expect("corpus lines build")
    };
    let a = build(lhs);
    let b = build(rhs);
    let d = st.sub(a, b).expect("within limits");
    decide(&mut st, d, &Sampling::default())
}

#[divan::bench(args = REPRESENTATIVE.iter().map(|(name, _)| *name))]
fn identity(bencher: divan::Bencher, name: &str) {
    let (_, lhs_start) = REPRESENTATIVE
        .iter()
        .find(|(n, _)| *n == name)
        .expect("a listed name");
    let (lhs, rhs) = row(lhs_start);
    assert_eq!(zero_test(lhs, rhs), Verdict::Zero, "{lhs} = {rhs}");
    bencher.bench(|| zero_test(divan::black_box(lhs), divan::black_box(rhs)));
}

#[divan::bench(sample_count = 20)]
fn whole_corpus(bencher: divan::Bencher) {
    let rows = corpus();
    bencher
        .counter(divan::counter::ItemsCount::new(rows.len()))
        .bench(|| {
            for (lhs, rhs) in &rows {
                divan::black_box(zero_test(lhs, rhs));
            }
        });
}

#[divan::bench(sample_count = 20)]
fn whole_corpus_off_by_1e_30(bencher: divan::Bencher) {
    let rows: Vec<(&str, String)> = corpus()
        .into_iter()
        .map(|(l, r)| (l, format!("({r}) + 1e-30")))
        .collect();
    bencher
        .counter(divan::counter::ItemsCount::new(rows.len()))
        .bench(|| {
            for (lhs, rhs) in &rows {
                divan::black_box(zero_test(lhs, rhs));
            }
        });
}
