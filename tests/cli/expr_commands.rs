//! `lingrav zero`, `lingrav simplify` and `lingrav diff` on good input.

use crate::support::{assert_clean, lingrav};
use serde_json::Value;

/// `lingrav zero ARGS` exits with `code` and prints a first line starting with `verdict:`.
fn check_zero(args: &[&str], code: i32, verdict: &str) {
    let mut all = vec!["zero"];
    all.extend_from_slice(args);
    let out = lingrav(&all);
    assert_clean(&all, &out, code);
    let first = out.0.lines().next().unwrap_or("");
    assert!(
        first.starts_with(&format!("{verdict}:")),
        "lingrav {all:?}: first line {first:?}, expected the verdict `{verdict}`"
    );
}

#[test]
fn zero_exit_codes_follow_the_verdict() {
    // (arguments, exit code, verdict)
    let table: &[(&[&str], i32, &str)] = &[
        (&["sin(x)^2 + cos(x)^2 - 1"], 0, "zero"),
        (&["cos(3*a)", "4*cos(a)^3 - 3*cos(a)"], 0, "zero"),
        (&["d_t_t(F(t - z)) - d_z_z(F(t - z))"], 0, "zero"),
        (&["sqrt(x^2)^2 - x^2"], 0, "zero"),
        (&["--", "-x^2 + x^2"], 0, "zero"),
        (&["sqrt(x^2)", "x"], 1, "nonzero"),
        (&["sin(2*x)", "2*sin(x)"], 1, "nonzero"),
        (&["x", "x + 1e-30"], 1, "nonzero"),
        // True for real x, but log(exp(x)) is a kernel of its own: numerically zero everywhere,
        // never reduced.
        (&["log(exp(x)) - x"], 3, "undecided"),
        (&["sqrt(exp(2*x))", "exp(x)"], 3, "undecided"),
        // False, but by 1e-30: too little for a certified witness in double precision.
        (&["sin(2*x)", "2*sin(x + 1e-30)*cos(x)"], 3, "undecided"),
        // Nothing to sample at: honestly undecided.
        (&["x", "--points", "0"], 3, "undecided"),
    ];
    for (args, code, verdict) in table {
        check_zero(args, *code, verdict);
    }
}

#[test]
fn zero_prints_the_witness_and_its_seed() {
    let args = ["zero", "sqrt(x^2)", "x", "--seed", "7"];
    let out = lingrav(&args);
    assert_clean(&args, &out, 1);
    assert!(
        out.0.contains("at x = -") && out.0.contains("(seed 0x7)"),
        "the witness is a negative x with seed 7:\n{}",
        out.0
    );
    assert_eq!(
        lingrav(&args).0,
        out.0,
        "the same seed gives the same witness"
    );
    assert!(
        out.0.contains("canonical form: -x + sqrt(x^2)"),
        "the residual is printed:\n{}",
        out.0
    );
}

/// The JSON of `lingrav zero ARGS --format json`, checked to be one document on stdout.
fn zero_json(args: &[&str], code: i32) -> Value {
    let mut all = vec!["zero"];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--format", "json"]);
    let out = lingrav(&all);
    assert_clean(&all, &out, code);
    serde_json::from_str(&out.0)
        .unwrap_or_else(|e| panic!("lingrav {all:?}: not JSON ({e}):\n{}", out.0))
}

