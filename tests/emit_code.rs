//! `lingrav emit` end to end: the generated C is compiled with the system C compiler and run,
//! the Python runs under NumPy (vectorized and broadcasting), the Rust is compiled with
//! rustc, the Fortran with gfortran when it is installed; every value must match
//! `lingrav export` at the same points to 1e-12 relative.
//!
//! Skips: NumPy outside CI prints "skipped: ..." (with `CI` set a missing NumPy fails);
//! gfortran is optional everywhere (not a CI requirement) and prints "skipped: ..." when
//! missing. `LINGRAV_PYTHON` names the Python interpreter.

use serde_json::Value;
use std::fmt::Write as _;
use std::path::Path;
use std::process::Command;

fn worked(name: &str) -> String {
    crate::support::worked(name)
}

fn lingrav(dir: &Path, args: &[&str]) -> String {
    let out = Command::new(env!("CARGO_BIN_EXE_lingrav"))
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .output()
        .expect("run lingrav");
    assert!(
        out.status.success(),
        "lingrav {args:?}\n{}\n{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn run(dir: &Path, program: &str, args: &[&str]) -> String {
    let out = Command::new(program)
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap_or_else(|e| panic!("cannot run {program}: {e}"));
    assert!(
        out.status.success(),
        "{program} {args:?} failed\n{}\n{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn have(program: &str) -> bool {
    Command::new(program)
        .arg("--version")
        .output()
        .is_ok_and(|o| o.status.success())
}

fn in_ci() -> bool {
    crate::support::in_ci()
}

/// One test problem: a file, its quantities, options, and generic points.
struct Case {
    file: String,
    /// The points file's header: the problem's coordinates.
    header: &'static str,
    /// An absolute round-off floor: about a background the generated code runs the whole
    /// curvature chain, whose intermediate terms (gbar ~ r^2, its derivatives, the inverse by
    /// cofactors) are far larger than a vanishing column, so such a column comes out as their
    /// round-off (0 for flat problems).
    floor: f64,
    quantities: &'static str,
    extra: Vec<&'static str>,
    points: Vec<[f64; 4]>,
}

/// A field with atan2, abs and atan.
const ANGLES: &str = "name = 'angles and absolute values'\n[parameters]\nq = 0.3\n\
     [perturbation]\ntt = 'q*atan2(y, x)*abs(z - 1)'\nxy = 'abs(sin(t) + 2*q)*atan(x*y)'\n\
     zz = 'atan2(y - 1, x + t)'\n";

fn cases(dir: &Path) -> Vec<Case> {
    // A field with a user function F (sample sin) at retarded time, roots and denominators.
    std::fs::write(
        dir.join("retarded.toml"),
        "name = 'retarded field with an arbitrary function'\n[parameters]\nm = 0.7\nlambda = 1.5\n\
         [functions]\nF = 'sin(u)'\n[define]\nr = 'sqrt(x^2 + y^2 + z^2)'\n\
         [perturbation]\ntt = 'm*F(lambda*(t - r))/r'\ntz = \"m*F'(t - r)*z/r^2\"\nxx = 'm*F(t - r)/r'\n\
         xy = \"lambda*F''(t - r)*x*y/r^3\"\n",
    )
    .unwrap();
    // atan2 and abs (issue 14): the language's own atan2 and absolute value in the code, the
    // half-angle form in the exact route, jets by half-plane in the export; the points stay off
    // atan2's cut (x <= 0, y = 0) and away from the zeros of abs's arguments.
    std::fs::write(dir.join("angles.toml"), ANGLES).unwrap();
    let pts = vec![
        [0.3, 0.7, -0.4, 1.1],
        [-1.2, 0.25, 0.5, -0.75],
        [2.5, -1.5, 1.25, 0.6],
        [0.05, 3.0, -2.0, 0.35],
    ];
    vec![
        Case {
            file: worked("linear_wave_testbed.toml"),
            header: "t,x,y,z",
            floor: 0.0,
            quantities: "h,adm,constraints",
            extra: vec![],
            points: pts.clone(),
        },
        Case {
            file: worked("oblique_wave.toml"),
            header: "t,x,y,z",
            floor: 0.0,
            quantities: "h,hbar,dh,riemann,ricci,einstein,adm,constraints,psi4,hplus,hcross",
            extra: vec!["--direction", "3/5,0,4/5"],
            points: pts.clone(),
        },
        Case {
            file: worked("static_mass.toml"),
            header: "t,x,y,z",
            floor: 0.0,
            quantities: "h,dh,riemann,adm,psi4",
            extra: vec!["--direction", "radial"],
            points: pts.clone(),
        },
        Case {
            file: dir.join("retarded.toml").display().to_string(),
            header: "t,x,y,z",
            floor: 0.0,
            quantities: "h,dh,adm",
            extra: vec![],
            points: pts.clone(),
        },
        Case {
            file: dir.join("angles.toml").display().to_string(),
            header: "t,x,y,z",
            floor: 0.0,
            quantities: "h,dh,riemann",
            extra: vec![],
            points: pts,
        },
        // About backgrounds, in their own coordinates: the emitted curvature chain of
        // gbar + eps h against the exported (certified) values.
        Case {
            file: worked("kottler_mass_perturbation.toml"),
            header: "t,r,th,ph",
            floor: 1e-14,
            quantities: "h,hbar,ricci,einstein,riemann",
            extra: vec![],
            points: vec![
                [3.5, 3.0, 0.5, 1.0 / 3.0],
                [-0.4, 4.75, 2.2, 5.0],
                [10.0, 6.5, 1.3, -1.1],
            ],
        },
        Case {
            file: worked("frw_radiation_tensor_mode.toml"),
            header: "eta,x,y,z",
            floor: 1e-14,
            quantities: "h,dh,ricci,einstein",
            extra: vec![],
            points: vec![
                [0.5, 0.2, -0.3, 0.7],
                [2.25, 1.0, 0.1, -1.5],
                [1.1, -0.6, 2.0, 0.05],
            ],
        },
        Case {
            file: worked("schwarzschild_slow_rotation.toml"),
            header: "t,r,th,ph",
            floor: 1e-14,
            quantities: "einstein,riemann",
            extra: vec![],
            points: vec![
                [0.0, 3.5, 0.9, 0.2],
                [1.0, 12.0, 2.5, 4.0],
                [-2.0, 30.0, 0.15, 1.0],
            ],
        },
    ]
}

/// lingrav's values: per point, every column after t, x, y, z; and each column's scale.
fn reference(dir: &Path, c: &Case, tag: &str) -> (Vec<Vec<f64>>, Vec<f64>) {
    let mut csv = format!("{}\n", c.header);
    for p in &c.points {
        let _ = writeln!(csv, "{:?},{:?},{:?},{:?}", p[0], p[1], p[2], p[3]);
    }
    let pts = format!("{tag}.points.csv");
    std::fs::write(dir.join(&pts), csv).unwrap();
    let out = format!("{tag}.ref.json");
    let mut args = vec![
        "export",
        &c.file,
        "-q",
        c.quantities,
        "--at",
        &pts,
        "--out",
        &out,
    ];
    args.extend(c.extra.iter().copied());
    lingrav(dir, &args);
    let v: Value = serde_json::from_str(&std::fs::read_to_string(dir.join(&out)).unwrap()).unwrap();
    let rows: Vec<Vec<f64>> = v["rows"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| {
            r.as_array().unwrap()[4..]
                .iter()
                .map(|x| x.as_f64().unwrap())
                .collect()
        })
        .collect();
    let n = rows[0].len();
    let scale = (0..n)
        .map(|k| rows.iter().map(|r| r[k].abs()).fold(0.0, f64::max))
        .collect();
    (rows, scale)
}

fn emit(dir: &Path, c: &Case, lang: &str, samples: bool, out: &str) -> String {
    let mut args = vec![
        "emit",
        &c.file,
        "-q",
        c.quantities,
        "--lang",
        lang,
        "--out",
        out,
        "--force",
    ];
    args.extend(c.extra.iter().copied());
    if samples {
        args.push("--samples");
    }
    lingrav(dir, &args);
    std::fs::read_to_string(dir.join(out)).unwrap()
}

/// The parameter values in the order the generated header lists them.
fn header_params(code: &str) -> Vec<f64> {
    code.lines()
        .filter(|l| l.contains("params[") || l.contains("params("))
        .filter_map(|l| l.split("file value ").nth(1))
        .map(|v| v.trim().parse::<f64>().unwrap())
        .collect()
}

fn quantity_names(c: &Case) -> Vec<&'static str> {
    c.quantities.split(',').collect()
}

fn compare(what: &str, got: &[f64], want: &(Vec<Vec<f64>>, Vec<f64>), floor: f64) {
    let (rows, scale) = want;
    let n = scale.len();
    assert_eq!(
        got.len(),
        rows.len() * n,
        "{what}: {} values, expected {}",
        got.len(),
        rows.len() * n
    );
    let mut worst = 0.0f64;
    // A column that is exactly zero (the Einstein tensor of a vacuum solution) comes out of
    // f64 code as the round-off of its terms, which are of the size of the largest values.
    let largest = scale.iter().copied().fold(0.0, f64::max);
    for (i, r) in rows.iter().enumerate() {
        for k in 0..n {
            let (a, b) = (got[i * n + k], r[k]);
            // Straight-line f64 code rounds each term: its absolute error scales with the
            // column's magnitude (exact zeros come out as round-off), the export's does not.
            let tol = 1e-12 * a.abs().max(b.abs()) + 1e-13 * scale[k].max(1e-3 * largest) + floor;
            assert!(
                (a - b).abs() <= tol,
                "{what}: point {i}, column {k}: {a:e} vs lingrav {b:e}"
            );
            if b != 0.0 {
                worst = worst.max(((a - b) / b).abs());
            }
        }
    }
    println!(
        "{what}: {} values agree, worst relative difference {worst:.1e}",
        got.len()
    );
}

fn numbers(text: &str) -> Vec<f64> {
    text.split_whitespace()
        .map(|w| w.replace(['D', 'd'], "e").parse::<f64>().unwrap())
        .collect()
}

#[test]
fn emitted_c_compiles_and_matches() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    for (i, c) in cases(d).iter().enumerate() {
        let want = reference(d, c, &format!("c{i}"));
        for samples in [false, true] {
            let code = emit(d, c, "c", samples, &format!("gen{i}.c"));
            let params = header_params(&code);
            let mut main = format!("#include <stdio.h>\n#include \"gen{i}.c\"\n\n");
            // Derivative k of sin: the supplied functions of the user-function case.
            for line in code.lines() {
                if let Some(rest) = line.strip_prefix("double F_d") {
                    let k: u32 = rest.split('(').next().unwrap().parse().unwrap();
                    let body = ["sin(u)", "cos(u)", "-sin(u)", "-cos(u)"][(k % 4) as usize];
                    let _ = writeln!(main, "double F_d{k}(double u) {{ return {body}; }}");
                }
            }
            let ps: Vec<String> = params.iter().map(|p| format!("{p:?}")).collect();
            let _ = writeln!(
                main,
                "int main(void)\n{{\n    const double params[] = {{{}0.0}};",
                ps.iter().map(|p| format!("{p}, ")).collect::<String>()
            );
            main.push_str("    const double pts[][4] = {");
            for p in &c.points {
                let _ = write!(main, "{{{:?}, {:?}, {:?}, {:?}}}, ", p[0], p[1], p[2], p[3]);
            }
            main.push_str("};\n    double out[128];\n");
            let _ = writeln!(main, "    for (int i = 0; i < {}; i++) {{", c.points.len());
            for q in quantity_names(c) {
                let _ = writeln!(
                    main,
                    "        lingrav_{q}(pts[i][0], pts[i][1], pts[i][2], pts[i][3], params, out);\n        for (int k = 0; k < LINGRAV_{}_COLUMNS; k++) printf(\"%.17g\\n\", out[k]);",
                    q.to_ascii_uppercase()
                );
            }
            main.push_str("    }\n    return 0;\n}\n");
            std::fs::write(d.join(format!("main{i}.c")), main).unwrap();
            let exe = format!("./prog{i}");
            run(
                d,
                "cc",
                &[
                    "-std=c99",
                    "-O2",
                    "-Wall",
                    "-Werror",
                    "-o",
                    &exe,
                    &format!("main{i}.c"),
                    "-lm",
                ],
            );
            let got = numbers(&run(d, &exe, &[]));
            compare(
                &format!("C ({}{})", c.file, if samples { ", --samples" } else { "" }),
                &got,
                &want,
                c.floor,
            );
        }
    }
}

