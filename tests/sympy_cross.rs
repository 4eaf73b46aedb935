//! An outside check against a reference library: lingrav and SymPy must agree on zero verdicts
//! and on numeric values, over a seeded corpus of random expressions.
//!
//! Design decision: the corpus is generated here, in Rust, and everything lingrav says about
//! it (verdicts with witnesses, certified enclosures of values at given points, canonical and
//! derivative texts) is written as JSON lines; `tests/sympy/cross_check.py` then judges every
//! claim independently with SymPy and mpmath. The script fails only on a contradiction, never
//! because SymPy could not decide something: see its module doc for the rules.
//!
//! Three kinds of generated case, plus hand-written ones from the physics domain:
//! - identity pairs `C[L]` vs `C[R]`: a random context `C` around a known identity `L = R` with
//!   random arguments (expected zero);
//! - near misses `C[L]` vs `C[W]`: the same with a deliberate error in `R` (expected nonzero);
//! - value cases: a random expression on its own, its value and its derivative by `x`.
//!
//! Cases are bounded in size (terms and printed length); a generated candidate over the bound
//! is redrawn, and every redraw is printed with its reason.
//!
//! Printing is checked twice: SymPy reads lingrav's printed canonical texts and must find the
//! original values, and lingrav itself must prove `parse(print(f)) - f` zero. The second is
//! lingrav's completeness, so a failure is listed, not failed. A known cause: a printed
//! imaginary unit `i` (exponentials not regrouped into sin and cos), which the parser reads as
//! a free symbol.
//!
//! The seed is printed; `LINGRAV_CROSS_SEED` reruns another one. `LINGRAV_PYTHON` names the
//! interpreter (default `python3`); `LINGRAV_CROSS_CORPUS=path` keeps the corpus there.
//! Without python3 and SymPy the SymPy half prints "skipped: ..." and passes, except under CI
//! (`CI` set and not `false`/`0`), where it fails: CI must `pip install sympy`.

use lingrav::canon::{Coeff, Form, FunctionSample, Limits, Names, Point, Store};
use lingrav::interval::CInterval;
use lingrav::zero::{Sampling, SplitMix64, Verdict, decide};
use rustc_hash::FxHashMap;
use serde_json::{Value, json};
use std::io::Write as _;
use std::path::Path;
use std::process::Command;
use std::rc::Rc;

const DEFAULT_SEED: u64 = 0x5717_c0de_2025;

/// Every symbol a case may use; each sample point gives all of them a value.
const SYMBOLS: [&str; 9] = ["x", "y", "z", "t", "omega", "k", "kx", "ky", "m"];

/// Samples of the arbitrary functions, in the variable `u` (shared with the script).
const SAMPLES: [(&str, &str); 2] = [("F", "exp(-u^2/3)"), ("G", "sin(u)/(u^2 + 2)")];

/// Points at which values are compared.
const POINTS_PER_CASE: usize = 3;

/// How a case was made, and what its verdict should be.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Kind {
    Identity,
    NearMiss,
    Value,
    Physics,
}

impl Kind {
    fn label(self) -> &'static str {
        match self {
            Kind::Identity => "identity",
            Kind::NearMiss => "near_miss",
            Kind::Value => "value",
            Kind::Physics => "physics",
        }
    }
}

struct Case {
    id: String,
    kind: Kind,
    /// `Some(true)`: zero by construction; `Some(false)`: nonzero by construction.
    expect_zero: Option<bool>,
    lhs: String,
    rhs: String,
    /// Which identity (or hand-written case) it came from.
    note: String,
}

// ----- the generator ---------------------------------------------------------------------

struct Gen {
    rng: SplitMix64,
}

