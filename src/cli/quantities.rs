//! What `export` and `emit` share: the quantity list and the direction some quantities
//! need, read against the problem's names, and the direction's texts for the sidecar, the
//! generated code and the independent evaluation route.

use crate::cli::out::{Failure, gave_up};
use crate::cli::plan::{arg_failure, plan_direction};
use crate::export::quantity::{Quantity, QuantityError, direction_help, parse_list};
use crate::problem::Problem;
use crate::tt::{Arg, Direction};
use clap::Args;

/// Which quantities, and the direction some of them need.
#[derive(Args, Debug)]
pub struct QuantityArgs {
    /// Quantities, comma-separated (the option may be repeated): h, hbar, dh, riemann, ricci,
    /// einstein, adm, constraints, psi4, hplus, hcross.
    #[arg(long, short = 'q', value_name = "LIST", required = true)]
    pub quantity: Vec<String>,
    /// Propagation direction for psi4, hplus, hcross: a unit vector `nx,ny,nz`, polar angles
    /// `theta=..,phi=..`, or `radial` (outgoing from the origin).
    #[arg(long, value_name = "D", allow_hyphen_values = true)]
    pub direction: Option<String>,
    /// First polarization vector u (perpendicular to the direction); v = n x u.
    #[arg(
        long,
        value_name = "AX,AY,AZ",
        allow_hyphen_values = true,
        requires = "direction"
    )]
    pub basis: Option<String>,
    /// Divide the direction (and basis) by its length instead of refusing a non-unit vector.
    #[arg(long, requires = "direction")]
    pub normalize: bool,
}

pub fn quantity_failure(e: QuantityError) -> Failure {
    match e {
        QuantityError::MissingDirection(_) => {
            Failure::Input(miette::miette!(help = direction_help(), "{e}"))
        }
        QuantityError::FlatOnly(_) => Failure::Input(miette::miette!(
            help = "give --quantity with h, hbar, dh, riemann, ricci or einstein for a file \
                    about a background",
            "{e}"
        )),
        QuantityError::Algebra(l) => gave_up(&l),
    }
}

/// The quantity list and the direction, read against the problem's names.
pub fn plan_quantities(
    p: &mut Problem,
    a: &QuantityArgs,
) -> Result<(Vec<Quantity>, Option<Direction>), Failure> {
    let mut qs = Vec::new();
    for text in &a.quantity {
        parse_list(Arg::new("--quantity", text), &mut qs).map_err(arg_failure)?;
    }
    if p.background.is_some()
        && let Some(q) = qs.iter().find(|q| !q.about_background())
    {
        return Err(quantity_failure(QuantityError::FlatOnly(q.name())));
    }
    let needs: Vec<&str> = qs
        .iter()
        .filter(|q| q.needs_direction())
        .map(|q| q.name())
        .collect();
    let dir = match &a.direction {
        Some(d) => Some(plan_direction(p, d, a.basis.as_deref(), a.normalize)?),
        None if !needs.is_empty() => {
            return Err(Failure::Input(miette::miette!(
                help = direction_help(),
                "{} {} defined relative to a propagation direction: give --direction",
                needs.join(", "),
                if needs.len() == 1 { "is" } else { "are" }
            )));
        }
        None => None,
    };
    Ok((qs, dir))
}

pub fn direction_json(p: &mut Problem, d: &Direction) -> serde_json::Value {
    let mut v = |x: &[crate::canon::Form; 3]| -> Vec<String> {
        x.iter().map(|f| p.store.to_text(*f)).collect()
    };
    let (n, u, w) = (v(&d.n), v(&d.u), v(&d.v));
    serde_json::json!({
        "n": n, "u": u, "v": w,
        "n_note": d.n_note,
        "basis_note": d.basis_note,
    })
}

/// The texts of `n`, `u`, `v` for the independent evaluation route.
pub fn frame_texts(p: &mut Problem, d: &Direction) -> [[String; 3]; 3] {
    let mut v = |x: &[crate::canon::Form; 3]| -> [String; 3] {
        std::array::from_fn(|i| p.store.to_text(x[i]))
    };
    [v(&d.n), v(&d.u), v(&d.v)]
}

pub fn direction_text(p: &mut Problem, d: &Direction) -> String {
    let mut v = |x: &[crate::canon::Form; 3]| -> String {
        let parts: Vec<String> = x.iter().map(|f| p.store.to_text(*f)).collect();
        format!("({})", parts.join(", "))
    };
    let (n, u, w) = (v(&d.n), v(&d.u), v(&d.v));
    format!("n = {n}, u = {u}, v = {w}; {}; {}", d.n_note, d.basis_note)
}

/// The exact columns of `qs` for the problem: about its background in its coordinates, or
/// about Minkowski in Cartesian coordinates (with the direction some quantities need).
pub fn columns(
    p: &mut Problem,
    qs: &[Quantity],
    dir: Option<&Direction>,
) -> Result<Vec<crate::export::quantity::Block>, Failure> {
    use crate::export::quantity::{blocks, blocks_about};
    match &p.background {
        None => blocks(&mut p.store, &p.h, p.source.as_ref(), qs, dir),
        Some(_) => {
            let mut bg = crate::cli::limits::spacetime(p)?;
            let frame = crate::tensor::Frame::covariant(p.coordinates.clone());
            blocks_about(&mut p.store, &mut bg, &frame, &p.h, qs)
        }
    }
    .map_err(quantity_failure)
}

/// `--force` and `--format`, for the commands that write what they compute (`export`,
/// `emit`).
#[derive(Args, Debug)]
pub struct WriteArgs {
    /// Replace the files written (export: the data file and its sidecar) if they exist.
    #[arg(long)]
    pub force: bool,
    /// How to report what was written, as everywhere: text, or JSON (export: rows, columns,
    /// quantities, paths, the data file's size and checksum; emit: quantities, language,
    /// path, size and checksum, and the code itself without --out). Also accepted as
    /// `--report`.
    #[arg(long, alias = "report", value_enum, value_name = "FORMAT", default_value_t = crate::cli::report::Format::Text)]
    pub format: crate::cli::report::Format,
}
