//! The wave-content commands end to end: `project`, `gauge`, `compare` and `ring`, run as a
//! user runs them, on the worked files and on seeded random Lorenz-gauge plane waves.
//!
//! Outside checks: a TT wave is left unchanged by the projection and a pure-gauge part
//! projects away (Maggiore 2007 vol. 1 sec. 1.2, from memory); along z, h_+ = h_xx and
//! h_x = h_xy (MTW 1973 sec. 35.6, from memory); a Lorenz-gauge plane wave and its TT part
//! have the same linearized Riemann tensor (common practice).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn lingrav(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_lingrav"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("run lingrav")
}

fn code(o: &Output) -> i32 {
    o.status.code().expect("an exit code")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Runs and asserts the exit code, showing both streams when it differs.
fn run(args: &[&str], want: i32) -> Output {
    let o = lingrav(args);
    assert_eq!(
        code(&o),
        want,
        "lingrav {}\n--- stdout\n{}\n--- stderr\n{}",
        args.join(" "),
        stdout(&o),
        stderr(&o)
    );
    o
}

fn s(p: &Path) -> &str {
    p.to_str().expect("a UTF-8 path")
}

// ----- project ---------------------------------------------------------------------------

#[test]
fn project_along_z_gives_h_xx_and_h_xy_as_the_polarizations() {
    let o = run(
        &["project", "worked/lorenz_wave.toml", "--direction", "0,0,1"],
        0,
    );
    let out = stdout(&o);
    assert!(out.contains("h^TT_xx = a*cos(w*(t - z))"), "{out}");
    assert!(out.contains("h_plus  = a*cos(w*(t - z))"), "{out}");
    assert!(out.contains("h_cross = 0"), "{out}");
    // The longitudinal part in h_tt, h_tz, h_zz is not TT: a third of the norm.
    assert!(
        out.contains("not TT     0.3333 of the whole perturbation"),
        "{out}"
    );
    assert!(out.contains("numerical evidence"), "{out}");
}

#[test]
fn project_json_has_the_documented_keys() {
    let o = run(
        &[
            "project",
            "worked/oblique_wave.toml",
            "--direction",
            "3/5,0,4/5",
            "--format",
            "json",
        ],
        0,
    );
    let j: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("json");
    assert_eq!(j["h_plus"], "a_plus*cos(w*(5*t - 3*x - 4*z)/5)");
    assert_eq!(j["h_cross"], "a_cross*sin(w*(5*t - 3*x - 4*z)/5)");
    let tt = j["tt"].as_object().expect("tt object");
    let keys: Vec<&str> = tt.keys().map(String::as_str).collect();
    assert_eq!(keys, ["xx", "xy", "xz", "yy", "yz", "zz"]);
    assert_eq!(tt["yy"], "-a_plus*cos(w*(5*t - 3*x - 4*z)/5)");
    // Already TT: exactly nothing is removed.
    assert_eq!(j["not_tt"]["all"]["value"], 0);
    assert_eq!(j["not_tt"]["all"]["exact"], true);
    assert_eq!(j["basis"]["u"], serde_json::json!(["4/5", "0", "-3/5"]));
}

#[test]
fn project_with_angles_and_a_user_basis() {
    // theta = 0 is the z axis: the angle basis is (x, y).
    let o = run(
        &[
            "project",
            "worked/lorenz_wave.toml",
            "--direction",
            "theta=0,phi=0",
        ],
        0,
    );
    assert!(stdout(&o).contains("h_plus  = a*cos(w*(t - z))"));
    // The basis rotated by 45 degrees turns plus into cross.
    let o = run(
        &[
            "project",
            "worked/lorenz_wave.toml",
            "--direction",
            "0,0,1",
            "--basis",
            "1/sqrt(2),1/sqrt(2),0",
        ],
        0,
    );
    let out = stdout(&o);
    assert!(out.contains("h_plus  = 0"), "{out}");
    assert!(out.contains("h_cross = -a*cos(w*(t - z))"), "{out}");
    // The worked oblique wave's own basis recovers its amplitudes: printed in the file's
    // terms (its defines hp and hc), or expanded.
    let args = [
        "project",
        "worked/lorenz_oblique.toml",
        "--direction",
        "2/3,2/3,1/3",
        "--basis",
        "1/3,-2/3,2/3",
    ];
    let out = stdout(&run(&args, 0));
    assert!(
        out.contains("h_plus  = hp\n") && out.contains("h_cross = hc\n"),
        "{out}"
    );
    let out = stdout(&run(&[&args[..], &["--expanded"]].concat(), 0));
    assert!(
        out.contains("h_plus  = a_plus*cos(w*(3*t - 2*x - 2*y - z)/3)"),
        "{out}"
    );
    assert!(
        out.contains("h_cross = a_cross*sin(w*(3*t - 2*x - 2*y - z)/3)"),
        "{out}"
    );
}

#[test]
fn project_output_is_accepted_by_check_and_is_the_same_physics() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("tt.toml");
    let o = run(
        &[
            "project",
            "worked/lorenz_oblique.toml",
            "--direction",
            "2/3,2/3,1/3",
            "--output",
            s(&out),
        ],
        0,
    );
    assert!(
        stdout(&o).contains("with claims: field_equations = true, gauge = ['tt']"),
        "{}",
        stdout(&o)
    );
    let c = run(&["check", s(&out)], 0);
    assert!(stdout(&c).contains("every claim holds"), "{}", stdout(&c));
    run(&["compare", "worked/lorenz_oblique.toml", s(&out)], 0);
    run(&["compare", s(&out), "worked/lorenz_oblique_tt.toml"], 0);
}