impl Gen {
    fn below(&mut self, n: u64) -> u64 {
        self.rng.next_u64() % n
    }
    fn chance(&mut self, p: f64) -> bool {
        self.rng.next_f64() < p
    }
    fn pick<'a>(&mut self, xs: &[&'a str]) -> &'a str {
        xs[self.below(xs.len() as u64) as usize]
    }
    fn sym(&mut self) -> String {
        self.pick(&["x", "y", "z"]).to_string()
    }
    /// A small exact number: an integer or a fraction, sometimes negative.
    fn num(&mut self) -> String {
        let s = if self.chance(0.5) {
            (1 + self.below(5)).to_string()
        } else {
            let q = 2 + self.below(6);
            let p = 1 + self.below(7);
            format!("{p}/{q}")
        };
        if self.chance(0.25) {
            format!("(-{s})")
        } else if s.contains('/') {
            format!("({s})")
        } else {
            s
        }
    }
    /// A positive constant, for safe denominators and radicands.
    fn pos(&mut self) -> String {
        self.pick(&["1", "2", "1/2", "3/4", "5"]).to_string()
    }
    fn leaf(&mut self) -> String {
        if self.chance(0.7) {
            self.sym()
        } else {
            self.num()
        }
    }
    /// A random expression of at most `depth` levels, over x, y, z.
    fn expr(&mut self, depth: u32) -> String {
        if depth == 0 || self.chance(0.2) {
            return self.leaf();
        }
        let d = depth - 1;
        match self.below(13) {
            0 | 1 => format!("({} + {})", self.expr(d), self.expr(d)),
            2 => format!("({} - {})", self.expr(d), self.expr(d)),
            3 | 4 => format!("({}*{})", self.expr(d), self.expr(d)),
            5 => format!("sin({})", self.expr(d.min(1))),
            6 => format!("cos({})", self.expr(d.min(1))),
            // exp of a small argument only, so that values stay far from overflow
            7 => format!("exp({})", self.expr(d.min(1))),
            8 => format!("{}^{}", self.atom(d), self.pick(&["2", "3"])),
            9 => format!(
                "({}/({}^2 + {}))",
                self.expr(d),
                self.atom(d.min(1)),
                self.pos()
            ),
            10 => format!("sqrt({}^2 + {})", self.atom(d.min(1)), self.pos()),
            11 => format!("({}/{})", self.expr(d), self.safe_den()),
            _ => format!("log({}^2 + {})", self.atom(d.min(1)), self.pos()),
        }
    }
    /// An expression that may stand before `^` (or anywhere an operand may).
    fn atom(&mut self, depth: u32) -> String {
        let e = self.expr(depth);
        parenthesise(e)
    }
    /// A denominator that is never zero at sample points: a symbol (sampled away from 0), a
    /// sum of a square and a positive constant, or an exponential.
    fn safe_den(&mut self) -> String {
        match self.below(3) {
            0 => self.sym(),
            1 => format!("({}^2 + {})", self.atom(1), self.pos()),
            _ => format!("exp({})", self.expr(1)),
        }
    }
    /// An identity argument: small, and not constant (checked by building it).
    fn arg(&mut self) -> String {
        loop {
            let depth = 1 + self.below(2) as u32;
            let a = parenthesise(self.expr(depth));
            let mut store = Store::new();
            let f = build(&mut store, &a);
            if !store.free_symbols(f).is_empty() {
                return a;
            }
        }
    }

    /// A known identity `L = R` with random arguments, and a wrong version `W` of `R`.
    fn identity(&mut self) -> (String, String, String, &'static str) {
        let a = self.arg();
        let b = self.arg();
        let c = self.pos();
        match self.below(21) {
            0 => {
                let w = if self.chance(0.5) {
                    format!("sin({a})*cos({a})")
                } else {
                    format!("2*sin({a})*cos(2*{a})")
                };
                (
                    format!("sin(2*{a})"),
                    format!("2*sin({a})*cos({a})"),
                    w,
                    "sin(2a) = 2 sin a cos a",
                )
            }
            1 => (
                format!("cos({a})^2"),
                format!("(1 - sin({a})^2)"),
                format!("(1 + sin({a})^2)"),
                "cos^2 = 1 - sin^2",
            ),
            2 => (
                format!("({a} + {b})^2"),
                format!("({a}^2 + 2*{a}*{b} + {b}^2)"),
                format!("({a}^2 + {a}*{b} + {b}^2)"),
                "(a+b)^2 expanded",
            ),
            3 => (
                format!("exp({a} + {b})"),
                format!("(exp({a})*exp({b}))"),
                format!("(exp({a})*exp(-{b}))"),
                "exp(a+b) = exp a exp b",
            ),
            4 => (
                format!("tan({a})"),
                format!("(sin({a})/cos({a}))"),
                format!("(cos({a})/sin({a}))"),
                "tan = sin/cos",
            ),
            5 => {
                let (p, q) = (self.safe_den(), self.safe_den());
                (
                    format!("({a}/{p} + {b}/{q})"),
                    format!("(({a}*{q} + {p}*{b})/({p}*{q}))"),
                    format!("(({a}*{q} - {p}*{b})/({p}*{q}))"),
                    "a/b + c/d = (ad + bc)/(bd)",
                )
            }
            6 => (
                format!("cos({a} + {b})"),
                format!("(cos({a})*cos({b}) - sin({a})*sin({b}))"),
                format!("(cos({a})*cos({b}) + sin({a})*sin({b}))"),
                "cos(a+b)",
            ),
            7 => (
                format!("sin({a} + {b})"),
                format!("(sin({a})*cos({b}) + cos({a})*sin({b}))"),
                format!("(sin({a})*cos({b}) - cos({a})*sin({b}))"),
                "sin(a+b)",
            ),
            8 => (
                format!("cos(2*{a})"),
                format!("(2*cos({a})^2 - 1)"),
                format!("(2*cos({a})^2 + 1)"),
                "cos(2a) = 2 cos^2 a - 1",
            ),
            9 => (
                format!("(({a} - {b})*({a} + {b}))"),
                format!("({a}^2 - {b}^2)"),
                format!("({a}^2 + {b}^2)"),
                "(a-b)(a+b)",
            ),
            10 => (
                format!("(sin({a})^2 + cos({a})^2)"),
                "1".into(),
                format!("(sin({a})^2 - cos({a})^2)"),
                "sin^2 + cos^2 = 1",
            ),
            11 => (
                format!("sqrt({a}^2 + {c})^2"),
                format!("({a}^2 + {c})"),
                format!("({a}^2 + 2*{c})"),
                "sqrt(q)^2 = q",
            ),
            12 => (
                format!("(1/sqrt({a}^2 + {c}))"),
                format!("(sqrt({a}^2 + {c})/({a}^2 + {c}))"),
                format!("(sqrt({a}^2 + {c})/({a}^2 + {c})^2)"),
                "1/sqrt(q) = sqrt(q)/q",
            ),
            13 => (
                format!("(cosh({a})^2 - sinh({a})^2)"),
                "1".into(),
                format!("(cosh({a})^2 + sinh({a})^2)"),
                "cosh^2 - sinh^2 = 1",
            ),
            14 => (
                format!("sin(3*{a})"),
                format!("(3*sin({a}) - 4*sin({a})^3)"),
                format!("(3*sin({a}) - 3*sin({a})^3)"),
                "sin(3a)",
            ),
            15 => {
                let w = if self.chance(0.5) {
                    format!("cos({a} + pi/6)")
                } else {
                    format!("sin({a})")
                };
                (
                    format!("sin({a} + pi/2)"),
                    format!("cos({a})"),
                    w,
                    "sin(a + pi/2) = cos a",
                )
            }
            16 => (
                format!("exp(2*{a})"),
                format!("exp({a})^2"),
                format!("exp({a})^3"),
                "exp(2a) = exp(a)^2",
            ),
            17 => (
                format!("({a}^2*{a}^3)"),
                format!("{a}^5"),
                format!("{a}^6"),
                "a^2 a^3 = a^5",
            ),
            18 => (
                format!("tanh({a})"),
                format!("(sinh({a})/cosh({a}))"),
                format!("(cosh({a})/sinh({a}))"),
                "tanh = sinh/cosh",
            ),
            19 => (
                format!("({a} + {b})^3"),
                format!("({a}^3 + 3*{a}^2*{b} + 3*{a}*{b}^2 + {b}^3)"),
                format!("({a}^3 + 3*{a}^2*{b} + 2*{a}*{b}^2 + {b}^3)"),
                "(a+b)^3 expanded",
            ),
            _ => (
                format!("cos({a})^3"),
                format!("((3*cos({a}) + cos(3*{a}))/4)"),
                format!("((3*cos({a}) + cos(3*{a}))/4 + 7e-25*{a})"),
                "cos^3 a = (3 cos a + cos 3a)/4 (the wrong one is off by 7e-25 a)",
            ),
        }
    }

    /// A random context around `hole`: the hole appears exactly once.
    fn context(&mut self, hole: &str, depth: u32) -> String {
        if depth == 0 || self.chance(0.2) {
            return hole.to_string();
        }
        let inner = self.context(hole, depth - 1);
        match self.below(7) {
            0 => format!("({inner} + {})", self.expr(2)),
            1 => format!("({} - {inner})", self.expr(2)),
            2 => format!("({}*{inner})", self.expr(1)),
            3 => format!("({inner}/{})", self.safe_den()),
            4 => format!("({inner})^2"),
            5 => format!("sin({inner})"),
            _ => format!("({inner}*{})", self.expr(2)),
        }
    }
}

