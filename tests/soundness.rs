//! Soundness fuzzing: lingrav must never prove zero what is not zero, nor certify nonzero
//! what is zero.
//!
//! Design decision: the verdicts are judged against the *construction* of each pair (a true
//! identity, or a small nonzero perturbation; see `soundness/gen.rs`), and the construction
//! itself is confirmed by an independent numerical truth, mpmath at 50 digits
//! (`tests/mpmath/truth.py`, one process for the whole run, JSON lines both ways), so a
//! generator bug shows up as a failure instead of making the test vacuous. A certified
//! witness is checked as well: mpmath's value at the witness point must lie in lingrav's
//! enclosure.
//!
//! Failures:
//! - false proof: a near pair (mpmath: nonzero) that lingrav proves zero;
//! - false certificate: an identity pair that lingrav certifies nonzero, or any certified
//!   enclosure that does not contain mpmath's value;
//! - generator bug: an identity pair that mpmath finds nonzero, or too many pairs whose label
//!   mpmath cannot confirm.
//!
//! Undecided verdicts (numerically zero, or a size or time limit) are acceptable for both
//! classes and are counted in the summary, so weakness stays visible.
//!
//! `LINGRAV_FUZZ_SEED` (decimal or 0x-hex) and `LINGRAV_FUZZ_PAIRS` choose the run,
//! `LINGRAV_FUZZ_ONLY=i` reruns pair `i` of it alone, `LINGRAV_PYTHON` names the interpreter.
//! Without python3 and mpmath the mpmath half prints `skipped:` (the verdicts are still
//! judged against the construction), except under CI, where that is a failure.
//!
//! `tests/data/soundness_regressions.txt` lists known-bad cases; they go through the binary,
//! one process each, so that a crash (a stack overflow) is a reported failure, not an abort.

#[path = "soundness/pairs.rs"]
mod pairs;

use lingrav::canon::{FunctionSample, Limits, Names, Store};
use lingrav::zero::{Sampling, Verdict, decide};
use pairs::{Class, Gen, Pair};
use serde_json::{Value, json};
use std::collections::BTreeMap;
use std::io::{BufRead, BufReader, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdin, Command, Stdio};
use std::rc::Rc;
use std::time::{Duration, Instant};

const DEFAULT_SEED: u64 = 0x50_0d_f0_22;
const DEFAULT_PAIRS: usize = 5000;
/// Per-pair limits: a pathological pair ends undecided quickly.
const MAX_TERMS: usize = 4000;
const TIME_LIMIT_MS: u64 = 300;
/// Largest share of pairs whose label mpmath may leave unconfirmed.
const MAX_UNCONFIRMED: f64 = 0.03;
/// How many failures are printed in full.
const SHOW: usize = 25;

/// Samples of the arbitrary functions, in `u` (the same in truth.py).
const SAMPLES: [(&str, &str); 2] = [
    ("F", "exp(-u^2/4)*(1 + 2*u/7)"),
    ("G", "sin(3*u/4)/(u^2 + 2)"),
];

fn on_ci() -> bool {
    crate::support::in_ci()
}

fn env_u64(name: &str) -> Option<u64> {
    crate::support::env_u64(name)
}

// ----- lingrav's verdicts ------------------------------------------------------------------

/// What lingrav said about one pair.
#[derive(Clone, Debug)]
struct Outcome {
    /// zero, nonzero, undecided, limit (undecided by a size or time limit) or error.
    label: &'static str,
    detail: String,
    /// For nonzero: the witness point and the certified enclosure.
    witness: Option<Value>,
}

fn samples(store: &mut Store) -> rustc_hash::FxHashMap<Rc<str>, FunctionSample> {
    let var = store.symbol_kernel("u");
    SAMPLES
        .iter()
        .map(|(name, text)| {
            let e = lingrav::parse::parse(text).expect("a sample parses");
            let form = store.build(&e, &Names::free()).expect("a sample builds");
            (Rc::from(*name), FunctionSample { var, form })
        })
        .collect()
}

