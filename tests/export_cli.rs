//! `lingrav export` end to end: the linear-wave testbed's ADM data on a grid against its
//! published form, constraints (exactly and by finite differences of the exported data),
//! Psi4 and the polarizations against the reference wave, `.npy` files read by NumPy, and
//! bad input (located errors, nothing written).
//!
//! NumPy: outside CI a missing NumPy prints "skipped: ..." and passes; with `CI` set (not
//! `false`/`0`) it fails, since CI installs NumPy. `LINGRAV_PYTHON` names the interpreter.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn worked(name: &str) -> String {
    crate::support::worked(name)
}

/// Runs lingrav in `dir`: (stdout, stderr, exit code).
fn lingrav(dir: &Path, args: &[&str]) -> (String, String, i32) {
    let out = Command::new(env!("CARGO_BIN_EXE_lingrav"))
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .env("COLUMNS", "100")
        .output()
        .expect("run lingrav");
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(
        !stderr.contains("panicked"),
        "lingrav {args:?} panicked:\n{stderr}"
    );
    (
        String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr,
        out.status.code().expect("exit code"),
    )
}

fn ok(dir: &Path, args: &[&str]) -> String {
    let (o, e, c) = lingrav(dir, args);
    assert_eq!(c, 0, "lingrav {args:?}\nstdout:\n{o}\nstderr:\n{e}");
    o
}

/// A CSV table: column names and rows.
fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<f64>>) {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let cols: Vec<String> = lines.next().unwrap().split(',').map(String::from).collect();
    let rows = lines
        .map(|l| {
            l.split(',')
                .map(|v| v.parse::<f64>().unwrap())
                .collect::<Vec<f64>>()
        })
        .collect::<Vec<_>>();
    for r in &rows {
        assert_eq!(r.len(), cols.len());
    }
    (cols, rows)
}

fn col(cols: &[String], name: &str) -> usize {
    cols.iter()
        .position(|c| c == name)
        .unwrap_or_else(|| panic!("no column {name} in {cols:?}"))
}

fn meta(path: &Path) -> Value {
    let mut p = path.as_os_str().to_owned();
    p.push(".meta.json");
    serde_json::from_str(&std::fs::read_to_string(PathBuf::from(p)).unwrap()).unwrap()
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs())
}

fn files_in(dir: &Path) -> Vec<String> {
    crate::support::files_in(dir)
}

