//! An outside check of the tensor layer: lingrav's linearized Riemann, Einstein and Lorenz
//! components must agree with an independent SymPy computation, over seeded random
//! perturbations.
//!
//! Design decision: the perturbations are generated here, in Rust, and everything lingrav says
//! about each component (canonical text, zero verdict with its witness, certified enclosures of
//! the value at given points) is written as JSON lines; `tests/sympy/tensor_check.py` then
//! recomputes every quantity its own way (from the full metric `eta + eps*h`, to first order in
//! `eps`) and judges each claim. The two sides share only the input texts and the points.
//!
//! Four kinds of perturbation, each with what must vanish by construction:
//! - generic: random components (nothing need vanish);
//! - TT plane wave: `h_ij = a e+_ij f(s) + b ex_ij g(s)`, `s = t - n.x`, `|n| = 1`, for a
//!   rational orthonormal frame `(n, u, v)`: Einstein and Lorenz vanish;
//! - pure gauge: `h_mn = d_m xi_n + d_n xi_m` for random `xi`: Riemann and Einstein vanish;
//! - TT plus gauge: Einstein vanishes (it is gauge invariant), Riemann need not.
//!
//! Components are polynomials of degree <= 3 with small rational coefficients, products with
//! sin, cos and exp of linear phases, and polynomials over `1 + a^2 + b^2`. Each perturbation
//! has at most one denominator (one rational family of wave profiles, or one such quadratic):
//! lingrav expands numerators over common denominators, so two unrelated ones multiply out
//! into thousands of terms and the run takes minutes instead of seconds.
//!
//! The seed is printed; `LINGRAV_TENSOR_SEED` reruns another one. `LINGRAV_PYTHON` names the
//! interpreter (default `python3`). Without python3 and SymPy the SymPy half prints
//! "skipped: ..." and passes, except under CI (`CI` set and not `false`/`0`), where it fails.

// Symmetric 4x4 loops over mu <= nu read best with indices.
#![allow(clippy::needless_range_loop)]

use lingrav::canon::{Form, Names, Point, Store};
use lingrav::interval::CInterval;
use lingrav::tensor::{COORDS, Linearized, index_name};
use lingrav::zero::{Sampling, SplitMix64, Verdict, decide};
use serde_json::{Value, json};
use std::io::Write as _;
use std::path::Path;
use std::process::Command;
use std::time::Instant;

const DEFAULT_SEED: u64 = 0x7e45_0c0d_2025;

/// Points per perturbation at which every component's value is compared.
const POINTS: usize = 3;

/// Rational orthonormal frames of R^3 as integer rows over a common denominator.
const FRAMES: [([[i64; 3]; 3], i64); 4] = [
    ([[1, 0, 0], [0, 1, 0], [0, 0, 1]], 1),
    ([[3, 4, 0], [-4, 3, 0], [0, 0, 5]], 5),
    ([[2, 1, 2], [1, 2, -2], [2, -2, -1]], 3),
    ([[2, 3, 6], [3, -6, 2], [6, 2, -3]], 7),
];

/// Wave profiles f(S) of the retarded time S.
const PROFILES: [&str; 7] = [
    "sin(2*S)",
    "cos(3*S)",
    "S^3",
    "exp(S/2)*sin(S)",
    "exp(-S^2)",
    "S^2*cos(S)",
    "sin(S)*cos(2*S)",
];

/// Rational profiles, never mixed with the others: every component of a derived quantity
/// would then carry the expanded (1 + S^2)^3 across all its other terms.
const RATIONAL_PROFILES: [&str; 3] = ["1/(1 + S^2)", "S/(1 + S^2)", "(1 - S^2)/(1 + S^2)^2"];

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Kind {
    Generic,
    Tt,
    Gauge,
    TtGauge,
}