#[test]
fn project_output_refuses_to_overwrite_without_force() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("tt.toml");
    std::fs::write(&out, "keep me\n").unwrap();
    let args = [
        "project",
        "worked/lorenz_wave.toml",
        "--direction",
        "0,0,1",
        "--output",
        s(&out),
    ];
    let o = run(&args, 2);
    assert!(stderr(&o).contains("already exists"), "{}", stderr(&o));
    assert!(
        stdout(&o).is_empty(),
        "nothing is computed before the plan is complete"
    );
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "keep me\n");
    let mut forced = args.to_vec();
    forced.push("--force");
    run(&forced, 0);
    assert!(
        std::fs::read_to_string(&out)
            .unwrap()
            .contains("[perturbation]")
    );
    // No temporary files are left behind.
    let names: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
    assert_eq!(names.len(), 1);
}

#[test]
fn project_output_to_an_unwritable_place_is_bad_input() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("no/such/dir/tt.toml");
    let o = run(
        &[
            "project",
            "worked/lorenz_wave.toml",
            "--direction",
            "0,0,1",
            "--output",
            s(&missing),
        ],
        2,
    );
    assert!(stderr(&o).contains("does not exist"), "{}", stderr(&o));
    let o = run(
        &[
            "project",
            "worked/lorenz_wave.toml",
            "--direction",
            "0,0,1",
            "--output",
            s(dir.path()),
        ],
        2,
    );
    assert!(stderr(&o).contains("is a directory"), "{}", stderr(&o));
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
}

