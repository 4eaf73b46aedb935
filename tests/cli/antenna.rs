//! `lingrav antenna`: the antenna pattern of a two-arm detector against checks.md section 3
//! (the table, the sky averages), a 60-degree detector against the derived closed form, the
//! psi-invariance proof, the JSON keys and bad input.

use crate::support::{assert_clean, lingrav};

fn json(args: &[&str]) -> serde_json::Value {
    let mut all = vec!["antenna", "--format", "json"];
    all.extend_from_slice(args);
    let out = lingrav(&all);
    assert_clean(&all, &out, 0);
    serde_json::from_str(&out.0).unwrap_or_else(|e| panic!("{e}: {}", out.0))
}

fn num(v: &serde_json::Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

/// checks.md section 3, the table ([CALC] convention; formulas Thorne 1987 eq. (104), from
/// memory; tests/data/antenna_table.txt), tolerance 1e-12 on 12-digit values.
#[test]
fn antenna_reproduces_the_table_of_checks_md_section_3() {
    let table: Vec<Vec<String>> = include_str!("../data/antenna_table.txt")
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(|l| l.split(';').map(|f| f.trim().to_string()).collect())
        .collect();
    assert_eq!(table.len(), 8);
    for row in &table {
        let (th, ph, ps) = (row[0].as_str(), row[1].as_str(), row[2].as_str());
        let (fp, fc): (f64, f64) = (row[3].parse().unwrap(), row[4].parse().unwrap());
        let j = json(&["--theta", th, "--phi", ph, "--psi", ps]);
        let (p, c) = (num(&j["F_plus"]), num(&j["F_cross"]));
        assert!(
            (p - fp).abs() < 1e-11,
            "{th} {ph} {ps}: F_plus {p}, table {fp}"
        );
        assert!(
            (c - fc).abs() < 1e-11,
            "{th} {ph} {ps}: F_cross {c}, table {fc}"
        );
        assert_eq!(j["audit"]["defect"], false);
        // Every number was compared: F_plus, F_cross and the four averages.
        assert_eq!(
            j["audit"]["not_audited"],
            serde_json::json!([]),
            "{th} {ph} {ps}"
        );
        let rows = j["audit"]["comparisons"].as_array().unwrap();
        assert_eq!(rows.len(), 6);
        assert!(rows.iter().all(|r| r["agrees"] == true), "{rows:?}");
        assert!(j["exact"]["F_plus"].is_string());
    }
    // Exact values at multiples of pi/12: theta = 0, psi = pi/8 gives sqrt(2)/2 exactly.
    let j = json(&["--theta", "0", "--phi", "0", "--psi", "pi/8"]);
    let p = j["exact"]["F_plus"].as_str().unwrap();
    assert!(p.contains("sqrt(2)"), "{p}");
}

/// checks.md section 3: <F+^2> = <Fx^2> = 1/5, <F+ Fx> = 0, <F+^2 + Fx^2> = 2/5 for every psi
/// ([CALC]; quadrature 0.4 exactly, tolerance 1e-10).
#[test]
fn antenna_sky_average_of_the_l_shaped_detector_is_two_fifths() {
    for psi in ["0", "0.7", "psi"] {
        let j = json(&["--theta", "th", "--phi", "ph", "--psi", psi]);
        let avg = &j["sky_average"];
        assert_eq!(avg["F_plus2_plus_F_cross2"]["exact"], "2/5");
        assert_eq!(avg["F_plus2"]["exact"], "1/5");
        assert_eq!(avg["F_cross2"]["exact"], "1/5");
        assert!((num(&avg["F_plus2_plus_F_cross2"]["quadrature"]) - 0.4).abs() < 1e-10);
        assert!((num(&avg["F_plus2"]["quadrature"]) - 0.2).abs() < 1e-10);
        assert!((num(&avg["F_cross2"]["quadrature"]) - 0.2).abs() < 1e-10);
        assert!(num(&avg["F_plus_F_cross"]["quadrature"]).abs() < 1e-10);
        let proofs = j["proofs"].as_array().unwrap();
        assert!(
            proofs
                .iter()
                .any(|p| p["key"] == "sky_average" && p["verdict"] == "zero")
        );
    }
}

/// The derived closed form <F+^2 + Fx^2> = (2/5) sin^2(opening angle) (lingrav::detector's
/// docs): 60 degrees gives (2/5)(3/4) = 3/10, proved exactly and matched by the quadrature.
#[test]
fn antenna_sixty_degree_detector_averages_three_tenths() {
    let j = json(&[
        "--arm-b",
        "1/2,sqrt(3)/2,0",
        "--theta",
        "pi/3",
        "--phi",
        "0.4",
    ]);
    assert_eq!(j["detector"]["cos_opening"], "1/2");
    assert!((num(&j["detector"]["opening_angle_degrees"]) - 60.0).abs() < 1e-9);
    let avg = &j["sky_average"];
    assert_eq!(avg["F_plus2_plus_F_cross2"]["exact"], "3/10");
    assert_eq!(avg["F_plus2"]["exact"], "3/20");
    assert!((num(&avg["F_plus2_plus_F_cross2"]["value"]) - 0.3).abs() < 1e-15);
    assert!((num(&avg["F_plus2_plus_F_cross2"]["quadrature"]) - 0.3).abs() < 1e-12);
    assert!((num(&avg["F_cross2"]["quadrature"]) - 0.15).abs() < 1e-12);
    for p in j["proofs"].as_array().unwrap() {
        assert_eq!(p["verdict"], "zero", "{p}");
    }
    // A symbolic opening angle: (2/5) sin^2 g, proved.
    let out = lingrav(&[
        "antenna",
        "--arm-b",
        "cos(g),sin(g),0",
        "--theta",
        "0",
        "--phi",
        "0",
        "--psi",
        "0",
    ]);
    assert_clean(&[], &out, 0);
    assert!(out.0.contains("<F_plus^2 + F_cross^2> = "), "{}", out.0);
}

/// F+^2 + Fx^2 is independent of psi: proved by the zero test (the statement is printed with
/// its verdict), and the numbers agree at two psi.
#[test]
fn antenna_psi_invariance_is_proved() {
    let out = lingrav(&["antenna", "--arm-b", "0,3/5,4/5"]);
    assert_clean(&[], &out, 0);
    assert!(
        out.0
            .contains("F_plus^2 + F_cross^2 is independent of psi: proved"),
        "{}",
        out.0
    );
    let at = |psi: &str| {
        let j = json(&[
            "--arm-b",
            "0,3/5,4/5",
            "--theta",
            "1.1",
            "--phi",
            "2.3",
            "--psi",
            psi,
        ]);
        num(&j["F_plus"]).powi(2) + num(&j["F_cross"]).powi(2)
    };
    let (x, y) = (at("0"), at("0.9"));
    assert!((x - y).abs() < 1e-14, "{x} {y}");
    assert!(x > 1e-3);
}

#[test]
fn antenna_json_has_the_fixed_keys() {
    let j = json(&["--theta", "pi/2", "--phi", "0", "--psi", "0"]);
    for key in [
        "F_plus",
        "F_cross",
        "exact",
        "proofs",
        "sky_average",
        "audit",
        "convention",
    ] {
        assert!(j.get(key).is_some(), "missing {key}: {j}");
    }
    assert!((num(&j["F_plus"]) - 0.5).abs() < 1e-15);
    assert_eq!(j["exact"]["F_plus"], "1/2");
    assert_eq!(j["exact"]["F_cross"], "0");
    // Symbolic angles: no numbers, the formulas.
    let j = json(&[]);
    assert!(j["F_plus"].is_null() && j["F_cross"].is_null());
    assert!(j["exact"]["F_plus"].as_str().unwrap().contains("theta"));
}

#[test]
fn antenna_writes_an_audited_svg_sky_map() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("sky.svg");
    let p = path.to_str().unwrap();
    let out = lingrav(&["antenna", "--svg", p]);
    assert_clean(&[], &out, 0);
    assert!(
        out.0
            .contains("audited: F_plus and F_cross of all 2592 cells"),
        "{}",
        out.0
    );
    let svg = std::fs::read_to_string(&path).unwrap();
    assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
    assert!(svg.contains("phi (degrees)") && svg.contains("theta (degrees)"));
    assert!(svg.contains("sqrt(F_plus^2 + F_cross^2)"));
    // The plus map needs a number for psi: bad input, nothing written.
    let path2 = dir.path().join("plus.svg");
    let p2 = path2.to_str().unwrap();
    let out = lingrav(&["antenna", "--svg", p2, "--map", "plus"]);
    assert_eq!(out.2, 2, "{}", out.1);
    assert!(out.1.contains("--psi"), "{}", out.1);
    assert!(!path2.exists());
    let out = lingrav(&["antenna", "--svg", p2, "--map", "plus", "--psi", "pi/8"]);
    assert_clean(&[], &out, 0);
    assert!(
        std::fs::read_to_string(&path2)
            .unwrap()
            .contains("F_plus over the sky")
    );
}

#[test]
fn antenna_refuses_bad_arms_and_angles_naming_the_option() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("never.svg");
    let p = path.to_str().unwrap();
    let cases: [(&[&str], &str, &str); 4] = [
        (&["--arm-b", "-1,0,0"], "--arm-b", "parallel"),
        (&["--arm-a", "1,1,0"], "--arm-a", "not a unit vector"),
        (&["--theta", "pi/"], "--theta", ""),
        (&["--psi", "F(2)"], "--psi", "not a known function"),
    ];
    for (extra, option, message) in cases {
        let mut args = vec!["antenna", "--svg", p];
        args.extend_from_slice(extra);
        let (out, err, code) = lingrav(&args);
        assert_eq!(code, 2, "{args:?}: {out}{err}");
        assert!(err.contains(option), "{args:?}: {err}");
        assert!(err.contains(message), "{args:?}: {err}");
        assert!(!path.exists(), "{args:?} left a file");
        assert!(
            std::fs::read_dir(dir.path()).unwrap().next().is_none(),
            "{args:?} left a temporary file"
        );
    }
}
