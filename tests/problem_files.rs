//! The binary on problem files: every file in worked/ with its documented verdicts, and bad
//! files in tests/data/bad/ with their errors. Sources of the expected physics are named.

use std::path::Path;
use std::process::Command;

fn check_json(file: &str) -> (serde_json::Value, i32) {
    let root = env!("CARGO_MANIFEST_DIR");
    let out = Command::new(env!("CARGO_BIN_EXE_lingrav"))
        .args(["check", "--format", "json"])
        .arg(Path::new(root).join("worked").join(file))
        .output()
        .expect("run lingrav");
    let stdout = String::from_utf8(out.stdout).expect("utf8");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!stderr.contains("panicked"), "{file}: {stderr}");
    let json: serde_json::Value =
        serde_json::from_str(&stdout).unwrap_or_else(|e| panic!("{file}: {e}\n{stdout}\n{stderr}"));
    (json, out.status.code().expect("exit code"))
}

/// Asserts the status of each claim key, and the exit code.
fn expect(file: &str, claims: &[(&str, &str)], code: i32) {
    let (json, got_code) = check_json(file);
    for (key, status) in claims {
        let c = json["claims"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["key"] == *key)
            .unwrap_or_else(|| panic!("{file}: no claim {key} in {json:#}"));
        assert_eq!(c["status"], *status, "{file}: claim {key}: {c:#}");
        if *status == "holds" && c["asserted"] == true {
            // A claim that holds rests on proofs: every component is exactly zero.
            for comp in c["components"].as_array().unwrap() {
                assert_eq!(comp["verdict"], "zero", "{file}: {key}: {comp:#}");
                assert_eq!(comp["method"], "exact");
            }
        }
    }
    assert_eq!(got_code, code, "{file}: exit code; {json:#}");
}

/// Names of the failing components of a claim.
fn failing(file: &str, key: &str) -> Vec<String> {
    let (json, _) = check_json(file);
    let c = json["claims"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["key"] == key)
        .unwrap()
        .clone();
    c["components"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|k| k["verdict"] == "nonzero")
        .map(|k| k["name"].as_str().unwrap().to_string())
        .collect()
}

#[test]
fn oblique_tt_wave() {
    // Misner, Thorne & Wheeler (1973), sec. 35.6: a transverse traceless plane wave solves the
    // vacuum equations and is in TT (hence Lorenz) gauge; its Riemann tensor does not vanish.
    expect(
        "oblique_wave.toml",
        &[
            ("field_equations", "holds"),
            ("gauge.lorenz", "holds"),
            ("gauge.tt", "holds"),
            ("pure_gauge", "holds"),
        ],
        0,
    );
}

#[test]
fn lorenz_wave_not_tt() {
    // Carroll (2004), sec. 7.4 (common practice): eps_{mu nu} with k^mu eps_{mu nu} = 0 solves
    // the vacuum equations in Lorenz gauge; the longitudinal part is pure gauge but the plus
    // part is not, so the whole is not pure gauge.
    expect(
        "lorenz_wave.toml",
        &[
            ("field_equations", "holds"),
            ("gauge.lorenz", "holds"),
            ("pure_gauge", "holds"),
        ],
        0,
    );
}

#[test]
fn static_mass() {
    // Weak-field Schwarzschild in isotropic coordinates (Carroll 2004, sec. 7.2; common practice).
    expect(
        "static_mass.toml",
        &[
            ("field_equations", "holds"),
            ("gauge.lorenz", "holds"),
            ("pure_gauge", "holds"),
        ],
        0,
    );
}

#[test]
fn vibrating_rod_quadrupole() {
    // The exterior quadrupole solution hbar_00 = 2 d_i d_j (I_ij/r), hbar_0i = 2 d_j (I_ij'/r),
    // hbar_ij = 2 I_ij''/r, exact in 1/r (Maggiore 2007, vol. 1, sec. 3.3; form from memory).
    expect(
        "vibrating_rod.toml",
        &[
            ("field_equations", "holds"),
            ("gauge.lorenz", "holds"),
            ("pure_gauge", "holds"),
        ],
        0,
    );
}

