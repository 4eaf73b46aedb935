//! An outside check of `lingrav radiation` against SymPy (issue 13): on seeded random bodies
//! (two or three masses on trajectories built from polynomials, sines and cosines of t with
//! rational coefficients, a direction by polar angles, a distance), every printed moment,
//! the luminosity, the angular-momentum flux and h_plus, h_cross must agree with
//! `tests/sympy/radiation_check.py`, which rebuilds them from the definitions.
//!
//! Without python3 and SymPy the check prints "skipped: ..." and passes, except under CI,
//! where it fails. `LINGRAV_PYTHON` names the interpreter.

use lingrav::zero::SplitMix64;
use std::io::Write as _;
use std::path::Path;
use std::process::Command;

const SEED: u64 = 0x5ad1_a7e5_2026;
const CASES: usize = 6;

fn pick(rng: &mut SplitMix64, n: u64) -> i64 {
    (rng.next_u64() % n) as i64
}

/// A random trajectory component: a small polynomial, a sinusoid, or their sum.
fn component(rng: &mut SplitMix64) -> String {
    let q = |rng: &mut SplitMix64| format!("({}/{})", pick(rng, 9) - 4, pick(rng, 4) + 1);
    match pick(rng, 4) {
        0 => format!("{} + {}*t + {}*t^2", q(rng), q(rng), q(rng)),
        1 => format!("{}*cos({}*t + {})", q(rng), pick(rng, 3) + 1, q(rng)),
        2 => format!("{}*sin({}*t) + {}", q(rng), pick(rng, 3) + 1, q(rng)),
        _ => "0".to_string(),
    }
}

#[test]
fn radiation_agrees_with_sympy() {
    let python = std::env::var("LINGRAV_PYTHON").unwrap_or_else(|_| "python3".into());
    let dir = tempfile::tempdir().unwrap();
    let lines_path = dir.path().join("cases.jsonl");
    let mut lines = std::fs::File::create(&lines_path).unwrap();
    println!("seed {SEED:#x}");
    let mut rng = SplitMix64::new(SEED);
    const ANGLES: [&str; 6] = ["0", "pi/6", "pi/4", "pi/3", "2*pi/3", "pi/2"];
    for case in 0..CASES {
        let n = 2 + (case % 2);
        let mut text = String::from("name = 'random bodies'\n");
        let mut bodies = Vec::new();
        for _ in 0..n {
            let mass = format!("{}/{}", pick(&mut rng, 5) + 1, pick(&mut rng, 3) + 1);
            let pos: Vec<String> = (0..3).map(|_| component(&mut rng)).collect();
            text.push_str(&format!(
                "[[body]]\nmass = '{mass}'\nposition = ['{}', '{}', '{}']\n",
                pos[0], pos[1], pos[2]
            ));
            bodies.push(serde_json::json!({ "mass": mass, "position": pos }));
        }
        let theta = ANGLES[pick(&mut rng, 6) as usize];
        let phi = ANGLES[pick(&mut rng, 6) as usize];
        let file = dir.path().join(format!("case{case}.toml"));
        std::fs::write(&file, &text).unwrap();
        let direction = format!("theta={theta},phi={phi}");
        let (out, err, code) = crate::support::lingrav(&[
            "radiation",
            file.to_str().unwrap(),
            "--direction",
            &direction,
            "--distance",
            "7",
            "--format",
            "json",
        ]);
        assert_eq!(code, 0, "case {case}: {err}\n{text}");
        let j: serde_json::Value = serde_json::from_str(&out).unwrap();
        assert_eq!(j["audit"]["defect"], false, "case {case}");
        let quantities: serde_json::Map<String, serde_json::Value> = j["quantities"]
            .as_object()
            .unwrap()
            .iter()
            .map(|(k, v)| (k.clone(), v["expression"].clone()))
            .collect();
        let line = serde_json::json!({
            "case": case, "bodies": bodies, "theta": theta, "phi": phi, "distance": "7",
            "quantities": quantities,
        });
        writeln!(lines, "{line}").unwrap();
    }
    drop(lines);
    if let Some(why) = crate::support::python_missing(&python, "sympy") {
        assert!(
            !crate::support::in_ci(),
            "CI is set, so the SymPy radiation check must run, but {why} (pip install sympy)"
        );
        println!("skipped: sympy radiation check: {why}");
        return;
    }
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/sympy/radiation_check.py");
    let out = Command::new(&python)
        .arg(&script)
        .arg(&lines_path)
        .output()
        .expect("run the SymPy script");
    let stdout = String::from_utf8_lossy(&out.stdout);
    print!("{stdout}");
    eprint!("{}", String::from_utf8_lossy(&out.stderr));
    assert!(
        out.status.success(),
        "the SymPy radiation check failed: see above"
    );
    assert!(
        stdout.contains(&format!(
            "{CASES} cases, {} quantities, 0 disagreements",
            CASES * 12
        )),
        "{stdout}"
    );
}
