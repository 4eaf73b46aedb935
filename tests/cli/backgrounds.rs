//! `check` on the worked files about a background (other coordinates, curved backgrounds, a
//! cosmological constant, a background source): the status of every claim key in the JSON
//! report, the exit code, and for the two deliberately wrong files which components fail and
//! where the witness lies. The expected verdicts are those of checks-backgrounds.md (section
//! named per file); the numbers behind them are tested in `background_values.rs`.

use crate::support::{lingrav, worked};

/// `check --format json` on the worked file `name`: the report and the exit code.
fn check(name: &str) -> (serde_json::Value, i32) {
    let (out, err, code) = lingrav(&["check", "--format", "json", &worked(name)]);
    assert!(!err.contains("panicked"), "{name}: {err}");
    let json = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{name}: {e}\n{out}\n{err}"));
    (json, code)
}

/// Asserts the claims of `name`, in report order, as (key, status, asserted), and the exit
/// code. Every claim that holds rests on proofs (each component exactly zero); every claim
/// `pure_gauge = false` that holds rests on certified witnesses.
fn expect(name: &str, claims: &[(&str, &str, bool)], code: i32) -> serde_json::Value {
    let (json, got) = check(name);
    let reported: Vec<(String, String, Option<bool>)> = json["claims"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["key"].as_str().unwrap().to_string(),
                c["status"].as_str().unwrap().to_string(),
                c["asserted"].as_bool(),
            )
        })
        .collect();
    let want: Vec<(String, String, Option<bool>)> = claims
        .iter()
        .map(|(k, s, a)| (k.to_string(), s.to_string(), Some(*a)))
        .collect();
    assert_eq!(reported, want, "{name}");
    for c in json["claims"].as_array().unwrap() {
        if c["status"] != "holds" {
            continue;
        }
        for comp in c["components"].as_array().unwrap() {
            if c["asserted"] == true {
                assert_eq!(comp["verdict"], "zero", "{name} {}: {comp:#}", c["key"]);
                assert_eq!(comp["method"], "exact", "{name} {}: {comp:#}", c["key"]);
                assert_ne!(comp["audit"], "contradicted", "{name}: {comp:#}");
            }
        }
        if c["asserted"] == false {
            let certified = c["components"]
                .as_array()
                .unwrap()
                .iter()
                .filter(|k| k["verdict"] == "nonzero")
                .count();
            assert!(certified > 0, "{name} {}: no witness", c["key"]);
        }
    }
    let result = if code == 0 { "holds" } else { "fails" };
    assert_eq!(json["result"], result, "{name}");
    assert_eq!(got, code, "{name}: exit code");
    json
}

/// The names of the components of claim `key` certified nonzero, and their witness points.
fn failing(json: &serde_json::Value, key: &str) -> Vec<(String, serde_json::Value)> {
    let c = json["claims"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["key"] == key)
        .unwrap_or_else(|| panic!("no claim {key}"));
    c["components"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|k| k["verdict"] == "nonzero")
        .map(|k| {
            assert_eq!(k["method"], "certified witness", "{k:#}");
            assert_eq!(k["audit"], "confirmed", "{k:#}");
            (
                k["name"].as_str().unwrap().to_string(),
                k["witness"]["point"].clone(),
            )
        })
        .collect()
}

const HOLDS: &str = "holds";
const FAILS: &str = "fails";

#[test]
fn flat_space_in_spherical_coordinates() {
    // checks-backgrounds.md 1a: h_iso solves the vacuum equations, Lorenz yes, not pure gauge
    // (6 independent linearized Riemann components nonzero).
    let json = expect(
        "spherical_point_mass.toml",
        &[
            ("background", HOLDS, true),
            ("field_equations", HOLDS, true),
            ("gauge.lorenz", HOLDS, true),
            ("pure_gauge", HOLDS, false),
        ],
        0,
    );
    assert_eq!(failing(&json, "pure_gauge").len(), 6);
    // 1b: Teukolsky's wave for an arbitrary F: vacuum, Lorenz, synchronous, TT, not pure gauge
    // (12 independent linearized Riemann components nonzero).
    let json = expect(
        "teukolsky_l2_wave.toml",
        &[
            ("background", HOLDS, true),
            ("field_equations", HOLDS, true),
            ("gauge.lorenz", HOLDS, true),
            ("gauge.synchronous", HOLDS, true),
            ("gauge.tt", HOLDS, true),
            ("pure_gauge", HOLDS, false),
        ],
        0,
    );
    assert_eq!(failing(&json, "pure_gauge").len(), 12);
    // 1c: the Plummer sphere with its source: dG = 8 pi dT, source conserved, Lorenz.
    expect(
        "plummer_sign_anchor.toml",
        &[
            ("background", HOLDS, true),
            ("source_conservation", HOLDS, true),
            ("field_equations", HOLDS, true),
            ("gauge.lorenz", HOLDS, true),
            ("pure_gauge", HOLDS, false),
        ],
        0,
    );
}