#[test]
fn zero_json_has_verdict_witness_and_reason() {
    let v = zero_json(&["sin(x)^2 + cos(x)^2", "1"], 0);
    assert_eq!(v["verdict"], "zero", "{v}");
    assert!(
        v.get("witness").is_none() && v.get("reason").is_none(),
        "{v}"
    );

    let v = zero_json(&["sqrt(x^2)", "x", "--seed", "7"], 1);
    assert_eq!(v["verdict"], "nonzero", "{v}");
    let w = &v["witness"];
    let x = w["point"]["x"].as_f64().expect("the witness gives x");
    assert!(x < 0.0, "sqrt(x^2) = x fails only for negative x: {v}");
    assert_eq!(w["seed"], 7, "{v}");
    let re = w["value"][0].as_f64().expect("value [re, im]");
    let lo = w["enclosure"]["re"][0]
        .as_f64()
        .expect("enclosure re [lo, hi]");
    let hi = w["enclosure"]["re"][1]
        .as_f64()
        .expect("enclosure re [lo, hi]");
    assert!(
        lo <= re && re <= hi && (re - 2.0 * x.abs()).abs() < 1e-9,
        "value |x| - x = 2|x|, inside its enclosure: {v}"
    );
    assert!(v.get("reason").is_none(), "{v}");

    let v = zero_json(&["log(exp(x))", "x"], 3);
    assert_eq!(v["verdict"], "undecided", "{v}");
    let reason = v["reason"].as_str().expect("a reason");
    assert!(reason.contains("numerically zero"), "{v}");
    assert!(v.get("witness").is_none(), "{v}");
    assert_eq!(v["canonical_form"], "-x + log(exp(x))", "{v}");
}

/// `lingrav ARGS` exits 0 and prints `want` on the first line, then the line saying how the
/// printed form was audited; the same on a second run.
fn check_prints(args: &[&str], want: &str) {
    let out = lingrav(args);
    assert_clean(args, &out, 0);
    let lines: Vec<&str> = out.0.lines().collect();
    assert_eq!(lines.first(), Some(&want), "lingrav {args:?}: {}", out.0);
    // Then, when the input applies names that are not built-ins, the note that says so.
    let note_ok = lines.len() == 2 || (lines.len() == 3 && lines[2].starts_with("note: `"));
    assert!(
        lines.len() >= 2 && lines[1].starts_with("audited: agrees") && note_ok,
        "lingrav {args:?}: the audit line is missing:\n{}",
        out.0
    );
    assert_eq!(lingrav(args).0, out.0, "lingrav {args:?} is not stable");
}

/// The first line of `lingrav ARGS`: the printed form.
fn form(args: &[&str]) -> String {
    let (stdout, _, _) = lingrav(args);
    stdout.lines().next().unwrap_or("").to_string()
}

#[test]
fn simplify_prints_stable_readable_forms() {
    check_prints(&["simplify", "2*sin(x)*cos(x)"], "sin(2*x)");
    check_prints(&["simplify", "cos(x)^2 + sin(x)^2"], "1");
    check_prints(&["simplify", "(x + 1)^2"], "x^2 + 2*x + 1");
    check_prints(&["simplify", "x*y - y*x + 3/4"], "3/4");
    check_prints(&["simplify", "cos(pi/4)"], "sqrt(2)/2");
    check_prints(
        &["simplify", "A*cos(omega*(t - z))"],
        "A*cos(omega*(t - z))",
    );
}

#[test]
fn simplify_output_simplifies_to_itself() {
    for e in [
        "2*sin(x)*cos(x)",
        "(x + y)^3 - x^3",
        "exp(x)*exp(-2*x) + sinh(x)",
        "sqrt(x^2 + y^2)^3",
        "F(t - x)*cos(k*x)^2",
    ] {
        let once = form(&["simplify", e]);
        check_prints(&["simplify", "--", &once], &once);
    }
}

#[test]
fn simplify_latex() {
    let args = ["simplify", "--latex", "1/sqrt(x^2 + y^2 + z^2)^3"];
    let out = lingrav(&args);
    assert_clean(&args, &out, 0);
    let first = out.0.lines().next().unwrap_or("");
    assert!(
        first.starts_with("\\frac{\\sqrt{") && first.ends_with('}'),
        "{}",
        out.0
    );
    check_prints(
        &["simplify", "--latex", "sin(x)/2"],
        "\\frac{\\sin\\left(x\\right)}{2}",
    );
}