#[test]
fn linear_wave_testbed_adm_data_on_a_grid() {
    // Alcubierre et al. 2004 (Class. Quantum Grav. 21, 589), linear wave testbed, as on the
    // checks sheet (sec. 5a): A = 1e-8, d = 1, gamma_yy(t = 0, x = 0.125) = 1 + 1e-8 sin(pi/4);
    // with the MTW/York sign K_yy = -(1/2) d_t b = (pi A/d) cos(2 pi (x - t)/d).
    let dir = tempfile::tempdir().unwrap();
    let out = ok(
        dir.path(),
        &[
            "export",
            &worked("linear_wave_testbed.toml"),
            "--quantity",
            "adm,constraints",
            "--grid",
            "--out",
            "adm.csv",
        ],
    );
    assert!(out.contains("wrote 729 rows x 24 columns"), "{out}");
    let (cols, rows) = read_csv(&dir.path().join("adm.csv"));
    assert_eq!(&cols[..5], ["t", "x", "y", "z", "alpha"]);
    assert_eq!(cols.len(), 24);
    assert_eq!(rows.len(), 9 * 9 * 9);
    let a = 1e-8;
    let s = (std::f64::consts::PI / 4.0).sin();
    let (x, gyy, gzz, kyy, kzz) = (
        col(&cols, "x"),
        col(&cols, "gamma_yy"),
        col(&cols, "gamma_zz"),
        col(&cols, "K_yy"),
        col(&cols, "K_zz"),
    );
    let mut seen = 0;
    for r in &rows {
        assert_eq!(r[col(&cols, "alpha")], 1.0);
        assert_eq!(r[col(&cols, "gamma_xx")], 1.0);
        for c in [
            "beta_x", "beta_y", "beta_z", "gamma_xy", "K_xx", "K_xy", "H", "M_x", "M_y", "M_z",
        ] {
            assert_eq!(r[col(&cols, c)], 0.0, "{c}");
        }
        // Everywhere: gamma_yy = 1 + A sin(2 pi x), K_yy = pi A cos(2 pi x) at t = 0.
        let b = a * (2.0 * std::f64::consts::PI * r[x]).sin();
        assert!((r[gyy] - (1.0 + b)).abs() <= 2e-16, "{r:?}");
        assert!((r[gzz] - (1.0 - b)).abs() <= 2e-16, "{r:?}");
        let k = std::f64::consts::PI * a * (2.0 * std::f64::consts::PI * r[x]).cos();
        assert!((r[kyy] - k).abs() <= 1e-12 * a, "{r:?}");
        assert_eq!(r[kzz], -r[kyy]);
        if r[0] == 0.0 && r[x] == 0.125 {
            seen += 1;
            assert_eq!(r[gyy], 1.0 + 1e-8 * s);
            assert!((r[gyy] - 1.0 - 7.0710678e-9).abs() < 1e-16);
            assert!(close(r[kyy], std::f64::consts::PI * 1e-8 * s, 1e-12));
            assert!(
                r[kyy] > 0.0,
                "MTW/York sign: K_yy = -(1/2) d_t gamma_yy > 0 here"
            );
        }
    }
    assert_eq!(seen, 81);
    let m = meta(&dir.path().join("adm.csv"));
    assert_eq!(m["tool"]["version"], env!("CARGO_PKG_VERSION"));
    assert_eq!(m["data"]["columns"].as_array().unwrap().len(), 24);
    assert_eq!(m["data"]["format"], "csv");
    assert_eq!(m["problem"]["parameters"]["A"], 1e-8);
    assert_eq!(m["conventions"]["signature"], "-+++");
    assert!(
        m["conventions"]["extrinsic_curvature"]
            .as_str()
            .unwrap()
            .contains("MTW/York")
    );
    assert_eq!(m["points"]["from"], "grid");
    assert_eq!(m["points"]["points_per_axis"], 9);
    let k = &m["quantities"][0]["columns"][13];
    assert_eq!(k["name"], "K_yy");
    assert_eq!(k["expression"], "A*pi*cos(2*pi*(t - x)/d)/d");
    assert!(k["error_bound"].as_f64().unwrap() < 1e-20);
    for c in m["quantities"][1]["columns"].as_array().unwrap() {
        assert_eq!(c["exactly_zero"], true, "constraint {c}");
    }
}

#[test]
fn parameters_can_be_set_for_one_export() {
    let dir = tempfile::tempdir().unwrap();
    ok(
        dir.path(),
        &[
            "export",
            &worked("linear_wave_testbed.toml"),
            "-q",
            "adm",
            "--grid",
            "--points",
            "5",
            "--set",
            "A=2e-8",
            "--out",
            "a.json",
        ],
    );
    let v: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("a.json")).unwrap()).unwrap();
    let cols: Vec<&str> = v["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    let gyy = cols.iter().position(|c| *c == "gamma_yy").unwrap();
    let rows = v["rows"].as_array().unwrap();
    assert_eq!(rows.len(), 125);
    // x = 0.25 (index 3 of 5 over [-0.5, 0.5]): b = 2e-8 sin(pi/2).
    let r = rows.iter().find(|r| r[1].as_f64() == Some(0.25)).unwrap();
    assert_eq!(r[gyy].as_f64().unwrap(), 1.0 + 2e-8);
    let m = meta(&dir.path().join("a.json"));
    assert_eq!(m["problem"]["parameters"]["A"], 2e-8);
    assert_eq!(m["problem"]["parameters_set_on_command_line"][0], "A");
}