/// `e` itself if it is a name, a number, a call or wholly in parentheses, else `(e)`, so that
/// it can be the base of a power: `x^2` as a base must print as `(x^2)^3`, not `x^2^3`.
fn parenthesise(e: String) -> String {
    let enclosed = |s: &str| {
        // True if the `(` at the start closes at the very end.
        let mut depth = 0i32;
        for (i, c) in s.char_indices() {
            match c {
                '(' => depth += 1,
                ')' => {
                    depth -= 1;
                    if depth == 0 {
                        return i == s.len() - 1;
                    }
                }
                _ => {}
            }
        }
        false
    };
    let name_len = e
        .find(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
        .unwrap_or(e.len());
    let plain = name_len == e.len();
    let call = name_len > 0 && e[name_len..].starts_with('(') && enclosed(&e[name_len..]);
    if plain || call || (e.starts_with('(') && enclosed(&e)) {
        e
    } else {
        format!("({e})")
    }
}

/// Hand-written cases from the physics domain: plane and spherical waves under the
/// d'Alembertian, the Laplacian of powers of r, derivatives of r.
fn physics_cases() -> Vec<(bool, &'static str, String, String)> {
    let r = "sqrt(x^2 + y^2 + z^2)";
    let box_of = |f: &str| format!("(-d_t_t({f}) + d_x_x({f}) + d_y_y({f}) + d_z_z({f}))");
    let lap = |f: &str| format!("(d_x_x({f}) + d_y_y({f}) + d_z_z({f}))");
    vec![
        (
            true,
            "box of a plane wave cos(omega (t - z))",
            box_of("cos(omega*(t - z))"),
            "0".into(),
        ),
        (
            true,
            "box of an arbitrary plane wave F(t - x)",
            box_of("F(t - x)"),
            "0".into(),
        ),
        (
            true,
            "box of a dispersive wave",
            box_of("cos(omega*t - k*z)"),
            "(omega^2 - k^2)*cos(omega*t - k*z)".into(),
        ),
        (
            false,
            "box of a dispersive wave, sign error",
            box_of("cos(omega*t - k*z)"),
            "(k^2 - omega^2)*cos(omega*t - k*z)".into(),
        ),
        (
            true,
            "box of an oblique wave, direction (3, 4)/5",
            box_of("sin(omega*(t - (3*x + 4*y)/5))"),
            "0".into(),
        ),
        (
            false,
            "box of an oblique wave, direction not unit",
            box_of("sin(omega*(t - (3*x + 5*y)/5))"),
            "0".into(),
        ),
        (
            true,
            "box of a modulated wave exp(-x^2) G(t - z)",
            box_of("exp(-x^2)*G(t - z)"),
            "(4*x^2 - 2)*exp(-x^2)*G(t - z)".into(),
        ),
        (
            true,
            "Laplacian of 1/r away from the origin",
            lap(&format!("1/{r}")),
            "0".into(),
        ),
        (
            false,
            "Laplacian of 1/r is not 1/r^3",
            lap(&format!("1/{r}")),
            format!("1/{r}^3"),
        ),
        (
            true,
            "Laplacian of 1/r^2 = 2/r^4",
            lap(&format!("1/({r})^2")),
            "2/(x^2 + y^2 + z^2)^2".into(),
        ),
        (true, "Laplacian of r = 2/r", lap(r), format!("2/{r}")),
        (true, "d_x r = x/r", format!("d_x({r})"), format!("x/{r}")),
        (
            true,
            "d_x_x r = (y^2 + z^2)/r^3",
            format!("d_x_x({r})"),
            format!("(y^2 + z^2)/{r}^3"),
        ),
        (
            false,
            "d_x_x r is not x^2/r^3",
            format!("d_x_x({r})"),
            format!("x^2/{r}^3"),
        ),
        (
            true,
            "Yukawa: Laplacian of exp(-m r)/r = m^2 exp(-m r)/r",
            lap(&format!("exp(-m*{r})/{r}")),
            format!("m^2*exp(-m*{r})/{r}"),
        ),
        (
            true,
            "spherical wave: box of F(t - r)/r = 0",
            box_of(&format!("F(t - {r})/{r}")),
            "0".into(),
        ),
        (
            false,
            "box of F(t - r) is not 0",
            box_of(&format!("F(t - {r})")),
            "0".into(),
        ),
        (
            true,
            "transverse gauge: d_t F(t - z) + d_z F(t - z) = 0",
            "(d_t(F(t - z)) + d_z(F(t - z)))".into(),
            "0".into(),
        ),
        (
            true,
            "wave vector in the plane",
            box_of("cos(omega*t - kx*x - ky*y)"),
            "(omega^2 - kx^2 - ky^2)*cos(omega*t - kx*x - ky*y)".into(),
        ),
    ]
}

/// Largest numerator (in terms) of a generated case's lhs, rhs, difference or derivative,
/// and longest printed form. Nested powers of sums of exponentials grow fast; bounded cases
/// keep SymPy quick and keep printed forms far below the parser's nesting limit (a sum of n
/// terms is n levels deep).
const MAX_TERMS: usize = 150;
const MAX_TEXT: usize = 12_000;
/// The term limit on intermediate results while a candidate is tried.
const FILTER_MAX_TERMS: usize = 600;

/// How many cases of each generated kind.
const PLAN: [(Kind, usize); 3] = [
    (Kind::Identity, 60),
    (Kind::NearMiss, 45),
    (Kind::Value, 30),
];

impl Gen {
    /// Draws a candidate of `kind`: lhs, rhs and a note.
    fn draw(&mut self, kind: Kind) -> (String, String, String) {
        match kind {
            Kind::Identity | Kind::NearMiss => {
                let (l, r, w, note) = self.identity();
                let hole = "\u{1}";
                let ctx = self.context(hole, 2);
                if kind == Kind::Identity {
                    (
                        ctx.replace(hole, &l),
                        ctx.replace(hole, &r),
                        note.to_string(),
                    )
                } else {
                    (
                        ctx.replace(hole, &l),
                        ctx.replace(hole, &w),
                        format!("wrong: {note}"),
                    )
                }
            }
            _ => (
                self.expr(3),
                "0".to_string(),
                "random expression".to_string(),
            ),
        }
    }
}

// ----- lingrav's side --------------------------------------------------------------------

fn build(store: &mut Store, text: &str) -> Form {
    let e = lingrav::parse::parse(text)
        .unwrap_or_else(|err| panic!("lingrav cannot parse {text:?}: {err}"));
    store
        .build(&e, &Names::free())
        .unwrap_or_else(|err| panic!("lingrav cannot build {text:?}: {err}"))
}

/// Builds `text` reading the name `i` as the imaginary unit.
fn build_with_i(store: &mut Store, text: &str) -> Form {
    let mut names = Names::free();
    let i = store.constant(Coeff::i());
    names.define("i", i);
    let e = lingrav::parse::parse(text)
        .unwrap_or_else(|err| panic!("lingrav cannot parse {text:?}: {err}"));
    store
        .build(&e, &names)
        .unwrap_or_else(|err| panic!("lingrav cannot build {text:?}: {err}"))
}

/// True if `text` has `i` as a whole name (lingrav reads it as a free symbol).
fn has_name_i(text: &str) -> bool {
    let b = text.as_bytes();
    let ident = |c: u8| c.is_ascii_alphanumeric() || c == b'_';
    (0..b.len()).any(|j| {
        b[j] == b'i' && (j == 0 || !ident(b[j - 1])) && (j + 1 == b.len() || !ident(b[j + 1]))
    })
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

fn samples(store: &mut Store) -> FxHashMap<Rc<str>, FunctionSample> {
    let var = store.symbol_kernel("u");
    SAMPLES
        .iter()
        .map(|(name, text)| {
            (
                Rc::from(*name),
                FunctionSample {
                    var,
                    form: build(store, text),
                },
            )
        })
        .collect()
}

/// Tallies of what lingrav said, to be checked against the script's counts.
#[derive(Default)]
struct Tally {
    cases: usize,
    zero: usize,
    nonzero: usize,
    undecided: usize,
    values: usize,
    unevaluated: Vec<String>,
    /// Cases whose printed canonical form does not parse back to the same form, with the text.
    not_roundtrip: Vec<(String, String)>,
}

/// The forms of a case, if it is small enough: lhs, rhs, lhs - rhs and d_x(lhs), each within
/// [`MAX_TERMS`] and [`MAX_TEXT`]; `Err` says why not. A candidate that blows up is abandoned
/// early, by size (not time, so that the corpus of a seed is the same on every machine).
fn forms(store: &mut Store, case: &Case) -> Result<[Form; 4], String> {
    store.limits = Limits {
        max_terms: FILTER_MAX_TERMS,
        deadline: None,
    };
    let mut form = |text: &str| {
        let e = lingrav::parse::parse(text)
            .unwrap_or_else(|err| panic!("lingrav cannot parse {text:?}: {err}"));
        store.build(&e, &Names::free()).map_err(|e| e.to_string())
    };
    let (lhs, rhs) = (form(&case.lhs)?, form(&case.rhs)?);
    let diff = store.sub(lhs, rhs).map_err(|e| e.to_string())?;
    let deriv = store.diff_by_name(lhs, "x").map_err(|e| e.to_string())?;
    store.limits = Limits::default();
    for f in [lhs, rhs, diff, deriv] {
        let (n, len) = (store.num_terms(f), store.to_text(f).len());
        if n > MAX_TERMS || len > MAX_TEXT {
            return Err(format!(
                "a form with {n} terms, printed in {len} characters"
            ));
        }
    }
    Ok([lhs, rhs, diff, deriv])
}

/// Runs lingrav on one case and returns its JSON record, or why the case is too large.
fn run_case(case: &Case, rng: &mut SplitMix64, tally: &mut Tally) -> Result<Value, String> {
    let mut store = Store::new();
    let [lhs, rhs, diff, deriv] = forms(&mut store, case)?;
    let canon_lhs = store.to_text(lhs);
    let canon_diff = store.to_text(diff);
    let canon_deriv = store.to_text(deriv);
    // The printed form must parse back to an equal form: one whose difference from the
    // original cancels to 0. Its value is taken from a reading with `i` as the imaginary
    // unit, so that a printed `i` does not hide the rest of the printing from the check.
    let back = build(&mut store, &canon_lhs);
    let roundtrip = store.sub(back, lhs).is_ok_and(|d| store.is_zero(d));
    if !roundtrip {
        tally
            .not_roundtrip
            .push((case.id.clone(), canon_lhs.clone()));
    }
    let reparsed = if has_name_i(&canon_lhs) {
        build_with_i(&mut store, &canon_lhs)
    } else {
        back
    };

    let samples = samples(&mut store);
    let sampling = Sampling {
        samples: samples.clone(),
        ..Sampling::default()
    };
    let verdict = decide(&mut store, diff, &sampling);
    let verdict_json = match &verdict {
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
            tally.undecided += 1;
            json!({"label": "undecided", "reason": why})
        }
    };

    let mut points = Vec::new();
    let mut values = Vec::new();
    for _ in 0..POINTS_PER_CASE {
        let mut pt = Point {
            samples: samples.clone(),
            ..Point::default()
        };
        let mut coords = serde_json::Map::new();
        for s in SYMBOLS {
            let mag = 0.3 + 1.4 * rng.next_f64();
            let v = if rng.next_u64() & 1 == 1 { -mag } else { mag };
            let k = store.symbol_kernel(s);
            pt.values
                .insert(k, CInterval::point(v, 0.0).expect("finite"));
            coords.insert(s.to_string(), json!(v));
        }
        let mut at = serde_json::Map::new();
        for (name, f) in [
            ("lhs", lhs),
            ("rhs", rhs),
            ("canon", reparsed),
            ("diff", diff),
            ("deriv", deriv),
        ] {
            let v = store.eval_interval(f, &pt);
            tally.values += 1;
            if v.is_none() {
                tally.unevaluated.push(format!("{} {name}", case.id));
            }
            at.insert(name.into(), enclosure(v));
        }
        points.push(Value::Object(coords));
        values.push(Value::Object(at));
    }
    tally.cases += 1;
    Ok(json!({
        "id": case.id,
        "kind": case.kind.label(),
        "note": case.note,
        "expect": case.expect_zero.map(|z| if z { "zero" } else { "nonzero" }),
        "lhs": case.lhs,
        "rhs": case.rhs,
        "canon_lhs": canon_lhs,
        "roundtrip": roundtrip,
        "canon_diff": canon_diff,
        "deriv_var": "x",
        "canon_deriv": canon_deriv,
        "verdict": verdict_json,
        "points": points,
        "values": values,
    }))
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
fn lingrav_agrees_with_sympy() {
    let seed = crate::support::env_u64("LINGRAV_CROSS_SEED").unwrap_or(DEFAULT_SEED);
    println!("sympy cross-check seed: {seed:#x} (rerun with LINGRAV_CROSS_SEED={seed:#x})");

    let mut generator = Gen {
        rng: SplitMix64::new(seed),
    };
    let mut rng = SplitMix64::new(seed ^ 0x9017_7500);
    let mut tally = Tally::default();
    let mut cases: Vec<Case> = Vec::new();
    let mut records: Vec<Value> = Vec::new();
    let mut redrawn = 0usize;
    let mut run = |case: Case, records: &mut Vec<Value>, cases: &mut Vec<Case>| {
        let r = run_case(&case, &mut rng, &mut tally);
        if let Ok(record) = &r {
            records.push(record.clone());
            cases.push(case);
        }
        r.err()
    };
    for (kind, count) in PLAN {
        for _ in 0..count {
            // Too large a candidate is redrawn (counted and shown), never silently dropped.
            loop {
                let (lhs, rhs, note) = generator.draw(kind);
                let id = format!("{}-{:03}", kind.label(), cases.len());
                let expect_zero = match kind {
                    Kind::Identity => Some(true),
                    Kind::NearMiss => Some(false),
                    _ => None,
                };
                let case = Case {
                    id,
                    kind,
                    expect_zero,
                    lhs,
                    rhs,
                    note,
                };
                let shown = format!("{} {}", case.lhs, case.rhs);
                match run(case, &mut records, &mut cases) {
                    None => break,
                    Some(why) => {
                        redrawn += 1;
                        let short: String = shown.chars().take(120).collect();
                        println!("  redrawn ({why}): {short} ...");
                    }
                }
            }
        }
    }
    for (zero, note, lhs, rhs) in physics_cases() {
        let id = format!("{}-{:03}", Kind::Physics.label(), cases.len());
        let case = Case {
            id,
            kind: Kind::Physics,
            expect_zero: Some(zero),
            lhs,
            rhs,
            note: note.into(),
        };
        let name = case.id.clone();
        if let Some(why) = run(case, &mut records, &mut cases) {
            panic!("hand-written case {name} is too large: {why}");
        }
    }
    println!(
        "generated {} cases ({redrawn} redrawn for exceeding {MAX_TERMS} terms or {MAX_TEXT} characters)",
        cases.len()
    );
    let dir = tempfile::tempdir().expect("a temporary directory");
    // LINGRAV_CROSS_CORPUS keeps the corpus at a chosen path, for rerunning the script by hand.
    let path = std::env::var_os("LINGRAV_CROSS_CORPUS")
        .map(std::path::PathBuf::from)
        .unwrap_or_else(|| dir.path().join("corpus.jsonl"));
    {
        let mut file =
            std::io::BufWriter::new(std::fs::File::create(&path).expect("create the corpus file"));
        for record in &records {
            writeln!(file, "{record}").expect("write the corpus");
        }
        file.flush().expect("write the corpus");
    }

    // No silent drops: every generated case was parsed, built, decided and evaluated.
    assert_eq!(tally.cases, cases.len());
    assert_eq!(tally.zero + tally.nonzero + tally.undecided, cases.len());
    assert_eq!(tally.values, cases.len() * POINTS_PER_CASE * 5);
    let lines = std::fs::read_to_string(&path)
        .expect("read the corpus back")
        .lines()
        .count();
    assert_eq!(lines, cases.len(), "corpus lines written");
    assert!(
        tally.unevaluated.is_empty(),
        "lingrav could not evaluate: {:?}",
        tally.unevaluated
    );
    // Printing should round-trip through lingrav's own zero test. Where it does not, the case
    // is listed, not failed (see the module doc); SymPy checks the printed text's value anyway.
    for (id, text) in &tally.not_roundtrip {
        let why = if has_name_i(text) {
            "prints the imaginary unit as `i`"
        } else {
            "not proved equal"
        };
        let short: String = text.chars().take(160).collect();
        let more = if short.len() < text.len() { " ..." } else { "" };
        println!(
            "  printed form does not parse back to an equal form ({why}): {id}: {short}{more}"
        );
    }
    println!(
        "lingrav: {} cases ({} zero, {} nonzero, {} undecided), {} values at {} points each, \
         {} printed forms that do not parse back to an equal form",
        cases.len(),
        tally.zero,
        tally.nonzero,
        tally.undecided,
        tally.values,
        POINTS_PER_CASE,
        tally.not_roundtrip.len()
    );

    let python = std::env::var("LINGRAV_PYTHON").unwrap_or_else(|_| "python3".into());
    if let Some(why) = python_missing(&python) {
        if on_ci() {
            panic!("CI is set, so the SymPy cross-check must run, but {why} (pip install sympy)");
        }
        println!("skipped: sympy cross-check: {why}");
        return;
    }

    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/sympy/cross_check.py");
    let out = Command::new(&python)
        .arg(&script)
        .arg(&path)
        .output()
        .expect("run the cross-check script");
    let stdout = String::from_utf8_lossy(&out.stdout);
    print!("{stdout}");
    eprint!("{}", String::from_utf8_lossy(&out.stderr));
    assert!(
        out.status.success(),
        "the SymPy cross-check failed (exit status {}): see its output above",
        out.status
    );

    // The script must have judged every case lingrav wrote.
    let summary = stdout
        .lines()
        .find(|l| l.starts_with("sympy cross-check: "))
        .expect("a summary line");
    let n: usize = summary["sympy cross-check: ".len()..]
        .split_whitespace()
        .next()
        .and_then(|w| w.parse().ok())
        .expect("a case count in the summary");
    assert_eq!(n, cases.len(), "cases judged by the script");
    // Five lingrav values and three printed texts at every point of every case.
    let values: usize = summary
        .split(", ")
        .find_map(|part| part.strip_suffix(" values compared"))
        .and_then(|w| w.rsplit(' ').next()?.parse().ok())
        .expect("a value count in the summary");
    assert_eq!(
        values,
        cases.len() * POINTS_PER_CASE * 8,
        "values compared by the script"
    );
}
