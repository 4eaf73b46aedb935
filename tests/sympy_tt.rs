//! An outside check of the TT projection against SymPy: on seeded random symmetric amplitudes
//! and directions (rational unit vectors, vectors to normalize, exact and symbolic polar
//! angles), lingrav's printed n, basis, h^TT = Lambda S, h_plus and h_cross must agree with
//! `tests/sympy/tt_check.py`, which rebuilds them from the definitions with SymPy and also
//! checks the projector's laws (transverse, traceless, idempotent) on lingrav's result.
//!
//! Without python3 and SymPy the SymPy half prints "skipped: ..." and passes, except under CI
//! (`CI` set and not `false`/`0`), where it fails. `LINGRAV_PYTHON` names the interpreter;
//! `LINGRAV_TT_CASES=path` keeps the cases there.

use lingrav::canon::{Names, Store};
use lingrav::tt::{Arg, parse_direction, project_perturbation};
use lingrav::zero::{Sampling, SplitMix64};
use serde_json::json;
use std::io::Write as _;
use std::path::Path;
use std::process::Command;

const SEED: u64 = 0x7717_5e9d_2026;

fn on_ci() -> bool {
    crate::support::in_ci()
}

fn python_missing(python: &str) -> Option<String> {
    crate::support::python_missing(python, "sympy")
}

fn pick(rng: &mut SplitMix64, n: usize) -> usize {
    (rng.next_u64() % n as u64) as usize
}

/// A direction as a user would type it, and whether to normalize it.
fn random_direction(rng: &mut SplitMix64, case: usize) -> (String, bool) {
    const QUADS: [[i64; 4]; 5] = [
        [1, 2, 2, 3],
        [2, 3, 6, 7],
        [1, 4, 8, 9],
        [4, 4, 7, 9],
        [0, 0, 1, 1],
    ];
    const ANGLES: [&str; 8] = [
        "0", "pi/6", "pi/4", "pi/3", "pi/2", "2*pi/3", "3*pi/4", "pi",
    ];
    match case % 5 {
        0 | 1 => {
            let q = QUADS[pick(rng, QUADS.len())];
            let mut v: Vec<String> = (0..3)
                .map(|i| {
                    let s = if rng.next_u64() & 1 == 1 { "-" } else { "" };
                    format!("{s}{}/{}", q[i], q[3])
                })
                .collect();
            let k = pick(rng, 3);
            v.swap(0, k);
            (v.join(","), false)
        }
        2 => {
            let v: Vec<String> = (0..3)
                .map(|_| (pick(rng, 7) as i64 - 3).to_string())
                .collect();
            if v.iter().all(|x| x == "0") {
                ("1,2,3".into(), true)
            } else {
                (v.join(","), true)
            }
        }
        3 => (
            format!(
                "theta={},phi={}",
                ANGLES[pick(rng, ANGLES.len())],
                ANGLES[pick(rng, ANGLES.len())]
            ),
            false,
        ),
        _ => {
            if case == 4 {
                ("theta=th,phi=ph".into(), false)
            } else {
                ("1/sqrt(3),-1/sqrt(3),1/sqrt(3)".into(), false)
            }
        }
    }
}

#[test]
fn tt_projection_agrees_with_sympy() {
    println!("sympy tt check seed: {SEED:#x}");
    let mut rng = SplitMix64::new(SEED);
    let dir = tempfile::tempdir().expect("a temporary directory");
    // LINGRAV_TT_CASES keeps the cases at a chosen path, for rerunning the script by hand.
    let path = std::env::var_os("LINGRAV_TT_CASES")
        .map(std::path::PathBuf::from)
        .unwrap_or_else(|| dir.path().join("tt_cases.jsonl"));
    let mut file = std::io::BufWriter::new(std::fs::File::create(&path).expect("create"));
    let cases = 30;
    for case in 0..cases {
        let (direction, normalize) = random_direction(&mut rng, case);
        let mut st = Store::new();
        let mut names = Names::strict();
        for c in ["t", "x", "y", "z", "th", "ph"] {
            names.symbol(c);
        }
        let d = parse_direction(
            &mut st,
            &names,
            &Sampling::default(),
            Arg::new("--direction", &direction),
            normalize,
        )
        .unwrap_or_else(|e| panic!("case {case}: {direction}: {e}"));
        let mut s = [[0i64; 3]; 3];
        let mut h = [[st.zero(); 4]; 4];
        for i in 0..3 {
            for j in i..3 {
                s[i][j] = pick(&mut rng, 19) as i64 - 9;
                s[j][i] = s[i][j];
                let f = st.int(s[i][j]);
                h[i + 1][j + 1] = f;
                h[j + 1][i + 1] = f;
            }
        }
        let p = project_perturbation(&mut st, &h, &d).expect("projection");
        let texts = |st: &mut Store, v: &[lingrav::canon::Form; 3]| -> Vec<String> {
            v.iter().map(|f| st.to_text(*f)).collect()
        };
        let tt: Vec<Vec<String>> =
            p.tt.iter()
                .map(|row| row.iter().map(|f| st.to_text(*f)).collect())
                .collect();
        let record = json!({
            "id": format!("case{case}"),
            "direction": direction,
            "normalize": normalize,
            "S": s,
            "n": texts(&mut st, &d.n),
            "u": texts(&mut st, &d.u),
            "v": texts(&mut st, &d.v),
            "tt": tt,
            "plus": st.to_text(p.plus),
            "cross": st.to_text(p.cross),
        });
        writeln!(file, "{record}").expect("write");
    }
    file.flush().expect("write");
    drop(file);

    let python = std::env::var("LINGRAV_PYTHON").unwrap_or_else(|_| "python3".into());
    if let Some(why) = python_missing(&python) {
        if on_ci() {
            panic!("CI is set, so the SymPy TT check must run, but {why} (pip install sympy)");
        }
        println!("skipped: sympy tt check: {why}");
        return;
    }
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/sympy/tt_check.py");
    let out = Command::new(&python)
        .arg(&script)
        .arg(&path)
        .output()
        .expect("run the SymPy script");
    let stdout = String::from_utf8_lossy(&out.stdout);
    print!("{stdout}");
    eprint!("{}", String::from_utf8_lossy(&out.stderr));
    assert!(out.status.success(), "the SymPy TT check failed: see above");
    let summary = stdout
        .lines()
        .find(|l| l.starts_with("sympy tt check: "))
        .expect("a summary line");
    let n: usize = summary["sympy tt check: ".len()..]
        .split_whitespace()
        .next()
        .and_then(|w| w.parse().ok())
        .expect("a case count");
    assert_eq!(n, cases, "every case judged");
}
