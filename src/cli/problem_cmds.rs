//! The problem-file commands: `check` and `show`.

use super::expr_cmds::Format;
use super::limits::LimitArgs;
use super::out::{Failure, Outcome, gave_up, print};
use clap::{Args, ValueEnum};
use lingrav::check::{CheckReport, ClaimReport, Status, check};
use lingrav::tensor::{COORDS, Linearized, index_name};
use lingrav::zero::Verdict;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Arguments of `lingrav check`.
#[derive(Args, Debug)]
pub struct CheckArgs {
    /// The problem file (TOML).
    file: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Quantities `show` can print.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Quantity {
    /// The perturbation h_{mu nu} as simplified.
    H,
    /// The trace h = eta^{mu nu} h_{mu nu}.
    Trace,
    /// The trace-reversed perturbation hbar_{mu nu}.
    Hbar,
    /// Christoffel symbols Gamma^l_{mu nu} (first order).
    Christoffel,
    /// The 20 independent components of the linearized Riemann tensor R_{abcd}.
    Riemann,
    /// The linearized Ricci tensor R_{mu nu}.
    Ricci,
    /// The linearized Ricci scalar.
    RicciScalar,
    /// The linearized Einstein tensor G_{mu nu}.
    Einstein,
    /// The flat d'Alembertian of hbar_{mu nu}.
    BoxHbar,
    /// The Lorenz divergence d^mu hbar_{mu nu}.
    Lorenz,
    /// The TT-gauge conditions.
    Tt,
}

/// Arguments of `lingrav show`.
#[derive(Args, Debug)]
pub struct ShowArgs {
    /// The problem file (TOML).
    file: PathBuf,
    /// What to print.
    #[arg(value_enum)]
    quantity: Quantity,
    /// Print LaTeX instead of plain text.
    #[arg(long)]
    latex: bool,
    /// Also print components that are zero.
    #[arg(long)]
    all: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav check`.
pub fn run_check(a: CheckArgs) -> Result<Outcome, Failure> {
    let mut problem = a.limits.load(&a.file)?;
    let report = check(&mut problem);
    let label = a.file.display().to_string();
    let text = match a.format {
        Format::Text => render_text(&label, problem.name.as_deref(), &report),
        Format::Json => render_json(&label, problem.name.as_deref(), &report),
    };
    print(&text)?;
    Ok(match report.overall() {
        Status::Holds => Outcome::Holds,
        Status::Fails => Outcome::Fails,
        Status::Undecided => Outcome::Undecided,
    })
}

fn status_word(c: &ClaimReport, has_claims: bool) -> &'static str {
    match (has_claims, c.asserted, c.status) {
        (true, Some(_), s) => s.label(),
        (_, _, Status::Holds) => "yes",
        (_, _, Status::Fails) => "no",
        (_, _, Status::Undecided) => "undecided",
    }
}

fn title(c: &ClaimReport) -> String {
    lingrav::problem::titles::asserted(&c.title, c.asserted)
}

const LISTED: usize = 10;

fn render_text(label: &str, name: Option<&str>, r: &CheckReport) -> String {
    let mut s = String::new();
    match name {
        Some(n) => {
            let _ = writeln!(s, "{label}: {n}");
        }
        None => {
            let _ = writeln!(s, "{label}");
        }
    }
    if !r.has_claims {
        let _ = writeln!(s, "(no [claims] table: reporting which properties hold)");
    }
    for c in &r.claims {
        let informational = r.has_claims && c.asserted.is_none();
        let word = if informational {
            format!("({})", c.status.label())
        } else {
            status_word(c, r.has_claims).to_string()
        };
        let _ = writeln!(s, "  {word:<10} {}", title(c));
        let _ = writeln!(s, "  {:<10} {}", "", c.method);
        // List what stands in the way: nonzero and undecided components of a vanishing claim.
        let shown: Vec<_> = c
            .components
            .iter()
            .filter(|k| !matches!(k.verdict, Verdict::Zero))
            .collect();
        if c.asserted != Some(false) && c.status != Status::Holds {
            for k in shown.iter().take(LISTED) {
                let _ = writeln!(
                    s,
                    "  {:<10}   {} = {}",
                    "",
                    k.name,
                    k.residual.as_deref().unwrap_or("0")
                );
                match &k.verdict {
                    Verdict::Nonzero(w) => {
                        let _ = writeln!(s, "  {:<10}     nonzero {w}", "");
                    }
                    Verdict::Undecided(why) => {
                        let _ = writeln!(s, "  {:<10}     undecided: {why}", "");
                    }
                    Verdict::Zero => {}
                }
            }
            if shown.len() > LISTED {
                let _ = writeln!(
                    s,
                    "  {:<10}   ... and {} more (see --format json)",
                    "",
                    shown.len() - LISTED
                );
            }
        }
    }
    let overall = r.overall();
    let summary = if r.has_claims {
        let asserted: Vec<_> = r.claims.iter().filter(|c| c.asserted.is_some()).collect();
        let fails = asserted
            .iter()
            .filter(|c| c.status == Status::Fails)
            .count();
        let und = asserted
            .iter()
            .filter(|c| c.status == Status::Undecided)
            .count();
        match overall {
            Status::Holds => format!("every claim holds ({} checked, exact)", asserted.len()),
            Status::Fails => format!("{fails} of {} claims fail", asserted.len()),
            Status::Undecided => {
                format!("{und} of {} claims undecided, none fails", asserted.len())
            }
        }
    } else {
        match overall {
            Status::Undecided => "some properties are undecided".to_string(),
            _ => "every property decided".to_string(),
        }
    };
    let _ = writeln!(s, "result: {summary}");
    s
}

fn verdict_json(v: &Verdict) -> serde_json::Value {
    match v {
        Verdict::Zero => serde_json::json!({ "verdict": "zero", "method": "exact" }),
        Verdict::Nonzero(w) => serde_json::json!({
            "verdict": "nonzero",
            "method": "certified witness",
            "witness": {
                "point": w.point.iter().map(|(n, v)| (n.clone(), serde_json::json!(v))).collect::<serde_json::Map<_, _>>(),
                "value": [w.value.re.mid(), w.value.im.mid()],
                "seed": w.seed,
            }
        }),
        Verdict::Undecided(why) => serde_json::json!({ "verdict": "undecided", "reason": why }),
    }
}

fn render_json(label: &str, name: Option<&str>, r: &CheckReport) -> String {
    let claims: Vec<serde_json::Value> = r
        .claims
        .iter()
        .map(|c| {
            serde_json::json!({
                "key": c.key,
                "title": c.title,
                "asserted": c.asserted,
                "status": c.status.label(),
                "method": c.method,
                "components": c.components.iter().map(|k| {
                    let mut v = verdict_json(&k.verdict);
                    v["name"] = k.name.clone().into();
                    v["audit"] = k.audit.label().into();
                    if let Some(res) = &k.residual { v["residual"] = res.clone().into(); }
                    v
                }).collect::<Vec<_>>(),
            })
        })
        .collect();
    let j = serde_json::json!({
        "file": label,
        "name": name,
        "has_claims": r.has_claims,
        "result": r.overall().label(),
        "claims": claims,
        "conventions": { "signature": "-+++", "coordinates": "t,x,y,z", "units": "G = c = 1", "indices": "h and T down" },
    });
    format!("{}\n", serde_json::to_string_pretty(&j).expect("json"))
}

/// `lingrav show`.
pub fn run_show(a: ShowArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    let store = &mut p.store;
    let mut lin = Linearized::new(store, p.h);
    let limit = |e: lingrav::canon::CanonError| gave_up(&e);
    let mut rows: Vec<(String, lingrav::canon::Form)> = Vec::new();
    let sym =
        |letter: &str, m: &[[lingrav::canon::Form; 4]; 4]| -> Vec<(String, lingrav::canon::Form)> {
            lingrav::problem::COMPONENTS
                .iter()
                .map(|&(i, j)| (format!("{letter}_{}", index_name(&[i, j])), m[i][j]))
                .collect()
        };
    match a.quantity {
        Quantity::H => rows = sym("h", &p.h),
        Quantity::Trace => rows.push(("h".into(), lin.trace(store).map_err(limit)?)),
        Quantity::Hbar => rows = sym("hbar", &lin.hbar(store).map_err(limit)?),
        Quantity::Christoffel => {
            let g = lin.christoffel(store).map_err(limit)?;
            for (l, gl) in g.iter().enumerate() {
                for &(i, j) in &lingrav::problem::COMPONENTS {
                    rows.push((
                        format!("Gamma^{}_{}", COORDS[l], index_name(&[i, j])),
                        gl[i][j],
                    ));
                }
            }
        }
        Quantity::Riemann => {
            for (idx, f) in lin.riemann(store).map_err(limit)? {
                rows.push((format!("R_{}", index_name(&idx)), f));
            }
        }
        Quantity::Ricci => rows = sym("R", &lin.ricci(store).map_err(limit)?),
        Quantity::RicciScalar => rows.push(("R".into(), lin.ricci_scalar(store).map_err(limit)?)),
        Quantity::Einstein => rows = sym("G", &lin.einstein(store).map_err(limit)?),
        Quantity::BoxHbar => rows = sym("box_hbar", &lin.box_hbar(store).map_err(limit)?),
        Quantity::Lorenz => {
            let v = lin.lorenz(store).map_err(limit)?;
            for (nu, f) in v.iter().enumerate() {
                rows.push((format!("d^mu hbar_mu{}", COORDS[nu]), *f));
            }
        }
        Quantity::Tt => rows = lin.tt_conditions(store).map_err(limit)?,
    }
    let mut s = String::new();
    let mut zeros = 0;
    for (name, f) in rows {
        if store.is_zero(f) && !a.all {
            zeros += 1;
            continue;
        }
        let body = if a.latex {
            store.to_latex(f)
        } else {
            store.to_text(f)
        };
        let name = if a.latex { latex_label(&name) } else { name };
        let _ = writeln!(s, "{name} = {body}");
    }
    if zeros > 0 {
        let _ = writeln!(
            s,
            "({zeros} further components are exactly 0; --all lists them)"
        );
    }
    print(&s)?;
    Ok(Outcome::Holds)
}

fn latex_label(name: &str) -> String {
    // "G_tx" -> "G_{tx}", "Gamma^t_xy" -> "\Gamma^{t}_{xy}"
    let name = name
        .replace("Gamma", "\\Gamma")
        .replace("hbar", "\\bar{h}")
        .replace("box_", "\\Box ");
    let mut out = String::new();
    let mut chars = name.chars().peekable();
    while let Some(c) = chars.next() {
        if c == '_' || c == '^' {
            out.push(c);
            out.push('{');
            while let Some(&n) = chars.peek() {
                if n.is_ascii_alphanumeric() {
                    out.push(n);
                    chars.next();
                } else {
                    break;
                }
            }
            out.push('}');
        } else {
            out.push(c);
        }
    }
    out
}
