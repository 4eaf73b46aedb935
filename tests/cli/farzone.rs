//! `far_zone_order = n` in \[claims\] (issue 13): the claims checked as "O(1/r^n) at fixed
//! t - r and direction", through the binary: text and JSON reports, the order at which a
//! component fails, bad input (exit 2 with file, line and column), undecided cases (exit 3),
//! and the outside check of the orders against SymPy (`tests/sympy/farzone_check.py`).

use crate::support::{in_ci, lingrav, one_line, python, python_missing, worked};
use std::io::Write as _;
use std::process::{Command, Stdio};

/// The worked rotating bar's text with `far_zone_order` set to `n`, written to a temporary
/// file.
fn bar_at(dir: &std::path::Path, name: &str, n: u32, edit: impl Fn(String) -> String) -> String {
    let text = std::fs::read_to_string(worked("rotating_bar_far_zone.toml")).unwrap();
    let text = edit(text.replace("far_zone_order = 2", &format!("far_zone_order = {n}")));
    let path = dir.join(format!("{name}{n}.toml"));
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_string()
}

/// The order at which each component fails, from the JSON report (`None`: O(1/r^n) proved).
fn failing_orders(json: &serde_json::Value) -> Vec<(String, Option<i64>)> {
    let mut out = Vec::new();
    for c in json["claims"].as_array().unwrap() {
        for k in c["components"].as_array().unwrap() {
            let name = k["name"].as_str().unwrap().to_string();
            let order = match k["verdict"].as_str().unwrap() {
                "zero" => None,
                "nonzero" => {
                    let r = k["residual"].as_str().unwrap();
                    // "falls off only as 1/r; ..." or "... as 1/r^k; ...".
                    let power = r
                        .strip_prefix("falls off only as 1/r")
                        .and_then(|s| s.split(';').next())
                        .unwrap_or_else(|| panic!("{name}: {r}"));
                    let k: i64 = match power.strip_prefix('^') {
                        None if power.is_empty() => 1,
                        None => panic!("{name}: {r}"),
                        Some(p) => p.parse().unwrap_or_else(|_| panic!("{name}: {r}")),
                    };
                    Some(k)
                }
                v => panic!("{name}: {v}: {k}"),
            };
            out.push((name, order));
        }
    }
    out
}

#[test]
fn far_zone_the_worked_rotating_bar_holds_at_order_two() {
    let (out, err, code) = lingrav(&["check", &worked("rotating_bar_far_zone.toml")]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("components O(1/r^2)"), "{out}");
    assert!(out.contains("falloff proof(s) consistent"), "{out}");
}

#[test]
fn far_zone_a_failing_order_is_reported_in_text_and_json() {
    let dir = tempfile::tempdir().unwrap();
    let file = bar_at(dir.path(), "bar", 3, |t| t);
    let (out, err, code) = lingrav(&["check", &file]);
    assert_eq!(code, 1, "{out}{err}");
    assert!(
        out.contains("falls off only as 1/r^2; claimed O(1/r^3)"),
        "{out}"
    );
    let (out, _, code) = lingrav(&["check", &file, "--format", "json"]);
    assert_eq!(code, 1);
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(j["result"], "fails");
    let orders = failing_orders(&j);
    assert!(orders.iter().any(|(_, o)| *o == Some(2)), "{orders:?}");
    // The Lorenz z component vanishes identically: O(1/r^3) proved.
    assert!(
        orders.contains(&("d^mu hbar_muz".to_string(), None)),
        "{orders:?}"
    );
}