impl Kind {
    fn label(self) -> &'static str {
        match self {
            Kind::Generic => "generic",
            Kind::Tt => "tt",
            Kind::Gauge => "gauge",
            Kind::TtGauge => "tt_gauge",
        }
    }
    /// Which quantities vanish identically by construction: (Riemann, Einstein, Lorenz).
    fn expect_zero(self) -> (bool, bool, bool) {
        match self {
            Kind::Generic => (false, false, false),
            Kind::Tt => (false, true, true),
            Kind::Gauge => (true, true, false),
            Kind::TtGauge => (false, true, false),
        }
    }
}

/// The order of the kinds in the corpus.
const KINDS: [Kind; 12] = [
    Kind::Generic,
    Kind::Tt,
    Kind::Gauge,
    Kind::TtGauge,
    Kind::Generic,
    Kind::Tt,
    Kind::Gauge,
    Kind::TtGauge,
    Kind::Generic,
    Kind::Tt,
    Kind::Gauge,
    Kind::Generic,
];

// ----- the generator ---------------------------------------------------------------------

struct Gen {
    rng: SplitMix64,
    /// The one denominator of the current perturbation: with several, the common
    /// denominators of the derived quantities multiply and their numerators run to thousands
    /// of terms.
    den: String,
}

impl Gen {
    fn below(&mut self, n: u64) -> u64 {
        self.rng.next_u64() % n
    }
    fn chance(&mut self, p: f64) -> bool {
        self.rng.next_f64() < p
    }
    fn coord(&mut self) -> &'static str {
        COORDS[self.below(4) as usize]
    }
    /// A small nonzero rational, parenthesised if it is not a plain positive integer.
    fn coeff(&mut self) -> String {
        let p = 1 + self.below(4) as i64;
        let q = [1, 1, 2, 3, 5][self.below(5) as usize];
        let q = if p % q == 0 { 1 } else { q };
        let neg = self.chance(0.3);
        match (q, neg) {
            (1, false) => p.to_string(),
            (1, true) => format!("(-{p})"),
            (_, false) => format!("({p}/{q})"),
            (_, true) => format!("(-{p}/{q})"),
        }
    }
    /// A product of at most `max_deg` coordinates (possibly none: "1").
    fn monomial(&mut self, max_deg: u64) -> String {
        let deg = self.below(max_deg + 1);
        let mut powers = [0u32; 4];
        for _ in 0..deg {
            powers[self.below(4) as usize] += 1;
        }
        let factors: Vec<String> = powers
            .iter()
            .enumerate()
            .filter(|(_, p)| **p > 0)
            .map(|(i, &p)| {
                if p == 1 {
                    COORDS[i].to_string()
                } else {
                    format!("{}^{p}", COORDS[i])
                }
            })
            .collect();
        if factors.is_empty() {
            "1".into()
        } else {
            factors.join("*")
        }
    }
    /// A polynomial of degree at most three with one to three terms.
    fn poly(&mut self) -> String {
        let n = 1 + self.below(3);
        let terms: Vec<String> = (0..n)
            .map(|_| match (self.coeff(), self.monomial(3)) {
                (c, m) if m == "1" => c,
                (c, m) => format!("{c}*{m}"),
            })
            .collect();
        format!("({})", terms.join(" + "))
    }
    /// A linear phase with small integer coefficients in two or three coordinates.
    fn phase(&mut self) -> String {
        let mut terms = Vec::new();
        for c in COORDS {
            if self.chance(0.55) {
                let k = 1 + self.below(3) as i64;
                terms.push((if self.chance(0.35) { -k } else { k }, c));
            }
        }
        if terms.is_empty() {
            self.coord().to_string()
        } else {
            linear(&terms)
        }
    }
    /// One random term.
    fn term(&mut self) -> String {
        match self.below(7) {
            0 => self.poly(),
            1 => format!("{}*sin({})", self.poly(), self.phase()),
            2 => format!("{}*cos({})", self.poly(), self.phase()),
            3 => format!("{}*exp(({})/3)", self.coeff(), self.phase()),
            4 => format!("{}/{}", self.poly(), self.den),
            5 => format!(
                "{}*sin({})*cos({})",
                self.coeff(),
                self.phase(),
                self.phase()
            ),
            _ => format!(
                "{}*exp(({})/4)*sin({})",
                self.monomial(2),
                self.phase(),
                self.phase()
            ),
        }
    }
    /// A component: zero, or a sum of one or two terms.
    fn component(&mut self) -> String {
        if self.chance(0.15) {
            return "0".into();
        }
        let n = 1 + self.below(2);
        let terms: Vec<String> = (0..n).map(|_| self.term()).collect();
        terms.join(" + ")
    }

    fn generic(&mut self) -> [[String; 4]; 4] {
        let mut h: [[String; 4]; 4] = Default::default();
        for mu in 0..4 {
            for nu in mu..4 {
                let c = self.component();
                h[mu][nu] = c.clone();
                h[nu][mu] = c;
            }
        }
        h
    }

    /// A transverse-traceless plane wave along a rational unit vector; its profiles may be
    /// rational functions if `rational`.
    fn tt(&mut self, rational: bool) -> [[String; 4]; 4] {
        let (rows, d) = FRAMES[self.below(FRAMES.len() as u64) as usize];
        let first = self.below(3) as usize;
        let order = [first, (first + 1 + self.below(2) as usize) % 3];
        let third = 3 - order[0] - order[1];
        let flip = if self.chance(0.5) { -1 } else { 1 };
        let n = rows[order[0]].map(|c| c * flip);
        let (u, v) = (rows[order[1]], rows[third]);
        let terms: Vec<(i64, &str)> = n
            .iter()
            .zip(["x", "y", "z"])
            .filter(|(k, _)| **k != 0)
            .map(|(k, c)| (*k, c))
            .collect();
        let dir = linear(&terms);
        let s = format!("(t - ({dir})/{d})");
        let family: &[&str] = if rational && self.chance(0.25) {
            &RATIONAL_PROFILES
        } else {
            &PROFILES
        };
        let plus = family[self.below(family.len() as u64) as usize].replace('S', &s);
        let cross = family[self.below(family.len() as u64) as usize].replace('S', &s);
        let (a, b) = (
            self.coeff(),
            if self.chance(0.25) {
                "0".to_string()
            } else {
                self.coeff()
            },
        );
        let mut h: [[String; 4]; 4] = Default::default();
        for row in h.iter_mut() {
            for c in row.iter_mut() {
                *c = "0".into();
            }
        }
        for i in 0..3 {
            for j in i..3 {
                let ep = u[i] * u[j] - v[i] * v[j];
                let ex = u[i] * v[j] + v[i] * u[j];
                let mut parts = Vec::new();
                if ep != 0 {
                    parts.push(format!("{a}*({ep}/{})*({plus})", d * d));
                }
                if ex != 0 && b != "0" {
                    parts.push(format!("{b}*({ex}/{})*({cross})", d * d));
                }
                let c = if parts.is_empty() {
                    "0".to_string()
                } else {
                    parts.join(" + ")
                };
                h[i + 1][j + 1] = c.clone();
                h[j + 1][i + 1] = c;
            }
        }
        h
    }

    /// `d_m xi_n + d_n xi_m` for random `xi`, written with lingrav's derivative operators.
    fn gauge(&mut self) -> [[String; 4]; 4] {
        let xi: Vec<String> = (0..4).map(|_| self.term()).collect();
        let mut h: [[String; 4]; 4] = Default::default();
        for mu in 0..4 {
            for nu in mu..4 {
                let c = if mu == nu {
                    format!("2*d_{}({})", COORDS[mu], xi[nu])
                } else {
                    format!(
                        "d_{}({}) + d_{}({})",
                        COORDS[mu], xi[nu], COORDS[nu], xi[mu]
                    )
                };
                h[mu][nu] = c.clone();
                h[nu][mu] = c;
            }
        }
        h
    }

    fn perturbation(&mut self, kind: Kind) -> [[String; 4]; 4] {
        let (a, b) = (self.coord(), self.coord());
        self.den = if a == b {
            format!("(1 + {a}^2)")
        } else {
            format!("(1 + {a}^2 + {b}^2)")
        };
        match kind {
            Kind::Generic => self.generic(),
            Kind::Tt => self.tt(true),
            Kind::Gauge => self.gauge(),
            Kind::TtGauge => {
                // Two unrelated denominators would multiply out in every component.
                let tt = self.tt(false);
                let g = self.gauge();
                let mut h: [[String; 4]; 4] = Default::default();
                for mu in 0..4 {
                    for nu in 0..4 {
                        h[mu][nu] = match tt[mu][nu].as_str() {
                            "0" => g[mu][nu].clone(),
                            t => format!("{t} + {}", g[mu][nu]),
                        };
                    }
                }
                h
            }
        }
    }
}

