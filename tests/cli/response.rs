//! `lingrav response`: the strain of a two-arm detector by the TT route and the tidal route,
//! the finite-arm response, and bad input. Exact expectations are checked by `lingrav zero`
//! (a proof), not by comparing printed text alone.

use crate::support::{assert_clean, lingrav, one_line, worked};
use std::path::PathBuf;

fn json(args: &[&str], code: i32) -> serde_json::Value {
    let mut all = vec!["response", "--format", "json"];
    all.extend_from_slice(args);
    let out = lingrav(&all);
    assert_clean(&all, &out, code);
    serde_json::from_str(&out.0).unwrap_or_else(|e| panic!("{e}: {}", out.0))
}

fn text(v: &serde_json::Value) -> String {
    v.as_str()
        .unwrap_or_else(|| panic!("not a string: {v}"))
        .to_string()
}

/// `lingrav zero A B` proves A = B.
fn proves_equal(a: &str, b: &str) {
    let out = lingrav(&["zero", a, b]);
    assert_eq!(out.2, 0, "{a} = {b}?\n{}\n{}", out.0, out.1);
}

fn file(name: &str, body: &str) -> String {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("response");
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, body).unwrap();
    p.display().to_string()
}

/// A plus wave along z, written to its own file per test (tests run in parallel).
fn plus_wave_along_z(name: &str) -> String {
    file(
        name,
        "[functions]\nF = 'exp(-u^2)'\n[perturbation]\nxx = \"F'(t - z)\"\nyy = \"-F'(t - z)\"\n",
    )
}

/// A plus-polarized wave along z, arms along x and y: the strain is h_plus (common
/// practice: D = (xx - yy)/2, D_ij e+_ij = 1), by both routes, with the same constants.
#[test]
fn a_plus_wave_along_z_strains_x_y_arms_by_h_plus() {
    let f = plus_wave_along_z("plus_z_a.toml");
    let j = json(&[&f, "--direction", "z"], 0);
    proves_equal(&text(&j["tt_route"]["strain"]), "F'(t)");
    proves_equal(&text(&j["tt_route"]["h_plus"]), "F'(t)");
    proves_equal(&text(&j["tidal_route"]["strain"]), "F'(t)");
    assert_eq!(j["agreement"]["result"], "agree");
    assert_eq!(j["agreement"]["verdict"], "zero");
    proves_equal(&text(&j["tidal_route"]["constants"]["c0"]), "0");
    assert_eq!(j["audit"]["defect"], false);
    let rows = j["audit"]["comparisons"].as_array().unwrap();
    assert!(
        rows.len() >= 6 && rows.iter().all(|r| r["agrees"] == true),
        "{rows:?}"
    );
    // Arms swapped: the sign flips.
    let j = json(&[&f, "--direction", "z", "--arm-a", "y", "--arm-b", "x"], 0);
    proves_equal(&text(&j["tt_route"]["strain"]), "-F'(t)");
}

/// A wave from (theta, phi) = (pi/3, pi/6) (direction to the source; it propagates along
/// n = -r), h_plus = a cos(w (t - n.x)), h_cross = b sin(..) in project's basis for n, which
/// is antenna's basis at psi = 0: the strain is F_plus h_plus + F_cross h_cross with
/// antenna's F_plus, F_cross (checks.md section 3 convention; Thorne 1987, from memory).
#[test]
fn a_wave_from_theta_phi_strains_by_the_antenna_pattern() {
    // r = (3/4, sqrt(3)/4, 1/2), n = -r; e_theta, e_phi of n (tt::polar_basis):
    // u = (sqrt(3)/4, 1/4, -sqrt(3)/2), v = (1/2, -sqrt(3)/2, 0).
    let u = ["sqrt(3)/4", "1/4", "-sqrt(3)/2"];
    let v = ["1/2", "-sqrt(3)/2", "0"];
    let names = ["x", "y", "z"];
    let mut body = String::from(
        "[parameters]\na = 2.0e-3\nb = 1.0e-3\nw = 2.0\n[define]\nph = 'w*(t + (3*x + sqrt(3)*y + 2*z)/4)'\n\
         hp = 'a*cos(ph)'\nhc = 'b*sin(ph)'\n[perturbation]\n",
    );
    for i in 0..3 {
        for j in i..3 {
            body.push_str(&format!(
                "{}{} = 'hp*(({})*({}) - ({})*({})) + hc*(({})*({}) + ({})*({}))'\n",
                names[i], names[j], u[i], u[j], v[i], v[j], u[i], v[j], v[i], u[j]
            ));
        }
    }
    let f = file("from_theta_phi.toml", &body);
    let j = json(&[&f, "--direction", "-3/4,-sqrt(3)/4,-1/2"], 0);
    let ant = lingrav(&[
        "antenna", "--theta", "pi/3", "--phi", "pi/6", "--psi", "0", "--format", "json",
    ]);
    assert_eq!(ant.2, 0, "{}", ant.1);
    let ant: serde_json::Value = serde_json::from_str(&ant.0).unwrap();
    let (fp, fc) = (
        text(&ant["exact"]["F_plus"]),
        text(&ant["exact"]["F_cross"]),
    );
    let want = format!("({fp})*a*cos(w*t) + ({fc})*b*sin(w*t)");
    proves_equal(&text(&j["tt_route"]["strain"]), &want);
    proves_equal(&text(&j["tidal_route"]["strain"]), &want);
    proves_equal(&text(&j["tt_route"]["F_plus"]), &fp);
    proves_equal(&text(&j["tt_route"]["F_cross"]), &fc);
    assert_eq!(j["agreement"]["result"], "agree");
    assert_eq!(j["audit"]["defect"], false);
}