/// Decides `a - b` through the library, with the per-pair limits.
fn decide_pair(a: &str, b: &str) -> Result<Outcome, String> {
    let mut store = Store::new();
    let sampling = Sampling {
        samples: samples(&mut store),
        ..Sampling::default()
    };
    store.limits = Limits {
        max_terms: MAX_TERMS,
        deadline: Some((
            Instant::now() + Duration::from_millis(TIME_LIMIT_MS),
            TIME_LIMIT_MS,
        )),
    };
    let ea = lingrav::parse::parse(a).map_err(|e| format!("lingrav cannot parse {a:?}: {e}"))?;
    let eb = lingrav::parse::parse(b).map_err(|e| format!("lingrav cannot parse {b:?}: {e}"))?;
    let limit = |e: String| {
        let label = if e.contains("too large") || e.contains("too slow") {
            "limit"
        } else {
            "error"
        };
        Outcome {
            label,
            detail: e,
            witness: None,
        }
    };
    let fa = match store.build(&ea, &Names::free()) {
        Ok(f) => f,
        Err(e) => return Ok(limit(e.to_string())),
    };
    let fb = match store.build(&eb, &Names::free()) {
        Ok(f) => f,
        Err(e) => return Ok(limit(e.to_string())),
    };
    let d = match store.sub(fa, fb) {
        Ok(d) => d,
        Err(e) => return Ok(limit(e.to_string())),
    };
    Ok(match decide(&mut store, d, &sampling) {
        Verdict::Zero => Outcome {
            label: "zero",
            detail: "proved".into(),
            witness: None,
        },
        Verdict::Nonzero(w) => {
            let point: serde_json::Map<String, Value> =
                w.point.iter().map(|(n, v)| (n.clone(), json!(v))).collect();
            Outcome {
                label: "nonzero",
                detail: w.to_string(),
                witness: Some(json!({
                    "point": point,
                    "re": [w.value.re.lo(), w.value.re.hi()],
                    "im": [w.value.im.lo(), w.value.im.hi()],
                })),
            }
        }
        Verdict::Undecided(why) => Outcome {
            label: "undecided",
            detail: why,
            witness: None,
        },
    })
}

// ----- the mpmath side ---------------------------------------------------------------------

/// Why python3 with mpmath cannot be used, if it cannot.
fn python_missing(python: &str) -> Option<String> {
    crate::support::python_missing(python, "mpmath")
}

/// The truth script as a running process: records go in as they are decided, and a thread
/// collects the answers, so lingrav and mpmath work at the same time.
struct Truth {
    child: Child,
    stdin: Option<ChildStdin>,
    reader: Option<std::thread::JoinHandle<Vec<Value>>>,
}

impl Truth {
    /// `None` (after printing `skipped:`) when python3 or mpmath is missing outside CI.
    fn start(seed: u64, what: &str) -> Option<Truth> {
        let python = std::env::var("LINGRAV_PYTHON").unwrap_or_else(|_| "python3".into());
        if let Some(why) = python_missing(&python) {
            if on_ci() {
                panic!("CI is set, so the mpmath truth must run, but {why} (pip install mpmath)");
            }
            println!("skipped: mpmath confirmation of {what}: {why}");
            return None;
        }
        let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/mpmath/truth.py");
        let mut child = Command::new(&python)
            .arg(&script)
            .arg(seed.to_string())
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .spawn()
            .expect("start the truth script");
        let stdout = child.stdout.take().expect("piped stdout");
        let reader = std::thread::spawn(move || {
            BufReader::new(stdout)
                .lines()
                .map(|l| serde_json::from_str(&l.expect("read the truth script")).expect("JSON"))
                .collect()
        });
        let stdin = child.stdin.take();
        Some(Truth {
            child,
            stdin,
            reader: Some(reader),
        })
    }

    fn send(&mut self, record: &Value) {
        let stdin = self.stdin.as_mut().expect("open stdin");
        writeln!(stdin, "{record}").expect("write to the truth script");
    }

    /// Closes the input and returns the answers by id.
    fn finish(mut self, expected: usize) -> BTreeMap<u64, Value> {
        drop(self.stdin.take());
        let lines = self.reader.take().expect("reader").join().expect("reader");
        let status = self.child.wait().expect("wait for the truth script");
        assert!(status.success(), "the truth script failed: {status}");
        let mut out = BTreeMap::new();
        let mut done = None;
        for v in lines {
            if let Some(n) = v.get("done") {
                done = n.as_u64();
            } else {
                out.insert(v["id"].as_u64().expect("an id"), v);
            }
        }
        assert_eq!(
            done,
            Some(expected as u64),
            "pairs judged by the truth script"
        );
        assert_eq!(out.len(), expected, "answers from the truth script");
        out
    }
}

fn record(id: u64, class: Class, a: &str, b: &str, witness: Option<&Value>) -> Value {
    json!({"id": id, "class": class.label(), "a": a, "b": b, "witness": witness})
}

