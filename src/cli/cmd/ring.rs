//! `lingrav ring`: how a ring of free test masses transverse to a direction responds to the
//! TT part of the perturbation, as a table (text or JSON) and optionally an SVG picture.

use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::plan::{
    DirectionArgs, arg_failure, kind_word, numbers, plan_optional_output, write_atomic,
};
use crate::cli::report::{Format, conventions, heading, json, texts, vec_display};
use crate::problem::Problem;
use crate::tt::ring::{Ring, Snapshot, exaggeration, respond, svg};
use crate::tt::{ArgError, DirectionKind, project_perturbation};
use clap::Args;
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
    /// Print the canonical (expanded) forms, without the file's [define] names.
    #[arg(long)]
    expanded: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// The ring's size, times and centre, read against the problem.
struct Plan {
    radius: f64,
    times: Vec<f64>,
    centre: [f64; 3],
}

fn plan(a: &RingArgs, p: &mut Problem, centre_help: &str) -> Result<Plan, Failure> {
    let radius = numbers(
        p,
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
        p,
        "--times",
        &a.times,
        None,
        "times are numbers or constant expressions, e.g. 0,0.5,pi/w",
    )?;
    let at = numbers(p, "--at", &a.at, Some(3), centre_help)?;
    Ok(Plan {
        radius,
        times,
        centre: [at[0], at[1], at[2]],
    })
}

/// How the ring sits, in words for the report.
struct Geometry {
    /// The direction, e.g. `n = (0, 0, 1)  [axis]`.
    direction: String,
    /// The basis, e.g. `u = (1, 0, 0), v = (0, 1, 0)`.
    basis: String,
    /// The centre, e.g. `(x, y, z) = (0, 0, 0)`.
    centre: String,
    /// The direction and basis for JSON.
    json: serde_json::Value,
    /// The direction in the picture's title, e.g. `n = (0, 0, 1)`.
    title_n: String,
}

/// `lingrav ring`.
pub fn run(a: RingArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    if a.expanded {
        p.store.set_display_names(None);
    }
    if !p.is_flat_cartesian() {
        return on_sphere(a, p);
    }
    let dir = a.dir.plan(&mut p)?;
    let plan = plan(&a, &mut p, "the centre is given as x,y,z")?;
    let centre = plan.centre;
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
        radius: plan.radius,
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
        &plan.times,
    )
    .map_err(|why| unreachable_centre(&ring, "x, y, z", &why))?;
    let st = &mut p.store;
    let geometry = Geometry {
        direction: format!("n = {}  [{}]", vec_display(st, &dir.n), kind_word(dir.kind)),
        basis: format!(
            "u = {}, v = {}",
            vec_display(st, &dir.u),
            vec_display(st, &dir.v)
        ),
        centre: format!("(x, y, z) = ({}, {}, {})", centre[0], centre[1], centre[2]),
        json: serde_json::json!({
            "direction": { "kind": kind_word(dir.kind), "n": texts(st, &dir.n) },
            "basis": { "u": texts(st, &dir.u), "v": texts(st, &dir.v) },
        }),
        title_n: format!("n = {}", vec_display(st, &dir.n)),
    };
    report(&a, &mut p, &geometry, (&ring, &snaps), target.as_ref())
}

fn unreachable_centre(ring: &Ring, names: &str, why: &str) -> Failure {
    let c = ring.centre;
    Failure::Input(miette::miette!(
        help = "choose another centre with --at",
        "cannot evaluate the ring's response at the centre ({names}) = ({}, {}, {}): {why}",
        c[0],
        c[1],
        c[2]
    ))
}

