//! Malformed expressions on the command line: exit 2, a diagnostic that says what is wrong
//! and points at it, nothing on standard output, and never a panic.

use crate::support::lingrav;

/// `(expression, what the diagnostic must say)`.
fn table() -> Vec<(String, &'static str)> {
    let rows: &[(&str, &str)] = &[
        ("2x", "missing operator between `2` and `x`"),
        ("x y", "missing operator"),
        ("(a)(b)", "missing operator"),
        ("f (x)", "missing operator"),
        ("(x", "unclosed `(`"),
        ("sin(x", "unclosed `(`"),
        ("x)", "unmatched `)`"),
        ("x +", "expected an operand after `+`"),
        ("x +* y", "expected an operand after `+`"),
        ("x^", "expected an operand after `^`"),
        ("sin()", "has no argument"),
        ("f(x, y)", "functions take one argument"),
        ("x ** 2", "`**` is not an operator"),
        ("$", "unexpected character `$`"),
        ("x = 1", "unexpected `=`"),
        ("", "empty expression"),
        ("   ", "empty expression"),
        ("F'", "must be followed by `(`"),
        ("d__x(f)", "empty variable name"),
        ("d_x_(f)", "empty variable name"),
        ("d_pi(x)", "cannot differentiate by `pi`"),
        ("1/(x-x)", "identically zero"),
        ("0^(-1)", "identically zero"),
        ("sin'(x)", "`sin` is built in"),
        ("sin", "needs an argument"),
        ("x² + 1", "unexpected character `²`"),
        ("α + β", "unexpected character `α`"),
        ("1e99999999", "exponent too large"),
        ("x^1e99999999", "exponent too large"),
    ];
    let mut out: Vec<(String, &'static str)> =
        rows.iter().map(|(e, m)| (e.to_string(), *m)).collect();
    // Deep nesting: refused with a message, not a stack overflow.
    let n = 10_000;
    out.push((
        format!("{}x{}", "(".repeat(n), ")".repeat(n)),
        "nested too deeply",
    ));
    out.push((
        format!("{}x{}", "sin(".repeat(n), ")".repeat(n)),
        "nested too deeply",
    ));
    out.push((format!("{}x", "-".repeat(n)), "nested too deeply"));
    out.push(("(".repeat(n), "nested too deeply"));
    out.push((vec!["x"; n].join("^"), "nested too deeply"));
    out
}

/// True if the diagnostic shows the offending text with a label under it.
fn shows_label(stderr: &str) -> bool {
    stderr.contains("expression:1:") && (stderr.contains("╰──") || stderr.contains("`--"))
}

/// Runs `args` (which end with a malformed expression) and checks the diagnostic.
fn check_bad(args: &[&str], want: &str) -> Option<String> {
    let (stdout, stderr, code) = lingrav(args);
    let shown: String = args
        .iter()
        .map(|a| {
            if a.len() > 40 {
                format!("{}...", &a[..40])
            } else {
                a.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join(" ");
    let mut problems = Vec::new();
    if code != 2 {
        problems.push(format!("exit {code}, expected 2"));
    }
    if !stdout.is_empty() {
        problems.push(format!("stdout is not empty: {stdout:?}"));
    }
    if stderr.contains("panicked") {
        problems.push("panicked".into());
    }
    if !stderr.contains(want) {
        problems.push(format!("stderr does not say {want:?}"));
    }
    if !shows_label(&stderr) {
        problems.push("stderr shows no labelled location".into());
    }
    if problems.is_empty() {
        None
    } else {
        let head: String = stderr.chars().take(600).collect();
        Some(format!("lingrav {shown}: {}\n{head}", problems.join("; ")))
    }
}

#[test]
fn bad_expressions_are_reported_by_every_command() {
    let mut failures = Vec::new();
    for (e, want) in table() {
        // `--` so that an expression starting with `-` is not read as an option.
        for args in [
            vec!["zero", "--", e.as_str()],
            vec!["zero", "x", "--", e.as_str()],
            vec!["simplify", "--", e.as_str()],
            vec!["diff", "--", e.as_str(), "x"],
        ] {
            failures.extend(check_bad(&args, want));
        }
    }
    assert!(
        failures.is_empty(),
        "{} bad runs:\n{}",
        failures.len(),
        failures.join("\n\n")
    );
}

#[test]
fn the_second_expression_is_named_in_its_diagnostic() {
    let (_, stderr, code) = lingrav(&["zero", "x", "y +"]);
    assert_eq!(code, 2);
    assert!(stderr.contains("[second expression:1:"), "{stderr}");
}

/// The column, in characters, at which `pat` first occurs in `line`.
fn char_column(line: &str, pat: impl Fn(char) -> bool) -> Option<usize> {
    line.chars().position(pat)
}

#[test]
fn the_caret_points_at_the_problem() {
    // `x + (y ** 2)`: the mark sits under the `**`, column 8.
    let (_, stderr, _) = lingrav(&["zero", "x + (y ** 2)"]);
    assert!(stderr.contains("[expression:1:8]"), "{stderr}");
    let lines: Vec<&str> = stderr.lines().collect();
    let at = lines
        .iter()
        .position(|l| l.contains("x + (y ** 2)"))
        .unwrap_or_else(|| panic!("the source line is shown:\n{stderr}"));
    let source = lines[at];
    let marks = lines.get(at + 1).expect("a line of marks under the source");
    let star = source.find("**").map(|i| source[..i].chars().count());
    let mark = char_column(marks, |c| matches!(c, '─' | '┬' | '^'));
    assert_eq!(mark, star, "the mark is under `**`:\n{stderr}");
}
