//! Unit tests of the canonical form: identities it must prove, and rules it must not apply.

use super::*;
use crate::zero::{Sampling, Verdict, decide};

fn form(store: &mut Store, s: &str) -> Form {
    let e = crate::parse::parse(s).unwrap_or_else(|e| panic!("parse {s}: {e:?}"));
    store
        .build(&e, &Names::free())
        .unwrap_or_else(|e| panic!("build {s}: {e:?}"))
}

/// The verdict on `a - b`.
fn verdict(a: &str, b: &str) -> Verdict {
    let mut st = Store::new();
    let fa = form(&mut st, a);
    let fb = form(&mut st, b);
    let d = st.sub(fa, fb).unwrap();
    decide(&mut st, d, &Sampling::default())
}

fn check_identity(a: &str, b: &str) {
    let v = verdict(a, b);
    assert_eq!(v, Verdict::Zero, "{a} = {b} should be proved, got {v:?}");
}

fn check_not_identity(a: &str, b: &str) {
    let v = verdict(a, b);
    assert!(
        matches!(v, Verdict::Nonzero(_)),
        "{a} = {b} should be refuted, got {v:?}"
    );
}

fn check_text(input: &str, printed: &str) {
    let mut st = Store::new();
    let f = form(&mut st, input);
    assert_eq!(st.to_text(f), printed, "simplify({input})");
}

#[test]
fn polynomial_and_rational_identities() {
    check_identity("(x + y)^2", "x^2 + 2*x*y + y^2");
    check_identity("(x^2 - y^2)/(x - y)", "x + y");
    check_identity("1/x + 1/y", "(x + y)/(x*y)");
    check_identity("1/(x + 1) - 1/(x + 2)", "1/((x + 1)*(x + 2))");
    check_identity("(a/b)/(c/d)", "a*d/(b*c)");
    check_identity("x*y - y*x", "0");
    check_identity("1.5e-3*x", "3/2000*x");
}

#[test]
fn trigonometric_identities() {
    check_identity("sin(x)^2 + cos(x)^2", "1");
    check_identity("sin(2*x)", "2*sin(x)*cos(x)");
    check_identity("cos(3*x)", "4*cos(x)^3 - 3*cos(x)");
    check_identity("sin(x + y)", "sin(x)*cos(y) + cos(x)*sin(y)");
    check_identity("cos(x)*cos(y)", "(cos(x - y) + cos(x + y))/2");
    check_identity("tan(x)", "sin(x)/cos(x)");
    check_identity("tan(2*x)", "2*tan(x)/(1 - tan(x)^2)");
    check_identity("1 + tan(x)^2", "1/cos(x)^2");
    check_identity("cosh(x)^2 - sinh(x)^2", "1");
    check_identity("exp(x)*exp(y)", "exp(x + y)");
    check_identity("exp(x)^2", "exp(2*x)");
    check_identity("exp(log(x))", "x");
    check_identity("tanh(x)", "sinh(x)/cosh(x)");
}

#[test]
fn exact_values_at_rational_multiples_of_pi() {
    check_identity("sin(x + pi/2)", "cos(x)");
    check_identity("cos(pi/3)", "1/2");
    check_identity("sin(pi/6)", "1/2");
    check_identity("cos(pi/4)", "sqrt(2)/2");
    check_identity("sin(pi/3)", "sqrt(3)/2");
    check_identity("cos(pi)", "-1");
    check_identity("sin(pi)", "0");
    check_identity("tan(pi/4)", "1");
    check_identity("cos(x + 2*pi)", "cos(x)");
    check_identity("sin(pi/12)", "(sqrt(6) - sqrt(2))/4");
}

#[test]
fn algebraic_kernels() {
    check_identity("sqrt(x^2 + y^2 + z^2)^2", "x^2 + y^2 + z^2");
    check_identity(
        "1/sqrt(x^2 + y^2 + z^2)^3",
        "sqrt(x^2 + y^2 + z^2)/(x^2 + y^2 + z^2)^2",
    );
    check_identity("sqrt(x)*sqrt(x)", "x");
    check_identity("x^(3/2)", "x*sqrt(x)");
    check_identity("sqrt(8)", "2*sqrt(2)");
    // d/dx r = x/r
    check_identity("d_x(sqrt(x^2 + y^2 + z^2))", "x/sqrt(x^2 + y^2 + z^2)");
    // Laplacian of 1/r vanishes away from the origin.
    check_identity(
        "d_x_x(1/sqrt(x^2+y^2+z^2)) + d_y_y(1/sqrt(x^2+y^2+z^2)) + d_z_z(1/sqrt(x^2+y^2+z^2))",
        "0",
    );
}

#[test]
fn unsound_rules_are_not_applied() {
    check_not_identity("sqrt(x^2)", "x");
    check_not_identity("log(x^2)", "2*log(x)");
    check_not_identity("sqrt(x*y)", "sqrt(x)*sqrt(y)");
    check_not_identity("x", "x + 1e-30*y");
}

#[test]
fn arbitrary_functions() {
    check_identity("F(t - x)", "F(-x + t)");
    check_identity("d_t(F(t - x)) + d_x(F(t - x))", "0");
    check_identity("d_t_t(F(t - x)) - d_x_x(F(t - x))", "0");
    check_identity("d_x(F(x^2))", "2*x*F'(x^2)");
    check_not_identity("F(t - x)", "F(x - t)");
    check_not_identity("F(x)", "G(x)");
}

#[test]
fn printing_is_readable_real_form() {
    check_text("cos(x)^2 + sin(x)^2", "1");
    check_text("2*sin(x)*cos(x)", "sin(2*x)");
    check_text("A*cos(omega*(t - z))", "A*cos(omega*(t - z))");
    check_text(
        "m*sqrt(x^2 + y^2 + z^2)*(y^2 - 2*x^2)",
        "m*sqrt(x^2 + y^2 + z^2)*(-2*x^2 + y^2)",
    );
    check_text("a*w^2*cos(w*(t - z))", "a*w^2*cos(w*(t - z))");
    check_text("x/2 + 3/4", "x/2 + 3/4");
    check_text("(x + 1)^2", "x^2 + 2*x + 1");
    check_text("exp(x)*exp(-x)", "1");
    check_text("cos(pi/4)", "sqrt(2)/2");
}

#[test]
fn division_by_zero_is_an_error() {
    let mut st = Store::new();
    let e = crate::parse::parse("1/(x - x)").unwrap();
    let err = st.build(&e, &Names::free()).unwrap_err();
    assert!(err.message.contains("identically zero"), "{err:?}");
}