#[test]
fn bad_directions_are_bad_input_with_the_place_shown() {
    let cases: [(&str, &str); 8] = [
        ("1,1,0", "not a unit vector"),
        ("1,2", "expected 3 comma-separated entries"),
        ("0,0,1,", "empty entry"),
        ("north", "unknown direction"),
        ("theta=pi/2", "`phi` is missing"),
        ("theta=pi/2,ph=0", "unknown angle"),
        ("0,0,1*", "--direction"),
        ("0,0,omega", "undeclared name `omega`"),
    ];
    for (d, want) in cases {
        let o = run(&["project", "worked/lorenz_wave.toml", "--direction", d], 2);
        assert!(stderr(&o).contains(want), "{d}: {}", stderr(&o));
        assert!(stdout(&o).is_empty(), "{d}");
    }
    // The same vector is fine once normalized: (1, 1, 0)/sqrt(2).
    let o = run(
        &[
            "project",
            "worked/lorenz_wave.toml",
            "--direction",
            "1,1,0",
            "--normalize",
        ],
        0,
    );
    assert!(
        stdout(&o).contains("n = (sqrt(2)/2, sqrt(2)/2, 0)"),
        "{}",
        stdout(&o)
    );
    // A basis vector that is not transverse.
    let o = run(
        &[
            "project",
            "worked/lorenz_wave.toml",
            "--direction",
            "0,0,1",
            "--basis",
            "1,0,1",
        ],
        2,
    );
    assert!(stderr(&o).contains("not perpendicular"), "{}", stderr(&o));
    let o = run(
        &[
            "project",
            "worked/no_such_file.toml",
            "--direction",
            "0,0,1",
        ],
        2,
    );
    assert!(stderr(&o).contains("cannot read"), "{}", stderr(&o));
}

#[test]
fn project_radial_on_a_localized_source_runs() {
    let o = run(
        &[
            "project",
            "worked/static_mass.toml",
            "--direction",
            "radial",
        ],
        0,
    );
    // The isotropic spatial part delta_ij 2m/r has no TT part at all.
    assert!(
        stdout(&o).contains("not TT     1, exactly: no part of h is TT along n"),
        "{}",
        stdout(&o)
    );
}

// ----- gauge -----------------------------------------------------------------------------

#[test]
fn gauge_to_tt_builds_and_verifies_the_vector() {
    let o = run(&["gauge", "worked/lorenz_wave.toml", "--to-tt"], 0);
    let out = stdout(&o);
    assert!(out.contains("xi_t = b*sin(w*(t - z))/(2*w)"), "{out}");
    assert!(out.contains("xi_z = -b*sin(w*(t - z))/(2*w)"), "{out}");
    assert!(out.contains("k null (k_mu k^mu = 0): proved"), "{out}");
    assert!(out.contains("result: h' is in TT gauge"), "{out}");

    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("tt.toml");
    run(
        &[
            "gauge",
            "worked/lorenz_oblique.toml",
            "--to-tt",
            "--output",
            s(&out),
        ],
        0,
    );
    let c = run(&["check", s(&out)], 0);
    assert!(stdout(&c).contains("TT gauge"), "{}", stdout(&c));
    run(&["compare", s(&out), "worked/lorenz_oblique_tt.toml"], 0);
}

#[test]
fn gauge_to_tt_with_a_given_wave_vector() {
    let o = run(
        &[
            "gauge",
            "worked/lorenz_wave.toml",
            "--to-tt",
            "--wave-vector",
            "w,0,0,w",
        ],
        0,
    );
    assert!(
        stdout(&o).contains("[from --wave-vector]"),
        "{}",
        stdout(&o)
    );
    // A wave vector the wave does not follow.
    let o = run(
        &[
            "gauge",
            "worked/lorenz_wave.toml",
            "--to-tt",
            "--wave-vector",
            "w,w,0,0",
        ],
        2,
    );
    assert!(stderr(&o).contains("through the phase"), "{}", stderr(&o));
}

