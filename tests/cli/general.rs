//! What every command shares: version, help, usage errors, a closed output pipe.

use crate::support::{assert_clean, command, lingrav};
use std::io::Read as _;
use std::path::Path;
use std::process::Stdio;

#[test]
fn version() {
    let want = format!("lingrav {}\n", env!("CARGO_PKG_VERSION"));
    for args in [&["--version"][..], &["-V"]] {
        let out = lingrav(args);
        assert_clean(args, &out, 0);
        assert_eq!(out.0, want, "lingrav {args:?}");
    }
}

/// The subcommands listed by `lingrav --help`, without `help` itself.
fn subcommands() -> Vec<String> {
    let out = lingrav(&["--help"]);
    assert_clean(&["--help"], &out, 0);
    let mut in_list = false;
    let mut names = Vec::new();
    for line in out.0.lines() {
        if line.starts_with("Commands:") {
            in_list = true;
        } else if in_list && line.trim().is_empty() {
            break;
        } else if in_list
            && let Some(name) = line.split_whitespace().next()
            && name != "help"
        {
            names.push(name.to_string());
        }
    }
    names
}

#[test]
fn every_command_has_help_with_an_example() {
    let names = subcommands();
    for expected in ["zero", "simplify", "diff"] {
        assert!(
            names.iter().any(|n| n == expected),
            "{expected} is not listed: {names:?}"
        );
    }
    for name in &names {
        let args = [name.as_str(), "--help"];
        let out = lingrav(&args);
        assert_clean(&args, &out, 0);
        let example = format!("  lingrav {name} ");
        assert!(
            out.0.contains("Example") && out.0.contains(&example),
            "`lingrav {name} --help` shows no example:\n{}",
            out.0
        );
    }
}

/// Every help example that says what it prints (`lingrav CMD 'expr' ARGS  # prints OUT`)
/// prints exactly that as its first line (the second says how it was audited).
#[test]
fn help_examples_print_what_they_say() {
    let mut checked = 0;
    for name in subcommands() {
        let (help, _, _) = lingrav(&[name.as_str(), "--help"]);
        for line in help.lines() {
            let Some((command, printed)) = line.split_once("# prints ") else {
                continue;
            };
            let args = shell_words(command.trim().strip_prefix("lingrav ").unwrap_or(""));
            let args: Vec<&str> = args.iter().map(String::as_str).collect();
            let out = lingrav(&args);
            assert_clean(&args, &out, 0);
            assert_eq!(
                out.0.lines().next().unwrap_or(""),
                printed.trim(),
                "`{}` (from `lingrav {name} --help`)",
                command.trim()
            );
            checked += 1;
        }
    }
    assert!(checked > 0, "no help example says what it prints");
}

/// Splits a command line written with single quotes, as the help examples are.
fn shell_words(s: &str) -> Vec<String> {
    let mut words = Vec::new();
    let mut cur = String::new();
    let mut quoted = false;
    let mut in_word = false;
    for c in s.chars() {
        match c {
            '\'' => {
                quoted = !quoted;
                in_word = true;
            }
            c if c.is_whitespace() && !quoted => {
                if in_word {
                    words.push(std::mem::take(&mut cur));
                    in_word = false;
                }
            }
            c => {
                cur.push(c);
                in_word = true;
            }
        }
    }
    if in_word {
        words.push(cur);
    }
    words
}

#[test]
fn top_level_help_states_the_exit_codes() {
    let (stdout, _, _) = lingrav(&["--help"]);
    for needle in ["0 holds", "1 fails", "2 bad input", "3 undecided"] {
        assert!(
            stdout.contains(needle),
            "no `{needle}` in --help:\n{stdout}"
        );
    }
}

