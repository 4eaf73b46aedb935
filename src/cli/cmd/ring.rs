//! `lingrav ring`: how a ring of free test masses transverse to a direction responds to the
//! TT part of the perturbation, as a table (text or JSON) and optionally an SVG picture.

use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{
    DirectionArgs, arg_failure, kind_word, numbers, plan_optional_output, write_atomic,
};
use crate::cli::report::{Format, conventions, heading, json, texts, vec_text};
use clap::Args;
use lingrav::problem::Problem;
use lingrav::tt::ring::{Ring, Snapshot, exaggeration, respond, svg};
use lingrav::tt::{ArgError, Direction, DirectionKind, project_perturbation};
use std::fmt::Write as _;
use std::path::PathBuf;

/// Arguments of `lingrav ring`.
#[derive(Args, Debug)]
pub struct RingArgs {
    /// The problem file (TOML).
    file: PathBuf,
    #[command(flatten)]
    dir: DirectionArgs,
    /// The ring's radius L (a positive number or constant expression).
    #[arg(
        long,
        value_name = "L",
        default_value = "1",
        allow_hyphen_values = true
    )]
    radius: String,
    /// The times, comma-separated numbers or constant expressions (e.g. `0,pi/(2*w)`).
    #[arg(long, value_name = "T1,T2,...", allow_hyphen_values = true)]
    times: String,
    /// The ring's centre `x,y,z`, where h^TT is evaluated.
    #[arg(
        long,
        value_name = "X,Y,Z",
        default_value = "0,0,0",
        allow_hyphen_values = true
    )]
    at: String,
    /// How many masses on the ring.
    #[arg(long, value_name = "N", default_value_t = 8,
          value_parser = clap::value_parser!(u16).range(3..=360))]
    masses: u16,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Also draw the ring at each time as an SVG picture.
    #[arg(long, value_name = "FILE.svg")]
    svg: Option<PathBuf>,
    /// Replace the SVG file if it exists.
    #[arg(long)]
    force: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav ring`.
pub fn run(a: RingArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load_flat(&a.file, "ring")?;
    let dir = a.dir.plan(&mut p)?;
    let radius = numbers(
        &mut p,
        "--radius",
        &a.radius,
        Some(1),
        "the radius is one positive number",
    )?[0];
    if radius <= 0.0 {
        return Err(arg_failure(ArgError::whole(
            "--radius",
            &a.radius,
            "the radius must be positive",
        )));
    }
    let times = numbers(
        &mut p,
        "--times",
        &a.times,
        None,
        "times are numbers or constant expressions, e.g. 0,0.5,pi/w",
    )?;
    let at = numbers(
        &mut p,
        "--at",
        &a.at,
        Some(3),
        "the centre is given as x,y,z",
    )?;
    let centre = [at[0], at[1], at[2]];
    if dir.kind == DirectionKind::Radial && centre[0] == 0.0 && centre[1] == 0.0 {
        return Err(arg_failure(
            ArgError::whole(
                "--at",
                &a.at,
                "the radial direction and its basis are undefined on the z axis",
            )
            .with_help("put the ring's centre away from the z axis, e.g. --at 3,4,0"),
        ));
    }
    let target = plan_optional_output(a.svg.as_deref(), a.force, "--svg")?;

    let h = p.h;
    let proj = project_perturbation(&mut p.store, &h, &dir)?;
    let ring = Ring {
        radius,
        masses: usize::from(a.masses),
        centre,
    };
    let sampling = p.sampling.clone();
    let snaps = respond(
        &mut p.store,
        &p.parameters,
        &sampling,
        &dir,
        &proj.tt,
        &ring,
        &times,
    )
    .map_err(|why| {
        Failure::Input(miette::miette!(
            help = "choose another centre with --at",
            "cannot evaluate the ring's response at the centre ({}, {}, {}): {why}",
            centre[0],
            centre[1],
            centre[2]
        ))
    })?;

    let label = a.file.display().to_string();
    // The picture first, so that the report can say it was written.
    let written = match &target {
        Some(t) => {
            let title = format!(
                "{}: ring transverse to n = {}",
                p.name.clone().unwrap_or_else(|| label.clone()),
                vec_text(&mut p.store, &dir.n)
            );
            write_atomic(t, &svg(&snaps, radius, &title))?;
            Some((t.path.display().to_string(), exaggeration(&snaps, radius)))
        }
        None => None,
    };
    let text = match a.format {
        Format::Text => ring_text(&label, &mut p, &dir, &ring, &snaps, written.as_ref()),
        Format::Json => {
            let st = &mut p.store;
            json(&serde_json::json!({
                "file": label,
                "name": p.name,
                "direction": { "kind": kind_word(dir.kind), "n": texts(st, &dir.n) },
                "basis": { "u": texts(st, &dir.u), "v": texts(st, &dir.v) },
                "ring": { "radius": radius, "masses": ring.masses, "centre": centre },
                "response": "delta x^i = (1/2) h^TT_ij x^j, h^TT at the centre, numerical",
                "snapshots": snaps.iter().map(|snap| serde_json::json!({
                    "t": snap.t,
                    "h_plus": snap.plus,
                    "h_cross": snap.cross,
                    "masses": snap.masses.iter().map(|m| serde_json::json!({
                        "index": m.index,
                        "phi_degrees": m.phi.to_degrees(),
                        "dx_u": m.dx_u,
                        "dx_v": m.dx_v,
                    })).collect::<Vec<_>>(),
                })).collect::<Vec<_>>(),
                "svg": written.as_ref().map(|(path, factor)| serde_json::json!({
                    "path": path, "panels": snaps.len(), "exaggeration": factor,
                })),
                "conventions": conventions(&p.coordinates),
            }))
        }
    };
    print(&text)?;
    Ok(Outcome::Holds)
}

/// The text report of `ring`.
fn ring_text(
    label: &str,
    p: &mut Problem,
    dir: &Direction,
    ring: &Ring,
    snaps: &[Snapshot],
    written: Option<&(String, f64)>,
) -> String {
    let (radius, centre) = (ring.radius, ring.centre);
    let st = &mut p.store;
    let mut s = String::new();
    let _ = writeln!(s, "{}", heading(label, p.name.as_deref()));
    let _ = writeln!(
        s,
        "direction  n = {}  [{}]",
        vec_text(st, &dir.n),
        kind_word(dir.kind)
    );
    let _ = writeln!(
        s,
        "basis      u = {}, v = {}",
        vec_text(st, &dir.u),
        vec_text(st, &dir.v)
    );
    let _ = writeln!(
        s,
        "ring       {} free masses, radius L = {radius}, centre (x, y, z) = ({}, {}, {}); mass k at \
         phi = 360 k/{} degrees from u towards v",
        ring.masses, centre[0], centre[1], centre[2], ring.masses
    );
    let _ = writeln!(
        s,
        "response   delta x^i = (1/2) h^TT_ij x^j at first order in h, h^TT at the centre, \
         evaluated numerically with the file's parameter values and function samples \
         (values below 1e-12 of the largest are shown as 0)"
    );
    let _ = writeln!(s);
    let _ = writeln!(s, "{:>12}  {:>13}  {:>13}", "time", "h_plus", "h_cross");
    for snap in snaps {
        let _ = writeln!(
            s,
            "{:>12.6}  {:>13.5e}  {:>13.5e}",
            snap.t, snap.plus, snap.cross
        );
    }
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "{:>12}  {:>4}  {:>8}  {:>13}  {:>13}",
        "time", "mass", "phi/deg", "dx_u", "dx_v"
    );
    for snap in snaps {
        for m in &snap.masses {
            let _ = writeln!(
                s,
                "{:>12.6}  {:>4}  {:>8.2}  {:>13.5e}  {:>13.5e}",
                snap.t,
                m.index,
                m.phi.to_degrees(),
                m.dx_u,
                m.dx_v
            );
        }
    }
    if let Some((path, factor)) = written {
        let _ = writeln!(
            s,
            "wrote {path} ({} panels; displacements exaggerated x{factor:.3e})",
            snaps.len()
        );
    }
    s
}
