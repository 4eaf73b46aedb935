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

/// Asserts that the report `j` gives the size and the CRC-32 checksum of `bytes` under
/// the keys `[size, checksum]`.
fn assert_describes(j: &serde_json::Value, [size, checksum]: [&str; 2], bytes: &[u8]) {
    assert_eq!(j[size], bytes.len(), "{j}");
    assert_eq!(j[checksum], crate::support::crc32(bytes).as_str(), "{j}");
}

/// Whether `j[key]` is a string that starts with `prefix`.
fn starts_with(j: &serde_json::Value, key: &str, prefix: &str) -> bool {
    j[key].as_str().is_some_and(|s| s.starts_with(prefix))
}

/// Runs `args` (already asking for JSON), expects `code`, and parses the whole standard
/// output, whatever standard error says.
fn json_out(args: &[&str], code: i32) -> (serde_json::Value, String) {
    let (out, err, got) = lingrav(args);
    assert_eq!(got, code, "{args:?}\nstdout:\n{out}\nstderr:\n{err}");
    let j = serde_json::from_str(&out)
        .unwrap_or_else(|e| panic!("{args:?}: not JSON ({e}):\n{out}\nstderr:\n{err}"));
    (j, err)
}

/// A limit that ends a command before its report (here while the file is built) still
/// leaves a JSON object on standard output when JSON was asked for: `result` `undecided`
/// and the `limit` worded as the text line, exit 3, in every command that reads a file.
#[test]
fn issue_11_a_limit_before_the_report_is_json_too() {
    let f = worked("vibrating_rod.toml");
    let limit = "too large: an intermediate result has over 5 terms (--max-terms raises the \
                 limit)";
    let tmp = tempfile::tempdir().expect("temp dir");
    let out = tmp.path().join("r.csv");
    let out = out.to_str().expect("utf-8 path");
    for args in [
        vec!["check", &f, "--format", "json"],
        vec!["show", &f, "riemann", "--format", "json"],
        vec!["grid", &f, "--format", "json"],
        vec![
            "gauge",
            &f,
            "--vector",
            "0, sin(t), 0, 0",
            "--format",
            "json",
        ],
        vec!["project", &f, "--direction", "0,0,1", "--format", "json"],
        vec![
            "export", &f, "-q", "riemann", "--grid", "--out", out, "--format", "json",
        ],
        // `--report` is the older spelling of `--format` for export and emit: still accepted.
        vec![
            "emit", &f, "-q", "riemann", "--lang", "c", "--report", "json",
        ],
    ] {
        let mut a = args.clone();
        a.extend(["--max-terms", "5"]);
        let (j, err) = json_out(&a, 3);
        assert!(err.is_empty(), "{a:?}: {err}");
        assert_eq!(j["result"], "undecided", "{a:?}: {j}");
        assert_eq!(j["limit"], limit, "{a:?}: {j}");
        // The same run as text ends with the text line.
        let text: Vec<&str> = args
            .iter()
            .copied()
            .filter(|s| !["--format", "--report", "json"].contains(s))
            .chain(["--max-terms", "5"])
            .collect();
        let (stdout, _, code) = lingrav(&text);
        assert_eq!(code, 3, "{text:?}\n{stdout}");
        assert!(
            stdout.ends_with(&format!("undecided: {limit}\n")),
            "{text:?}: {stdout}"
        );
    }
    assert!(
        std::fs::read_dir(tmp.path()).expect("dir").next().is_none(),
        "a stopped export wrote a file"
    );
    // A grid refused by its estimate before sampling: the same object.
    let args = [
        "grid",
        &worked("oblique_wave.toml"),
        "--points",
        "8,16,400",
        "--format",
        "json",
    ];
    let (j, _) = json_out(&args, 3);
    assert_eq!(j["result"], "undecided", "{j}");
    assert!(
        starts_with(&j, "limit", "too large: the grid 8,16,400 would take about"),
        "{j}"
    );
}

/// Bad input with a JSON report: exit 2, the rendered error on standard error as always,
/// and on standard output a JSON object with `result` `error` and the message.
#[test]
fn issue_11_an_input_error_is_json_too() {
    let (j, err) = json_out(&["check", "no/such/file.toml", "--format", "json"], 2);
    assert_eq!(j["result"], "error", "{j}");
    assert!(
        starts_with(&j, "error", "cannot read `no/such/file.toml`"),
        "{j}"
    );
    assert!(err.contains("cannot read `no/such/file.toml`"), "{err}");

    let (j, _) = json_out(&["zero", "sin(x", "--format", "json"], 2);
    assert_eq!(j["result"], "error", "{j}");
    assert!(j["error"].is_string(), "{j}");

    // Without JSON, standard output stays empty.
    let (out, err, code) = lingrav(&["check", "no/such/file.toml"]);
    assert_eq!(code, 2);
    assert!(out.is_empty(), "{out}");
    assert!(err.contains("cannot read"), "{err}");
}