#[test]
fn emitted_python_runs_under_numpy_and_matches() {
    let python = std::env::var("LINGRAV_PYTHON").unwrap_or_else(|_| "python3".into());
    let probe = Command::new(&python).args(["-c", "import numpy"]).output();
    if !probe.is_ok_and(|o| o.status.success()) {
        assert!(
            !in_ci(),
            "CI is set, so the emitted Python must run, but NumPy is missing (pip install numpy)"
        );
        println!("skipped: emitted Python: {python} with NumPy is not available");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    for (i, c) in cases(d).iter().enumerate() {
        let want = reference(d, c, &format!("p{i}"));
        for samples in [false, true] {
            let module = format!("gen{i}_{}", u8::from(samples));
            emit(d, c, "python", samples, &format!("{module}.py"));
            let pts: Vec<String> = c
                .points
                .iter()
                .map(|p| format!("[{:?}, {:?}, {:?}, {:?}]", p[0], p[1], p[2], p[3]))
                .collect();
            let qs: Vec<String> = quantity_names(c).iter().map(|q| format!("{q:?}")).collect();
            let script = format!(
                r#"
import inspect, numpy as np
import {module} as gen
pts = np.array([{pts}])
fns = {{}}
derivs = [np.sin, np.cos, lambda u: -np.sin(u), lambda u: -np.cos(u)]
out = []
for q in [{qs}]:
    f = getattr(gen, "lingrav_" + q)
    kw = {{}}
    for name, p in inspect.signature(f).parameters.items():
        if p.kind == p.KEYWORD_ONLY:
            kw[name] = derivs[int(name.split("_d")[1]) % 4]
    n = len(gen.COLUMNS[q])
    a = f(pts[:, 0], pts[:, 1], pts[:, 2], pts[:, 3], **kw)
    assert a.shape == (n, len(pts)), (q, a.shape)
    # A single point gives shape (n,), and arguments broadcast.
    s = f(*pts[0], **kw)
    assert s.shape == (n,), s.shape
    assert np.allclose(s, a[:, 0], rtol=1e-15, atol=0)
    g = f(pts[0, 0], pts[:3, 1].reshape(3, 1), pts[0, 2], pts[:2, 3].reshape(1, 2), **kw)
    assert g.shape == (n, 3, 2), g.shape
    out.append(a)
vals = np.concatenate(out, axis=0).T
for row in vals:
    for v in row:
        print(repr(float(v)))
"#,
                pts = pts.join(", "),
                qs = qs.join(", ")
            );
            std::fs::write(d.join(format!("check{i}.py")), script).unwrap();
            let got = numbers(&run(d, &python, &[&format!("check{i}.py")]));
            compare(
                &format!(
                    "Python ({}{})",
                    c.file,
                    if samples { ", --samples" } else { "" }
                ),
                &got,
                &want,
                c.floor,
            );
        }
    }
}

#[test]
fn emitted_rust_compiles_and_matches() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let rustc = std::env::var("RUSTC").unwrap_or_else(|_| "rustc".into());
    // One case keeps the compile time small; the others go through the same printer.
    let all = cases(d);
    for (i, c) in [&all[1], &all[3]].into_iter().enumerate() {
        let want = reference(d, c, &format!("r{i}"));
        let code = emit(d, c, "rust", true, &format!("gen{i}.rs"));
        let params = header_params(&code);
        let mut main = code.clone();
        let ps: Vec<String> = params.iter().map(|p| format!("{p:?}")).collect();
        let _ = writeln!(
            main,
            "\nfn main() {{\n    let params = [{}];",
            ps.join(", ")
        );
        main.push_str("    let pts: &[[f64; 4]] = &[");
        for p in &c.points {
            let _ = write!(main, "[{:?}, {:?}, {:?}, {:?}], ", p[0], p[1], p[2], p[3]);
        }
        main.push_str("];\n    for p in pts {\n");
        for q in quantity_names(c) {
            let _ = writeln!(
                main,
                "        let mut o = [0.0f64; LINGRAV_{}_COLUMNS.len()];\n        lingrav_{q}(p[0], p[1], p[2], p[3], &params, &mut o);\n        for v in o {{ println!(\"{{v:?}}\"); }}",
                q.to_ascii_uppercase()
            );
        }
        main.push_str("    }\n}\n");
        std::fs::write(d.join(format!("main{i}.rs")), main).unwrap();
        run(
            d,
            &rustc,
            &[
                "--edition",
                "2021",
                "-O",
                "-o",
                &format!("rprog{i}"),
                &format!("main{i}.rs"),
            ],
        );
        let got = numbers(&run(d, &format!("./rprog{i}"), &[]));
        compare(&format!("Rust ({})", c.file), &got, &want, c.floor);
    }
    // The library form compiles on its own too, with user functions as arguments.
    let code = emit(d, &all[3], "rust", false, "lib.rs");
    assert!(code.contains("F_d0: &dyn Fn(f64) -> f64"), "{code}");
    run(
        d,
        &rustc,
        &[
            "--edition",
            "2021",
            "--crate-type",
            "lib",
            "-o",
            "libgen.rlib",
            "lib.rs",
        ],
    );
}