/// `k1*c1 + k2*c2 - ...` with unit coefficients left out.
fn linear(terms: &[(i64, &str)]) -> String {
    let mut out = String::new();
    for (n, &(k, c)) in terms.iter().enumerate() {
        let sign = match (n, k < 0) {
            (0, false) => "",
            (0, true) => "-",
            (_, false) => " + ",
            (_, true) => " - ",
        };
        let mag = if k.abs() == 1 {
            String::new()
        } else {
            format!("{}*", k.abs())
        };
        out.push_str(&format!("{sign}{mag}{c}"));
    }
    out
}

// ----- lingrav's side --------------------------------------------------------------------

fn build(store: &mut Store, text: &str) -> Form {
    let e = lingrav::parse::parse(text)
        .unwrap_or_else(|err| panic!("lingrav cannot parse {text:?}: {err}"));
    store
        .build(&e, &Names::free())
        .unwrap_or_else(|err| panic!("lingrav cannot build {text:?}: {err}"))
}

fn enclosure(v: Option<CInterval>) -> Value {
    match v {
        None => Value::Null,
        Some(z) => json!({
            "f64": [z.re.mid(), z.im.mid()],
            "re": [z.re.lo(), z.re.hi()],
            "im": [z.im.lo(), z.im.hi()],
        }),
    }
}