#[test]
fn gauge_to_tt_refuses_what_is_not_a_lorenz_plane_wave() {
    let o = run(&["gauge", "worked/static_mass.toml", "--to-tt"], 2);
    assert!(stderr(&o).contains("does not apply"), "{}", stderr(&o));
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("not_lorenz.toml");
    std::fs::write(
        &f,
        "[parameters]\nw = 2.0\n[perturbation]\ntt = 'cos(w*(t - z))'\n",
    )
    .unwrap();
    let o = run(&["gauge", s(&f), "--to-tt"], 2);
    assert!(
        stderr(&o).contains("needs a Lorenz-gauge wave"),
        "{}",
        stderr(&o)
    );
    // An arbitrary function without derivative has no closed-form antiderivative.
    std::fs::write(
        &f,
        "[functions]\nF = 'exp(-u^2)'\n[perturbation]\ntt = 'F(t - z)'\ntz = '-F(t - z)'\nzz = 'F(t - z)'\n",
    )
    .unwrap();
    let o = run(&["gauge", s(&f), "--to-tt"], 2);
    assert!(
        stderr(&o).contains("itself has no antiderivative"),
        "{}",
        stderr(&o)
    );
    // With a derivative it works.
    std::fs::write(
        &f,
        "[functions]\nF = 'exp(-u^2)'\n[perturbation]\ntt = \"F''(t - z)\"\ntz = \"-F''(t - z)\"\nzz = \"F''(t - z)\"\n",
    )
    .unwrap();
    let o = run(&["gauge", s(&f), "--to-tt"], 0);
    assert!(stdout(&o).contains("xi_t = F'(t - z)/2"), "{}", stdout(&o));
}

#[test]
fn gauge_with_a_vector_says_whether_lorenz_is_preserved() {
    let o = run(
        &[
            "gauge",
            "worked/lorenz_wave.toml",
            "--vector",
            "b*sin(w*(t - z))/(2*w), 0, 0, -b*sin(w*(t - z))/(2*w)",
        ],
        0,
    );
    let out = stdout(&o);
    assert!(
        out.contains("Lorenz gauge preserved (box xi_nu = 0): holds"),
        "{out}"
    );
    assert!(
        out.contains("gauges h' is in (exact): lorenz, tt, synchronous"),
        "{out}"
    );
    let o = run(
        &[
            "gauge",
            "worked/lorenz_wave.toml",
            "--vector",
            "x^2, 0, 0, 0",
        ],
        0,
    );
    let out = stdout(&o);
    assert!(
        out.contains("Lorenz gauge preserved (box xi_nu = 0): fails"),
        "{out}"
    );
    assert!(out.contains("box xi_t = 2"), "{out}");
    // Written files carry only claims proved for the result, and check accepts them.
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("g.toml");
    run(
        &[
            "gauge",
            "worked/oblique_wave.toml",
            "--vector",
            "0, t*y, 0, x^2",
            "--output",
            s(&f),
        ],
        0,
    );
    run(&["check", s(&f)], 0);
    run(&["compare", s(&f), "worked/oblique_wave.toml"], 0);
}

#[test]
fn gauge_vector_errors_point_into_the_argument() {
    let o = run(
        &["gauge", "worked/lorenz_wave.toml", "--vector", "1, 2, 3"],
        2,
    );
    assert!(stderr(&o).contains("expected 4"), "{}", stderr(&o));
    let o = run(
        &[
            "gauge",
            "worked/lorenz_wave.toml",
            "--vector",
            "0, 0, 0, q*t",
        ],
        2,
    );
    assert!(stderr(&o).contains("undeclared name `q`"), "{}", stderr(&o));
    let o = lingrav(&["gauge", "worked/lorenz_wave.toml"]);
    assert_eq!(code(&o), 2, "--vector or --to-tt is required");
}

#[test]
fn an_algebra_limit_is_undecided_not_a_pass() {
    for args in [
        &[
            "gauge",
            "worked/lorenz_oblique.toml",
            "--to-tt",
            "--time-limit",
            "0",
        ][..],
        &[
            "project",
            "worked/lorenz_oblique.toml",
            "--direction",
            "2/3,2/3,1/3",
            "--time-limit",
            "0",
        ],
        &[
            "compare",
            "worked/lorenz_oblique.toml",
            "worked/lorenz_oblique_tt.toml",
            "--time-limit",
            "0",
        ],
    ] {
        let o = run(args, 3);
        assert!(stdout(&o).contains("undecided"), "{}", stdout(&o));
    }
}

