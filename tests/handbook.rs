//! Outside checks: identities from the handbooks, and false "identities" that must be refuted.
//!
//! The true identities live in `tests/data/identities.txt`, one `lhs ;; rhs  # source` a line,
//! so that this test and the benchmark (`benches/zero_corpus.rs`) read one list. Every line
//! names its source beside it: a formula number of Abramowitz & Stegun's Handbook of
//! Mathematical Functions (1964) or of the NIST DLMF, marked "(formula number from memory)"
//! where it was not checked against the book, or "common practice" for textbook algebra and
//! calculus. The false identities below are each a mistake that a sloppy simplifier makes.
//!
//! Each test checks every row and reports all failing rows at once.

use lingrav::canon::{Names, Store};
use lingrav::zero::{Sampling, Verdict, decide};

/// The shared corpus of true identities.
const IDENTITIES: &str = include_str!("data/identities.txt");

/// One line of the corpus.
struct Row {
    line: usize,
    lhs: String,
    rhs: String,
    source: String,
}

/// The rows of `IDENTITIES`; a line that is neither blank, a comment nor `lhs ;; rhs` panics.
fn rows() -> Vec<Row> {
    let mut out = Vec::new();
    for (i, raw) in IDENTITIES.lines().enumerate() {
        let (body, source) = match raw.split_once('#') {
            Some((b, s)) => (b, s.trim()),
            None => (raw, ""),
        };
        if body.trim().is_empty() {
            continue;
        }
        let (lhs, rhs) = body
            .split_once(";;")
            .unwrap_or_else(|| panic!("identities.txt:{}: expected `lhs ;; rhs`", i + 1));
        out.push(Row {
            line: i + 1,
            lhs: lhs.trim().to_string(),
            rhs: rhs.trim().to_string(),
            source: source.to_string(),
        });
    }
    out
}

/// The verdict on `lhs - rhs` in a fresh store, or why it could not be formed.
fn verdict(lhs: &str, rhs: &str) -> Result<Verdict, String> {
    let mut st = Store::new();
    let mut build = |s: &str| {
        let e = lingrav::parse::parse(s).map_err(|e| format!("`{s}` does not parse: {e}"))?;
        st.build(&e, &Names::free())
            .map_err(|e| format!("`{s}` does not build: {e}"))
    };
    let a = build(lhs)?;
    let b = build(rhs)?;
    let d = st.sub(a, b).map_err(|e| e.to_string())?;
    Ok(decide(&mut st, d, &Sampling::default()))
}

/// `Some(complaint)` unless `lhs = rhs` is proved.
fn check_identity(lhs: &str, rhs: &str) -> Option<String> {
    match verdict(lhs, rhs) {
        Ok(Verdict::Zero) => None,
        Ok(v) => Some(format!("{lhs} = {rhs}: expected zero, got {v:?}")),
        Err(e) => Some(e),
    }
}

/// `Some(complaint)` unless `lhs = rhs` is refuted with a certified witness.
fn check_false(lhs: &str, rhs: &str) -> Option<String> {
    match verdict(lhs, rhs) {
        Ok(Verdict::Nonzero(_)) => None,
        Ok(v) => Some(format!("{lhs} = {rhs}: expected nonzero, got {v:?}")),
        Err(e) => Some(e),
    }
}

/// `Some(complaint)` if `lhs = rhs` is claimed proved (undecided is an honest answer here).
fn check_not_proved(lhs: &str, rhs: &str) -> Option<String> {
    match verdict(lhs, rhs) {
        Ok(Verdict::Zero) => Some(format!("{lhs} = {rhs}: claimed zero, but it is false")),
        Ok(_) => None,
        Err(e) => Some(e),
    }
}