/// Tallies of what lingrav said, to be checked against the script's counts.
#[derive(Default)]
struct Tally {
    cases: usize,
    components: usize,
    zero: usize,
    nonzero: usize,
    undecided: Vec<String>,
    unevaluated: Vec<String>,
    round_trip: Vec<String>,
}

/// Where and how one perturbation's components are probed.
struct Probe<'a> {
    id: &'a str,
    points: &'a [Point],
    sampling: &'a Sampling,
}

/// lingrav's claims about one component.
fn component_record(
    store: &mut Store,
    probe: &Probe,
    quantity: &str,
    index: &[usize],
    f: Form,
    tally: &mut Tally,
) -> Value {
    let Probe {
        id,
        points,
        sampling,
    } = *probe;
    let name = format!("{id} {quantity}_{}", index_name(index));
    let canon = store.to_text(f);
    // The printer promises text that parses back to the same canonical form.
    let back = lingrav::parse::parse(&canon)
        .map_err(|e| format!("does not parse ({e})"))
        .and_then(|e| {
            store
                .build(&e, &Names::free())
                .map_err(|e| format!("does not build ({e})"))
        });
    match back {
        Ok(g) if g == f => {}
        Ok(_) => tally
            .round_trip
            .push(format!("{name}: parses back to another form: {canon}")),
        Err(why) => tally.round_trip.push(format!(
            "{name}: canonical text of {} chars {why}: {canon}",
            canon.len()
        )),
    }
    let verdict = match decide(store, f, sampling) {
        Verdict::Zero => {
            tally.zero += 1;
            json!({"label": "zero"})
        }
        Verdict::Nonzero(w) => {
            tally.nonzero += 1;
            let point: serde_json::Map<String, Value> =
                w.point.iter().map(|(n, v)| (n.clone(), json!(v))).collect();
            json!({"label": "nonzero", "witness": point, "value": enclosure(Some(w.value))})
        }
        Verdict::Undecided(why) => {
            tally.undecided.push(format!("{name}: {why}"));
            json!({"label": "undecided", "reason": why})
        }
    };
    let values: Vec<Value> = points
        .iter()
        .map(|pt| {
            let v = store.eval_interval(f, pt);
            if v.is_none() {
                tally.unevaluated.push(name.clone());
            }
            enclosure(v)
        })
        .collect();
    tally.components += 1;
    json!({
        "quantity": quantity,
        "index": index,
        "canon": canon,
        "verdict": verdict,
        "values": values,
    })
}