/// `ring` about a background, in coordinates read as (t, r, theta, phi): the ring transverse
/// to e_r at the centre (r, theta, phi), driven by the polarizations on the sphere.
fn on_sphere(a: RingArgs, mut p: Problem) -> Result<Outcome, Failure> {
    use crate::tt::ring::respond_on_sphere;
    use crate::tt::sphere::polarizations;
    let c = p.coordinates.clone();
    let names = [c[0].as_str(), c[1].as_str(), c[2].as_str(), c[3].as_str()];
    let list = format!("{}, {}, {}", c[1], c[2], c[3]);
    if a.dir.direction.trim() != "radial" || a.dir.basis.is_some() {
        return Err(Failure::Input(miette::miette!(
            help = format!(
                "in the coordinates {} (read as t, r, theta, phi) the ring is transverse to the \
                 radial direction: `--direction radial --at {}` with the centre's values",
                c.join(", "),
                c[1..].join(",").to_uppercase()
            ),
            "{}: only the radial direction is available in these coordinates",
            p.path
        )));
    }
    super::project::round_sphere_or_refuse(&mut p, "ring")?;
    let plan = plan(&a, &mut p, &format!("the centre is given as {list}"))?;
    if plan.centre[0] <= 0.0 {
        return Err(arg_failure(
            ArgError::whole("--at", &a.at, format!("the centre needs {} > 0", c[1]))
                .with_help(format!("give the centre as {list}, e.g. --at 10,1.2,0.5")),
        ));
    }
    let target = plan_optional_output(a.svg.as_deref(), a.force, "--svg")?;
    let sampling = p.sampling.clone();
    let h = p.h;
    let sph = polarizations(&mut p.store, names, &h, "u", &sampling)?;
    let ring = Ring {
        radius: plan.radius,
        masses: usize::from(a.masses),
        centre: plan.centre,
    };
    let snaps = respond_on_sphere(
        &mut p.store,
        &c,
        &p.parameters,
        &sampling,
        sph.plus,
        sph.cross,
        &ring,
        &plan.times,
    )
    .map_err(|why| unreachable_centre(&ring, &list, &why))?;
    let (r, th, ph) = (&c[1], &c[2], &c[3]);
    let geometry = Geometry {
        direction: format!("n = e_{r}  [radial, on the sphere]"),
        basis: format!(
            "u = e_{th}, v = e_{ph} (orthonormal: e_{th}/{r}, e_{ph}/({r} sin {th})); h_plus = \
             (h_{th}{th} - h_{ph}{ph}/sin^2 {th})/(2 {r}^2), h_cross = h_{th}{ph}/({r}^2 sin {th})"
        ),
        centre: format!(
            "({list}) = ({}, {}, {})",
            plan.centre[0], plan.centre[1], plan.centre[2]
        ),
        json: serde_json::json!({
            "direction": { "kind": "radial", "coordinates": c },
            "basis": { "u": format!("e_{th}"), "v": format!("e_{ph}") },
        }),
        title_n: format!("n = e_{r}"),
    };
    report(&a, &mut p, &geometry, (&ring, &snaps), target.as_ref())
}

/// The picture (if asked) and the report, text or JSON.
fn report(
    a: &RingArgs,
    p: &mut Problem,
    geometry: &Geometry,
    (ring, snaps): (&Ring, &[Snapshot]),
    target: Option<&crate::cli::plan::Target>,
) -> Result<Outcome, Failure> {
    let title_n = &geometry.title_n;
    let label = a.file.display().to_string();
    let radius = ring.radius;
    // The picture first, so that the report can say it was written.
    let written = match target {
        Some(t) => {
            let title = format!(
                "{}: ring transverse to {title_n}",
                p.name.clone().unwrap_or_else(|| label.clone()),
            );
            write_atomic(t, &svg(snaps, radius, &title))?;
            Some((t.path.display().to_string(), exaggeration(snaps, radius)))
        }
        None => None,
    };
    let text = match a.format {
        Format::Text => ring_text(&label, p, geometry, ring, snaps, written.as_ref()),
        Format::Json => {
            let mut j = serde_json::json!({
                "file": label,
                "name": p.name,
                "ring": { "radius": radius, "masses": ring.masses, "centre": ring.centre },
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
            });
            j["direction"] = geometry.json["direction"].clone();
            j["basis"] = geometry.json["basis"].clone();
            json(&j)
        }
    };
    print(&text)?;
    Ok(Outcome::Holds)
}

/// The text report of `ring`.
fn ring_text(
    label: &str,
    p: &mut Problem,
    geometry: &Geometry,
    ring: &Ring,
    snaps: &[Snapshot],
    written: Option<&(String, f64)>,
) -> String {
    let radius = ring.radius;
    let mut s = String::new();
    let _ = writeln!(s, "{}", heading(label, p.name.as_deref()));
    let _ = writeln!(s, "direction  {}", geometry.direction);
    let _ = writeln!(s, "basis      {}", geometry.basis);
    let _ = writeln!(
        s,
        "ring       {} free masses, radius L = {radius}, centre {}; mass k at phi = 360 k/{} \
         degrees from u towards v",
        ring.masses, geometry.centre, ring.masses
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