#[test]
fn diff_by_several_variables() {
    check_prints(&["diff", "x^2*y^3", "x", "y"], "6*x*y^2");
    check_prints(&["diff", "x^3", "x", "x", "x"], "6");
    check_prints(&["diff", "x^3", "y"], "0");
    check_prints(&["diff", "F(t - r)/r", "t", "t"], "F''(-r + t)/r");
    // (The help example `diff 'sqrt(x^2 + y^2 + z^2)' x` is checked by the general tests.)
    check_prints(&["diff", "sin(x)", "x", "--latex"], "\\cos\\left(x\\right)");
    // The order of the variables does not matter.
    let e = "exp(x*y)*F(x - 2*y)";
    let xy = form(&["diff", e, "x", "y"]);
    let yx = form(&["diff", e, "y", "x"]);
    assert_eq!(xy, yx);
    // And the result agrees with the derivative operator.
    let op = form(&["simplify", &format!("d_x_y({e})")]);
    assert_eq!(xy, op);
}

#[test]
fn diff_needs_a_variable_name() {
    for vars in [&[][..], &["2x"], &["sin"], &["pi"], &["x+y"]] {
        let mut args = vec!["diff", "x^2"];
        args.extend_from_slice(vars);
        let (stdout, stderr, code) = lingrav(&args);
        assert_eq!(code, 2, "lingrav {args:?}\n{stderr}");
        assert!(stdout.is_empty(), "lingrav {args:?} printed {stdout:?}");
        assert!(!stderr.contains("panicked"), "{stderr}");
    }
    let (_, stderr, _) = lingrav(&["diff", "x^2", "2x"]);
    assert!(stderr.contains("cannot differentiate by `2x`"), "{stderr}");
}

/// A name applied to an argument that is not a built-in function is said to be read as an
/// arbitrary function (text and JSON), so that a verdict about `erf(x)` is not taken for one
/// about the error function; built-ins alone give no note (`atan` and `abs` are built in).
#[test]
fn issue_14_unknown_function_names_are_reported() {
    let (out, _, code) = lingrav(&["zero", "erf(x)^2 - 1"]);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("note: `erf` is not a built-in function; read as an arbitrary function"),
        "{out}"
    );
    let (out, _, code) = lingrav(&["simplify", "--format", "json", "G(x)*H(y)"]);
    assert_eq!(code, 0, "{out}");
    let j: serde_json::Value = serde_json::from_str(&out).expect("JSON");
    assert_eq!(
        j["arbitrary_functions"],
        serde_json::json!(["G", "H"]),
        "{j}"
    );
    let (out, _, code) = lingrav(&["diff", "sin(x)*x", "x"]);
    assert_eq!(code, 0, "{out}");
    assert!(!out.contains("note:"), "{out}");
    // A name that cancels is still reported: the proof holds for every function, but the
    // reader should know how `erf` was read.
    let (out, _, code) = lingrav(&["zero", "erf(x)", "erf(x)"]);
    assert_eq!(code, 0, "{out}");
    assert!(
        out.contains("note: `erf` is not a built-in function"),
        "{out}"
    );
}

/// `i`, `I` and `j` are real variables (there is no imaginary unit): `zero`, `simplify` and
/// `diff` say so, so that a witness at `i = 1.97` is not read as a verdict about complex
/// numbers; other names give no such note.
#[test]
fn imaginary_unit_names_are_said_to_be_real_variables() {
    let (out, _, code) = lingrav(&["zero", "exp(i*pi/6) - sqrt(3)/2 - i/2"]);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("note: `i` is read as a real variable: there is no imaginary unit"),
        "{out}"
    );
    let (out, _, code) = lingrav(&["zero", "x", "I"]);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("note: `I` is read as a real variable"),
        "{out}"
    );
    let (out, _, code) = lingrav(&["simplify", "j^2 + 1"]);
    assert_eq!(code, 0, "{out}");
    assert!(
        out.contains("note: `j` is read as a real variable"),
        "{out}"
    );
    let (out, _, code) = lingrav(&["diff", "i*x^2", "x"]);
    assert_eq!(code, 0, "{out}");
    assert!(
        out.contains("note: `i` is read as a real variable"),
        "{out}"
    );
    let (out, _, code) = lingrav(&["zero", "ii*x - x*ii"]);
    assert_eq!(code, 0, "{out}");
    assert!(!out.contains("note:"), "{out}");
}