// ----- judging -------------------------------------------------------------------------------

/// A failed pair: what went wrong, and everything needed to rerun it.
struct Failure {
    kind: &'static str,
    index: usize,
    pair: Pair,
    outcome: Outcome,
    truth: Option<Value>,
}

/// Judges one pair; `truth` is mpmath's answer when it ran.
fn judge(class: Class, outcome: &Outcome, truth: Option<&Value>) -> Option<&'static str> {
    let t = truth.map(|t| t["truth"].as_str().unwrap_or("?"));
    let outside = truth.is_some_and(|t| t["witness"] == "outside");
    match (class, outcome.label, t) {
        (Class::Identity, _, Some("nonzero")) => {
            Some("generator bug: an identity pair that mpmath finds nonzero")
        }
        (Class::Identity, "nonzero", _) => Some("false certificate: an identity certified nonzero"),
        (Class::Near, "zero", Some("nonzero") | None) => {
            Some("false proof: a nonzero difference proved zero")
        }
        _ if outside => {
            Some("false certificate: mpmath's value lies outside the certified enclosure")
        }
        _ => None,
    }
}

#[derive(Default)]
struct Tally {
    /// (class, lingrav label) -> count
    verdicts: BTreeMap<(Class, &'static str), usize>,
    /// (class, mpmath truth) -> count
    truths: BTreeMap<(Class, String), usize>,
    /// rule -> failures
    failing_rules: BTreeMap<String, usize>,
}

fn print_failure(f: &Failure, seed: u64) {
    println!(
        "FAIL [{}] pair {} of seed {seed:#x} ({}; rule: {})\n  rerun: LINGRAV_FUZZ_SEED={seed:#x} LINGRAV_FUZZ_ONLY={} cargo test --test cli soundness::fuzz\n  A = {}\n  B = {}\n  lingrav: {}: {}",
        f.kind,
        f.index,
        f.pair.class.label(),
        f.pair.rule,
        f.index,
        f.pair.a,
        f.pair.b,
        f.outcome.label,
        f.outcome.detail
    );
    if let Some(t) = &f.truth {
        println!("  mpmath: {t}");
    }
}

#[test]
fn fuzzed_pairs_are_never_misjudged() {
    let seed = env_u64("LINGRAV_FUZZ_SEED").unwrap_or(DEFAULT_SEED);
    let n = env_u64("LINGRAV_FUZZ_PAIRS").map_or(DEFAULT_PAIRS, |n| n as usize);
    let only = env_u64("LINGRAV_FUZZ_ONLY").map(|i| i as usize);
    println!(
        "soundness fuzz seed: {seed:#x}, {n} pairs (rerun with LINGRAV_FUZZ_SEED={seed:#x} LINGRAV_FUZZ_PAIRS={n})"
    );
    // A crash (stack overflow) aborts the process with no message of ours: the last pair
    // started is kept here.
    let crumb = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("soundness_last_pair.txt");
    println!("if the process aborts, {} names the pair", crumb.display());

    // The whole generation first (cheap), so that pair i is the same whatever runs.
    let mut generator = Gen::new(seed);
    let last = only.map_or(n, |i| i + 1);
    let pairs: Vec<Pair> = (0..last)
        .map(|i| {
            // 11 identity pairs to 9 near pairs.
            let class = if i % 20 < 11 {
                Class::Identity
            } else {
                Class::Near
            };
            generator.pair(class)
        })
        .collect();
    let indices: Vec<usize> = match only {
        Some(i) => vec![i],
        None => (0..n).collect(),
    };

    let mut truth = Truth::start(seed, "the pairs' labels");
    let started = Instant::now();
    // A deep expression may need a deep stack; run the decisions on a thread with room.
    let outcomes = std::thread::scope(|scope| {
        std::thread::Builder::new()
            .stack_size(256 << 20)
            .spawn_scoped(scope, || {
                let mut outcomes = Vec::new();
                for &i in &indices {
                    let p = &pairs[i];
                    let _ = std::fs::write(
                        &crumb,
                        format!(
                            "seed {seed:#x} pair {i} ({})\nA = {}\nB = {}\n",
                            p.class.label(),
                            p.a,
                            p.b
                        ),
                    );
                    let outcome = decide_pair(&p.a, &p.b).unwrap_or_else(|e| {
                        panic!("generator bug: pair {i} of seed {seed:#x}: {e}")
                    });
                    if let Some(t) = truth.as_mut() {
                        t.send(&record(
                            i as u64,
                            p.class,
                            &p.a,
                            &p.b,
                            outcome.witness.as_ref(),
                        ));
                    }
                    outcomes.push(outcome);
                }
                outcomes
            })
            .expect("spawn the fuzz thread")
            .join()
            .expect("the fuzz thread")
    });
    let lingrav_time = started.elapsed();
    let answers = truth.map(|t| t.finish(indices.len()));
    println!(
        "lingrav decided {} pairs in {:.1} s; mpmath done after {:.1} s",
        indices.len(),
        lingrav_time.as_secs_f64(),
        started.elapsed().as_secs_f64()
    );

    // LINGRAV_FUZZ_DUMP=path keeps every pair with its verdict and label, for study.
    if let Some(path) = std::env::var_os("LINGRAV_FUZZ_DUMP") {
        let mut file = std::io::BufWriter::new(
            std::fs::File::create(&path).expect("create the LINGRAV_FUZZ_DUMP file"),
        );
        for (&i, o) in indices.iter().zip(&outcomes) {
            let p = &pairs[i];
            let t = answers.as_ref().map(|a| a[&(i as u64)].clone());
            let line = json!({"index": i, "class": p.class.label(), "rule": p.rule,
                "a": p.a, "b": p.b, "lingrav": o.label, "detail": o.detail, "mpmath": t});
            writeln!(file, "{line}").expect("write the dump");
        }
    }

    let mut tally = Tally::default();
    let mut failures = Vec::new();
    let mut unconfirmed = 0usize;
    for (&i, outcome) in indices.iter().zip(&outcomes) {
        let p = &pairs[i];
        let t = answers.as_ref().map(|a| &a[&(i as u64)]);
        *tally.verdicts.entry((p.class, outcome.label)).or_default() += 1;
        if let Some(t) = t {
            let label = t["truth"].as_str().unwrap_or("?").to_string();
            let confirmed = match p.class {
                Class::Identity => label == "zero",
                Class::Near => label == "nonzero",
            };
            if !confirmed {
                unconfirmed += 1;
            }
            *tally.truths.entry((p.class, label)).or_default() += 1;
        }
        if let Some(kind) = judge(p.class, outcome, t) {
            *tally.failing_rules.entry(p.rule.clone()).or_default() += 1;
            failures.push(Failure {
                kind,
                index: i,
                pair: p.clone(),
                outcome: outcome.clone(),
                truth: t.cloned(),
            });
        }
    }

    println!(
        "lingrav verdicts (zero = proved, nonzero = certified, limit = undecided by a limit):"
    );
    for ((class, label), count) in &tally.verdicts {
        println!("  {:9} {label:10} {count}", class.label());
    }
    let errors: Vec<(usize, &Outcome)> = indices
        .iter()
        .zip(&outcomes)
        .filter(|(_, o)| o.label == "error")
        .map(|(&i, o)| (i, o))
        .collect();
    for (i, o) in errors.iter().take(5) {
        println!("  error at pair {i}: {}", o.detail);
    }
    if answers.is_some() {
        println!("mpmath labels (identity: zero confirms; near: nonzero confirms):");
        for ((class, label), count) in &tally.truths {
            println!("  {:9} {label:10} {count}", class.label());
        }
    }
    for f in failures.iter().take(SHOW) {
        print_failure(f, seed);
    }
    if !failures.is_empty() {
        println!("failures by rule:");
        for (rule, count) in &tally.failing_rules {
            println!("  {count:5}  {rule}");
        }
    }
    let mut kinds: BTreeMap<&str, usize> = BTreeMap::new();
    for f in &failures {
        *kinds.entry(f.kind).or_default() += 1;
    }
    assert!(
        failures.is_empty(),
        "{} of {} pairs misjudged (seed {seed:#x}): {kinds:?}; the first {} are printed above",
        failures.len(),
        indices.len(),
        failures.len().min(SHOW)
    );
    if answers.is_some() && only.is_none() {
        let share = unconfirmed as f64 / indices.len() as f64;
        assert!(
            share <= MAX_UNCONFIRMED,
            "mpmath could not confirm the label of {unconfirmed} of {} pairs (at most {:.0}% allowed): the generator makes too many pairs it cannot vouch for",
            indices.len(),
            100.0 * MAX_UNCONFIRMED
        );
    }
}

// ----- the regression list -----------------------------------------------------------------

/// One line of `tests/data/soundness_regressions.txt`: `class: A ;; B  # note`.
struct Regression {
    line: usize,
    class: Class,
    a: String,
    b: String,
    note: String,
}

fn regressions() -> Vec<Regression> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/soundness_regressions.txt");
    let text = std::fs::read_to_string(&path).expect("read the regression list");
    let mut out = Vec::new();
    for (i, raw) in text.lines().enumerate() {
        let (body, note) = raw.split_once('#').unwrap_or((raw, ""));
        let body = body.trim();
        if body.is_empty() {
            continue;
        }
        let (class, rest) = body
            .split_once(':')
            .unwrap_or_else(|| panic!("line {}: no `class:`", i + 1));
        let class = match class.trim() {
            "identity" => Class::Identity,
            "near" => Class::Near,
            other => panic!("line {}: unknown class {other:?}", i + 1),
        };
        let (a, b) = rest
            .split_once(";;")
            .unwrap_or_else(|| panic!("line {}: no `;;`", i + 1));
        out.push(Regression {
            line: i + 1,
            class,
            a: a.trim().to_string(),
            b: b.trim().to_string(),
            note: note.trim().to_string(),
        });
    }
    out
}