fn report(what: &str, failures: Vec<String>) {
    assert!(
        failures.is_empty(),
        "{} {what}:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

#[test]
fn corpus_is_large_enough_and_every_row_names_its_source() {
    let rows = rows();
    assert!(rows.len() >= 30, "only {} identities", rows.len());
    let unsourced: Vec<String> = rows
        .iter()
        .filter(|r| r.source.is_empty())
        .map(|r| format!("identities.txt:{}: {} ;; {}", r.line, r.lhs, r.rhs))
        .collect();
    report("rows without a source", unsourced);
}

#[test]
fn handbook_identities_are_proved() {
    let failures = rows()
        .iter()
        .filter_map(|r| {
            check_identity(&r.lhs, &r.rhs)
                .map(|m| format!("identities.txt:{} ({}): {m}", r.line, r.source))
        })
        .collect();
    report("identities not proved", failures);
}

/// Each identity with a tiny constant added to one side: the difference cancels to exactly
/// that constant, which the interval witness must certify. A zero test that rounds would
/// call these zero.
#[test]
fn identities_off_by_1e_30_are_refuted() {
    let failures = rows()
        .iter()
        .filter_map(|r| {
            let rhs = format!("({}) + 1e-30", r.rhs);
            check_false(&r.lhs, &rhs).map(|m| format!("identities.txt:{}: {m}", r.line))
        })
        .collect();
    report("perturbed identities not refuted", failures);
}

#[test]
fn false_identities_are_refuted() {
    // (lhs, rhs, the mistake)
    let table = [
        ("sqrt(x^2)", "x", "sqrt(x^2) = |x|, not x"),
        (
            "log(x*y)",
            "log(x) + log(y)",
            "fails when both are negative",
        ),
        ("log(x^2)", "2*log(x)", "fails for negative x"),
        (
            "sqrt(x*y)",
            "sqrt(x)*sqrt(y)",
            "fails when both are negative",
        ),
        ("sin(2*x)", "2*sin(x)", "sin is not linear"),
        ("(x + y)^2", "x^2 + y^2", "the cross term 2xy is missing"),
        (
            "exp(x + y)",
            "exp(x) + exp(y)",
            "exp turns sums into products",
        ),
        (
            "sin(x + y)",
            "sin(x)*cos(y) - cos(x)*sin(y)",
            "sign error in DLMF 4.21.2",
        ),
        (
            "tan(x + y)",
            "(tan(x) + tan(y))/(1 + tan(x)*tan(y))",
            "sign error in DLMF 4.21.4",
        ),
        ("cosh(x)^2 + sinh(x)^2", "1", "sign error in A&S 4.5.16"),
        ("cos(pi/6)", "1/2", "that is cos(pi/3)"),
        ("sin(pi/12)", "(sqrt(6) + sqrt(2))/4", "that is cos(pi/12)"),
        (
            "1/(x*(x + 1))",
            "1/x + 1/(x + 1)",
            "sign error in partial fractions",
        ),
        ("x", "x + 1e-30", "a tiny constant"),
        ("sin(x)^2 + cos(x)^2", "1 + 1e-30*x", "a tiny multiple of x"),
        ("exp(x)", "exp(x)*(1 + 1e-30)", "a tiny relative error"),
        (
            "d_x_x(1/(x^2+y^2+z^2)) + d_y_y(1/(x^2+y^2+z^2)) + d_z_z(1/(x^2+y^2+z^2))",
            "0",
            "1/r^2 is not harmonic in 3D (its Laplacian is 2/r^4)",
        ),
        (
            "d_t_t(F(t - x)/x) - d_x_x(F(t - x)/x)",
            "0",
            "F(t - x)/x does not solve the 1D wave equation",
        ),
        (
            "d_t_t(F(t - x)) + d_x_x(F(t - x))",
            "0",
            "sign error in the wave operator",
        ),
        ("F(t - x)", "F(x - t)", "an arbitrary function is not even"),
    ];
    let failures = table
        .iter()
        .filter_map(|(l, r, why)| check_false(l, r).map(|m| format!("{m} ({why})")))
        .collect();
    report("false identities not refuted", failures);
}

/// Mistakes too small for a certified witness at double precision: the honest answers are
/// nonzero or undecided, never zero.
#[test]
fn near_identities_are_never_claimed_zero() {
    let table = [
        ("sin(2*x)", "2*sin(x + 1e-30)*cos(x)"),
        ("exp(x)*exp(y)", "exp(x + y + 1e-25)"),
        ("cosh(x)^2 - sinh(x)^2", "cosh(x + 1e-20)^2 - sinh(x)^2"),
        ("log(exp(x))", "x + 1e-30"),
        ("sqrt(x^2 + 1)", "sqrt(x^2 + 1 + 1e-30)"),
    ];
    let failures = table
        .iter()
        .filter_map(|(l, r)| check_not_proved(l, r))
        .collect();
    report("false near-identities claimed zero", failures);
}