/// Central differences on a spatial grid: the constraints computed from the exported
/// gamma_ij and K_ij (not from lingrav's constraint expressions) vanish to truncation error.
#[test]
fn exported_adm_data_satisfy_the_constraints_numerically() {
    for (file, center) in [
        ("oblique_wave.toml", "0.1,0.2,-0.3,0.4"),
        ("lorenz_wave.toml", "0.3,0.1,0.2,0.5"),
        ("static_mass.toml", "0,1,0.5,0.8"),
    ] {
        let dir = tempfile::tempdir().unwrap();
        let n = 11usize;
        let width = 0.05;
        ok(
            dir.path(),
            &[
                "export",
                &worked(file),
                "-q",
                "adm,constraints",
                "--grid",
                "--center",
                center,
                "--width",
                "0.05",
                "--points",
                "11",
                "--out",
                "a.npy",
            ],
        );
        // Read the .npy by hand: header, then float64 little-endian.
        let bytes = std::fs::read(dir.path().join("a.npy")).unwrap();
        assert_eq!(&bytes[..8], b"\x93NUMPY\x01\x00");
        let hl = u16::from_le_bytes([bytes[8], bytes[9]]) as usize;
        let header = std::str::from_utf8(&bytes[10..10 + hl]).unwrap();
        assert!(
            header.contains("'descr': '<f8'") && header.contains("'fortran_order': False"),
            "{header}"
        );
        assert!(
            header.contains(&format!("'shape': ({}, 24)", n * n * n)),
            "{header}"
        );
        let data: Vec<f64> = bytes[10 + hl..]
            .chunks_exact(8)
            .map(|c| f64::from_le_bytes(c.try_into().unwrap()))
            .collect();
        assert_eq!(data.len(), n * n * n * 24);
        let m = meta(&dir.path().join("a.npy"));
        let cols: Vec<String> = m["data"]["columns"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| c.as_str().unwrap().to_string())
            .collect();
        let at = |name: &str, i: [usize; 3]| {
            data[((i[0] * n + i[1]) * n + i[2]) * 24 + col(&cols, name)]
        };
        let h = width / (n - 1) as f64;
        let ax = ["x", "y", "z"];
        let sym = |p: &str, i: usize, j: usize| {
            let (a, b) = if i <= j { (i, j) } else { (j, i) };
            format!("{p}_{}{}", ax[a], ax[b])
        };
        let d1 = |name: &str, k: usize, i: [usize; 3]| {
            let (mut p, mut q) = (i, i);
            p[k] += 1;
            q[k] -= 1;
            (at(name, p) - at(name, q)) / (2.0 * h)
        };
        let c = [n / 2; 3];
        // M_i = d_j K_ij - d_i K, H = d_i d_j gamma_ij - d_k d_k gamma_jj.
        let mut scale = 0.0f64;
        for i in 0..3 {
            let mut mi = 0.0;
            for j in 0..3 {
                let v = d1(&sym("K", i, j), j, c);
                mi += v;
                scale = scale.max(v.abs());
                let v = d1(&sym("K", j, j), i, c);
                mi -= v;
                scale = scale.max(v.abs());
            }
            assert!(
                mi.abs() <= 1e-4 * scale + 1e-14,
                "{file}: M_{} = {mi:e} by differences (scale {scale:e})",
                ax[i]
            );
            assert_eq!(at(&format!("M_{}", ax[i]), c), 0.0);
        }
        let dd = |name: &str, a: usize, b: usize, i: [usize; 3]| {
            let mut s = 0.0;
            for (sa, sb, w) in [
                (1i64, 1i64, 1.0),
                (1, -1, -1.0),
                (-1, 1, -1.0),
                (-1, -1, 1.0),
            ] {
                let mut p = i;
                p[a] = (p[a] as i64 + sa) as usize;
                p[b] = (p[b] as i64 + sb) as usize;
                s += w * at(name, p);
            }
            s / (4.0 * h * h)
        };
        let mut hc = 0.0;
        let mut hscale = 0.0f64;
        for i in 0..3 {
            for j in 0..3 {
                let v = dd(&sym("gamma", i, j), i, j, c);
                hc += v;
                hscale = hscale.max(v.abs());
                let v = dd(&sym("gamma", j, j), i, i, c);
                hc -= v;
                hscale = hscale.max(v.abs());
            }
        }
        assert!(
            hc.abs() <= 1e-3 * hscale + 1e-9,
            "{file}: H = {hc:e} by differences (scale {hscale:e})"
        );
        assert_eq!(at("H", c), 0.0);
    }
}