/// `export --format json`: what was written (rows, columns, quantities, paths, the data
/// file's size and checksum, which the sidecar and the file itself agree with).
#[test]
fn issue_11_export_reports_what_it_wrote_as_json() {
    let f = worked("oblique_wave.toml");
    let tmp = tempfile::tempdir().expect("temp dir");
    let out = tmp.path().join("h.csv");
    let out_s = out.to_str().expect("utf-8 path");
    let args = [
        "export", &f, "-q", "h", "--grid", "--points", "2", "--out", out_s, "--format", "json",
    ];
    let (j, err) = json_out(&args, 0);
    assert!(err.is_empty(), "{err}");
    assert_eq!(j["result"], "written", "{j}");
    assert_eq!(j["quantities"], serde_json::json!(["h"]), "{j}");
    assert_eq!(j["rows"], 8, "{j}");
    let columns = j["columns"].as_array().expect("columns");
    assert_eq!(columns.len(), 14, "{j}");
    assert_eq!(columns[0], "t", "{j}");
    assert_eq!(columns[4], "h_tt", "{j}");
    assert_eq!(j["data_format"], "csv", "{j}");
    assert_eq!(j["data_file"], out_s, "{j}");
    let sidecar = format!("{out_s}.meta.json");
    assert_eq!(j["sidecar"], sidecar.as_str(), "{j}");
    let data = std::fs::read(&out).expect("data file");
    assert_describes(&j, ["data_file_bytes", "data_file_checksum"], &data);
    let meta: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&sidecar).expect("sidecar")).expect("JSON");
    assert_eq!(
        meta["data_file_checksum"], j["data_file_checksum"],
        "{meta}"
    );
    assert_eq!(meta["data_file_bytes"], j["data_file_bytes"], "{meta}");
    assert_eq!(
        std::fs::read_to_string(&out).expect("csv").lines().count(),
        9,
        "a header and 8 rows"
    );
}

/// One meaning per option name: `--format` is how export reports (text or json), and the
/// data file's type is `--data-format`; a data type given to `--format` is refused (exit 2,
/// nothing written).
#[test]
fn issue_14_export_format_is_the_report_and_data_format_the_file() {
    let f = worked("oblique_wave.toml");
    let tmp = tempfile::tempdir().expect("temp dir");
    let out = tmp.path().join("h.dat");
    let out_s = out.to_str().expect("utf-8 path");
    let base = [
        "export", &f, "-q", "h", "--grid", "--points", "2", "--out", out_s,
    ];
    let mut args = base.to_vec();
    args.extend(["--data-format", "json", "--format", "json"]);
    let (j, err) = json_out(&args, 0);
    assert!(err.is_empty(), "{err}");
    assert_eq!(j["data_format"], "json", "{j}");
    let data: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&out).expect("data")).expect("JSON data");
    assert_eq!(data["rows"].as_array().map(Vec::len), Some(8), "{data}");
    let mut refused = base.to_vec();
    refused.extend(["--format", "csv", "--force"]);
    let (stdout, stderr, code) = lingrav(&refused);
    assert_eq!(code, 2, "{stdout}{stderr}");
    assert!(stderr.contains("--format"), "{stderr}");
}

/// `emit --format json` (or its older spelling `--report json`): the quantities, the language, the path and the checksum of what
/// was written; without --out the code itself, the same as the text output.
#[test]
fn issue_11_emit_reports_what_it_generated_as_json() {
    let f = worked("oblique_wave.toml");
    let (code, err, got) = lingrav(&["emit", &f, "-q", "h,riemann", "--lang", "python"]);
    assert_eq!(got, 0, "{err}");
    let (j, err) = json_out(
        &[
            "emit",
            &f,
            "-q",
            "h,riemann",
            "--lang",
            "python",
            "--report",
            "json",
        ],
        0,
    );
    assert!(err.is_empty(), "{err}");
    assert_eq!(j["result"], "generated", "{j}");
    assert_eq!(j["language"], "python", "{j}");
    assert_eq!(j["quantities"], serde_json::json!(["h", "riemann"]), "{j}");
    assert_eq!(j["columns"], 30, "{j}");
    assert!(j["path"].is_null(), "{j}");
    assert_eq!(j["code"], code.as_str(), "{j}");
    assert_describes(&j, ["bytes", "checksum"], code.as_bytes());

    let tmp = tempfile::tempdir().expect("temp dir");
    let out = tmp.path().join("h.rs");
    let out_s = out.to_str().expect("utf-8 path");
    let (j, _) = json_out(
        &[
            "emit", &f, "-q", "h", "--lang", "rust", "--out", out_s, "--report", "json",
        ],
        0,
    );
    assert_eq!(j["language"], "rust", "{j}");
    assert_eq!(j["path"], out_s, "{j}");
    assert!(j["code"].is_null(), "{j}");
    let written = std::fs::read(&out).expect("code file");
    assert_describes(&j, ["bytes", "checksum"], &written);
}