#[test]
fn atan_and_abs_are_known_functions() {
    let table: &[(&[&str], i32, &str)] = &[
        (&["d_x(atan(x)) - 1/(1 + x^2)"], 0, "zero"),
        // True only for x > 0: refuted at a negative x, never proved.
        (&["atan(x) + atan(1/x) - pi/2"], 1, "nonzero"),
        (&["abs(x)^2 - x^2"], 0, "zero"),
        (&["abs(x)", "x"], 1, "nonzero"),
        (
            &["d_x(abs(sin(x)))", "sin(x)*cos(x)/abs(sin(x))"],
            0,
            "zero",
        ),
    ];
    for (args, code, verdict) in table {
        check_zero(args, *code, verdict);
    }
    // No "arbitrary function" note for atan or abs.
    let out = lingrav(&["zero", "atan(x) - atan(x) + abs(y) - abs(y)"]);
    assert!(
        !out.0.contains("arbitrary") && !out.1.contains("arbitrary"),
        "{out:?}"
    );
    // abs of an argument not shown real: an input error at the argument.
    let out = lingrav(&["zero", "abs(sqrt(x))"]);
    assert_eq!(out.2, 2, "{out:?}");
    assert!(
        out.1.contains("not shown to be real") && out.1.contains("1:5"),
        "{out:?}"
    );
}

/// `atan2(y, x)` (issue 14): its derivatives proved, its value refuted where a formula valid
/// only for x > 0 differs, bad calls located (exit 2, line and column), complex-looking or
/// cut arguments refused with the reason.
#[test]
fn atan2_through_the_command_line() {
    // d atan2(y, x) = (x dy - y dx)/(x^2 + y^2) (common practice: gradient of the polar angle).
    check_zero(&["d_x(atan2(y,x)) + y/(x^2+y^2)"], 0, "zero");
    check_zero(&["d_y(atan2(y, x))", "x/(x^2 + y^2)"], 0, "zero");
    check_zero(&["atan2(y, x)", "atan(y/x)"], 1, "nonzero");
    check_zero(&["abs(abs(x - 1))", "abs(x - 1)"], 0, "zero");
    check_zero(&["abs(sqrt(x^2 + 1))", "sqrt(x^2 + 1)"], 0, "zero");
    // (expression, message, where the report starts: its first label, the function's name
    // when the call is labelled too)
    let bad: &[(&str, &str, &str)] = &[
        (
            "1 + atan2(y)",
            "`atan2` takes two arguments, found one",
            "1:5",
        ),
        (
            "atan2(y, x, z)",
            "`atan2` takes two arguments, found more",
            "1:1",
        ),
        ("sin(x, y)", "functions take one argument", "1:1"),
        (
            "atan2(sqrt(x), y)",
            "first argument is not shown to be real",
            "1:7",
        ),
        ("atan2(0, -1)", "on its cut", "1:1"),
        ("abs(sqrt(x - 1))", "not shown to be real", "1:5"),
    ];
    for (text, msg, at) in bad {
        let out = lingrav(&["zero", text]);
        assert_eq!(out.2, 2, "{text}: {out:?}");
        assert!(out.1.contains(msg), "{text}: {}", out.1);
        assert!(
            out.1.contains(&format!("expression:{at}")),
            "{text}: {}",
            out.1
        );
    }
}
