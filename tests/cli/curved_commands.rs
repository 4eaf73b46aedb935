//! The commands other than `check` on problems about a background: `show`, `project` in
//! spherical coordinates and `gauge --vector`, and a clear refusal from the commands that do
//! not handle them yet.

use super::support::lingrav;

const WAVE: &str = "tests/data/sphere_wave.toml";

#[test]
fn project_gives_the_polarizations_on_the_sphere_and_their_leading_order() {
    let (out, err, code) = lingrav(&["project", WAVE, "--direction", "radial", "--format", "json"]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(err.is_empty(), "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    // h_thth = a r F sin^2 + a F, h_phph = -a r F sin^4: h_plus = a F sin^2/r + a F/(2 r^2),
    // so the leading order at fixed u = t - r is r^-1 (common practice: radiation falls off
    // as 1/r).
    assert_eq!(j["leading_order"]["h_plus"]["power"], -1);
    assert_eq!(j["leading_order"]["h_cross"]["power"], -1);
    assert!(
        j["leading_order"]["h_plus"]["coefficient"]
            .as_str()
            .unwrap()
            .contains("F(u)"),
        "{out}"
    );
    assert_eq!(j["audit"]["defect"], false);
    for k in ["h_plus", "h_cross"] {
        let a = j["audit"][k].to_string();
        assert!(a.contains("consistent"), "{k}: {a}");
    }
}

#[test]
fn project_in_spherical_coordinates_needs_the_radial_direction() {
    let (out, err, code) = lingrav(&["project", WAVE, "--direction", "z"]);
    assert_eq!(code, 2, "{out}{err}");
    assert!(err.contains("radial"), "{err}");
    assert!(out.is_empty());
}

#[test]
fn show_prints_background_and_linearized_quantities_in_the_files_coordinates() {
    let (out, err, code) = lingrav(&["show", WAVE, "background-riemann"]);
    assert_eq!(code, 0, "{err}");
    // Flat space in spherical coordinates: every component of Rbar is exactly 0.
    assert!(out.contains("20 further components are exactly 0"), "{out}");
    let (out, _, code) = lingrav(&["show", WAVE, "background-christoffel"]);
    assert_eq!(code, 0);
    // Gammabar^r_{th th} = -r (common practice).
    assert!(out.contains("Gammabar^r_th.th = -r"), "{out}");
    let (out, _, code) = lingrav(&["show", WAVE, "einstein", "--format", "json"]);
    assert_eq!(code, 0);
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let names: Vec<&str> = j["components"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["name"].as_str().unwrap())
        .collect();
    assert!(names.iter().all(|n| n.starts_with("dG_")), "{names:?}");
    let (_, err, code) = lingrav(&["show", WAVE, "box-hbar"]);
    assert_eq!(code, 2);
    assert!(err.contains("flat d'Alembertian"), "{err}");
}

#[test]
fn commands_without_background_support_refuse_clearly() {
    let runs: [&[&str]; 3] = [
        &["ring", WAVE, "--direction", "z", "--times", "0,1"],
        &[
            "export",
            WAVE,
            "--quantity",
            "h",
            "--grid",
            "--out",
            "target/tmp/never.csv",
        ],
        &["emit", WAVE, "--quantity", "h", "--lang", "c"],
    ];
    for args in runs {
        let (out, err, code) = lingrav(args);
        assert_eq!(code, 2, "{args:?}: {out}{err}");
        assert!(out.is_empty(), "{args:?}: {out}");
        assert!(err.contains("does not yet work"), "{args:?}: {err}");
    }
    assert!(!std::path::Path::new("target/tmp/never.csv").exists());
}

#[test]
fn gauge_vector_about_a_background_keeps_a_solution_a_solution() {
    // A gauge transformation of a vacuum solution on Schwarzschild is again one (common
    // practice; checks-backgrounds.md §5.1): the field equations hold for h', exactly and
    // audited from texts of the background's own texts.
    let text = "coordinates = ['t', 'r', 'th', 'ph']\n[parameters]\nM = 1.0\nJ = 0.1\n\
                [background]\nt.t = '-(1 - 2*M/r)'\nr.r = '1/(1 - 2*M/r)'\nth.th = 'r^2'\n\
                ph.ph = 'r^2*sin(th)^2'\n[perturbation]\nt.ph = '-2*J*sin(th)^2/r'\n\
                [domain]\nr = [3, 40]\nth = [0.2, 2.9]\n";
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("slow.toml");
    std::fs::write(&path, text).unwrap();
    let p = path.to_str().unwrap();
    let vector = "0, M*cos(th)*t, r*sin(th), 0";
    let (out, err, code) = lingrav(&["gauge", p, "--vector", vector, "--format", "json"]);
    assert_eq!(code, 0, "{out}{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let fe = j["verification"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["key"] == "field_equations")
        .unwrap();
    assert_eq!(fe["status"], "holds", "{out}");
    assert_eq!(j["defect"], false);
    // h'_tr = -D_t xi_r - D_r xi_t = -M cos(th) (Gamma^t_tr xi_t = 0 here).
    let htr = j["h_prime"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == "t.r")
        .unwrap();
    assert_eq!(htr["value"], "-M*cos(th)");
    // --to-tt is for flat plane waves.
    let (_, err, code) = lingrav(&["gauge", p, "--to-tt"]);
    assert_eq!(code, 2);
    assert!(err.contains("only `--vector` works"), "{err}");
}

#[test]
fn compare_on_a_flat_background_in_spherical_coordinates() {
    // checks-backgrounds.md §1a: the isotropic-like and Schwarzschild-like point masses differ
    // by the gauge transformation xi = M d_r, so every component of the covariant linearized
    // Riemann tensor agrees.
    let a = "tests/data/compare/point_mass_isotropic.toml";
    let b = "tests/data/compare/point_mass_schwarzschild_like.toml";
    let (out, err, code) = lingrav(&["compare", a, b, "--format", "json"]);
    assert_eq!(code, 0, "{out}{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(j["result"], "same", "{out}");
    // A different mass in one component is different physics, with a certified witness.
    let text = std::fs::read_to_string(a)
        .unwrap()
        .replace("2*M*r*sin", "3*M*r*sin");
    let dir = tempfile::tempdir().unwrap();
    let c = dir.path().join("c.toml");
    std::fs::write(&c, text).unwrap();
    let (out, err, code) = lingrav(&["compare", a, c.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 1, "{out}{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(j["result"], "different", "{out}");
    // On a curved background the linearized Riemann tensor decides nothing: undecided.
    let (out, _, code) = lingrav(&[
        "compare",
        "worked/schwarzschild_slow_rotation.toml",
        "worked/schwarzschild_mass_perturbation.toml",
    ]);
    assert_eq!(code, 3, "{out}");
    assert!(out.contains("not proved zero"), "{out}");
    // A flat file against one about a background: bad input.
    let (_, err, code) = lingrav(&["compare", a, "worked/lorenz_wave.toml"]);
    assert_eq!(code, 2);
    assert!(err.contains("the other is not"), "{err}");
}