/// A sign error in h_tx (a wrong leading-order term) shows one order earlier: the Lorenz t
/// and x components are then not even O(1/r^2).
#[test]
fn far_zone_a_wrong_leading_term_fails_at_order_one() {
    let dir = tempfile::tempdir().unwrap();
    let file = bar_at(dir.path(), "wrong", 2, |t| {
        t.replace("tx = '-2*a*(x*c + y*s)/r^2'", "tx = '2*a*(x*c + y*s)/r^2'")
    });
    let (out, err, code) = lingrav(&["check", &file, "--format", "json"]);
    assert_eq!(code, 1, "{out}{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let orders = failing_orders(&j);
    assert!(
        orders.contains(&("d^mu hbar_mux".to_string(), Some(1))),
        "{orders:?}"
    );
}

/// A grid measures whether components vanish on a box, not their falloff: `grid` refuses a
/// far-zone claim instead of reporting it failed.
#[test]
fn far_zone_grid_refuses_a_far_zone_claim() {
    let (out, err, code) = lingrav(&["grid", &worked("rotating_bar_far_zone.toml")]);
    assert_eq!(code, 2, "{out}{err}");
    assert!(err.contains("far_zone_order"), "{err}");
    assert!(err.contains("lingrav check"), "{err}");
}

#[test]
fn far_zone_an_oscillation_at_fixed_position_is_undecided() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("standing.toml");
    std::fs::write(
        &path,
        "name = 'standing'\n[parameters]\nw = 2.0\n[define]\nr = 'sqrt(x^2 + y^2 + z^2)'\n\
         [perturbation]\ntt = 'sin(w*t)/r'\n[claims]\nfield_equations = true\nfar_zone_order = 1\n",
    )
    .unwrap();
    let (out, err, code) = lingrav(&["check", path.to_str().unwrap()]);
    assert_eq!(code, 3, "{out}{err}");
    assert!(
        out.contains("grows, oscillates or decays exponentially in r"),
        "{out}"
    );
}

#[test]
fn far_zone_bad_orders_are_bad_input() {
    let dir = tempfile::tempdir().unwrap();
    let base = "name = 'x'\n[perturbation]\ntt = '1/sqrt(x^2 + y^2 + z^2)'\n[claims]\n\
                field_equations = true\n";
    for (n, (extra, what)) in [
        ("far_zone_order = 0\n", "must be from 1 to"),
        ("far_zone_order = 9\n", "must be from 1 to"),
        ("far_zone_order = '2'\n", "a whole number"),
        ("far_zone_order = 1.5\n", "a whole number"),
    ]
    .into_iter()
    .enumerate()
    {
        let path = dir.path().join(format!("bad{n}.toml"));
        std::fs::write(&path, format!("{base}{extra}")).unwrap();
        let (out, err, code) = lingrav(&["check", path.to_str().unwrap()]);
        assert_eq!(code, 2, "{extra}: {out}{err}");
        assert!(err.contains(what), "{extra}: {err}");
        assert!(err.contains(&format!("bad{n}.toml:6:")), "{extra}: {err}");
    }
}

/// The worked file `name` with `far_zone_order = from` changed to `to`, written to `dir`.
fn worked_at_order(dir: &std::path::Path, name: &str, from: u32, to: u32) -> String {
    let text = std::fs::read_to_string(worked(name)).unwrap();
    let path = dir.join(format!("{to}_{name}"));
    let edited = text.replace(
        &format!("far_zone_order = {from}"),
        &format!("far_zone_order = {to}"),
    );
    assert_ne!(edited, text, "{name}");
    std::fs::write(&path, edited).unwrap();
    path.to_str().unwrap().to_string()
}

/// `check --format json` on `file`: the exit code, the report and the failing orders.
fn json_check(file: &str) -> (i32, String, Vec<(String, Option<i64>)>) {
    let (out, err, code) = lingrav(&["check", file, "--format", "json"]);
    let j: serde_json::Value = serde_json::from_str(&out).unwrap_or_else(|_| panic!("{out}{err}"));
    (code, out, failing_orders(&j))
}

/// The text of a problem in t, r, th, ph (or the coordinates `coords`) about `background`
/// with `perturbation` and extra lines in [claims].
fn spherical(coords: &str, background: &str, perturbation: &str, claims: &str) -> String {
    format!(
        "name = 'x'\ncoordinates = [{coords}]\n[parameters]\nM = 1.0\nL = 0.5\n[functions]\n\
         F = 'exp(-u^2)'\n[background]\n{background}\n[perturbation]\n{perturbation}\n\
         [claims]\nfield_equations = true\n{claims}"
    )
}

const FLAT: &str = "t.t = '-1'\nr.r = '1'\nth.th = 'r^2'\nph.ph = 'r^2*sin(th)^2'";
const SCHWARZSCHILD: &str =
    "t.t = '-(1 - 2*M/r)'\nr.r = '1/(1 - 2*M/r)'\nth.th = 'r^2'\nph.ph = 'r^2*sin(th)^2'";
