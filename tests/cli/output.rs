//! One output toolkit (issue 11): every command that prints a result prints it as JSON on
//! request, and a limit reached anywhere ends every command the same way: "undecided: too
//! large: ... (--max-terms raises the limit)", exit 3.

use crate::support::{lingrav, worked};

/// Runs `args` with `--format json`, expects `code` and a clean standard error, and parses
/// the whole output.
fn json_of(args: &[&str], code: i32) -> serde_json::Value {
    let mut a = args.to_vec();
    a.extend(["--format", "json"]);
    let (out, err, got) = lingrav(&a);
    assert_eq!(got, code, "{a:?}\nstdout:\n{out}\nstderr:\n{err}");
    assert!(err.is_empty(), "{a:?}: {err}");
    serde_json::from_str(&out).unwrap_or_else(|e| panic!("{a:?}: not JSON ({e}):\n{out}"))
}

#[test]
fn issue_11_simplify_and_diff_print_json() {
    let j = json_of(&["simplify", "2*sin(x)*cos(x)"], 0);
    assert_eq!(j["input"], "2*sin(x)*cos(x)", "{j}");
    assert_eq!(j["result"], "sin(2*x)", "{j}");
    assert_eq!(j["audit"]["result"], "consistent", "{j}");
    assert_eq!(
        j["audit"]["points"].as_array().map(Vec::len),
        Some(3),
        "{j}"
    );
    assert_eq!(j["defect"], false, "{j}");

    let j = json_of(&["diff", "x^3*y", "x", "--latex"], 0);
    assert_eq!(j["result"], "3*x^2*y", "{j}");
    assert_eq!(j["by"], serde_json::json!(["x"]), "{j}");
    assert!(
        j["latex"].as_str().is_some_and(|l| l.contains("x^{2}")),
        "{j}"
    );
    assert_eq!(j["audit"]["result"], "consistent", "{j}");
}

#[test]
fn issue_11_show_prints_json() {
    let f = worked("vibrating_rod.toml");
    let j = json_of(&["show", &f, "ricci-scalar"], 0);
    assert_eq!(j["quantity"], "ricci-scalar", "{j}");
    // A vacuum solution: R = 0 exactly, so nothing is listed and one zero is counted.
    assert_eq!(j["components"].as_array().map(Vec::len), Some(0), "{j}");
    assert_eq!(j["zero_components_omitted"], 1, "{j}");

    let f = worked("static_mass.toml");
    let j = json_of(&["show", &f, "h", "--all", "--latex"], 0);
    let comps = j["components"].as_array().expect("components");
    assert_eq!(comps.len(), 10, "{j}");
    assert_eq!(comps[0]["name"], "h_tt", "{j}");
    assert_eq!(comps[0]["latex_name"], "h_{tt}", "{j}");
    assert_eq!(comps[1]["name"], "h_tx", "{j}");
    assert_eq!(comps[1]["zero"], true, "{j}");
    assert_eq!(comps[1]["value"], "0", "{j}");
    assert_eq!(comps[0]["zero"], false, "{j}");
    assert_eq!(j["conventions"]["signature"], "-+++", "{j}");
}

#[test]
fn issue_11_gauge_prints_json() {
    let f = worked("lorenz_wave.toml");
    let j = json_of(&["gauge", &f, "--to-tt"], 0);
    assert_eq!(j["result"], "holds", "{j}");
    assert_eq!(j["constructed"], true, "{j}");
    assert_eq!(
        j["plane_wave"]["k_null"]["verdict"]["verdict"], "zero",
        "{j}"
    );
    assert_eq!(j["input_lorenz"]["status"], "holds", "{j}");
    assert_eq!(j["xi"].as_array().map(Vec::len), Some(4), "{j}");
    assert_eq!(j["h_prime"]["tt"], "0", "{j}");
    let keys: Vec<&str> = j["verification"]
        .as_array()
        .expect("verification")
        .iter()
        .map(|c| {
            assert_eq!(c["status"], "holds", "{j}");
            c["key"].as_str().unwrap()
        })
        .collect();
    assert!(
        keys.contains(&"gauge.tt") && keys.contains(&"field_equations"),
        "{j}"
    );
    assert_eq!(j["audit"]["defect"], false, "{j}");

    let j = json_of(&["gauge", &f, "--vector", "0, sin(t), 0, 0"], 0);
    assert_eq!(j["constructed"], false, "{j}");
    assert_eq!(j["xi"][1], "sin(t)", "{j}");
    assert_eq!(j["lorenz_preserved"]["status"], "fails", "{j}");
    assert_eq!(
        j["lorenz_preserved"]["box_xi"][1]["verdict"], "nonzero",
        "{j}"
    );
    assert!(j["gauges"].is_array(), "{j}");
}

#[test]
fn issue_11_ring_prints_json() {
    let f = worked("lorenz_wave.toml");
    let j = json_of(
        &[
            "ring",
            &f,
            "--direction",
            "0,0,1",
            "--times",
            "0,1",
            "--masses",
            "4",
        ],
        0,
    );
    assert_eq!(
        j["direction"]["n"],
        serde_json::json!(["0", "0", "1"]),
        "{j}"
    );
    assert_eq!(j["ring"]["masses"], 4, "{j}");
    let snaps = j["snapshots"].as_array().expect("snapshots");
    assert_eq!(snaps.len(), 2, "{j}");
    assert_eq!(snaps[1]["t"], 1.0, "{j}");
    assert_eq!(snaps[0]["masses"].as_array().map(Vec::len), Some(4), "{j}");
    assert!(snaps[0]["h_plus"].is_number(), "{j}");
    assert!(j["svg"].is_null(), "{j}");
}

/// The same limit, reached after the file is loaded, ends `show`, `check` and `gauge` with
/// the same line and exit 3. Before, `gauge --vector` exited 0 and listed the gauges it
/// could not decide as ones h' is not in.
#[test]
fn issue_11_a_limit_reached_after_loading_reads_the_same_in_every_command() {
    let f = worked("vibrating_rod.toml");
    let line = "undecided: too large: an intermediate result has over 20 terms (--max-terms \
                raises the limit)";
    for args in [
        vec!["show", &f, "riemann"],
        vec!["check", &f],
        vec!["gauge", &f, "--vector", "0, sin(t), 0, 0"],
    ] {
        let mut a = args.clone();
        a.extend(["--max-terms", "20"]);
        let (out, err, code) = lingrav(&a);
        assert_eq!(code, 3, "{a:?}\nstdout:\n{out}\nstderr:\n{err}");
        assert!(
            out.lines().any(|l| l == line),
            "{a:?}: expected the line `{line}` in\n{out}"
        );
        assert!(err.is_empty(), "{a:?}: {err}");
        if args[0] != "show" {
            a.extend(["--format", "json"]);
            let (out, _, code) = lingrav(&a);
            assert_eq!(code, 3, "{a:?}\n{out}");
            let j: serde_json::Value = serde_json::from_str(&out).expect("JSON");
            assert_eq!(
                j["limit"],
                line.trim_start_matches("undecided: "),
                "{a:?}: {j}"
            );
        }
    }
}