#[test]
fn pure_gauge_vector() {
    // Linearized Riemann is gauge invariant (Carroll 2004, sec. 7.1).
    expect(
        "pure_gauge.toml",
        &[("field_equations", "holds"), ("pure_gauge", "holds")],
        0,
    );
}

#[test]
fn uniform_ball_with_source() {
    // Newtonian limit (common practice): nabla^2 phi = 4 pi rho inside a uniform ball.
    expect(
        "uniform_ball.toml",
        &[
            ("source_conservation", "holds"),
            ("field_equations", "holds"),
            ("gauge.lorenz", "holds"),
        ],
        0,
    );
}

#[test]
fn wrong_sign_wave_fails_where_documented() {
    expect(
        "wrong_sign_wave.toml",
        &[("field_equations", "fails"), ("gauge.tt", "fails")],
        1,
    );
    // The trace h_xx + h_yy = 2 a cos(...) sources G_tt, G_tz, G_zz only.
    assert_eq!(
        failing("wrong_sign_wave.toml", "field_equations"),
        ["G_tt", "G_tz", "G_zz"]
    );
    assert_eq!(
        failing("wrong_sign_wave.toml", "gauge.tt"),
        ["h_xx + h_yy + h_zz"]
    );
}

#[test]
fn dropped_near_zone_terms_fail() {
    expect(
        "dropped_near_zone.toml",
        &[("field_equations", "fails"), ("gauge.lorenz", "fails")],
        1,
    );
    assert_eq!(failing("dropped_near_zone.toml", "gauge.lorenz").len(), 4);
}

/// Every file in `worked/` with the exit code of `check` on it. A file that is not listed
/// fails this test (list it, with its expected result, when adding an example); so does a
/// listed file that is missing. The claims of each file are asserted by the tests above or,
/// for files made for other commands, by those commands' tests.
const WORKED: [(&str, i32); 39] = [
    ("de_sitter_tensor_mode.toml", 0),
    ("detector_gauge_wave.toml", 0),
    ("dropped_near_zone.toml", 1),
    ("dropped_near_zone_far_zone.toml", 0),
    ("frw_dust_tensor_mode.toml", 0),
    ("frw_radiation_tensor_mode.toml", 0),
    ("kottler_mass_perturbation.toml", 0),
    ("linear_wave_testbed.toml", 0),
    ("lorenz_oblique.toml", 0),
    ("lorenz_oblique_tt.toml", 0),
    ("lorenz_wave.toml", 0),
    ("oblique_wave.toml", 0),
    ("plummer_sign_anchor.toml", 0),
    ("pure_gauge.toml", 0),
    ("schwarzschild_mass_perturbation.toml", 0),
    ("schwarzschild_odd_l2_decaying.toml", 0),
    ("schwarzschild_odd_l2_static.toml", 0),
    ("schwarzschild_pure_gauge.toml", 0),
    ("schwarzschild_slow_rotation.toml", 0),
    ("schwarzschild_wrong_slow_rotation.toml", 1),
    ("spherical_point_mass.toml", 0),
    ("spherical_wave_far_zone.toml", 0),
    ("static_mass.toml", 0),
    ("teukolsky_l2_wave.toml", 0),
    ("teukolsky_wrong_coefficient.toml", 1),
    ("uniform_ball.toml", 0),
    ("vibrating_rod.toml", 0),
    ("circular_binary.toml", 0),
    ("binary_wrong_waveform.toml", 1),
    ("eccentric_binary.toml", 0),
    ("eccentric_from_apsides.toml", 0),
    ("spinning_star.toml", 0),
    ("head_on_plunge.toml", 0),
    ("recoil_binary.toml", 0),
    ("wrong_sign_wave.toml", 1),
    ("rod_quadrupole_formula_match.toml", 0),
    ("rotating_bar_far_zone.toml", 0),
    ("schwarzschild_mass_far_zone.toml", 0),
    ("arctan_front_with_angle_gauge.toml", 0),
];

