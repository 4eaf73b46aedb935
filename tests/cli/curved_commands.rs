//! The commands other than `check` on problems about a background: `show`, `project` and
//! `ring` in spherical coordinates, `gauge --vector`, `export` and `emit`.

use super::support::{lingrav, worked};

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

/// Runs `export` on a worked file at the point P of checks-backgrounds.md,
/// (t, r, th, ph) = (7/2, 3, 1/2, 1/3), and returns the CSV's columns with their values.
fn export_at_p(file: &str, quantities: &str, set: &[&str]) -> Vec<(String, f64)> {
    let dir = tempfile::tempdir().unwrap();
    let pts = dir.path().join("p.csv");
    std::fs::write(&pts, "t,r,th,ph\n3.5,3,0.5,0.3333333333333333\n").unwrap();
    let out = dir.path().join("v.csv");
    let f = worked(file);
    let mut args = vec![
        "export",
        &f,
        "--quantity",
        quantities,
        "--at",
        pts.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ];
    for s in set {
        args.extend(["--set", s]);
    }
    let (o, err, code) = lingrav(&args);
    assert_eq!(code, 0, "{o}{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    let mut lines = text.lines();
    let header: Vec<String> = lines.next().unwrap().split(',').map(String::from).collect();
    let row: Vec<f64> = lines
        .next()
        .unwrap()
        .split(',')
        .map(|v| v.parse().unwrap())
        .collect();
    assert!(lines.next().is_none());
    header.into_iter().zip(row).collect()
}

fn column(cols: &[(String, f64)], name: &str) -> f64 {
    cols.iter()
        .find(|(n, _)| n == name)
        .unwrap_or_else(|| panic!("no column {name} in {cols:?}"))
        .1
}

fn assert_close(got: f64, want: f64, what: &str) {
    assert!(
        (got - want).abs() <= 1e-10 * want.abs(),
        "{what}: {got} against {want}"
    );
}

#[test]
fn export_about_a_background_gives_the_published_values() {
    // checks-backgrounds.md 1c (Plummer sphere in flat spherical coordinates, M = b = 1):
    // h_tt = 0.632455532034, dG_tt = 8 pi rho = 0.0189736659610, every other dG_ab = 0.
    let cols = export_at_p("plummer_sign_anchor.toml", "h,einstein", &[]);
    let names: Vec<&str> = cols.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(&names[..6], ["t", "r", "th", "ph", "h_t.t", "h_t.r"]);
    assert_eq!(names.len(), 4 + 10 + 10);
    assert_close(column(&cols, "h_t.t"), 0.632455532034, "1c h_tt");
    assert_close(column(&cols, "dG_t.t"), 0.0189736659610, "1c dG_tt");
    for (n, v) in &cols[15..] {
        assert!(v.abs() < 1e-14, "1c: {n} = {v} should be 0");
    }
    // checks-backgrounds.md 3a (Kottler, Lambda = 1/30, M = dM = 1): the mass perturbation
    // solves dG + Lambda h = 0, so dG = -Lambda h: dG_tt = -0.0222222222222,
    // dG_rr = -0.408163265306.
    let cols = export_at_p(
        "kottler_mass_perturbation.toml",
        "einstein,ricci,riemann",
        &["dM=1", "Lam=0.03333333333333333"],
    );
    assert_close(column(&cols, "dG_t.t"), -0.0222222222222, "3a dG_tt");
    assert_close(column(&cols, "dG_r.r"), -0.408163265306, "3a dG_rr");
    assert_eq!(cols.len(), 4 + 10 + 10 + 20);
    assert!(cols.iter().any(|(n, _)| n == "dR_t.r.t.r"), "{cols:?}");
}

/// Issue 10: about a background, from 64 points on the jets run on several threads (each
/// planning its own from the file's texts); every row is the row of that point exported
/// alone (one thread), to the last bit, and the first point that cannot be evaluated is
/// still the one named.
#[test]
fn issue10_export_about_a_background_on_several_threads_gives_the_rows_of_single_points() {
    let dir = tempfile::tempdir().unwrap();
    let f = worked("schwarzschild_mass_perturbation.toml");
    let point = |k: u32| {
        let k = f64::from(k);
        format!(
            "{},{},{},{}",
            0.1 * k,
            3.0 + 0.05 * k,
            0.4 + 0.02 * k,
            0.03 * k
        )
    };
    let export = |rows: &[String], name: &str| -> (Vec<String>, String, i32) {
        let pts = dir.path().join(format!("{name}.csv"));
        std::fs::write(&pts, format!("t,r,th,ph\n{}\n", rows.join("\n"))).unwrap();
        let out = dir.path().join(format!("{name}_out.csv"));
        let (o, err, code) = lingrav(&[
            "export",
            &f,
            "-q",
            "riemann,h",
            "--at",
            pts.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ]);
        let lines = std::fs::read_to_string(&out)
            .map(|t| t.lines().skip(1).map(String::from).collect())
            .unwrap_or_default();
        (lines, format!("{o}{err}"), code)
    };
    let all: Vec<String> = (0..80).map(point).collect();
    let (rows, out, code) = export(&all, "all");
    assert_eq!(code, 0, "{out}");
    assert_eq!(rows.len(), 80);
    for k in [0u32, 17, 40, 79] {
        let (one, out, code) = export(&[point(k)], &format!("one{k}"));
        assert_eq!(code, 0, "{out}");
        assert_eq!(one, [rows[k as usize].clone()], "row {k}");
    }
    // r = 0 at two rows: the first of them is named, and nothing is written.
    let mut bad = all.clone();
    bad[50] = "0,0,1,1".into();
    bad[20] = "0,0,1,2".into();
    let (rows, out, code) = export(&bad, "bad");
    assert_eq!(code, 2, "{out}");
    assert!(rows.is_empty());
    assert!(out.contains("point 21 "), "{out}");
}

#[test]
fn export_about_a_background_states_its_coordinates_and_stays_in_the_domain() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("g.json");
    let f = worked("kottler_mass_perturbation.toml");
    let args = ["export", &f, "-q", "hbar,dh", "--grid", "--points", "3"];
    let (o, err, code) = lingrav(&[&args[..], &["--out", out.to_str().unwrap()]].concat());
    assert_eq!(code, 0, "{o}{err}");
    let meta: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.path().join("g.json.meta.json")).unwrap(),
    )
    .unwrap();
    assert_eq!(
        meta["problem"]["coordinates"],
        serde_json::json!(["t", "r", "th", "ph"])
    );
    assert_eq!(meta["conventions"]["coordinates"], "t, r, th, ph");
    assert_eq!(meta["problem"]["background"]["metric"]["r.r"], "1/f");
    assert_eq!(
        meta["problem"]["background"]["cosmological_constant"],
        "Lam"
    );
    // The default grid is centred in [domain] r = [3, 7].
    for r in meta["points"]["axes"]["r"].as_array().unwrap() {
        let r = r.as_f64().unwrap();
        assert!((3.0..=7.0).contains(&r), "r = {r}");
    }
    let data: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    let columns = data["columns"].as_array().unwrap();
    assert_eq!(columns[1], "r");
    assert!(columns.iter().any(|c| c == "d_r_h_r.r"), "{columns:?}");
    assert!(columns.iter().any(|c| c == "hbar_th.th"), "{columns:?}");
}