/// worked/detector_gauge_wave.toml: Lorenz gauge, not TT (project: a nonzero share is not
/// TT), yet the TT route and the tidal route agree (proved), and so does the finite arm's
/// limit.
#[test]
fn the_lorenz_wave_that_is_not_tt_agrees_by_both_routes() {
    let f = worked("detector_gauge_wave.toml");
    let p = lingrav(&[
        "project",
        &f,
        "--direction",
        "2/3,2/3,1/3",
        "--format",
        "json",
    ]);
    let p: serde_json::Value = serde_json::from_str(&p.0).unwrap();
    assert_ne!(p["not_tt"]["all"]["value"], serde_json::json!(0), "{p}");
    let j = json(
        &[&f, "--direction", "2/3,2/3,1/3", "--arm-length", "1/2"],
        0,
    );
    assert_eq!(j["agreement"]["result"], "agree");
    assert_eq!(j["finite_arm"]["limit_value"]["verdict"], "zero");
    assert_eq!(j["finite_arm"]["limit_slope"]["verdict"], "zero");
    assert_eq!(j["audit"]["defect"], false);
    let rows = j["audit"]["comparisons"].as_array().unwrap();
    assert!(rows.iter().any(|r| r["quantity"] == "finite-arm strain"));
    assert!(rows.iter().all(|r| r["agrees"] == true), "{rows:?}");
    // Text output says so.
    let out = lingrav(&["response", &f, "--direction", "2/3,2/3,1/3"]);
    assert_clean(&["response"], &out, 0);
    assert!(out.0.contains("agree (proved)"), "{}", out.0);
}

/// Finite arms, wave along z, arms x and y (n.a = n.b = 0): the round trip averages h_plus
/// over [t - 2L, t], s_L = (F(t) - F(t - 2L))/(2L) for h_plus = F'(t - z) (common practice),
/// which tends to F'(t) = s as L -> 0 (proved by the command with a symbolic L).
#[test]
fn finite_arms_tend_to_the_long_wavelength_strain() {
    let f = plus_wave_along_z("plus_z_b.toml");
    let j = json(&[&f, "--direction", "z", "--arm-length", "1/2"], 0);
    proves_equal(&text(&j["finite_arm"]["strain"]), "F(t) - F(t - 1)");
    assert_eq!(j["finite_arm"]["limit_value"]["verdict"], "zero");
    assert_eq!(j["finite_arm"]["limit_slope"]["verdict"], "zero");
    // An oblique wave, with an arm at 60 degrees: the limit is proved too.
    let j = json(
        &[
            &worked("oblique_wave.toml"),
            "--direction",
            "3/5,0,4/5",
            "--arm-b",
            "1/2,sqrt(3)/2,0",
            "--arm-length",
            "2",
        ],
        0,
    );
    assert_eq!(j["finite_arm"]["limit_value"]["verdict"], "zero");
    assert_eq!(j["finite_arm"]["limit_slope"]["verdict"], "zero");
    assert_eq!(j["audit"]["defect"], false);
}

/// A static mass: the tidal field makes free masses drift (s'' = constant), the TT route
/// sees nothing: the routes disagree, with a certified witness (exit 1).
#[test]
fn a_static_tidal_field_disagrees_with_the_tt_route() {
    let j = json(
        &[
            &worked("static_mass.toml"),
            "--direction",
            "z",
            "--at",
            "1,2,2",
        ],
        1,
    );
    assert_eq!(j["agreement"]["result"], "disagree");
    assert_eq!(j["agreement"]["verdict"], "nonzero");
    proves_equal(&text(&j["tidal_route"]["second_derivative"]), "-m/27");
}

#[test]
fn bad_input_names_the_option() {
    let f = plus_wave_along_z("plus_z_c.toml");
    for (args, needle) in [
        (vec!["--direction", "z", "--arm-a", "1,1,0"], "--arm-a"),
        (vec!["--direction", "1,2"], "--direction"),
        (
            vec!["--direction", "x", "--arm-length", "1"],
            "--arm-length",
        ),
        (
            vec!["--direction", "z", "--arm-length", "-1"],
            "--arm-length",
        ),
        (vec!["--direction", "z", "--at", "0,0"], "--at"),
    ] {
        let mut all = vec!["response", f.as_str()];
        all.extend(args.iter().copied());
        let (out, err, code) = lingrav(&all);
        assert_eq!(code, 2, "{all:?}: {out}{err}");
        assert!(one_line(&err).contains(needle), "{all:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
    let (_, err, code) = lingrav(&[
        "response",
        &worked("schwarzschild_pure_gauge.toml"),
        "--direction",
        "z",
    ]);
    assert_eq!(code, 2);
    assert!(one_line(&err).contains("flat"), "{err}");
}