const SPHERICAL: &str = "'t', 'r', 'th', 'ph'";

/// The radius of the far-zone ray about a background: `r`, or the coordinate named by
/// `far_zone_radius`; anything else is bad input at the key, with file, line and column.
#[test]
fn far_zone_radius_errors_are_located() {
    let dir = tempfile::tempdir().unwrap();
    let big_r = "t.t = '-1'\nR.R = '1'\nth.th = 'R^2'\nph.ph = 'R^2*sin(th)^2'";
    let coords_r = "'t', 'R', 'th', 'ph'";
    // [claims] is on line 15 of these files, its first claim line on 17.
    for (n, (coords, bg, claims, what, at)) in [
        (
            coords_r,
            big_r,
            "far_zone_order = 1\n",
            "no coordinate is named `r`",
            ":17:1",
        ),
        (
            SPHERICAL,
            FLAT,
            "far_zone_order = 1\nfar_zone_radius = 'rr'\n",
            "`far_zone_radius` names `rr`, which is not a coordinate",
            ":18:19",
        ),
        (
            SPHERICAL,
            FLAT,
            "far_zone_order = 1\nfar_zone_radius = 't'\n",
            "the time coordinate",
            ":18:19",
        ),
        (
            SPHERICAL,
            FLAT,
            "far_zone_radius = 'r'\n",
            "the file has no `far_zone_order`",
            ":17:19",
        ),
        (
            SPHERICAL,
            FLAT,
            "far_zone_order = 1\nfar_zone_radius = 2\n",
            "`far_zone_radius` must be a string",
            ":18:19",
        ),
    ]
    .into_iter()
    .enumerate()
    {
        let path = dir.path().join(format!("radius{n}.toml"));
        let text = spherical(coords, bg, "t.t = '1/r'", claims);
        std::fs::write(
            &path,
            text.replace("1/r'", if coords == coords_r { "1/R'" } else { "1/r'" }),
        )
        .unwrap();
        let (out, err, code) = lingrav(&["check", path.to_str().unwrap()]);
        assert_eq!(code, 2, "{claims}: {out}{err}");
        assert!(one_line(&err).contains(what), "{claims}: {err}");
        assert!(
            err.contains(&format!("radius{n}.toml{at}")),
            "{claims}: {err}"
        );
    }
    // About flat space in t, x, y, z the ray is Cartesian: a radius is refused.
    let path = dir.path().join("cartesian.toml");
    std::fs::write(
        &path,
        "name = 'x'\n[perturbation]\ntt = '1/sqrt(x^2 + y^2 + z^2)'\n[claims]\n\
         field_equations = true\nfar_zone_order = 1\nfar_zone_radius = 'x'\n",
    )
    .unwrap();
    let (out, err, code) = lingrav(&["check", path.to_str().unwrap()]);
    assert_eq!(code, 2, "{out}{err}");
    assert!(
        one_line(&err).contains("the far-zone ray is Cartesian"),
        "{err}"
    );
    assert!(err.contains("cartesian.toml:7:19"), "{err}");
}

/// `far_zone_radius` names the radius when it is not called `r`: the same field in t, R, th,
/// ph gets the same verdicts.
#[test]
fn far_zone_radius_names_another_radial_coordinate() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(worked("spherical_wave_far_zone.toml")).unwrap();
    let renamed = text
        .replace("\"r\", \"th\"", "\"R\", \"th\"")
        .replace("r.r", "R.R")
        .replace("r^2", "R^2")
        .replace("r*F(t - r)", "R*F(t - R)")
        .replace("r = [1, 40]", "R = [1, 40]")
        .replace(
            "\nfar_zone_order = 2",
            "\nfar_zone_order = 2\nfar_zone_radius = 'R'",
        );
    assert!(!renamed.contains("*F(t - r)"), "{renamed}");
    let path = dir.path().join("renamed.toml");
    std::fs::write(&path, renamed).unwrap();
    let (out, err, code) = lingrav(&["check", path.to_str().unwrap()]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(
        out.contains("along t = u + rho, R = rho at fixed th, ph"),
        "{out}"
    );
    assert!(out.contains("e_th = (1/R) d_th"), "{out}");
    // Headings and counts name the file's radius.
    assert!(out.contains("up to O(1/R^2)"), "{out}");
    assert!(out.contains("components O(1/R^2)"), "{out}");
    assert!(!out.contains("O(1/r^"), "{out}");
}