// ----- compare ---------------------------------------------------------------------------

#[test]
fn compare_lists_the_differing_components() {
    let o = run(
        &[
            "compare",
            "worked/lorenz_wave.toml",
            "worked/oblique_wave.toml",
        ],
        1,
    );
    let out = stdout(&o);
    assert!(out.contains("different physics"), "{out}");
    assert!(out.contains("R_txtx[A] - R_txtx[B]"), "{out}");
    assert!(out.contains("nonzero at"), "{out}");
    let o = run(
        &[
            "compare",
            "--format",
            "json",
            "worked/pure_gauge.toml",
            "worked/lorenz_wave.toml",
        ],
        1,
    );
    let j: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert_eq!(j["result"], "different");
    // A pure-gauge perturbation is the same physics as flat space: compare with itself.
    run(
        &[
            "compare",
            "worked/pure_gauge.toml",
            "worked/pure_gauge.toml",
        ],
        0,
    );
    run(
        &["compare", "worked/pure_gauge.toml", "worked/nope.toml"],
        2,
    );
}

#[test]
fn compare_keeps_the_two_files_defines_apart() {
    // Both files define `c`, with different meanings; B's parameter `b` is A's too.
    let dir = tempfile::tempdir().unwrap();
    let a = dir.path().join("a.toml");
    let b = dir.path().join("b.toml");
    std::fs::write(
        &a,
        "[parameters]\nb = 1.0\nw = 2.0\n[define]\nc = 'cos(w*(t - z))'\n\
         [perturbation]\nxx = 'b*c'\nyy = '-b*c'\n",
    )
    .unwrap();
    std::fs::write(
        &b,
        "[parameters]\nb = 3.0\nw = 2.0\n[define]\nc = 'b*cos(w*(z - t))'\n\
         [perturbation]\nxx = 'c'\nyy = '-c'\ntt = '2*d_t(t^2)'\n",
    )
    .unwrap();
    let o = run(&["compare", s(&a), s(&b)], 0);
    assert!(stdout(&o).contains("note: parameter `b`"), "{}", stdout(&o));
}

// ----- ring ------------------------------------------------------------------------------

#[test]
fn ring_table_and_picture() {
    let dir = tempfile::tempdir().unwrap();
    let pic = dir.path().join("ring.svg");
    let args = [
        "ring",
        "worked/lorenz_wave.toml",
        "--direction",
        "0,0,1",
        "--radius",
        "2",
        "--masses",
        "4",
        "--times",
        "0,pi/(2*w)",
        "--svg",
        s(&pic),
    ];
    let o = run(&args, 0);
    let out = stdout(&o);
    // At t = 0, h_+ = a = 2e-3: mass 0 on the u axis moves out by L h_+/2 = 2e-3, mass 1 on
    // the v axis moves in by as much; a quarter period later nothing moves.
    assert!(
        out.contains("    0.000000     0      0.00     2.00000e-3      0.00000e0"),
        "{out}"
    );
    assert!(
        out.contains("    0.000000     1     90.00      0.00000e0    -2.00000e-3"),
        "{out}"
    );
    assert!(
        out.contains("    0.523599     0      0.00      0.00000e0      0.00000e0"),
        "{out}"
    );
    let first = std::fs::read_to_string(&pic).unwrap();
    assert!(first.starts_with("<svg") && first.contains("</svg>"));
    assert_eq!(
        first.matches("stroke-dasharray").count(),
        2,
        "one dashed ring per time"
    );
    // The picture is deterministic, and not replaced without --force.
    let o = run(&args, 2);
    assert!(stderr(&o).contains("already exists"), "{}", stderr(&o));
    let mut forced = args.to_vec();
    forced.push("--force");
    run(&forced, 0);
    assert_eq!(std::fs::read_to_string(&pic).unwrap(), first);
}