#[test]
fn constraints_vanish_for_solutions_and_equal_the_source_otherwise() {
    // Solutions: the exported residuals are exactly 0 (the expressions are proved zero).
    // (The vibrating rod's are proved zero by the unit tests of `adm`; its algebra takes
    // seconds in a debug build.)
    for file in [
        "oblique_wave.toml",
        "static_mass.toml",
        "pure_gauge.toml",
        "uniform_ball.toml",
        "linear_wave_testbed.toml",
    ] {
        let dir = tempfile::tempdir().unwrap();
        ok(
            dir.path(),
            &[
                "export",
                &worked(file),
                "-q",
                "constraints",
                "--grid",
                "--points",
                "4",
                "--out",
                "c.csv",
            ],
        );
        let (cols, rows) = read_csv(&dir.path().join("c.csv"));
        for r in &rows {
            for k in 4..cols.len() {
                assert_eq!(r[k], 0.0, "{file}: {} at {r:?}", cols[k]);
            }
        }
    }
    // Without its source the uniform ball's Hamiltonian residual is the source term:
    // H = d_i d_j h_ij - d_k d_k h_jj = 16 pi rho, rho = 3 m/(4 pi R^3).
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(worked("uniform_ball.toml")).unwrap();
    let vacuum = text.replace("[source]\ntt = 'rho'\n", "");
    assert_ne!(vacuum, text);
    std::fs::write(dir.path().join("ball.toml"), vacuum).unwrap();
    ok(
        dir.path(),
        &[
            "export",
            "ball.toml",
            "-q",
            "constraints",
            "--grid",
            "--points",
            "3",
            "--out",
            "c.csv",
        ],
    );
    let (cols, rows) = read_csv(&dir.path().join("c.csv"));
    let rho = 3.0 * 0.02 / (4.0 * std::f64::consts::PI * 125.0);
    for r in &rows {
        assert!(
            close(r[col(&cols, "H")], 16.0 * std::f64::consts::PI * rho, 1e-12),
            "{r:?}"
        );
    }
}

const REFERENCE_WAVE: &str = "name = 'reference wave for Psi4'\n[parameters]\nA = 1.0e-3\nB = 2.0e-3\nw = 3.0\n\
[perturbation]\nxx = 'A*cos(w*(t - z))'\nyy = '-A*cos(w*(t - z))'\nxy = 'B*sin(w*(t - z))'\n";