#[test]
fn every_worked_file_is_covered() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("worked");
    let mut present: Vec<String> = std::fs::read_dir(&root)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .filter(|n| n.ends_with(".toml"))
        .collect();
    present.sort();
    let unlisted: Vec<&String> = present
        .iter()
        .filter(|n| !WORKED.iter().any(|(w, _)| w == n))
        .collect();
    assert!(
        unlisted.is_empty(),
        "worked files without an expected result in WORKED: {unlisted:?}"
    );
    for (name, want) in WORKED {
        assert!(
            present.iter().any(|n| n == name),
            "{name} is listed but missing"
        );
        let (json, code) = check_json(name);
        assert_eq!(code, want, "{name}: exit {code}, expected {want}");
        let result = json["result"].as_str().unwrap_or_default();
        let expected = if want == 0 { "holds" } else { "fails" };
        assert_eq!(result, expected, "{name}: result {result}");
    }
}

/// Runs `check` on a bad file: exit 2, nothing on stdout, the error names file:line:col.
fn expect_error(file: &str, message: &str, line_col: &str) {
    let root = env!("CARGO_MANIFEST_DIR");
    let path = Path::new(root).join("tests/data/bad").join(file);
    let out = Command::new(env!("CARGO_BIN_EXE_lingrav"))
        .arg("check")
        .arg(&path)
        .output()
        .expect("run lingrav");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{file}: {stderr}");
    assert!(out.stdout.is_empty(), "{file}: stdout not empty");
    assert!(!stderr.contains("panicked"), "{file}: {stderr}");
    assert!(
        stderr.contains(message),
        "{file}: expected `{message}` in\n{stderr}"
    );
    assert!(
        stderr.contains(&format!("{file}:{line_col}")),
        "{file}: expected `{file}:{line_col}` in\n{stderr}"
    );
}

#[test]
fn bad_problem_files_give_located_errors() {
    expect_error("typo_parameter.toml", "undeclared name `omgea`", "5:11");
    expect_error("typo_parameter.toml", "did you mean `omega`?", "5:11");
    expect_error("component_twice.toml", "component h_tx given twice", "3:1");
    expect_error("unknown_component.toml", "`xw` is not a component", "2:1");
    expect_error(
        "implicit_product.toml",
        "missing operator between `2` and `x`",
        "2:7",
    );
    expect_error("unknown_gauge.toml", "unknown gauge `lorentz`", "4:10");
    expect_error(
        "far_zone_order_zero.toml",
        "`far_zone_order` must be from 1 to 8",
        "6:18",
    );
    expect_error(
        "far_zone_no_radius.toml",
        "`far_zone_order` about a background needs a radial coordinate",
        "11:1",
    );
    expect_error("toml_syntax.toml", "invalid TOML", "1:14");
    expect_error("declared_twice.toml", "`r` is declared twice", "4:1");
}

#[test]
fn missing_file_is_an_input_error() {
    let out = Command::new(env!("CARGO_BIN_EXE_lingrav"))
        .args(["check", "no/such/file.toml"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("no/such/file.toml"), "{stderr}");
}

/// worked/arctan_front_with_angle_gauge.toml (issue 14): an arctangent front in t - z and a
/// gauge ripple from the polar angle atan2(y, x). Every claim holds; the same front moving at
/// the wrong speed (a function of t - 2 z) fails the field equations, and a ripple from the
/// angle's square (not harmonic) fails Lorenz: the claims rest on the profile and on atan2.
#[test]
fn arctan_front_with_angle_gauge() {
    expect(
        "arctan_front_with_angle_gauge.toml",
        &[
            ("field_equations", "holds"),
            ("gauge.lorenz", "holds"),
            ("pure_gauge", "holds"),
        ],
        0,
    );
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("worked/arctan_front_with_angle_gauge.toml"),
    )
    .unwrap();
    let dir = tempfile::tempdir().unwrap();
    for (from, to, key) in [
        ("ret = 't - z'", "ret = 't - 2*z'", "field_equations"),
        (
            "phi = 'atan2(y, x)'",
            "phi = 'atan2(y, x)^2'",
            "gauge.lorenz",
        ),
    ] {
        assert!(text.contains(from), "{from}");
        let path = dir.path().join("variant.toml");
        std::fs::write(&path, text.replace(from, to)).unwrap();
        let out = Command::new(env!("CARGO_BIN_EXE_lingrav"))
            .args(["check", "--format", "json"])
            .arg(&path)
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(1), "{to}");
        let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        let claim = json["claims"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["key"] == key)
            .unwrap();
        assert_eq!(claim["status"], "fails", "{to}: {claim}");
    }
}