/// Runs lingrav on one perturbation and returns its JSON record.
fn run_case(
    id: &str,
    kind: Kind,
    h_text: &[[String; 4]; 4],
    rng: &mut SplitMix64,
    tally: &mut Tally,
) -> Value {
    let mut store = Store::new();
    let mut h = [[store.zero(); 4]; 4];
    let mut inputs = serde_json::Map::new();
    for mu in 0..4 {
        for nu in mu..4 {
            let f = build(&mut store, &h_text[mu][nu]);
            h[mu][nu] = f;
            h[nu][mu] = f;
            inputs.insert(index_name(&[mu, nu]), json!(h_text[mu][nu]));
        }
    }

    let mut points = Vec::new();
    let mut coords_json = Vec::new();
    for _ in 0..POINTS {
        let mut pt = Point::default();
        let mut coords = serde_json::Map::new();
        for c in COORDS {
            let mag = 0.3 + 1.4 * rng.next_f64();
            let v = if rng.next_u64() & 1 == 1 { -mag } else { mag };
            let k = store.symbol_kernel(c);
            pt.values
                .insert(k, CInterval::point(v, 0.0).expect("finite"));
            coords.insert(c.to_string(), json!(v));
        }
        points.push(pt);
        coords_json.push(Value::Object(coords));
    }
    let sampling = Sampling {
        seed: rng.next_u64(),
        ..Sampling::default()
    };

    let mut lin = Linearized::new(&mut store, h);
    let riemann = lin
        .riemann(&mut store)
        .unwrap_or_else(|e| panic!("{id}: Riemann: {e}"));
    let einstein = lin
        .einstein(&mut store)
        .unwrap_or_else(|e| panic!("{id}: Einstein: {e}"));
    let lorenz = lin
        .lorenz(&mut store)
        .unwrap_or_else(|e| panic!("{id}: Lorenz: {e}"));

    let mut claims: Vec<(&str, Vec<usize>, Form)> = riemann
        .into_iter()
        .map(|(idx, f)| ("riemann", idx.to_vec(), f))
        .collect();
    for mu in 0..4 {
        for nu in mu..4 {
            claims.push(("einstein", vec![mu, nu], einstein[mu][nu]));
        }
    }
    for (nu, &f) in lorenz.iter().enumerate() {
        claims.push(("lorenz", vec![nu], f));
    }
    let probe = Probe {
        id,
        points: &points,
        sampling: &sampling,
    };
    let comps: Vec<Value> = claims
        .iter()
        .map(|(quantity, idx, f)| component_record(&mut store, &probe, quantity, idx, *f, tally))
        .collect();
    tally.cases += 1;
    let (r0, g0, v0) = kind.expect_zero();
    let expect = |z: bool| if z { json!("zero") } else { Value::Null };
    json!({
        "id": id,
        "kind": kind.label(),
        "h": inputs,
        "points": coords_json,
        "expect": {"riemann": expect(r0), "einstein": expect(g0), "lorenz": expect(v0)},
        "components": comps,
    })
}

// ----- the SymPy side --------------------------------------------------------------------

fn on_ci() -> bool {
    crate::support::in_ci()
}

/// Why python3 with SymPy cannot be used, if it cannot.
fn python_missing(python: &str) -> Option<String> {
    crate::support::python_missing(python, "sympy, mpmath")
}