#[test]
fn psi4_and_polarizations_of_the_reference_wave() {
    // Checks sheet, sec. 6: h_+ = A cos w(t - z), h_x = B sin w(t - z), A = 1e-3, B = 2e-3,
    // w = 3, t - z = 0.4: Psi4 = -(h_+'' - i h_x'') = 0.003261219790290061 - 0.016776703547410076 i.
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("wave.toml"), REFERENCE_WAVE).unwrap();
    std::fs::write(
        dir.path().join("p.csv"),
        "t,x,y,z\n0.4,0,0,0\n0.9,0.3,-0.2,0.5\n1.4,2,7,1\n",
    )
    .unwrap();
    ok(
        dir.path(),
        &[
            "export",
            "wave.toml",
            "-q",
            "psi4,hplus,hcross",
            "--direction",
            "0,0,1",
            "--at",
            "p.csv",
            "--out",
            "w.csv",
        ],
    );
    let (cols, rows) = read_csv(&dir.path().join("w.csv"));
    assert_eq!(&cols[4..], ["psi4_re", "psi4_im", "h_plus", "h_cross"]);
    for r in &rows {
        assert!(close(r[4], 0.003261219790290061, 1e-12), "{r:?}");
        assert!(close(r[5], -0.016776703547410076, 1e-12), "{r:?}");
        assert!(close(r[6], 1e-3 * 1.2f64.cos(), 1e-13), "{r:?}");
        assert!(close(r[7], 2e-3 * 1.2f64.sin(), 1e-13), "{r:?}");
    }
    let m = meta(&dir.path().join("w.csv"));
    assert!(
        m["conventions"]["psi4_tetrad"]
            .as_str()
            .unwrap()
            .contains("-(d_t^2 h_plus - i d_t^2 h_cross)")
    );
    assert_eq!(m["direction"]["n"][2], "1");
    assert_eq!(m["points"]["from"], "file");
}

fn python() -> String {
    crate::support::python()
}

fn in_ci() -> bool {
    crate::support::in_ci()
}

/// Runs a Python script with NumPy; `None` (after printing "skipped:") when NumPy is missing
/// outside CI.
pub fn run_numpy(dir: &Path, script: &str, what: &str) -> Option<String> {
    let probe = Command::new(python()).args(["-c", "import numpy"]).output();
    let missing = match &probe {
        Err(e) => Some(format!("cannot run {}: {e}", python())),
        Ok(o) if !o.status.success() => Some("NumPy is not installed".to_string()),
        Ok(_) => None,
    };
    if let Some(why) = missing {
        assert!(
            !in_ci(),
            "CI is set, so {what} must run, but {why} (pip install numpy)"
        );
        println!("skipped: {what}: {why}");
        return None;
    }
    std::fs::write(dir.join("check.py"), script).unwrap();
    let out = Command::new(python())
        .arg("check.py")
        .current_dir(dir)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout).into_owned();
    assert!(
        out.status.success(),
        "{what}:\n{stdout}\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    Some(stdout)
}

#[test]
fn npy_files_load_in_numpy() {
    let dir = tempfile::tempdir().unwrap();
    ok(
        dir.path(),
        &[
            "export",
            &worked("vibrating_rod.toml"),
            "-q",
            "h,dh",
            "--grid",
            "--points",
            "3",
            "--spacetime",
            "--out",
            "rod.npy",
        ],
    );
    ok(
        dir.path(),
        &[
            "export",
            &worked("vibrating_rod.toml"),
            "-q",
            "h,dh",
            "--grid",
            "--points",
            "3",
            "--spacetime",
            "--out",
            "rod.csv",
        ],
    );
    let script = r#"
import json, numpy as np
a = np.load("rod.npy")
meta = json.load(open("rod.npy.meta.json"))
cols = meta["data"]["columns"]
assert a.dtype == np.float64, a.dtype
assert a.shape == (81, 4 + 10 + 40) == (meta["data"]["rows"], len(cols)), a.shape
c = np.loadtxt("rod.csv", delimiter=",", skiprows=1)
assert np.array_equal(a, c), np.abs(a - c).max()
assert cols[:5] == ["t", "x", "y", "z", "h_tt"]
# the grid: t varies too, z fastest
assert np.allclose(np.unique(a[:, 0]), [0.2, 0.3, 0.4]), np.unique(a[:, 0])
assert a[1, 3] - a[0, 3] > 0 and a[1, 2] == a[0, 2]
print("ok", a.shape)
"#;
    if let Some(out) = run_numpy(dir.path(), script, "numpy.load of an exported .npy") {
        assert!(out.contains("ok (81, 54)"), "{out}");
    }
}