#[test]
fn schwarzschild() {
    // checks-backgrounds.md 2a (mass), 2b (slow rotation), 2c (pure gauge, proved by the
    // file's vector), 2d (both static odd-parity l = 2 solutions).
    let vacuum = [
        ("background", HOLDS, true),
        ("field_equations", HOLDS, true),
    ];
    expect("schwarzschild_mass_perturbation.toml", &vacuum, 0);
    let lorenz = [
        ("background", HOLDS, true),
        ("field_equations", HOLDS, true),
        ("gauge.lorenz", HOLDS, true),
    ];
    expect("schwarzschild_slow_rotation.toml", &lorenz, 0);
    expect("schwarzschild_odd_l2_static.toml", &lorenz, 0);
    expect("schwarzschild_odd_l2_decaying.toml", &lorenz, 0);
    let json = expect(
        "schwarzschild_pure_gauge.toml",
        &[
            ("background", HOLDS, true),
            ("field_equations", HOLDS, true),
            ("pure_gauge", HOLDS, true),
        ],
        0,
    );
    // Decided by the vector, not by the Riemann tensor (Schwarzschild is not flat).
    let pg = &json["claims"][2];
    assert!(pg["title"].as_str().unwrap().contains("vector"), "{pg:#}");
    assert_eq!(
        pg["components"][0]["name"], "h_t.t - D_t xi_t - D_t xi_t",
        "{pg:#}"
    );
}

#[test]
fn cosmological_constant_and_fluid_backgrounds() {
    // checks-backgrounds.md 3a: Kottler's mass perturbation solves dG + Lambda h = 0.
    let json = expect(
        "kottler_mass_perturbation.toml",
        &[
            ("background", HOLDS, true),
            ("field_equations", HOLDS, true),
        ],
        0,
    );
    let fe = &json["claims"][1];
    assert!(fe["title"].as_str().unwrap().contains("Lambda h"), "{fe:#}");
    // 3b: the exact de Sitter tensor mode is TT.
    let tt = [
        ("background", HOLDS, true),
        ("field_equations", HOLDS, true),
        ("gauge.lorenz", HOLDS, true),
        ("gauge.synchronous", HOLDS, true),
        ("gauge.tt", HOLDS, true),
    ];
    expect("de_sitter_tensor_mode.toml", &tt, 0);
    // 4a, 4b: FRW tensor modes; the background source is conserved, and for radiation
    // dT = p h is needed.
    let frw = [
        ("background", HOLDS, true),
        ("source_conservation", HOLDS, true),
        ("field_equations", HOLDS, true),
        ("gauge.lorenz", HOLDS, true),
        ("gauge.synchronous", HOLDS, true),
        ("gauge.tt", HOLDS, true),
    ];
    expect("frw_dust_tensor_mode.toml", &frw, 0);
    expect("frw_radiation_tensor_mode.toml", &frw, 0);
}

#[test]
fn the_spoiled_teukolsky_coefficient() {
    // checks-backgrounds.md 1b, spoiled: E_tt, E_tth, E_rr, E_rth, E_thth, E_phph nonzero
    // (the others 0); traceless and synchronous but not transverse: only L_th != 0.
    let json = expect(
        "teukolsky_wrong_coefficient.toml",
        &[
            ("background", HOLDS, true),
            ("field_equations", FAILS, true),
            ("gauge.lorenz", FAILS, true),
            ("gauge.synchronous", HOLDS, true),
            ("gauge.tt", FAILS, true),
            ("pure_gauge", HOLDS, false),
        ],
        1,
    );
    let names = |key| -> Vec<String> { failing(&json, key).into_iter().map(|(n, _)| n).collect() };
    assert_eq!(
        names("field_equations"),
        [
            "dG_t.t", "dG_t.th", "dG_r.r", "dG_r.th", "dG_th.th", "dG_ph.ph"
        ]
    );
    assert_eq!(names("gauge.lorenz"), ["D^mu hbar_{mu th}"]);
    assert_eq!(names("gauge.tt"), ["D^mu hbar_{mu th}"]);
    // Witnesses inside [domain] (r in [1, 40], th in [0.1, 3]).
    for (_, p) in failing(&json, "field_equations") {
        let (r, th) = (p["r"].as_f64().unwrap(), p["th"].as_f64().unwrap());
        assert!(
            (1.0..=40.0).contains(&r) && (0.1..=3.0).contains(&th),
            "{p}"
        );
    }
}

#[test]
fn the_spoiled_slow_rotation() {
    // checks-backgrounds.md 2e: only E_tph = 4J(r - 2M) sin^2 th / r^5 fails; still Lorenz.
    let json = expect(
        "schwarzschild_wrong_slow_rotation.toml",
        &[
            ("background", HOLDS, true),
            ("field_equations", FAILS, true),
            ("gauge.lorenz", HOLDS, true),
        ],
        1,
    );
    let f = failing(&json, "field_equations");
    assert_eq!(f.len(), 1, "{f:?}");
    assert_eq!(f[0].0, "dG_t.ph");
    let r = f[0].1["r"].as_f64().unwrap();
    assert!(
        (3.0..=40.0).contains(&r),
        "witness outside [domain]: r = {r}"
    );
    // The residual as printed is proportional to J.
    let fe = &json["claims"][1];
    let comp = fe["components"]
        .as_array()
        .unwrap()
        .iter()
        .find(|k| k["name"] == "dG_t.ph")
        .unwrap();
    assert!(
        comp["residual"].as_str().unwrap().starts_with("J*"),
        "{comp:#}"
    );
}