#[test]
fn emitted_fortran_compiles_and_matches() {
    if !have("gfortran") {
        println!("skipped: emitted Fortran: gfortran is not installed");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    for (i, c) in cases(d).iter().enumerate() {
        let want = reference(d, c, &format!("f{i}"));
        for samples in [true, false] {
            let code = emit(d, c, "fortran", samples, &format!("gen{i}.f90"));
            let params = header_params(&code);
            let mut main = String::new();
            // The supplied functions of the user-function case: derivative k of sin.
            let mut users = Vec::new();
            for line in code.lines() {
                if let Some(rest) = line.trim().strip_prefix("real(real64), external :: ") {
                    users.push(rest.trim().to_string());
                }
            }
            users.sort();
            users.dedup();
            for u in &users {
                let k: usize = u.rsplit("_d").next().unwrap().parse().unwrap();
                let body = ["sin(u)", "cos(u)", "-sin(u)", "-cos(u)"][k % 4];
                let _ = writeln!(
                    main,
                    "function {u}(u) result(r)\n  use, intrinsic :: iso_fortran_env, only: real64\n  real(real64), intent(in) :: u\n  real(real64) :: r\n  r = {body}\nend function {u}\n"
                );
            }
            main.push_str("program check\n  use, intrinsic :: iso_fortran_env, only: real64\n  use lingrav_formulas\n  implicit none\n");
            let _ = writeln!(
                main,
                "  real(real64) :: params({}), out(128), pts(4, {})",
                params.len().max(1),
                c.points.len()
            );
            main.push_str("  integer :: i, k\n");
            for (k, p) in params.iter().enumerate() {
                let _ = writeln!(main, "  params({}) = {:?}_real64", k + 1, p);
            }
            if params.is_empty() {
                main.push_str("  params(1) = 0.0_real64\n");
            }
            for (j, p) in c.points.iter().enumerate() {
                for (a, v) in p.iter().enumerate() {
                    let _ = writeln!(main, "  pts({}, {}) = {:?}_real64", a + 1, j + 1, v);
                }
            }
            let _ = writeln!(main, "  do i = 1, {}", c.points.len());
            for q in quantity_names(c) {
                let n = code
                    .lines()
                    .find(|l| l.contains(&format!("subroutine lingrav_{q}(")))
                    .map(|_| ());
                assert!(n.is_some(), "no lingrav_{q} in\n{code}");
                let cols = code
                    .lines()
                    .skip_while(|l| !l.contains(&format!("subroutine lingrav_{q}(")))
                    .find_map(|l| {
                        l.trim()
                            .strip_prefix("real(real64), intent(out) :: out(")
                            .map(|r| r.trim_end_matches(')').parse::<usize>().unwrap())
                    })
                    .unwrap();
                let _ = writeln!(
                    main,
                    "    call lingrav_{q}(pts(1, i), pts(2, i), pts(3, i), pts(4, i), params, out)\n    do k = 1, {cols}\n      write(*, '(ES26.17E3)') out(k)\n    end do"
                );
            }
            main.push_str("  end do\nend program check\n");
            std::fs::write(d.join(format!("main{i}.f90")), main).unwrap();
            let exe = format!("./fprog{i}");
            run(
                d,
                "gfortran",
                &[
                    "-std=f2008",
                    "-Wall",
                    "-O2",
                    "-o",
                    &exe,
                    &format!("gen{i}.f90"),
                    &format!("main{i}.f90"),
                ],
            );
            let got = numbers(&run(d, &exe, &[]));
            compare(
                &format!(
                    "Fortran ({}{})",
                    c.file,
                    if samples { ", --samples" } else { "" }
                ),
                &got,
                &want,
                c.floor,
            );
        }
    }
}

#[test]
fn latex_lists_every_component() {
    let dir = tempfile::tempdir().unwrap();
    let out = lingrav(
        dir.path(),
        &[
            "emit",
            &worked("linear_wave_testbed.toml"),
            "-q",
            "adm",
            "--lang",
            "latex",
        ],
    );
    assert!(
        out.contains("\\begin{aligned}") && out.contains("\\end{aligned}"),
        "{out}"
    );
    assert!(out.contains("K_{yy} &= \\frac{A \\pi"), "{out}");
    assert_eq!(out.matches(" &= ").count(), 16);
}

/// Generated code calls each language's own atan2 and absolute value for `atan2` and `abs`
/// (issue 14), rather than the half-angle formula or sqrt(u*u).
#[test]
fn emitted_code_calls_atan2_and_abs() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("angles.toml"), ANGLES).unwrap();
    for (lang, atan2, abs) in [
        ("c", "atan2(y, x)", "fabs(z - 1"),
        ("python", "np.arctan2(y, x)", "np.abs(z - 1"),
        ("rust", "f64::atan2(y, x)", "f64::abs(z - 1"),
        ("fortran", "atan2(y, x)", "abs(z - 1"),
    ] {
        let code = lingrav(
            dir.path(),
            &["emit", "angles.toml", "-q", "h", "--lang", lang],
        );
        assert!(code.contains(atan2), "{lang}: no `{atan2}` in\n{code}");
        assert!(code.contains(abs), "{lang}: no `{abs}` in\n{code}");
        assert!(!code.contains("sqrt"), "{lang}: a root is left in\n{code}");
    }
}