/// Runs `lingrav zero --format json A B` with the binary's default limits (what a user
/// gets). A run killed by a signal or exiting with a status other than 0, 1 or 3 is a crash.
fn decide_by_binary(a: &str, b: &str) -> Outcome {
    let out = Command::new(env!("CARGO_BIN_EXE_lingrav"))
        .args(["zero", "--format", "json"])
        .arg(a)
        .arg(b)
        .output()
        .expect("run lingrav");
    let stdout = String::from_utf8_lossy(&out.stdout);
    let stderr = String::from_utf8_lossy(&out.stderr);
    let first = |s: &str| s.lines().take(3).collect::<Vec<_>>().join(" | ");
    let by_status = match out.status.code() {
        Some(0) => "zero",
        Some(1) => "nonzero",
        Some(3) => "undecided",
        _ => {
            return Outcome {
                label: "crash",
                detail: format!("{}: {}", out.status, first(&stderr)),
                witness: None,
            };
        }
    };
    // An undecided verdict from a limit is printed as text even with --format json.
    let Ok(v) = serde_json::from_str::<Value>(&stdout) else {
        return Outcome {
            label: by_status,
            detail: first(&format!("{stdout}{stderr}")),
            witness: None,
        };
    };
    let label = match v["verdict"].as_str() {
        Some("zero") => "zero",
        Some("nonzero") => "nonzero",
        _ => "undecided",
    };
    let witness = v.get("witness").map(|w| {
        json!({
            "point": w["point"],
            "re": w["enclosure"]["re"],
            "im": w["enclosure"]["im"],
        })
    });
    Outcome {
        label,
        detail: v
            .get("reason")
            .or(v.get("canonical_form"))
            .map(|r| r.to_string())
            .unwrap_or_default(),
        witness,
    }
}