#[test]
fn bad_input_is_reported_and_nothing_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("bad.csv"), "t,x,y,z\n0,1,2,3\n0,1,zz,3\n").unwrap();
    std::fs::write(d.join("three.csv"), "0,1,2\n").unwrap();
    std::fs::write(d.join("origin.csv"), "t,x,y,z\n0,1,0,0\n\n0,0,0,0\n").unwrap();
    std::fs::create_dir(d.join("sub.csv")).unwrap();
    let wave = worked("oblique_wave.toml");
    let mass = worked("static_mass.toml");
    let before = files_in(d);
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (
            vec!["export", &wave, "-q", "h,hplsu", "--grid", "--out", "o.csv"],
            "unknown quantity `hplsu`",
        ),
        (
            vec!["export", &wave, "-q", "h,hplsu", "--grid", "--out", "o.csv"],
            "did you mean `hplus`?",
        ),
        (
            vec![
                "export", &wave, "-q", "h", "--at", "bad.csv", "--out", "o.csv",
            ],
            "bad.csv:3:5",
        ),
        (
            vec![
                "export", &wave, "-q", "h", "--at", "bad.csv", "--out", "o.csv",
            ],
            "the y value `zz` is not a number",
        ),
        (
            vec![
                "export",
                &wave,
                "-q",
                "h",
                "--at",
                "three.csv",
                "--out",
                "o.csv",
            ],
            "three.csv:1:1",
        ),
        (
            vec![
                "export",
                &wave,
                "-q",
                "h",
                "--at",
                "missing.csv",
                "--out",
                "o.csv",
            ],
            "cannot read the points file",
        ),
        (
            vec![
                "export",
                &wave,
                "-q",
                "h",
                "--grid",
                "--out",
                "no/such/dir/o.csv",
            ],
            "the directory `no/such/dir`",
        ),
        (
            vec!["export", &wave, "-q", "h", "--grid", "--out", "sub.csv"],
            "is a directory",
        ),
        (
            vec!["export", &wave, "-q", "h", "--grid", "--out", "o.txt"],
            "cannot tell the format",
        ),
        (
            vec!["export", &wave, "-q", "psi4", "--grid", "--out", "o.csv"],
            "give --direction",
        ),
        (
            vec![
                "export", &wave, "-q", "h", "--grid", "--set", "omega=2", "--out", "o.csv",
            ],
            "`omega` is not a parameter",
        ),
        (
            vec![
                "export", &wave, "-q", "h", "--grid", "--center", "0,0,0", "--out", "o.csv",
            ],
            "four numbers",
        ),
        (
            vec![
                "export", &wave, "-q", "h", "--grid", "--width", "0", "--out", "o.csv",
            ],
            "width must be positive",
        ),
        (vec!["export", &wave, "-q", "h", "--out", "o.csv"], "--at"),
        (
            vec![
                "export",
                &mass,
                "-q",
                "h",
                "--at",
                "origin.csv",
                "--out",
                "o.csv",
            ],
            "h_tt cannot be evaluated at point 2 (origin.csv, line 4)",
        ),
        (
            vec![
                "export",
                &mass,
                "-q",
                "h",
                "--at",
                "origin.csv",
                "--out",
                "o.csv",
            ],
            "nothing was written",
        ),
        (
            vec!["emit", &wave, "-q", "riemann,nope", "--lang", "c"],
            "unknown quantity `nope`",
        ),
        (
            vec!["emit", &wave, "-q", "h", "--lang", "cobol"],
            "invalid value 'cobol'",
        ),
    ];
    for (args, message) in cases {
        let (out, err, code) = lingrav(d, &args);
        assert_eq!(code, 2, "{args:?}\n{out}\n{err}");
        assert!(
            err.contains(message),
            "{args:?}: expected `{message}` in\n{err}"
        );
        assert!(out.is_empty(), "{args:?}: {out}");
        assert_eq!(files_in(d), before, "{args:?} left files behind");
    }
}