#[test]
fn ring_shows_cross_content_rotated_by_45_degrees() {
    // A pure cross wave along z: mass 0 (on u) moves along v.
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("cross.toml");
    std::fs::write(&f, "[perturbation]\nxy = 'cos(t - z)/1000'\n").unwrap();
    let o = run(
        &[
            "ring",
            s(&f),
            "--direction",
            "0,0,1",
            "--times",
            "0",
            "--masses",
            "8",
        ],
        0,
    );
    let out = stdout(&o);
    assert!(
        out.contains("    0.000000     0      0.00      0.00000e0     5.00000e-4"),
        "{out}"
    );
    assert!(
        out.contains("    0.000000     2     90.00     5.00000e-4      0.00000e0"),
        "{out}"
    );
}

#[test]
fn ring_input_errors() {
    let base = ["ring", "worked/lorenz_wave.toml", "--direction", "0,0,1"];
    fn with<'a>(base: &[&'a str], extra: &[&'a str]) -> Vec<&'a str> {
        let mut v = base.to_vec();
        v.extend_from_slice(extra);
        v
    }
    let o = run(&with(&base, &["--times", "0", "--radius", "-1"]), 2);
    assert!(stderr(&o).contains("must be positive"), "{}", stderr(&o));
    let o = run(&with(&base, &["--times", "0,x"]), 2);
    assert!(stderr(&o).contains("coordinate `x`"), "{}", stderr(&o));
    let o = run(&with(&base, &["--times", "0", "--at", "1,2"]), 2);
    assert!(stderr(&o).contains("expected 3"), "{}", stderr(&o));
    let o = run(
        &[
            "ring",
            "worked/static_mass.toml",
            "--direction",
            "radial",
            "--times",
            "0",
        ],
        2,
    );
    assert!(stderr(&o).contains("z axis"), "{}", stderr(&o));
    run(
        &[
            "ring",
            "worked/static_mass.toml",
            "--direction",
            "radial",
            "--times",
            "0",
            "--at",
            "3,4,0",
        ],
        0,
    );
}

// ----- random Lorenz-gauge plane waves ---------------------------------------------------

/// Exact fractions, enough for the projector of a rational direction.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Frac(i128, i128);

fn gcd(a: i128, b: i128) -> i128 {
    if b == 0 { a.abs() } else { gcd(b, a % b) }
}

impl Frac {
    fn new(n: i128, d: i128) -> Frac {
        let g = gcd(n, d).max(1) * d.signum();
        Frac(n / g, d / g)
    }
    fn add(self, o: Frac) -> Frac {
        Frac::new(self.0 * o.1 + o.0 * self.1, self.1 * o.1)
    }
    fn mul(self, o: Frac) -> Frac {
        Frac::new(self.0 * o.0, self.1 * o.1)
    }
    fn text(self) -> String {
        format!("({}/{})", self.0, self.1)
    }
}

struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    fn int(&mut self, lo: i64, hi: i64) -> i64 {
        lo + (self.next() % (hi - lo + 1) as u64) as i64
    }
}