/// The worked l = 2 wave: O(1/r^2) in the orthonormal frame holds, with the frame named in
/// the report; at order 3 it fails with the order of each failing component.
#[test]
fn far_zone_the_worked_spherical_wave_holds_at_two_and_fails_at_three() {
    let file = worked("spherical_wave_far_zone.toml");
    let (out, err, code) = lingrav(&["check", &file]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(
        out.contains("e_t = d_t, e_r = d_r, e_th = (1/r) d_th, e_ph = (1/r) d_ph"),
        "{out}"
    );
    assert!(out.contains("dG_th.th/r^2"), "{out}");
    assert!(out.contains("falloff proof(s) consistent"), "{out}");
    let dir = tempfile::tempdir().unwrap();
    let third = worked_at_order(dir.path(), "spherical_wave_far_zone.toml", 2, 3);
    let (code, out, orders) = json_check(&third);
    assert_eq!(code, 1, "{out}");
    // The background's own equations are exact claims: proved 0, no order.
    assert!(
        orders.contains(&("Gbar_t.t".to_string(), None)),
        "{orders:?}"
    );
    let failing: Vec<&(String, Option<i64>)> = orders.iter().filter(|o| o.1.is_some()).collect();
    assert!(!failing.is_empty(), "{orders:?}");
    assert!(failing.iter().all(|o| o.1 == Some(2)), "{orders:?}");
    assert!(out.contains("failing order(s) confirmed"), "{out}");
}

/// The worked Schwarzschild mass perturbation, truncated at first order in M/r: O(1/r^5)
/// holds about Schwarzschild, O(1/r^6) fails at order 5.
#[test]
fn far_zone_the_worked_schwarzschild_truncation_holds_to_its_order() {
    let file = worked("schwarzschild_mass_far_zone.toml");
    let (out, err, code) = lingrav(&["check", &file]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("up to O(1/r^5)"), "{out}");
    assert!(out.contains("background is a vacuum solution"), "{out}");
    let dir = tempfile::tempdir().unwrap();
    let sixth = worked_at_order(dir.path(), "schwarzschild_mass_far_zone.toml", 5, 6);
    let (code, out, orders) = json_check(&sixth);
    assert_eq!(code, 1, "{out}");
    assert!(
        orders.contains(&("dG_t.t".to_string(), Some(5))),
        "{orders:?}"
    );
}

/// Outgoing fields about Schwarzschild depend on t - r_*, r_* = r + 2M log(r/(2M) - 1): at
/// fixed t - r the argument grows like log r, which is no series in 1/r, so the verdict is
/// undecided with that reason (correct, not a defect). A background that does not approach
/// flat space (de Sitter's static patch) is undecided too, saying why.
#[test]
fn far_zone_tortoise_fields_and_non_flat_backgrounds_are_undecided() {
    let dir = tempfile::tempdir().unwrap();
    for (n, (bg, h, why)) in [
        (
            SCHWARZSCHILD,
            "t.t = 'F(t - r - 2*M*log(r/(2*M) - 1))/r'",
            "log r terms are not powers of 1/r",
        ),
        (
            "t.t = '-(1 - L*r^2)'\nr.r = '1/(1 - L*r^2)'\nth.th = 'r^2'\nph.ph = 'r^2*sin(th)^2'",
            "t.t = 'F(t - r)/r'",
            "does not approach flat space",
        ),
    ]
    .into_iter()
    .enumerate()
    {
        let path = dir.path().join(format!("undecided{n}.toml"));
        let text = spherical(SPHERICAL, bg, h, "far_zone_order = 1\n");
        // de Sitter's static patch solves the equations with a cosmological constant.
        let text = if n == 1 {
            text.replace(
                "[parameters]",
                "cosmological_constant = '3*L'\n[parameters]",
            )
        } else {
            text
        };
        std::fs::write(&path, text).unwrap();
        let (out, err, code) = lingrav(&["check", path.to_str().unwrap()]);
        assert_eq!(code, 3, "{h}: {out}{err}");
        assert!(out.contains(why), "{h}: {out}");
        assert!(!out.contains("INTERNAL DEFECT"), "{out}");
    }
}

/// A grid does not measure falloff about a background either.
#[test]
fn far_zone_grid_refuses_a_curved_far_zone_claim() {
    let (out, err, code) = lingrav(&["grid", &worked("spherical_wave_far_zone.toml")]);
    assert_eq!(code, 2, "{out}{err}");
    assert!(err.contains("far_zone_order"), "{err}");
}

/// Outside check about a background: the orthonormal-frame order of every field-equation and
/// Lorenz component of the worked l = 2 wave (flat space, spherical coordinates) and of the
/// worked Schwarzschild truncation, computed by SymPy from the definitions (first-order
/// expansion of the Christoffel symbols, Riemann, Ricci and Einstein tensors of gbar + e h,
/// the covariant divergence, the weights read from gbar along t = u + 1/e, r = 1/e;
/// `tests/sympy/farzone_curved_check.py`), equals the order lingrav reports at a claimed order
/// high enough to see every failing one (a component proved to the claimed order counts as
/// that order).
#[test]
fn far_zone_curved_orders_agree_with_sympy() {
    let py = python();
    if let Some(why) = python_missing(&py, "sympy") {
        assert!(
            !in_ci(),
            "CI is set, so the SymPy far-zone check must run, but {why}"
        );
        println!("skipped: sympy curved far-zone check: {why}");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    for (name, from, to) in [
        ("spherical_wave_far_zone.toml", 2, 4),
        ("schwarzschild_mass_far_zone.toml", 5, 7),
    ] {
        let text = std::fs::read_to_string(worked(name)).unwrap();
        let (_, _, orders) = json_check(&worked_at_order(dir.path(), name, from, to));
        let file: toml::Table = text.parse().unwrap();
        let table = |key: &str| {
            file.get(key)
                .cloned()
                .unwrap_or(toml::Value::Table(toml::Table::new()))
        };
        let keys =
            |key: &str| -> Vec<String> { table(key).as_table().unwrap().keys().cloned().collect() };
        // Dotted keys (t.t) are nested tables in TOML: flattened back to "t.t".
        let flat = |key: &str| -> serde_json::Value {
            let mut out = serde_json::Map::new();
            for (a, row) in table(key).as_table().unwrap() {
                for (b, v) in row.as_table().unwrap() {
                    out.insert(format!("{a}.{b}"), v.as_str().unwrap().into());
                }
            }
            out.into()
        };
        let spec = serde_json::json!({
            "coordinates": file["coordinates"],
            "radius": "r",
            "parameters": keys("parameters"),
            "functions": keys("functions"),
            "defines": table("define").as_table().unwrap().iter()
                .map(|(k, v)| serde_json::json!([k, v.as_str().unwrap()])).collect::<Vec<_>>(),
            "background": flat("background"),
            "perturbation": flat("perturbation"),
            "max_order": to,
        });
        let theirs = run_script("farzone_curved_check.py", &py, &spec);
        assert_eq!(theirs["weights"], serde_json::json!([0, 0, 1, 1]), "{name}");
        let mut compared = 0;
        for (component, order) in orders {
            let order = order.unwrap_or(to.into());
            let sympy = if let Some(k) = component.strip_prefix("dG_") {
                &theirs["field"][k]
            } else if let Some(k) = component
                .strip_prefix("D^mu hbar_{mu ")
                .and_then(|k| k.strip_suffix('}'))
            {
                &theirs["lorenz"][k]
            } else {
                continue;
            };
            assert_eq!(
                sympy.as_i64(),
                Some(order),
                "{name}: {component}: lingrav {order}, SymPy {sympy}"
            );
            compared += 1;
        }
        assert!(
            compared >= 10,
            "{name}: only {compared} components compared"
        );
    }
}

/// Runs `tests/sympy/<script>` on `spec` (JSON on standard input) and returns its JSON.
fn run_script(script: &str, py: &str, spec: &serde_json::Value) -> serde_json::Value {
    let mut child = Command::new(py)
        .arg(format!(
            "{}/tests/sympy/{script}",
            env!("CARGO_MANIFEST_DIR")
        ))
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(spec.to_string().as_bytes())
        .unwrap();
    let done = child.wait_with_output().unwrap();
    assert!(
        done.status.success(),
        "{}",
        String::from_utf8_lossy(&done.stderr)
    );
    serde_json::from_slice(&done.stdout).unwrap()
}

/// Outside check: the order of every Lorenz and field-equation residual, computed by SymPy
/// from the definitions along the ray t = u + rho, (x, y, z) = rho (2, 3, 6)/7
/// (`tests/sympy/farzone_check.py`), equals the order lingrav reports at `far_zone_order =
/// 4` (a component proved O(1/r^4) counts as 4), for the worked rotating bar and for the same
/// field with a wrong sign in h_tx.
#[test]
fn far_zone_orders_agree_with_sympy() {
    let py = python();
    if let Some(why) = python_missing(&py, "sympy") {
        assert!(
            !in_ci(),
            "CI is set, so the SymPy far-zone check must run, but {why}"
        );
        println!("skipped: sympy far-zone check: {why}");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let wrong = |t: String| t.replace("tx = '-2*a*(x*c + y*s)/r^2'", "tx = '2*a*(x*c + y*s)/r^2'");
    for (label, file) in [
        ("worked", bar_at(dir.path(), "bar", 4, |t| t)),
        ("wrong sign", bar_at(dir.path(), "wrong", 4, wrong)),
    ] {
        let (out, err, _) = lingrav(&["check", &file, "--format", "json"]);
        let j: serde_json::Value = serde_json::from_str(&out).unwrap_or_else(|_| panic!("{err}"));
        let ours: Vec<(String, i64)> = failing_orders(&j)
            .into_iter()
            .map(|(n, o)| (n, o.unwrap_or(4)))
            .collect();
        let text: toml::Table = std::fs::read_to_string(&file).unwrap().parse().unwrap();
        let spec = serde_json::json!({
            "parameters": text["parameters"],
            "defines": text["define"].as_table().unwrap().iter()
                .map(|(k, v)| serde_json::json!([k, v.as_str().unwrap()])).collect::<Vec<_>>(),
            "perturbation": text["perturbation"],
            "max_order": 4,
        });
        let theirs = run_script("farzone_check.py", &py, &spec);
        assert_eq!(ours.len(), 14, "{label}: {ours:?}");
        for (name, order) in &ours {
            assert_eq!(
                theirs[name].as_i64(),
                Some(*order),
                "{label}: {name}: lingrav {order}, SymPy {}",
                theirs[name]
            );
        }
    }
}

/// Issue 13's check "the exact field of a worked source matches the quadrupole formula at
/// order 1/r": the exact Lorenz-gauge field of the vibrating rod minus (2/r) Lambda(n) Q''
/// has a linearized Riemann tensor O(1/r^2) and not O(1/r^3); with the quadrupole formula's
/// factor 2 replaced by 1 the curvature left over is of order 1/r (certified). The formula
/// and the TT projector are common practice (Misner, Thorne & Wheeler 1973, ch. 36, from
/// memory); every order is what `check` proves from the exact field.
#[test]
fn far_zone_the_exact_field_matches_the_quadrupole_formula_at_order_one_over_r() {
    let file = worked("rod_quadrupole_formula_match.toml");
    let (out, err, code) = lingrav(&["check", &file]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(
        out.contains("holds      pure gauge (linearized Riemann tensor = 0) up to O(1/r^2)"),
        "{out}"
    );
    let text = std::fs::read_to_string(&file).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, t: String| {
        let p = dir.path().join(name);
        std::fs::write(&p, t).unwrap();
        p.to_str().unwrap().to_string()
    };
    let third = write(
        "third.toml",
        text.replace("far_zone_order = 2", "far_zone_order = 3"),
    );
    let (out, _, code) = lingrav(&["check", &third, "--format", "json"]);
    assert_eq!(code, 1, "{out}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let orders = failing_orders(&j);
    assert_eq!(orders.len(), 20, "{orders:?}");
    assert!(orders.iter().all(|(_, k)| *k == Some(2)), "{orders:?}");
    let halved = write("halved.toml", text.replace("2*q2*l", "q2*l"));
    assert_ne!(halved, file);
    let (out, _, code) = lingrav(&["check", &halved]);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("falls off only as 1/r; claimed O(1/r^2)"),
        "{out}"
    );
}

/// About a background in t, x, y, z the far-zone ray is the Cartesian one, as about flat
/// space. Flat space given as a [background] must give the flat route's verdicts on the
/// worked rotating bar (holds at 2, every component fails at 3 with order 2, as the flat
/// file does).
#[test]
fn far_zone_cartesian_background_flat_agrees_with_the_flat_route() {
    let dir = tempfile::tempdir().unwrap();
    let as_background = |t: String| {
        t.replace(
            "[perturbation]",
            "[background]\ntt = '-1'\nxx = '1'\nyy = '1'\nzz = '1'\n\n[perturbation]",
        )
    };
    let flat3 = bar_at(dir.path(), "flat", 3, |t| t);
    let bg2 = bar_at(dir.path(), "bg", 2, as_background);
    let bg3 = bar_at(dir.path(), "bg", 3, as_background);
    let (code, out, orders) = json_check(&bg2);
    assert_eq!(code, 0, "{out}");
    assert!(orders.iter().all(|(_, o)| o.is_none()), "{orders:?}");
    let (code, out, bg_orders) = json_check(&bg3);
    assert_eq!(code, 1, "{out}");
    let (_, _, flat_orders) = json_check(&flat3);
    // The field equations' ten and the Lorenz four, in the same order on both routes.
    let fails = |o: &[(String, Option<i64>)]| o.iter().map(|(_, k)| *k).collect::<Vec<_>>();
    let bg_fails: Vec<_> = fails(&bg_orders).into_iter().skip(10).collect();
    assert_eq!(
        bg_fails,
        fails(&flat_orders),
        "{bg_orders:?} vs {flat_orders:?}"
    );
    let (text, _, _) = lingrav(&["check", &bg2]);
    assert!(
        text.contains("(x, y, z) = rho*(n1, n2, n3)") && text.contains("e_x = d_x"),
        "{text}"
    );
}

/// Schwarzschild in isotropic Cartesian coordinates, perturbed by a change of its mass
/// (h = dM dgbar/dM, an exact linearized vacuum solution): the residual is O(1/r^5) (indeed
/// 0). Dropping the factor psi^3 of h_xx (psi = 1 + M/(2r)) changes h_xx by 3 M dM/r^2 + ...,
/// whose second derivatives are of order 1/r^4: the wrong field holds to O(1/r^4) and fails
/// at 5, falling off only as 1/r^4 (common practice: the isotropic form of the metric and
/// power counting).
#[test]
fn far_zone_cartesian_isotropic_schwarzschild_mass_change() {
    let file = format!(
        "{}/tests/data/farzone/isotropic_mass_change.toml",
        env!("CARGO_MANIFEST_DIR")
    );
    let (code, out, orders) = json_check(&file);
    assert_eq!(code, 0, "{out}");
    assert!(orders.iter().all(|(_, o)| o.is_none()), "{orders:?}");
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(&file).unwrap();
    let wrong = text.replace("xx = '2*dM*psi^3/r'", "xx = '2*dM/r'");
    assert_ne!(wrong, text);
    let at4 = dir.path().join("wrong4.toml");
    std::fs::write(
        &at4,
        wrong.replace("far_zone_order = 5", "far_zone_order = 4"),
    )
    .unwrap();
    let at5 = dir.path().join("wrong5.toml");
    std::fs::write(&at5, &wrong).unwrap();
    let (code, out, orders) = json_check(at4.to_str().unwrap());
    assert_eq!(code, 0, "{out}");
    assert!(orders.iter().all(|(_, o)| o.is_none()), "{orders:?}");
    let (code, out, orders) = json_check(at5.to_str().unwrap());
    assert_eq!(code, 1, "{out}");
    assert!(orders.iter().any(|(_, o)| *o == Some(4)), "{orders:?}");
    assert!(
        orders.iter().all(|(_, o)| o.is_none() || *o == Some(4)),
        "{orders:?}"
    );
}