#[test]
fn usage_errors_exit_2() {
    for args in [
        &[][..],
        &["frobnicate"],
        &["zero"],
        &["zero", "x", "y", "z"],
        &["zero", "x", "--seed", "minus one"],
        &["zero", "x", "--format", "yaml"],
        &["simplify", "x", "--bogus"],
    ] {
        let (stdout, stderr, code) = lingrav(args);
        assert_eq!(code, 2, "lingrav {args:?}\n{stderr}");
        assert!(stdout.is_empty(), "lingrav {args:?} printed {stdout:?}");
        assert!(
            (stderr.contains("error:") || stderr.contains("Usage:"))
                && !stderr.contains("panicked"),
            "lingrav {args:?}:\n{stderr}"
        );
    }
}

/// A reader that stops early (`lingrav simplify ... | head -c 16`) is not an error: exit 0,
/// nothing on standard error. The output is larger than a pipe buffer, so the write is still
/// in progress when the pipe closes.
#[test]
fn a_closed_pipe_is_not_an_error() {
    let args = ["simplify", "(a + b + c + d + e + f + 1)^9"];
    let (full, _, _) = lingrav(&args);
    assert!(
        full.len() > 1 << 16,
        "the output ({} bytes) must outgrow a 64 KiB pipe buffer for this test to mean anything",
        full.len()
    );
    let mut child = command(Path::new(env!("CARGO_MANIFEST_DIR")), &args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("lingrav runs");
    let mut head = [0u8; 16];
    child
        .stdout
        .take()
        .expect("piped stdout")
        .read_exact(&mut head)
        .expect("the first bytes arrive");
    // The read end is closed here, when the pipe is dropped.
    let out = child.wait_with_output().expect("lingrav finishes");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "stderr:\n{stderr}");
    assert!(stderr.is_empty(), "stderr:\n{stderr}");
}

#[test]
fn check_takes_several_files_and_ends_with_the_worst() {
    use super::support::worked;
    let dir = tempfile::tempdir().unwrap();
    let bad = dir.path().join("bad.toml");
    std::fs::write(&bad, "[perturbation]\nxx = 'cos(t'\n").unwrap();
    let (good, wrong) = (worked("lorenz_wave.toml"), worked("wrong_sign_wave.toml"));
    // Holds and fails: exit 1, each report, then the summary.
    let (out, _, code) = lingrav(&["check", &good, &wrong]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("lorenz_wave.toml: ") && out.contains("wrong_sign_wave.toml: "));
    assert!(
        out.trim_end()
            .ends_with("summary: 2 files: 1 hold, 1 fail, 0 undecided, 0 bad input"),
        "{out}"
    );
    // Bad input is the worst: exit 2, its error on stderr with file, line and column; the
    // other files are still checked.
    let (out, err, code) = lingrav(&["check", &good, bad.to_str().unwrap(), &wrong]);
    assert_eq!(code, 2, "{out}{err}");
    assert!(err.contains("bad.toml:2:"), "{err}");
    assert!(
        out.contains("3 files: 1 hold, 1 fail, 0 undecided, 1 bad input"),
        "{out}"
    );
    // JSON: one document with every file's report and the summary.
    let (out, _, code) = lingrav(&["check", &good, &wrong, "--format", "json"]);
    assert_eq!(code, 1);
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(j["result"], "fails");
    assert_eq!(j["files"][0]["result"], "holds");
    assert_eq!(j["files"][1]["result"], "fails");
    // One file: the report as before, without a summary line.
    let (out, _, code) = lingrav(&["check", &good]);
    assert_eq!(code, 0);
    assert!(!out.contains("summary:"), "{out}");
}

