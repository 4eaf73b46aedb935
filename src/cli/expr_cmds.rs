//! The expression commands: `zero`, `simplify`, `diff`.

use super::out::{Failure, Outcome, gave_up, print, with_source};
use clap::{Args, ValueEnum};
use lingrav::canon::{CanonError, Form, Names, Store};
use lingrav::zero::{Sampling, Verdict, decide};

/// Output format.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// Readable text.
    Text,
    /// JSON for scripts.
    Json,
}

/// Limits of the expression commands: 20 s of algebra by default.
pub type LimitArgs = super::limits::LimitArgs<20_000>;

/// Arguments of `lingrav zero`.
#[derive(Args, Debug)]
pub struct ZeroArgs {
    /// The expression.
    #[arg(allow_hyphen_values = true)]
    expr: String,
    /// A second expression: test whether EXPR - OTHER is zero.
    #[arg(allow_hyphen_values = true)]
    other: Option<String>,
    /// Seed of the random witness points.
    #[arg(long, default_value_t = 0x5eed_1a96_7a7e)]
    seed: u64,
    /// How many random points to try for a certified nonzero witness.
    #[arg(long, default_value_t = 32, value_name = "N")]
    points: usize,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Arguments of `lingrav simplify`.
#[derive(Args, Debug)]
pub struct SimplifyArgs {
    /// The expression.
    #[arg(allow_hyphen_values = true)]
    expr: String,
    /// Print LaTeX instead of plain text.
    #[arg(long)]
    latex: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Arguments of `lingrav diff`.
#[derive(Args, Debug)]
pub struct DiffArgs {
    /// The expression.
    #[arg(allow_hyphen_values = true)]
    expr: String,
    /// The variables to differentiate by, in order (`x x` is the second derivative).
    #[arg(required = true, num_args = 1.., value_name = "VAR")]
    vars: Vec<String>,
    /// Print LaTeX instead of plain text.
    #[arg(long)]
    latex: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Parses and builds one command-line expression, with errors pointing into it. A size or
/// time limit reached while building is not bad input: it ends the command as undecided.
fn build_arg(store: &mut Store, text: &str, label: &str) -> Result<Form, Failure> {
    let e = lingrav::parse::parse(text).map_err(|e| with_source(e, label, text))?;
    store.build(&e, &Names::free()).map_err(|e| {
        if e.limit {
            gave_up(&e.cause.clone().unwrap_or_else(|| {
                super::limits::timeout_if_past(&store.limits)
                    .unwrap_or(CanonError::TooLarge(store.limits.max_terms))
            }))
        } else {
            Failure::Input(with_source(e, label, text))
        }
    })
}

fn limit_failure(e: lingrav::canon::CanonError) -> Verdict {
    lingrav::zero::undecided_from(&e)
}

/// `lingrav zero`.
pub fn zero(a: ZeroArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let f = build_arg(&mut st, &a.expr, "expression")?;
    let diff = match &a.other {
        Some(o) => {
            let g = build_arg(&mut st, o, "second expression")?;
            st.sub(f, g)
        }
        None => Ok(f),
    };
    let sampling = Sampling {
        seed: a.seed,
        points: a.points,
        ..Sampling::default()
    };
    let (verdict, residual) = match diff {
        Ok(d) => (decide(&mut st, d, &sampling), Some(d)),
        Err(e) => (limit_failure(e), None),
    };
    let residual_text = residual.filter(|d| !st.is_zero(*d)).map(|d| st.to_text(d));
    let text = match a.format {
        Format::Text => {
            let mut s = match &verdict {
                Verdict::Zero => "zero: proved (the canonical form cancels to 0)\n".to_string(),
                Verdict::Nonzero(w) => format!("nonzero: certified {w} (seed {:#x})\n", w.seed),
                Verdict::Undecided(why) => format!("undecided: {why}\n"),
            };
            if let Some(r) = &residual_text {
                s.push_str(&format!("canonical form: {r}\n"));
            }
            s
        }
        Format::Json => {
            let mut j = serde_json::json!({ "verdict": verdict.label() });
            match &verdict {
                Verdict::Zero => j["method"] = "canonical form cancels to 0".into(),
                Verdict::Nonzero(w) => {
                    j["witness"] = serde_json::json!({
                        "point": w.point.iter().map(|(n, v)| (n.clone(), serde_json::json!(v))).collect::<serde_json::Map<_, _>>(),
                        "value": [w.value.re.mid(), w.value.im.mid()],
                        "enclosure": { "re": [w.value.re.lo(), w.value.re.hi()], "im": [w.value.im.lo(), w.value.im.hi()] },
                        "seed": w.seed,
                    })
                }
                Verdict::Undecided(why) => j["reason"] = why.clone().into(),
            }
            if let Some(r) = &residual_text {
                j["canonical_form"] = r.clone().into();
            }
            format!("{}\n", serde_json::to_string_pretty(&j).expect("json"))
        }
    };
    print(&text)?;
    Ok(match verdict {
        Verdict::Zero => Outcome::Holds,
        Verdict::Nonzero(_) => Outcome::Fails,
        Verdict::Undecided(_) => Outcome::Undecided,
    })
}

fn render(st: &mut Store, f: Form, latex: bool) -> String {
    if latex { st.to_latex(f) } else { st.to_text(f) }
}

fn algebra_limit(e: CanonError) -> Failure {
    gave_up(&e)
}

/// `lingrav simplify`.
pub fn simplify(a: SimplifyArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let f = build_arg(&mut st, &a.expr, "expression")?;
    let text = render(&mut st, f, a.latex);
    print(&format!("{text}\n"))?;
    Ok(Outcome::Holds)
}

/// `lingrav diff`.
pub fn diff(a: DiffArgs) -> Result<Outcome, Failure> {
    let mut st = a.limits.store();
    let mut f = build_arg(&mut st, &a.expr, "expression")?;
    for v in &a.vars {
        let ok = !v.is_empty()
            && v.chars()
                .next()
                .is_some_and(|c| c.is_ascii_alphabetic() || c == '_')
            && v.chars().all(|c| c.is_ascii_alphanumeric() || c == '_');
        if !ok || lingrav::canon::BUILTINS.contains(&v.as_str()) || v == "pi" {
            return Err(Failure::Input(miette::miette!(
                help = "variables are names such as t, x, y, z or a parameter",
                "cannot differentiate by `{v}`: not a variable name"
            )));
        }
        f = st.diff_by_name(f, v).map_err(algebra_limit)?;
    }
    let text = render(&mut st, f, a.latex);
    print(&format!("{text}\n"))?;
    Ok(Outcome::Holds)
}