#[test]
fn existing_files_are_kept_without_force() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let wave = worked("oblique_wave.toml");
    std::fs::write(d.join("o.csv"), "precious").unwrap();
    let (_, err, code) = lingrav(d, &["export", &wave, "-q", "h", "--grid", "--out", "o.csv"]);
    assert_eq!(code, 2);
    assert!(
        err.contains("already exists") && err.contains("--force"),
        "{err}"
    );
    assert_eq!(
        std::fs::read_to_string(d.join("o.csv")).unwrap(),
        "precious"
    );
    assert_eq!(files_in(d), ["o.csv"]);
    // The sidecar is protected too.
    std::fs::write(d.join("p.csv.meta.json"), "keep").unwrap();
    let (_, err, code) = lingrav(d, &["export", &wave, "-q", "h", "--grid", "--out", "p.csv"]);
    assert_eq!(code, 2, "{err}");
    assert!(!d.join("p.csv").exists());
    ok(
        d,
        &[
            "export", &wave, "-q", "h", "--grid", "--out", "o.csv", "--force",
        ],
    );
    assert!(
        std::fs::read_to_string(d.join("o.csv"))
            .unwrap()
            .starts_with("t,x,y,z,h_tt,")
    );
    assert!(d.join("o.csv.meta.json").exists());
    assert_eq!(files_in(d), ["o.csv", "o.csv.meta.json", "p.csv.meta.json"]);
}

#[test]
fn help_has_examples() {
    let d = root();
    for cmd in ["export", "emit"] {
        let out = ok(&d, &[cmd, "--help"]);
        assert!(
            out.contains("Examples:") && out.contains(&format!("lingrav {cmd} worked/")),
            "{out}"
        );
    }
}

/// Issue 9: a value whose relative error cannot be certified ends as undecided (exit 3) with
/// the point named and nothing written; an explicit zero tolerance accepts it, and the
/// sidecar says so. A negative tolerance is bad input.
#[test]
fn issue9_uncertifiable_values_write_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("z.toml"), "[perturbation]\nxx = 'sin(pi*x)'\n").unwrap();
    std::fs::write(d.join("p.csv"), "t,x,y,z\n0,1,0,0\n").unwrap();
    let args = [
        "export", "z.toml", "-q", "h", "--at", "p.csv", "--out", "o.csv",
    ];
    let (o, e, c) = lingrav(d, &args);
    assert_eq!(c, 3, "{o}{e}");
    assert!(
        o.contains("could not be certified") && o.contains("h_xx at point 1 (p.csv, line 2)"),
        "{o}"
    );
    assert!(o.contains("Nothing was written"), "{o}");
    assert_eq!(files_in(d), ["p.csv", "z.toml"]);
    let mut with_floor = args.to_vec();
    with_floor.extend(["--zero-tolerance", "1e-30"]);
    ok(d, &with_floor);
    let m = meta(&d.join("o.csv"));
    let cols = &m["quantities"][0]["columns"];
    assert_eq!(cols[4]["name"], "h_xx");
    assert_eq!(cols[4]["rows_indistinguishable_from_zero"], 1);
    assert!(cols[4]["error_bound"].as_f64().unwrap() <= 1e-30);
    let tol = m["evaluation"]["tolerance"].as_f64().unwrap();
    assert!((tol / 1e-12 - 1.0).abs() < 1e-15, "{tol}");
    let (help, _, _) = lingrav(d, &["export", "--help"]);
    assert!(help.contains("[default: 1e-12]"), "{help}");
    let z = m["evaluation"]["zero_tolerance"].as_f64().unwrap();
    assert!((z / 1e-30 - 1.0).abs() < 1e-15, "{z}");
    let mut bad = args.to_vec();
    bad.extend(["--tolerance=-1", "--force"]);
    let (o, e, c) = lingrav(d, &bad);
    assert_eq!(c, 2, "{o}{e}");
    assert!(
        e.contains("--tolerance must be a finite number >= 0"),
        "{e}"
    );
}