#[test]
fn tensor_layer_agrees_with_sympy() {
    let seed = crate::support::env_u64("LINGRAV_TENSOR_SEED").unwrap_or(DEFAULT_SEED);
    println!("sympy tensor check seed: {seed:#x} (rerun with LINGRAV_TENSOR_SEED={seed:#x})");

    let mut g = Gen {
        rng: SplitMix64::new(seed),
        den: String::new(),
    };
    let mut rng = SplitMix64::new(seed ^ 0x7e45_0b01);
    let mut tally = Tally::default();
    let dir = tempfile::tempdir().expect("a temporary directory");
    let path = dir.path().join("tensor.jsonl");
    let started = Instant::now();
    {
        let mut file =
            std::io::BufWriter::new(std::fs::File::create(&path).expect("create the corpus file"));
        for (n, &kind) in KINDS.iter().enumerate() {
            let id = format!("{}-{n:02}", kind.label());
            let h = g.perturbation(kind);
            let t0 = Instant::now();
            let record = run_case(&id, kind, &h, &mut rng, &mut tally);
            let longest = record["components"]
                .as_array()
                .into_iter()
                .flatten()
                .filter_map(|c| c["canon"].as_str().map(str::len))
                .max()
                .unwrap_or(0);
            println!(
                "  {id}: lingrav {:.1} s, longest canonical text {longest} chars",
                t0.elapsed().as_secs_f64()
            );
            writeln!(file, "{record}").expect("write the corpus");
        }
        file.flush().expect("write the corpus");
    }
    println!(
        "lingrav: {} perturbations, {} components ({} zero, {} nonzero, {} undecided) in {:.1} s",
        tally.cases,
        tally.components,
        tally.zero,
        tally.nonzero,
        tally.undecided.len(),
        started.elapsed().as_secs_f64()
    );
    for u in &tally.undecided {
        println!("  undecided: {u}");
    }

    // No silent drops: every component was built, decided and evaluated.
    assert_eq!(tally.cases, KINDS.len());
    assert_eq!(tally.components, KINDS.len() * (20 + 10 + 4));
    assert!(
        tally.unevaluated.is_empty(),
        "lingrav could not evaluate: {:?}",
        tally.unevaluated
    );

    run_sympy(&path, &tally);

    // The printer's promise, checked after SymPy has had its say on the values.
    let shown: Vec<String> = tally
        .round_trip
        .iter()
        .take(3)
        .map(|s| s.chars().take(300).collect())
        .collect();
    assert!(
        tally.round_trip.is_empty(),
        "{} canonical texts do not parse back to the same form, e.g. {shown:#?}",
        tally.round_trip.len()
    );
}

/// Runs the SymPy script on the corpus and checks that it judged all of it; prints "skipped"
/// and returns if python3 with SymPy is missing outside CI.
fn run_sympy(path: &Path, tally: &Tally) {
    let python = std::env::var("LINGRAV_PYTHON").unwrap_or_else(|_| "python3".into());
    if let Some(why) = python_missing(&python) {
        if on_ci() {
            panic!("CI is set, so the SymPy tensor check must run, but {why} (pip install sympy)");
        }
        println!("skipped: sympy tensor check: {why}");
        return;
    }

    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/sympy/tensor_check.py");
    let started = Instant::now();
    let out = Command::new(&python)
        .arg(&script)
        .arg(path)
        .output()
        .expect("run the tensor check script");
    let stdout = String::from_utf8_lossy(&out.stdout);
    print!("{stdout}");
    eprint!("{}", String::from_utf8_lossy(&out.stderr));
    println!("sympy side: {:.1} s", started.elapsed().as_secs_f64());
    assert!(
        out.status.success(),
        "the SymPy tensor check found disagreements (exit status {})",
        out.status
    );

    // The script must have judged every perturbation and component lingrav wrote.
    let summary = stdout
        .lines()
        .find(|l| l.starts_with("tensor cross-check: "))
        .expect("a summary line");
    let words: Vec<&str> = summary["tensor cross-check: ".len()..]
        .split_whitespace()
        .collect();
    let count = |i: usize| -> usize {
        words
            .get(i)
            .and_then(|w| w.parse().ok())
            .expect("a count in the summary")
    };
    assert_eq!(count(0), tally.cases, "perturbations judged by the script");
    assert_eq!(
        count(2),
        tally.components,
        "components judged by the script"
    );
}