/// A failing claim's residuals: the text report summarises a long one (cut, with its number
/// of terms), the JSON report carries every residual whole, with its LaTeX, never cut.
#[test]
fn issue_14_json_residuals_are_whole_and_text_ones_summarised() {
    let text = std::fs::read_to_string(worked("vibrating_rod.toml"))
        .expect("worked file")
        .replace("pure_gauge = false", "pure_gauge = true");
    let tmp = tempfile::tempdir().expect("temp dir");
    let f = tmp.path().join("rod_claimed_pure_gauge.toml");
    std::fs::write(&f, text).expect("write");
    let f = f.to_str().expect("utf-8 path");
    let (j, _) = json_out(&["check", f, "--format", "json"], 1);
    let pure = j["claims"]
        .as_array()
        .expect("claims")
        .iter()
        .find(|c| c["key"] == "pure_gauge")
        .expect("the pure gauge claim");
    assert_eq!(pure["status"], "fails", "{pure}");
    let residuals: Vec<&str> = pure["components"]
        .as_array()
        .expect("components")
        .iter()
        .map(|c| {
            assert!(
                c["residual_latex"].as_str().is_some_and(|l| !l.is_empty()),
                "{c}"
            );
            c["residual"].as_str().expect("a residual")
        })
        .collect();
    let longest = residuals.iter().map(|r| r.len()).max().unwrap_or(0);
    // Longer than the text report's cut (600 characters).
    assert!(longest > 600, "a long residual to test with: {longest}");
    assert!(
        residuals.iter().all(|r| !r.contains("...")),
        "no residual is cut in JSON"
    );
    // The canonical residuals (`--expanded`) are as long as JSON's; the text cuts them.
    let (out, _, code) = lingrav(&["check", f, "--expanded"]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("terms)"), "the text report summarises: {out}");
}

/// Every LaTeX snippet lingrav prints compiles: `show --latex` (an aligned block) and
/// `simplify --latex`, set in a minimal amsmath document, when a TeX engine (`pdflatex`) is
/// on the machine; otherwise the test says so and checks only that the snippets are balanced.
#[test]
fn issue_14_latex_snippets_compile_when_tex_is_present() {
    let (show, _, code) = lingrav(&["show", "--latex", &worked("oblique_wave.toml"), "riemann"]);
    assert_eq!(code, 0, "{show}");
    let block: String = show
        .lines()
        .filter(|l| !l.starts_with('('))
        .collect::<Vec<_>>()
        .join("\n");
    let (simple, _, code) = lingrav(&[
        "simplify",
        "--latex",
        "omega^2*a_plus*cos(omega*(t - z))/(2*r) + Q''(t - r)/r^3 + sqrt(x^2 + y^2)",
    ]);
    assert_eq!(code, 0, "{simple}");
    let formula = simple.lines().next().expect("the formula line");
    for s in [block.as_str(), formula] {
        assert_eq!(s.matches('{').count(), s.matches('}').count(), "{s}");
        assert_eq!(
            s.matches("\\left").count(),
            s.matches("\\right").count(),
            "{s}"
        );
    }
    let doc = format!(
        "\\documentclass{{article}}\n\\usepackage{{amsmath}}\n\\begin{{document}}\n\
         \\[\n{block}\n\\]\n\\[\n{formula}\n\\]\n\\end{{document}}\n"
    );
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("snippets.tex"), doc).expect("write");
    match std::process::Command::new("pdflatex")
        .args(["-interaction=nonstopmode", "-halt-on-error", "snippets.tex"])
        .current_dir(dir.path())
        .output()
    {
        Ok(out) => assert!(
            out.status.success(),
            "pdflatex failed:\n{}",
            String::from_utf8_lossy(&out.stdout)
        ),
        Err(e) => eprintln!(
            "pdflatex not available ({e}): the LaTeX is not compiled, only checked for balance"
        ),
    }
}

/// LaTeX as a paper sets it (issue 14, item 3): components of coordinates with longer names
/// (`t.ph`) as subscripts of names, and powers of sines and cosines as `\sin^{2}(...)`.
#[test]
fn issue_14_latex_labels_and_trig_powers() {
    let f = worked("schwarzschild_odd_l2_static.toml");
    let (out, err, code) = lingrav(&["show", f.as_str(), "h", "--latex"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("h_{t \\mathrm{ph}} &= "), "{out}");
    assert!(
        out.contains("\\sin^{2}\\left(\\mathrm{th}\\right)"),
        "{out}"
    );
    assert!(!out.contains(".ph"), "{out}");
}