#[test]
fn export_about_a_background_refuses_flat_only_quantities_and_wrong_headers() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("never.csv");
    let o = out.to_str().unwrap();
    let f = worked("schwarzschild_slow_rotation.toml");
    let (_, err, code) = lingrav(&[
        "export",
        &f,
        "-q",
        "h,psi4",
        "--direction",
        "radial",
        "--grid",
        "--out",
        o,
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("`psi4` is defined about flat space"), "{err}");
    let pts = dir.path().join("p.csv");
    std::fs::write(&pts, "t,x,y,z\n0,5,1,1\n").unwrap();
    let (_, err, code) = lingrav(&[
        "export",
        &f,
        "-q",
        "h",
        "--at",
        pts.to_str().unwrap(),
        "--out",
        o,
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("header must be `t,r,th,ph`"), "{err}");
    assert!(err.contains("p.csv:1:1"), "{err}");
    // A point inside the horizon's singularity: r = 2M makes gbar_rr infinite.
    std::fs::write(&pts, "0,2,1,1\n").unwrap();
    let (_, err, code) = lingrav(&[
        "export",
        &f,
        "-q",
        "einstein",
        "--at",
        pts.to_str().unwrap(),
        "--out",
        o,
    ]);
    assert_eq!(code, 2, "{err}");
    let flat = super::support::one_line(&err);
    assert!(
        flat.contains("(t, r, th, ph) = (0.0, 2.0, 1.0, 1.0)"),
        "{flat}"
    );
    assert_eq!(super::support::files_in(dir.path()), ["p.csv"]);
}

#[test]
fn ring_on_the_sphere_follows_the_polarizations() {
    // The wave of WAVE: h_plus = a F sin^2(th)/r + a F/(2 r^2), h_cross = a F sin(th)/r with
    // F(u) = exp(-u^2), a = 0.01 (the file's comment; h_cross = h_thph/(r^2 sin th)). A mass
    // at angle 0 from u moves by (1/2) L (h_plus, h_cross) (common practice: delta x^i =
    // (1/2) h^TT_ij x^j).
    let (out, err, code) = lingrav(&[
        "ring",
        WAVE,
        "--direction",
        "radial",
        "--at",
        "5,1,0.5",
        "--times",
        "4.5",
        "--masses",
        "4",
        "--radius",
        "2",
        "--format",
        "json",
    ]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let (a, r, th, u) = (0.01f64, 5.0f64, 1.0f64, -0.5f64);
    let f = (-u * u).exp();
    let plus = a * f * th.sin().powi(2) / r + a * f / (2.0 * r * r);
    let cross = a * f * th.sin() / r;
    let snap = &j["snapshots"][0];
    let close = |got: &serde_json::Value, want: f64| {
        let g = got.as_f64().unwrap();
        assert!((g - want).abs() <= 1e-12 * want.abs(), "{g} against {want}");
    };
    close(&snap["h_plus"], plus);
    close(&snap["h_cross"], cross);
    close(&snap["masses"][0]["dx_u"], plus);
    close(&snap["masses"][0]["dx_v"], cross);
    assert_eq!(j["basis"]["u"], "e_th");
    // Only the radial direction, a centre off r = 0, and a round sphere.
    let (_, err, code) = lingrav(&["ring", WAVE, "--direction", "z", "--times", "0"]);
    assert_eq!(code, 2, "{err}");
    assert!(
        super::support::one_line(&err).contains("only the radial direction"),
        "{err}"
    );
    let (_, err, code) = lingrav(&["ring", WAVE, "--direction", "radial", "--times", "0"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("r > 0"), "{err}");
    let frw = worked("frw_dust_tensor_mode.toml");
    let args = [
        "ring",
        &frw,
        "--direction",
        "radial",
        "--at",
        "1,1,1",
        "--times",
        "1",
    ];
    let (_, err, code) = lingrav(&args);
    assert_eq!(code, 2, "{err}");
    assert!(
        super::support::one_line(&err).contains("not proved to be x^2"),
        "{err}"
    );
    let (_, err, code) = lingrav(&["project", &frw, "--direction", "radial"]);
    assert_eq!(code, 2, "{err}");
    let flat = super::support::one_line(&err);
    assert!(flat.contains("not proved to be x^2"), "{flat}");
}

#[test]
fn emit_about_a_background_names_the_coordinates_and_the_background() {
    let f = worked("kottler_mass_perturbation.toml");
    let (out, err, code) = lingrav(&["emit", &f, "-q", "einstein", "--lang", "c"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("coordinates (t,r,th,ph)"), "{out}");
    assert!(out.contains("gbar_r.r = 1/f"), "{out}");
    assert!(
        out.contains("void lingrav_einstein(double t, double r, double th, double ph,"),
        "{out}"
    );
    let (_, err, code) = lingrav(&["emit", &f, "-q", "adm", "--lang", "c"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("`adm` is defined about flat space"), "{err}");
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