/// Issue 14, item 1: `show` and `check` print in the file's own terms (its `[define]`
/// names), `--expanded` prints the canonical forms, and JSON carries the canonical forms.
#[test]
fn results_print_in_the_files_terms_unless_expanded() {
    use crate::support::worked;
    let wave = worked("oblique_wave.toml");
    let (out, err, code) = lingrav(&["show", &wave, "riemann"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("R_txtx = 8*a_plus*w^2*cos(phase)/25"), "{out}");
    let (out, _, code) = lingrav(&["show", &wave, "riemann", "--expanded"]);
    assert_eq!(code, 0);
    assert!(!out.contains("phase") && out.contains("cos("), "{out}");

    // A failing residual: the file's r, powers of r collected in the denominator, and the
    // retarded time written t - r.
    let near = worked("dropped_near_zone.toml");
    let (out, _, code) = lingrav(&["check", &near]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("d^mu hbar_mux = x*Q''(t - r)/r^3"), "{out}");
    // JSON is for programs: canonical forms, in coordinates and parameters only.
    let (out, _, code) = lingrav(&["check", &near, "--format", "json"]);
    assert_eq!(code, 1);
    assert!(
        !out.contains("/r^3") && out.contains("sqrt(x^2 + y^2 + z^2)"),
        "{out}"
    );
    let (out, _, code) = lingrav(&["check", &near, "--expanded"]);
    assert_eq!(code, 1);
    assert!(
        out.contains("sqrt(x^2 + y^2 + z^2)") && !out.contains("/r^3"),
        "{out}"
    );
}

/// Issue 14: `gauge`, `project` and `ring` print in the file's terms too (text), with
/// `--expanded` for the canonical forms; their JSON stays canonical.
#[test]
fn gauge_project_and_ring_print_in_the_files_terms() {
    use crate::support::worked;
    let front = worked("arctan_front_with_angle_gauge.toml");
    let gauge = ["gauge", front.as_str(), "--vector", "0, 0, 0, e*ret^2"];
    let (out, err, code) = lingrav(&gauge);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("  h'_xx = front\n"), "{out}");
    // The polar angle's derivative, by its own rule (not the half-angle formula's).
    assert!(out.contains("  h'_tx = -e*y/(x^2 + y^2)\n"), "{out}");
    let (out, _, code) = lingrav(&[&gauge[..], &["--expanded"]].concat());
    assert_eq!(code, 0);
    assert!(
        out.contains("  h'_xx = a*atan(") && !out.contains("= front"),
        "{out}"
    );
    let (out, _, code) = lingrav(&[&gauge[..], &["--format", "json"]].concat());
    assert_eq!(code, 0);
    assert!(out.contains("a*atan(") && !out.contains("\"front"), "{out}");

    let wave = worked("oblique_wave.toml");
    let project = ["project", wave.as_str(), "--direction", "3/5,0,4/5"];
    let (out, _, code) = lingrav(&project);
    assert_eq!(code, 0);
    assert!(out.contains("h^TT_xx = 16*a_plus*cos(phase)/25"), "{out}");
    let (out, _, code) = lingrav(&[&project[..], &["--expanded"]].concat());
    assert_eq!(code, 0);
    assert!(
        !out.contains("phase") && out.contains("h^TT_xx = "),
        "{out}"
    );
    let (out, _, code) = lingrav(&[&project[..], &["--format", "json"]].concat());
    assert_eq!(code, 0);
    assert!(!out.contains("phase"), "{out}");

    // On the sphere: the printed polarizations in the file's terms; the audit reads the
    // canonical texts, whichever way they are printed.
    let teuk = worked("teukolsky_l2_wave.toml");
    for extra in [&[][..], &["--expanded"][..]] {
        let args = [
            &["project", teuk.as_str(), "--direction", "radial"][..],
            extra,
        ]
        .concat();
        let (out, err, code) = lingrav(&args);
        assert_eq!(code, 0, "{err}");
        assert!(out.contains("audited: consistent"), "{out}");
        let plus = out.lines().find(|l| l.starts_with("  h_plus  = ")).unwrap();
        // The common sin(th)^2 in front and the terms by the arbitrary function's
        // derivatives (display), or expanded.
        assert_eq!(
            plus.starts_with("  h_plus  = 3*sin(th)^2*(16*F''''(t - r) + "),
            extra.is_empty(),
            "{plus}"
        );
    }

    let ring = [
        "ring",
        wave.as_str(),
        "--direction",
        "3/5,0,4/5",
        "--times",
        "0",
    ];
    for extra in [&[][..], &["--expanded"][..]] {
        let (out, _, code) = lingrav(&[&ring[..], extra].concat());
        assert_eq!(code, 0);
        assert!(out.contains("direction  n = (3/5, 0, 4/5)"), "{out}");
    }
}
