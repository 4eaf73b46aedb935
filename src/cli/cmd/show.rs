//! `lingrav show`: a derived quantity (Einstein, Ricci, Riemann, ...) component by
//! component, exactly, as text, LaTeX or JSON.

use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, gave_up, print};
use crate::cli::report::{Format, conventions, json};
use clap::{Args, ValueEnum};
use lingrav::canon::{CanonError, Form};
use lingrav::claim::{Gauge, Kind, Part};
use lingrav::tensor::COMPONENTS;
use lingrav::tensor::{COORDS, Linearized, index_name};
use std::fmt::Write as _;
use std::path::PathBuf;

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
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Also print components that are zero.
    #[arg(long)]
    all: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav show`.
pub fn run(a: ShowArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load_flat(&a.file, "show")?;
    let store = &mut p.store;
    let mut lin = Linearized::new(store, p.h);
    let limit = |e: CanonError| gave_up(&e);
    let mut rows: Vec<(String, Form)> = Vec::new();
    let sym = |letter: &str, m: &[[Form; 4]; 4]| -> Vec<(String, Form)> {
        COMPONENTS
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
                for &(i, j) in &COMPONENTS {
                    rows.push((
                        format!("Gamma^{}_{}", COORDS[l], index_name(&[i, j])),
                        gl[i][j],
                    ));
                }
            }
        }
        Quantity::Riemann => {
            for (idx, f) in lin.riemann(store).map_err(limit)? {
                rows.push((Part::Riemann(idx).name(), f));
            }
        }
        Quantity::Ricci => rows = sym("R", &lin.ricci(store).map_err(limit)?),
        Quantity::RicciScalar => rows.push(("R".into(), lin.ricci_scalar(store).map_err(limit)?)),
        Quantity::Einstein => rows = sym("G", &lin.einstein(store).map_err(limit)?),
        Quantity::BoxHbar => rows = sym("box_hbar", &lin.box_hbar(store).map_err(limit)?),
        Quantity::Lorenz => rows = conditions(store, &mut lin, Gauge::Lorenz).map_err(limit)?,
        Quantity::Tt => rows = conditions(store, &mut lin, Gauge::Tt).map_err(limit)?,
    }
    let label = a.file.display().to_string();
    let mut shown = Vec::new();
    let mut zeros = 0;
    for (name, f) in rows {
        if store.is_zero(f) && !a.all {
            zeros += 1;
            continue;
        }
        shown.push((name, f));
    }
    let text = match a.format {
        Format::Text => {
            let mut s = String::new();
            for (name, f) in shown {
                let (name, body) = if a.latex {
                    (latex_label(&name), store.to_latex(f))
                } else {
                    (name, store.to_text(f))
                };
                let _ = writeln!(s, "{name} = {body}");
            }
            if zeros > 0 {
                let _ = writeln!(
                    s,
                    "({zeros} further components are exactly 0; --all lists them)"
                );
            }
            s
        }
        Format::Json => {
            let components: Vec<serde_json::Value> = shown
                .into_iter()
                .map(|(name, f)| {
                    let mut c = serde_json::json!({
                        "name": name,
                        "value": store.to_text(f),
                        "zero": store.is_zero(f),
                    });
                    if a.latex {
                        c["latex_name"] = latex_label(&name).into();
                        c["latex"] = store.to_latex(f).into();
                    }
                    c
                })
                .collect();
            json(&serde_json::json!({
                "file": label,
                "name": p.name,
                "quantity": a.quantity.to_possible_value().map(|v| v.get_name().to_string()),
                "components": components,
                "zero_components_omitted": zeros,
                "conventions": conventions(),
            }))
        }
    };
    print(&text)?;
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

/// A gauge's conditions, named as `check` names them.
fn conditions(
    store: &mut lingrav::Store,
    lin: &mut Linearized,
    g: Gauge,
) -> lingrav::canon::CResult<Vec<(String, Form)>> {
    lingrav::check::ExactParts::new(lin, None).named(store, Kind::Gauge(g))
}