#[test]
fn known_soundness_regressions() {
    let cases = regressions();
    assert!(!cases.is_empty(), "the regression list is empty");
    let mut truth = Truth::start(0, "the regression list");
    let mut outcomes = Vec::new();
    for (j, c) in cases.iter().enumerate() {
        let o = decide_by_binary(&c.a, &c.b);
        if let Some(t) = truth.as_mut() {
            t.send(&record(j as u64, c.class, &c.a, &c.b, o.witness.as_ref()));
        }
        outcomes.push(o);
    }
    let answers = truth.map(|t| t.finish(cases.len()));
    let mut bad = Vec::new();
    for (j, (c, o)) in cases.iter().zip(&outcomes).enumerate() {
        let t = answers.as_ref().map(|a| &a[&(j as u64)]);
        let kind = if o.label == "crash" {
            Some("crash: lingrav did not finish")
        } else {
            judge(c.class, o, t)
        };
        println!(
            "line {:3} {:8} {:9} {}  ({})",
            c.line,
            c.class.label(),
            o.label,
            kind.unwrap_or("ok"),
            c.note
        );
        if let Some(kind) = kind {
            bad.push(format!(
                "line {} [{kind}]: {} ;; {}\n    lingrav: {}: {}\n    mpmath: {}",
                c.line,
                c.a,
                c.b,
                o.label,
                o.detail,
                t.map(|t| t.to_string()).unwrap_or_else(|| "not run".into())
            ));
        }
    }
    assert!(
        bad.is_empty(),
        "{} known-bad cases still misjudged:\n{}",
        bad.len(),
        bad.join("\n")
    );
}
