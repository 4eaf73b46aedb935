//! `lingrav show`: a derived quantity (Einstein, Ricci, Riemann, ...) component by
//! component, exactly, as text, LaTeX or JSON.

use crate::canon::{CanonError, Form};
use crate::claim::{Gauge, Kind, Part};
use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, gave_up, print};
use crate::cli::report::{Format, conventions, json};
use crate::tensor::COMPONENTS;
use crate::tensor::{COORDS, Linearized, index_name};
use clap::{Args, ValueEnum};
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
    /// The background's inverse metric gbar^{mu nu}.
    BackgroundInverse,
    /// The background's Christoffel symbols Gammabar^l_{mu nu}.
    BackgroundChristoffel,
    /// The background's Riemann tensor Rbar_{abcd} (20 independent components).
    BackgroundRiemann,
    /// The background's Ricci tensor Rbar_{mu nu}.
    BackgroundRicci,
    /// The background's equations Gbar + Lambda gbar - 8 pi Tbar.
    BackgroundEquations,
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
    /// Print the canonical (expanded) forms, without the file's [define] names.
    #[arg(long)]
    expanded: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav show`.
pub fn run(a: ShowArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    if a.expanded {
        p.store.set_display_names(None);
    }
    let limit = |e: CanonError| gave_up(&e);
    let rows = match a.quantity {
        // About a background, or a background quantity of Minkowski in Cartesian coordinates.
        q if p.background.is_some() || is_background(q) => curved_rows(&mut p, q)?,
        _ => flat_rows(&mut p, a.quantity).map_err(limit)?,
    };
    let store = &mut p.store;
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
            if a.latex {
                // One aligned block, ready for a paper: the components aligned at `=`.
                let lines: Vec<String> = shown
                    .into_iter()
                    .map(|(name, f)| {
                        format!("  {} &= {}", latex_label(&name), store.to_display_latex(f))
                    })
                    .collect();
                if !lines.is_empty() {
                    let _ = writeln!(
                        s,
                        "\\begin{{aligned}}\n{}\n\\end{{aligned}}",
                        lines.join(" \\\\\n")
                    );
                }
            } else {
                for (name, f) in shown {
                    let _ = writeln!(s, "{name} = {}", store.to_display_text(f));
                }
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
                "conventions": conventions(&p.coordinates),
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
            // Indices: one letter each (`tx`), or coordinate names joined by `.` (`t.ph`),
            // each then set as a name (`t \mathrm{ph}`, `r \theta`).
            let mut index = String::new();
            while let Some(&n) = chars.peek() {
                if n.is_ascii_alphanumeric() || n == '.' {
                    index.push(n);
                    chars.next();
                } else {
                    break;
                }
            }
            out.push(c);
            out.push('{');
            if index.contains('.') {
                let parts: Vec<String> = index.split('.').map(crate::canon::latex_name).collect();
                out.push_str(&parts.join(" "));
            } else {
                out.push_str(&index);
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
    store: &mut crate::Store,
    lin: &mut Linearized,
    g: Gauge,
) -> crate::canon::CResult<Vec<(String, Form)>> {
    crate::check::ExactParts::new(lin, None).named(store, Kind::Gauge(g))
}

/// The quantity of a flat problem in Cartesian coordinates.
fn flat_rows(
    p: &mut crate::Problem,
    quantity: Quantity,
) -> crate::canon::CResult<Vec<(String, Form)>> {
    let store = &mut p.store;
    let mut lin = Linearized::new(store, p.h);
    let mut rows: Vec<(String, Form)> = Vec::new();
    let sym = |letter: &str, m: &[[Form; 4]; 4]| -> Vec<(String, Form)> {
        COMPONENTS
            .iter()
            .map(|&(i, j)| (format!("{letter}_{}", index_name(&[i, j])), m[i][j]))
            .collect()
    };
    match quantity {
        Quantity::H => rows = sym("h", &p.h),
        Quantity::Trace => rows.push(("h".into(), lin.trace(store)?)),
        Quantity::Hbar => rows = sym("hbar", &lin.hbar(store)?),
        Quantity::Christoffel => {
            let g = lin.christoffel(store)?;
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
            for (idx, f) in lin.riemann(store)? {
                rows.push((Part::Riemann(idx).name(), f));
            }
        }
        Quantity::Ricci => rows = sym("R", &lin.ricci(store)?),
        Quantity::RicciScalar => rows.push(("R".into(), lin.ricci_scalar(store)?)),
        Quantity::Einstein => rows = sym("G", &lin.einstein(store)?),
        Quantity::BoxHbar => rows = sym("box_hbar", &lin.box_hbar(store)?),
        Quantity::Lorenz => rows = conditions(store, &mut lin, Gauge::Lorenz)?,
        Quantity::Tt => rows = conditions(store, &mut lin, Gauge::Tt)?,
        // The background's quantities go through `curved_rows`.
        Quantity::BackgroundInverse
        | Quantity::BackgroundChristoffel
        | Quantity::BackgroundRiemann
        | Quantity::BackgroundRicci
        | Quantity::BackgroundEquations => {
            return Err(CanonError::Undefined(
                "a background quantity asked of the flat route".into(),
            ));
        }
    }
    Ok(rows)
}

fn is_background(q: Quantity) -> bool {
    matches!(
        q,
        Quantity::BackgroundInverse
            | Quantity::BackgroundChristoffel
            | Quantity::BackgroundRiemann
            | Quantity::BackgroundRicci
            | Quantity::BackgroundEquations
    )
}

/// The quantity about the problem's background (Minkowski in Cartesian coordinates without
/// one), named in the problem's coordinates; covariant derivatives are the background's.
fn curved_rows(p: &mut crate::Problem, quantity: Quantity) -> Result<Vec<(String, Form)>, Failure> {
    use crate::tensor::curved::Perturbation;
    let limit = |e: CanonError| gave_up(&e);
    let frame = crate::tensor::Frame::covariant(p.coordinates.clone());
    let mut bg = crate::cli::limits::spacetime(p)?;
    let store = &mut p.store;
    let mut h = Perturbation::new(p.h);
    let sym = |letter: &str, m: &[[Form; 4]; 4]| -> Vec<(String, Form)> {
        COMPONENTS
            .iter()
            .map(|&(i, j)| (format!("{letter}_{}", frame.index(&[i, j])), m[i][j]))
            .collect()
    };
    let chris = |letter: &str, c: &[[[Form; 4]; 4]; 4]| -> Vec<(String, Form)> {
        let mut rows = Vec::new();
        for (l, cl) in c.iter().enumerate() {
            for &(i, j) in &COMPONENTS {
                rows.push((
                    format!("{letter}^{}_{}", frame.coord(l), frame.index(&[i, j])),
                    cl[i][j],
                ));
            }
        }
        rows
    };
    Ok(match quantity {
        Quantity::H => sym("h", &p.h),
        Quantity::Trace => vec![(
            "gbar^{mu nu} h_{mu nu}".into(),
            h.trace(store, &bg).map_err(limit)?,
        )],
        Quantity::Hbar => {
            let tr = h.trace(store, &bg).map_err(limit)?;
            let mut hb = p.h;
            for &(i, j) in &COMPONENTS {
                let x = store.mul(bg.g[i][j], tr).map_err(limit)?;
                let half = crate::Coeff::rational(crate::canon::Q::new((-1).into(), 2.into()));
                let v = store
                    .linear(&[(&crate::Coeff::one(), p.h[i][j]), (&half, x)])
                    .map_err(limit)?;
                hb[i][j] = v;
                hb[j][i] = v;
            }
            sym("hbar", &hb)
        }
        Quantity::Christoffel => chris("dGamma", &h.delta_gamma(store, &bg).map_err(limit)?),
        Quantity::Riemann => h
            .riemann(store, &mut bg)
            .map_err(limit)?
            .into_iter()
            .map(|(idx, f)| (format!("dR_{}", frame.index(&idx)), f))
            .collect(),
        Quantity::Ricci => sym("dR", &h.delta_ricci(store, &bg).map_err(limit)?),
        Quantity::RicciScalar => {
            let dr = h.delta_ricci(store, &bg).map_err(limit)?;
            let rbar = bg.ricci(store).map_err(limit)?;
            let hup = bg.raise_both(store, &p.h).map_err(limit)?;
            let tr = bg.trace(store, &dr).map_err(limit)?;
            let mut terms = vec![tr];
            for i in 0..4 {
                for j in 0..4 {
                    let x = store.mul(hup[i][j], rbar[i][j]).map_err(limit)?;
                    terms.push(store.neg(x).map_err(limit)?);
                }
            }
            vec![("dR".into(), store.sum(&terms).map_err(limit)?)]
        }
        Quantity::Einstein => sym("dG", &h.delta_einstein(store, &mut bg).map_err(limit)?),
        Quantity::BoxHbar => {
            return Err(Failure::Input(miette::miette!(
                help = "`lingrav show FILE einstein` prints dG, the linearized Einstein tensor \
                        about the background",
                "{}: box-hbar is the flat d'Alembertian, which this file's background does not \
                 have",
                p.path
            )));
        }
        Quantity::Lorenz => {
            let v = h.lorenz(store, &bg).map_err(limit)?;
            (0..4)
                .map(|n| (crate::claim::Part::Lorenz(n).name_in(&frame), v[n]))
                .collect()
        }
        Quantity::Tt => {
            let v = h.lorenz(store, &bg).map_err(limit)?;
            let tr = h.trace(store, &bg).map_err(limit)?;
            let mut rows: Vec<(String, Form)> = (0..4)
                .map(|m| (crate::claim::Part::H(0, m).name_in(&frame), p.h[0][m]))
                .collect();
            rows.push((crate::claim::Part::Trace.name_in(&frame), tr));
            rows.extend((0..4).map(|n| (crate::claim::Part::Lorenz(n).name_in(&frame), v[n])));
            rows
        }
        Quantity::BackgroundInverse => sym("gbar^", &bg.ginv),
        Quantity::BackgroundChristoffel => chris("Gammabar", &bg.gamma),
        Quantity::BackgroundRiemann => bg
            .riemann_down(store)
            .map_err(limit)?
            .into_iter()
            .map(|(idx, f)| (format!("Rbar_{}", frame.index(&idx)), f))
            .collect(),
        Quantity::BackgroundRicci => sym("Rbar", &bg.ricci(store).map_err(limit)?),
        Quantity::BackgroundEquations => {
            let e = bg.equations(store).map_err(limit)?;
            let kind = crate::claim::Kind::BackgroundEquations {
                lambda: !store.is_zero(bg.lambda),
                sourced: bg.source.is_some(),
            };
            kind.parts()
                .into_iter()
                .zip(COMPONENTS)
                .map(|(part, (i, j))| (part.name_in(&frame), e[i][j]))
                .collect()
        }
    })
}