/// A random Lorenz-gauge plane wave: the TT projection (written out with exact numbers) of a
/// random symmetric amplitude along a random rational direction, plus the pure-gauge part of
/// a random plane-wave gauge vector; returns the file and the direction.
fn random_wave(rng: &mut Rng) -> (String, String) {
    const QUADS: [[i64; 4]; 6] = [
        [1, 2, 2, 3],
        [2, 3, 6, 7],
        [1, 4, 8, 9],
        [4, 4, 7, 9],
        [2, 6, 9, 11],
        [6, 6, 7, 11],
    ];
    let q = QUADS[rng.int(0, 5) as usize];
    let mut idx = [0usize, 1, 2];
    for i in (1..3).rev() {
        idx.swap(i, rng.int(0, i as i64) as usize);
    }
    let n: Vec<Frac> = idx
        .iter()
        .map(|&i| {
            let sign = if rng.next() & 1 == 1 { -1 } else { 1 };
            Frac::new(i128::from(sign * q[i]), i128::from(q[3]))
        })
        .collect();
    let mut a = [[Frac(0, 1); 3]; 3];
    for i in 0..3 {
        for j in i..3 {
            a[i][j] = Frac::new(i128::from(rng.int(-9, 9)), 1);
            a[j][i] = a[i][j];
        }
    }
    let p = |i: usize, j: usize| {
        let d = if i == j { Frac(1, 1) } else { Frac(0, 1) };
        d.add(n[i].mul(n[j]).mul(Frac(-1, 1)))
    };
    let mut tt = [[Frac(0, 1); 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            let mut acc = Frac(0, 1);
            for k in 0..3 {
                for l in 0..3 {
                    let lam = p(i, k)
                        .mul(p(j, l))
                        .add(p(i, j).mul(p(k, l)).mul(Frac(-1, 2)));
                    acc = acc.add(lam.mul(a[k][l]));
                }
            }
            tt[i][j] = acc;
        }
    }
    let phase = format!(
        "w*(t - {}*x - {}*y - {}*z)",
        n[0].text(),
        n[1].text(),
        n[2].text()
    );
    let zeta: Vec<i64> = (0..4).map(|_| rng.int(-5, 5)).collect();
    let mut file = format!(
        "name = 'random Lorenz-gauge plane wave'\n[parameters]\nA = 1.0e-3\nw = 1.5\n\
         [define]\nphase = '{phase}'\nxi_t = '{}*A*sin(phase)'\nxi_x = '{}*A*sin(phase)'\n\
         xi_y = '{}*A*sin(phase)'\nxi_z = '{}*A*sin(phase)'\n[perturbation]\n",
        zeta[0], zeta[1], zeta[2], zeta[3]
    );
    let xi = ["xi_t", "xi_x", "xi_y", "xi_z"];
    let coords = ["t", "x", "y", "z"];
    for mu in 0..4 {
        for nu in mu..4 {
            let gauge = format!(
                "d_{}({}) + d_{}({})",
                coords[mu], xi[nu], coords[nu], xi[mu]
            );
            let body = if mu == 0 {
                gauge
            } else {
                format!("{}*A*cos(phase) + {gauge}", tt[mu - 1][nu - 1].text())
            };
            file.push_str(&format!("{}{} = '{body}'\n", coords[mu], coords[nu]));
        }
    }
    file.push_str("[claims]\nfield_equations = true\ngauge = ['lorenz']\n");
    let dir = format!("{},{},{}", n[0].text(), n[1].text(), n[2].text());
    (file, dir)
}

#[test]
fn random_lorenz_plane_waves_project_to_the_same_physics_in_tt_gauge() {
    let seed = 0x7e57_0b11_9e00_u64;
    println!("random plane waves: seed {seed:#x}");
    let mut rng = Rng(seed);
    let dir = tempfile::tempdir().unwrap();
    for case in 0..5 {
        let (file, direction) = random_wave(&mut rng);
        let input: PathBuf = dir.path().join(format!("wave{case}.toml"));
        std::fs::write(&input, &file).unwrap();
        // The generated wave is what it claims to be.
        run(&["check", s(&input)], 0);
        // Its TT part along its own direction is a TT vacuum wave with the same Riemann tensor.
        let tt = dir.path().join(format!("wave{case}_tt.toml"));
        run(
            &[
                "project",
                s(&input),
                "--direction",
                &direction,
                "--output",
                s(&tt),
            ],
            0,
        );
        run(&["check", s(&tt)], 0);
        run(&["compare", s(&input), s(&tt)], 0);
        // The constructed gauge vector reaches the same TT wave.
        let g = dir.path().join(format!("wave{case}_gauge.toml"));
        run(&["gauge", s(&input), "--to-tt", "--output", s(&g)], 0);
        run(&["check", s(&g)], 0);
        run(&["compare", s(&g), s(&tt)], 0);
    }
}
