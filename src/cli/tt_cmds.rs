//! The wave-content commands: `project`, `gauge`, `compare` and `ring`.
//!
//! Each builds its plan first (the problem file, every direction, vector and number list, the
//! output paths), so that every input error is reported before any algebra; then computes,
//! prints, and writes output files atomically (a temporary file in the same directory, then a
//! rename), refusing to replace an existing file without `--force`.

use super::expr_cmds::{Format, audit_json, audit_verdicts, point_lines, points_json};
use super::limits::{LimitArgs, load_with};
use super::out::{Failure, Outcome, gave_up, limit_in, print};
use clap::Args;
use lingrav::audit::expr::{FileQuantities, Finding, summary};
use lingrav::canon::{Form, Names, Store};
use lingrav::check::{CheckReport, Status, audit_text, check};
use lingrav::gauge::compare::{Comparison, compare, import};
use lingrav::gauge::plane::{PlaneError, find_wave, tt_gauge_vector};
use lingrav::gauge::{box_vector, text_that_reads_back, transform};
use lingrav::output::AtomicFile;
use lingrav::problem::{COMPONENTS, Claims, Gauge, Problem, component_name, render_problem};
use lingrav::tensor::{COORDS, Linearized, Sym4};
use lingrav::tt::ring::{Ring, respond, svg};
use lingrav::tt::{
    Arg, ArgError, Direction, DirectionKind, FRACTION_DEFINITION, Share, not_tt_fraction,
    numeric_point, parse_direction, project_perturbation, set_basis,
};
use lingrav::zero::Verdict;
use std::cell::RefCell;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

// ----- arguments -------------------------------------------------------------------------

/// How the direction and its polarization basis are given (shared by `project` and `ring`).
#[derive(Args, Debug)]
pub struct DirectionArgs {
    /// The direction n: a unit vector `nx,ny,nz` (exact numbers, pi, sqrt, the file's
    /// parameters), an axis (`z`, `-x`, ...), polar angles `theta=..,phi=..`, or `radial`
    /// (n = x/r).
    #[arg(long, value_name = "D", allow_hyphen_values = true)]
    direction: String,
    /// First polarization vector u, perpendicular to n (default: e_theta of n's polar
    /// angles); v = n x u.
    #[arg(long, value_name = "AX,AY,AZ", allow_hyphen_values = true)]
    basis: Option<String>,
    /// Divide the direction (and the basis vector) by its length instead of refusing a
    /// vector that is not of unit length.
    #[arg(long)]
    normalize: bool,
}

/// Arguments of `lingrav project`.
#[derive(Args, Debug)]
pub struct ProjectArgs {
    /// The problem file (TOML).
    file: PathBuf,
    #[command(flatten)]
    dir: DirectionArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Also write the TT part as a new problem file, with the claims proved for it.
    #[arg(long, value_name = "FILE.toml")]
    output: Option<PathBuf>,
    /// Replace the output file if it exists.
    #[arg(long)]
    force: bool,
    /// Also print the points of the independent audit.
    #[arg(long)]
    audit_points: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Arguments of `lingrav gauge`.
#[derive(Args, Debug)]
pub struct GaugeArgs {
    /// The problem file (TOML).
    file: PathBuf,
    /// The gauge vector xi_mu (index down) as four expressions `xi_t, xi_x, xi_y, xi_z`.
    #[arg(
        long,
        value_name = "XI",
        allow_hyphen_values = true,
        required_unless_present = "to_tt",
        conflicts_with = "to_tt"
    )]
    vector: Option<String>,
    /// Construct the gauge vector that brings a Lorenz-gauge plane wave to TT gauge.
    #[arg(long)]
    to_tt: bool,
    /// With --to-tt: the wave vector k^mu = (w, kx, ky, kz) of the phase -w t + kx x + ky y +
    /// kz z (default: read off the perturbation).
    #[arg(
        long,
        value_name = "W,KX,KY,KZ",
        allow_hyphen_values = true,
        requires = "to_tt"
    )]
    wave_vector: Option<String>,
    /// Write the transformed perturbation as a new problem file.
    #[arg(long, value_name = "FILE.toml")]
    output: Option<PathBuf>,
    /// Replace the output file if it exists.
    #[arg(long)]
    force: bool,
    /// Also print the points of the independent audit.
    #[arg(long)]
    audit_points: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// Arguments of `lingrav compare`.
#[derive(Args, Debug)]
pub struct CompareArgs {
    /// The first problem file.
    first: PathBuf,
    /// The second problem file.
    second: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Also print the points of the independent audit.
    #[arg(long)]
    audit_points: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

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
    /// Also draw the ring at each time as an SVG picture.
    #[arg(long, value_name = "FILE.svg")]
    svg: Option<PathBuf>,
    /// Replace the SVG file if it exists.
    #[arg(long)]
    force: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

// ----- shared helpers --------------------------------------------------------------------

/// A bad argument, unless what stopped it was an algebra limit (then undecided).
fn arg_failure(e: ArgError) -> Failure {
    match limit_in(&e.to_string()) {
        Some(l) => gave_up(&l),
        None => Failure::Input(miette::Report::new(e)),
    }
}

/// Why a command stopped early: bad input, or an algebra limit (which is "undecided").
enum Stop {
    Fail(Failure),
    Limit(lingrav::canon::CanonError),
}

impl From<Failure> for Stop {
    fn from(f: Failure) -> Stop {
        Stop::Fail(f)
    }
}

fn limit_failure(e: lingrav::canon::CanonError) -> Stop {
    Stop::Limit(e)
}

/// An algebra limit is an undecided outcome, never a pass and never bad input.
fn finish(r: Result<Outcome, Stop>) -> Result<Outcome, Failure> {
    match r {
        Ok(o) => Ok(o),
        Err(Stop::Fail(f)) => Err(f),
        Err(Stop::Limit(e)) => Err(gave_up(&e)),
    }
}

fn heading(label: &str, name: Option<&str>) -> String {
    match name {
        Some(n) => format!("{label}: {n}"),
        None => label.to_string(),
    }
}

fn vec_text(store: &mut Store, v: &[Form]) -> String {
    let parts: Vec<String> = v.iter().map(|f| store.to_text(*f)).collect();
    format!("({})", parts.join(", "))
}

/// An output file, checked (and its temporary opened) before any work.
struct Target {
    path: PathBuf,
    file: RefCell<Option<AtomicFile>>,
}

fn plan_output(path: &Path, force: bool, option: &str) -> Result<Target, Failure> {
    let file = AtomicFile::create(path, force)
        .map_err(|e| Failure::Input(miette::miette!(help = e.help(), "{option} {e}")))?;
    Ok(Target {
        path: path.to_path_buf(),
        file: RefCell::new(Some(file)),
    })
}

/// Writes `contents` to the target's temporary file and moves it into place.
fn write_atomic(t: &Target, contents: &str) -> Result<(), Failure> {
    let mut file = t.file.borrow_mut().take().expect("written once");
    file.write_all(contents.as_bytes())?;
    file.commit()?;
    Ok(())
}

/// Reads the direction and the basis (the plan stage of `project` and `ring`).
fn plan_direction(p: &mut Problem, a: &DirectionArgs) -> Result<Direction, Failure> {
    let names = p.names.clone();
    let sampling = p.sampling.clone();
    let mut dir = parse_direction(
        &mut p.store,
        &names,
        &sampling,
        Arg::new("--direction", &a.direction),
        a.normalize,
    )
    .map_err(arg_failure)?;
    if let Some(b) = &a.basis {
        set_basis(
            &mut p.store,
            &names,
            &sampling,
            &mut dir,
            Arg::new("--basis", b),
            a.normalize,
        )
        .map_err(arg_failure)?;
    }
    Ok(dir)
}

fn kind_word(k: DirectionKind) -> &'static str {
    match k {
        DirectionKind::Vector => "vector",
        DirectionKind::Angles => "angles",
        DirectionKind::Radial => "radial",
    }
}

/// A perturbation derived from `p` in `p`'s store (taken for the check and given back).
/// `h_text` are texts of its components in `p`'s names and the `defines` after `p`'s (the
/// check audits its verdicts by evaluating them independently); without texts the check
/// says "not audited".
fn check_derived(
    p: &mut Problem,
    h: Sym4,
    texts: ([[Option<String>; 4]; 4], Vec<(String, String)>),
    claims: Claims,
    keep_source: bool,
) -> CheckReport {
    with_derived(p, h, texts, claims, keep_source, check)
}

/// `f` of the perturbation derived from `p` as for [`check_derived`].
fn with_derived<T>(
    p: &mut Problem,
    h: Sym4,
    (h_text, defines): ([[Option<String>; 4]; 4], Vec<(String, String)>),
    claims: Claims,
    keep_source: bool,
    f: impl FnOnce(&mut Problem) -> T,
) -> T {
    let mut derived = Problem {
        name: p.name.clone(),
        path: p.path.clone(),
        text: String::new(),
        store: std::mem::take(&mut p.store),
        names: p.names.clone(),
        parameters: p.parameters.clone(),
        functions: p.functions.clone(),
        defines: p.defines.iter().cloned().chain(defines).collect(),
        h,
        h_text,
        source: if keep_source { p.source } else { None },
        source_text: if keep_source {
            p.source_text.clone()
        } else {
            None
        },
        claims: Some(claims),
        grid: None,
        sampling: p.sampling.clone(),
    };
    let out = f(&mut derived);
    p.store = derived.store;
    out
}

fn claim_status(r: &CheckReport, key: &str) -> Option<Status> {
    r.claims.iter().find(|c| c.key == key).map(|c| c.status)
}

/// One line per claim of a verification, with what stands in the way of those that fail.
fn render_verification(s: &mut String, r: &CheckReport) {
    for c in r.claims.iter().filter(|c| c.asserted.is_some()) {
        let title = lingrav::problem::titles::asserted(&c.title, c.asserted);
        let _ = writeln!(s, "  {:<10} {title}", c.status.label());
        let _ = writeln!(s, "  {:<10} {}", "", c.method);
        if c.status != Status::Holds {
            for k in c
                .components
                .iter()
                .filter(|k| !matches!(k.verdict, Verdict::Zero))
                .take(6)
            {
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
        }
    }
}

/// The component texts of `h` for a file, each proved to read back to the same form.
fn file_texts(
    store: &mut Store,
    names: &Names,
    h: &Sym4,
    fallback: impl Fn(usize, usize) -> Option<String>,
) -> Result<[[Option<String>; 4]; 4], String> {
    let mut out: [[Option<String>; 4]; 4] = Default::default();
    for (mu, nu) in COMPONENTS {
        let f = h[mu][nu];
        if store.is_zero(f) {
            continue;
        }
        let text = match text_that_reads_back(store, names, f) {
            Some(t) => t,
            None => fallback(mu, nu).ok_or_else(|| {
                format!(
                    "the simplified form of component {} does not read back exactly, so it \
                     cannot be written to a file",
                    component_name(mu, nu)
                )
            })?,
        };
        out[mu][nu] = Some(text.clone());
        out[nu][mu] = Some(text);
    }
    Ok(out)
}

/// Lists the nonzero components of `h` as `prefix_mn = ...`, then how many are zero.
fn list_components(s: &mut String, store: &mut Store, h: &Sym4, prefix: &str, spatial_only: bool) {
    let mut zeros = 0;
    for (mu, nu) in COMPONENTS {
        if spatial_only && mu == 0 {
            continue;
        }
        if store.is_zero(h[mu][nu]) {
            zeros += 1;
            continue;
        }
        let t = store.to_text(h[mu][nu]);
        let _ = writeln!(s, "  {prefix}_{} = {t}", component_name(mu, nu));
    }
    if zeros > 0 {
        let _ = writeln!(s, "  ({zeros} further components are exactly 0)");
    }
}

// ----- project ---------------------------------------------------------------------------

fn share_text(x: &Share) -> String {
    match x {
        Share::Exact(0) => "0 (exact)".into(),
        Share::Exact(_) => "1 (exact)".into(),
        Share::Numerical(v) => format!("{v:.4}"),
        Share::Unavailable(why) => format!("not available ({why})"),
    }
}

fn share_json(x: &Share) -> serde_json::Value {
    match x {
        Share::Exact(v) => serde_json::json!({ "value": v, "exact": true }),
        Share::Numerical(v) => serde_json::json!({ "value": v, "exact": false }),
        Share::Unavailable(why) => serde_json::json!({ "value": null, "reason": why }),
    }
}

/// `lingrav project`.
pub fn run_project(a: ProjectArgs) -> Result<Outcome, Failure> {
    finish(project_cmd(a))
}

fn project_cmd(a: ProjectArgs) -> Result<Outcome, Stop> {
    let mut p = a.limits.load(&a.file)?;
    let dir = plan_direction(&mut p, &a.dir)?;
    let target = match &a.output {
        Some(path) => Some(plan_output(path, a.force, "--output")?),
        None => None,
    };

    let h = p.h;
    let proj = project_perturbation(&mut p.store, &h, &dir).map_err(limit_failure)?;
    let mut frac = {
        let sampling = p.sampling.clone();
        not_tt_fraction(&mut p.store, &h, &proj.tt, &p.parameters, &sampling)
    };
    let tt4 = lingrav::tt::as_perturbation(&p.store, &proj.tt);
    let seed = p.sampling.seed;
    let audit = audit_projection(
        &mut p,
        &a.dir,
        &dir,
        &tt4,
        (proj.plus, proj.cross),
        &mut frac,
        seed,
    );
    let label = a.file.display().to_string();
    let st = &mut p.store;
    let n_text = vec_text(st, &dir.n);
    let u_text = vec_text(st, &dir.u);
    let v_text = vec_text(st, &dir.v);
    let plus = st.to_text(proj.plus);
    let cross = st.to_text(proj.cross);

    // The output file: the TT part, with the claims proved for it.
    let mut written: Option<(String, Claims, CheckReport)> = None;
    let mut verification_defect = false;
    let mut outcome = Outcome::Holds;
    let mut write_problem: Option<String> = None;
    if let Some(t) = &target {
        let names = p.names.clone();
        let texts = file_texts(&mut p.store, &names, &tt4, |_, _| None);
        let texts = match texts {
            Ok(t) => t,
            Err(why) => {
                print(&format!("{why}; nothing was written\n"))?;
                return Ok(Outcome::Undecided);
            }
        };
        let wanted = Claims {
            field_equations: Some(true),
            gauge: vec![Gauge::Tt],
            pure_gauge: None,
        };
        let report = check_derived(&mut p, tt4, (texts.clone(), Vec::new()), wanted, false);
        verification_defect = report
            .claims
            .iter()
            .any(|c| c.components.iter().any(|k| k.audit.is_defect()));
        let fe = claim_status(&report, "field_equations");
        let tt = claim_status(&report, "gauge.tt");
        let claims = Claims {
            field_equations: match fe {
                Some(Status::Holds) => Some(true),
                Some(Status::Fails) => Some(false),
                _ => None,
            },
            gauge: if tt == Some(Status::Holds) {
                vec![Gauge::Tt]
            } else {
                Vec::new()
            },
            pure_gauge: None,
        };
        outcome = match (fe, tt) {
            (Some(Status::Holds), Some(Status::Holds)) => Outcome::Holds,
            (Some(Status::Fails), _) | (_, Some(Status::Fails)) => Outcome::Fails,
            _ => Outcome::Undecided,
        };
        let name = format!(
            "TT part of {} along n = {n_text}",
            p.name.clone().unwrap_or_else(|| label.clone())
        );
        // The simplified texts use no defines, so none are copied.
        let body = render_problem(
            Some(&name),
            &p.parameters,
            &p.functions,
            &[],
            &texts,
            None,
            Some(&claims),
        );
        let header = format!(
            "# The TT part h^TT_ij = Lambda_ij,kl h_kl of {label} along n = {n_text}\n\
             # (written by lingrav project; the claims below were proved for it).\n"
        );
        write_problem = Some(format!("{header}{body}"));
        written = Some((t.path.display().to_string(), claims, report));
    }
    if let (Some(t), Some(text)) = (&target, &write_problem) {
        write_atomic(t, text)?;
    }

    let st = &mut p.store;
    let text = match a.format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
            let _ = writeln!(
                s,
                "direction  n = {n_text}  [{}; {}]",
                kind_word(dir.kind),
                dir.n_note
            );
            if let Some(f) = &audit.unit {
                let _ = writeln!(s, "           unit length: {}", f.method(seed));
            }
            let _ = writeln!(s, "basis      u = {u_text}, v = {v_text}");
            let _ = writeln!(s, "           {}", dir.basis_note);
            let _ = writeln!(
                s,
                "TT part h^TT_ij = Lambda_ij,kl h_kl, Lambda = P_ik P_jl - P_ij P_kl/2, P = 1 - n n (exact):"
            );
            list_components(&mut s, st, &tt4, "h^TT", true);
            let _ = writeln!(
                s,
                "  (as printed, against an independent projection of the texts: {})",
                audit.printed_text(seed)
            );
            let _ = writeln!(
                s,
                "polarizations, h^TT = h_plus (u u - v v) + h_cross (u v + v u):"
            );
            let _ = writeln!(s, "  h_plus  = {plus}");
            let _ = writeln!(s, "  h_cross = {cross}");
            let _ = writeln!(
                s,
                "  (as printed, against the printed TT part and an orthonormal basis u, v \
                 transverse to n: {})",
                audit.polarizations_text(seed)
            );
            if frac.all == Share::Exact(0) {
                let _ = writeln!(s, "not TT     0, exactly: h is already TT along n");
            } else if frac.all == Share::Exact(1) && frac.spatial == Share::Exact(1) {
                let _ = writeln!(s, "not TT     1, exactly: no part of h is TT along n");
            } else {
                let _ = writeln!(
                    s,
                    "not TT     {} of the whole perturbation, {} of its spatial part",
                    share_text(&frac.all),
                    share_text(&frac.spatial)
                );
            }
            if !audit.shares.is_empty() {
                let _ = writeln!(s, "           {}", audit.shares_text(seed));
            }
            if matches!(frac.all, Share::Numerical(_))
                || matches!(frac.spatial, Share::Numerical(_))
            {
                let _ = writeln!(
                    s,
                    "           numerical evidence: {FRACTION_DEFINITION}; {} points, seed {:#x}",
                    frac.points, frac.seed
                );
            }
            if let Some((path, claims, report)) = &written {
                let _ = writeln!(s, "the TT part as a perturbation on its own:");
                render_verification(&mut s, report);
                let _ = writeln!(s, "wrote {path} with claims: {}", claims_text(claims));
                if outcome != Outcome::Holds {
                    let _ = writeln!(
                        s,
                        "  (claims not proved were left out: the TT part along n is a vacuum \
                         TT wave only when h is a plane wave travelling along n)"
                    );
                }
            }
            if audit.defect() || verification_defect {
                let _ = writeln!(
                    s,
                    "INTERNAL DEFECT: the exact route and the independent evaluation disagree \
                     (see above); no statement they disagree on is reported as proved"
                );
            }
            if a.audit_points {
                s.push_str(&point_lines(&audit.all()));
            }
            s
        }
        Format::Json => {
            let mut tt = serde_json::Map::new();
            for (mu, nu) in COMPONENTS.iter().copied().filter(|(m, _)| *m > 0) {
                tt.insert(component_name(mu, nu), st.to_text(tt4[mu][nu]).into());
            }
            let strs = |st: &mut Store, v: &[Form; 3]| -> Vec<String> {
                v.iter().map(|f| st.to_text(*f)).collect()
            };
            let mut j = serde_json::json!({
                "file": label,
                "name": p.name,
                "direction": { "kind": kind_word(dir.kind), "n": strs(st, &dir.n), "note": dir.n_note },
                "basis": { "u": strs(st, &dir.u), "v": strs(st, &dir.v), "construction": dir.basis_note },
                "tt": tt,
                "h_plus": plus,
                "h_cross": cross,
                "not_tt": {
                    "all": share_json(&frac.all),
                    "spatial": share_json(&frac.spatial),
                    "definition": FRACTION_DEFINITION,
                    "points": frac.points,
                    "seed": frac.seed,
                },
                "conventions": { "signature": "-+++", "coordinates": "t,x,y,z", "units": "G = c = 1", "indices": "h down" },
                "audit": {
                    "unit_length": audit.unit.as_ref().map(|f| audit_json(f, seed)),
                    "tt_part": audit.printed_text(seed),
                    "polarizations_and_basis": audit.polarizations_text(seed),
                    "not_tt": if audit.shares.is_empty() { None } else { Some(audit.shares_text(seed)) },
                    "defect": audit.defect() || verification_defect,
                    "seed": seed,
                    "points": points_json(&audit.all()),
                },
            });
            if let Some((path, claims, report)) = &written {
                j["output"] = serde_json::json!({
                    "path": path,
                    "claims": claims_text(claims),
                    "verification": report.claims.iter().filter(|c| c.asserted.is_some()).map(|c| {
                        serde_json::json!({ "key": c.key, "status": c.status.label(), "method": c.method })
                    }).collect::<Vec<_>>(),
                });
            }
            format!("{}\n", serde_json::to_string_pretty(&j).expect("json"))
        }
    };
    print(&text)?;
    if audit.defect() || verification_defect {
        return Ok(Outcome::Fails);
    }
    Ok(outcome)
}

/// The independent audit of what `project` states as exact.
struct ProjectAudit {
    /// "unit length (proved)" of a given vector, from its texts as written.
    unit: Option<Finding>,
    /// The components proved zero behind an exact share of "not TT" (0: h - h^TT, 1: h^TT).
    shares: Vec<Finding>,
    /// The printed TT part against the independent projection of the file's texts.
    printed: Vec<Finding>,
    /// The printed polarizations against the printed TT part and basis, and the basis
    /// against n (u.n = 0, u.u = 1, v.n = 0, v.v = 1, u.v = 0).
    polarizations: Vec<Finding>,
}

impl ProjectAudit {
    fn all(&self) -> Vec<&Finding> {
        self.unit
            .iter()
            .chain(&self.shares)
            .chain(&self.printed)
            .chain(&self.polarizations)
            .collect()
    }

    fn defect(&self) -> bool {
        self.all().iter().any(|f| f.is_defect())
    }

    fn shares_text(&self, seed: u64) -> String {
        summary(&self.shares.iter().collect::<Vec<_>>(), seed)
    }

    fn printed_text(&self, seed: u64) -> String {
        summary(&self.printed.iter().collect::<Vec<_>>(), seed)
    }

    fn polarizations_text(&self, seed: u64) -> String {
        summary(&self.polarizations.iter().collect::<Vec<_>>(), seed)
    }
}

/// Audits what `project` states as exact, from the file's texts and the direction: the unit
/// length of a given vector (its texts as written), the printed TT part and every exact
/// share of "not TT" (the independent projection `Lambda_ij,kl h_kl` with `n` as printed,
/// the direction the user is shown). A share whose proof is contradicted is no longer shown
/// as exact.
fn audit_projection(
    p: &mut Problem,
    args: &DirectionArgs,
    dir: &Direction,
    tt4: &Sym4,
    (proj_plus, proj_cross): (lingrav::canon::Form, lingrav::canon::Form),
    frac: &mut lingrav::tt::NotTt,
    seed: u64,
) -> ProjectAudit {
    let proved = |n: usize| vec![Verdict::Zero; n];
    let unit = dir.n_note.contains("(proved)").then(|| {
        let pieces = Arg::new("--direction", &args.direction).split().ok();
        match pieces.as_deref() {
            Some([x, y, z]) => {
                let text = format!("({})^2 + ({})^2 + ({})^2 - 1", x.text, y.text, z.text);
                let route = FileQuantities::texts(p, &[("|n|^2 - 1".into(), text)]);
                audit_verdicts(&route, &mut proved(1), |_| Some(0), seed).remove(0)
            }
            _ => Finding::NotAudited("the direction is not three components".into()),
        }
    });
    let n: [String; 3] = std::array::from_fn(|i| p.store.to_text(dir.n[i]));
    let printed: [String; 6] = {
        let mut it = COMPONENTS.iter().filter(|(m, _)| *m > 0);
        std::array::from_fn(|_| {
            let &(mu, nu) = it.next().expect("six spatial components");
            p.store.to_text(tt4[mu][nu])
        })
    };
    let route = FileQuantities::not_tt(p, &n, Some(&printed));
    let printed_findings = audit_verdicts(&route, &mut proved(6), |i| Some(16 + i), seed);
    // The components behind each exact share: h - h^TT (all ten, or the six spatial ones)
    // for 0, the six of h^TT for 1.
    let behind = |share: &Share, spatial: bool| -> Vec<usize> {
        match share {
            Share::Exact(0) if spatial => (4..10).collect(),
            Share::Exact(0) => (0..10).collect(),
            Share::Exact(_) => (10..16).collect(),
            _ => Vec::new(),
        }
    };
    let (all, spatial) = (behind(&frac.all, false), behind(&frac.spatial, true));
    let mut which: Vec<usize> = all.iter().chain(&spatial).copied().collect();
    which.sort_unstable();
    which.dedup();
    let shares = audit_verdicts(&route, &mut proved(which.len()), |i| Some(which[i]), seed);
    for (share, of) in [(&mut frac.all, &all), (&mut frac.spatial, &spatial)] {
        let contradicted = which
            .iter()
            .zip(&shares)
            .find(|(q, f)| of.contains(q) && f.is_defect());
        if let Some((_, f)) = contradicted {
            *share = Share::Unavailable(f.method(seed));
        }
    }
    // The printed polarizations from the printed TT part and basis (the TT part itself is
    // audited above), and the basis against the printed n.
    let vtext = |v: &[lingrav::canon::Form; 3], st: &mut lingrav::canon::Store| -> [String; 3] {
        std::array::from_fn(|i| format!("({})", st.to_text(v[i])))
    };
    let (nv, uv, vv) = (
        vtext(&dir.n, &mut p.store),
        vtext(&dir.u, &mut p.store),
        vtext(&dir.v, &mut p.store),
    );
    let tt = |i: usize, j: usize| format!("({})", printed[spatial_index(i.min(j), i.max(j))]);
    let mut plus_sum = Vec::new();
    let mut cross_sum = Vec::new();
    for i in 0..3 {
        for j in 0..3 {
            plus_sum.push(format!(
                "{}*({}*{} - {}*{})",
                tt(i, j),
                uv[i],
                uv[j],
                vv[i],
                vv[j]
            ));
            cross_sum.push(format!(
                "{}*({}*{} + {}*{})",
                tt(i, j),
                uv[i],
                vv[j],
                vv[i],
                uv[j]
            ));
        }
    }
    let dot = |a: &[String; 3], b: &[String; 3]| {
        (0..3)
            .map(|i| format!("{}*{}", a[i], b[i]))
            .collect::<Vec<_>>()
            .join(" + ")
    };
    let plus = format!(
        "({}) - ({})/2",
        p.store.to_text(proj_plus),
        plus_sum.join(" + ")
    );
    let cross = format!(
        "({}) - ({})/2",
        p.store.to_text(proj_cross),
        cross_sum.join(" + ")
    );
    let texts = vec![
        ("h_plus as printed".to_string(), plus),
        ("h_cross as printed".to_string(), cross),
        ("u.n".to_string(), dot(&uv, &nv)),
        ("u.u - 1".to_string(), format!("{} - 1", dot(&uv, &uv))),
        ("v.n".to_string(), dot(&vv, &nv)),
        ("v.v - 1".to_string(), format!("{} - 1", dot(&vv, &vv))),
        ("u.v".to_string(), dot(&uv, &vv)),
    ];
    let route = FileQuantities::texts(p, &texts);
    let polarizations = audit_verdicts(&route, &mut proved(texts.len()), Some, seed);
    ProjectAudit {
        unit,
        shares,
        printed: printed_findings,
        polarizations,
    }
}

/// The position of spatial component `(i, j)`, `i <= j`, in the order xx xy xz yy yz zz.
fn spatial_index(i: usize, j: usize) -> usize {
    match (i, j) {
        (0, 0) => 0,
        (0, 1) => 1,
        (0, 2) => 2,
        (1, 1) => 3,
        (1, 2) => 4,
        _ => 5,
    }
}

fn claims_text(c: &Claims) -> String {
    let mut parts = Vec::new();
    if let Some(b) = c.field_equations {
        parts.push(format!("field_equations = {b}"));
    }
    if !c.gauge.is_empty() {
        let g: Vec<String> = c.gauge.iter().map(|g| format!("'{g}'")).collect();
        parts.push(format!("gauge = [{}]", g.join(", ")));
    }
    if let Some(b) = c.pure_gauge {
        parts.push(format!("pure_gauge = {b}"));
    }
    if parts.is_empty() {
        "none".into()
    } else {
        parts.join(", ")
    }
}

// ----- gauge -----------------------------------------------------------------------------

fn plane_failure(e: PlaneError) -> Result<Outcome, Stop> {
    match e {
        PlaneError::NotApplicable(why) => Err(Stop::Fail(Failure::Input(miette::miette!(
            help = "--to-tt needs a plane wave in Lorenz gauge: every component a function of \
                    one phase k_mu x^mu (sin, cos, exp or a derivative F'(..) of an arbitrary \
                    function of it)",
            "the TT construction does not apply: {why}"
        )))),
        PlaneError::Undecided(why) => {
            if let Some(limit) = limit_in(&why) {
                return Err(Stop::Limit(limit));
            }
            print(&format!("undecided: {why}\n"))?;
            Ok(Outcome::Undecided)
        }
    }
}

/// `lingrav gauge`.
pub fn run_gauge(a: GaugeArgs) -> Result<Outcome, Failure> {
    finish(gauge_cmd(a))
}

fn gauge_cmd(a: GaugeArgs) -> Result<Outcome, Stop> {
    let mut p = a.limits.load(&a.file)?;
    let names = p.names.clone();
    let sampling = p.sampling.clone();
    // The plan: the vector (or wave vector) and the output path, before any algebra.
    let (xi_given, xi_texts) = match &a.vector {
        Some(v) => {
            let arg = Arg::new("--vector", v);
            let pieces = arg
                .split_exact(4, "the gauge vector is given as four expressions xi_t, xi_x, xi_y, xi_z (index down)")
                .map_err(arg_failure)?;
            let mut xi = [p.store.zero(); 4];
            for (slot, piece) in xi.iter_mut().zip(&pieces) {
                *slot = arg
                    .build(&mut p.store, &names, piece)
                    .map_err(arg_failure)?;
            }
            let texts: Vec<String> = pieces.iter().map(|x| x.text.clone()).collect();
            (Some(xi), texts)
        }
        None => (None, Vec::new()),
    };
    let k_given = match &a.wave_vector {
        Some(w) => {
            let arg = Arg::new("--wave-vector", w);
            let pieces = arg
                .split_exact(4, "the wave vector is given as w,kx,ky,kz: k^mu with the phase -w t + kx x + ky y + kz z")
                .map_err(arg_failure)?;
            let mut k = [p.store.zero(); 4];
            for (i, (slot, piece)) in k.iter_mut().zip(&pieces).enumerate() {
                let f = arg
                    .build_constant(&mut p.store, &names, piece)
                    .map_err(arg_failure)?;
                // k_t = -k^t; spatial components are the same up and down.
                *slot = if i == 0 {
                    p.store.neg(f).map_err(limit_failure)?
                } else {
                    f
                };
            }
            Some(k)
        }
        None => None,
    };
    let target = match &a.output {
        Some(path) => Some(plan_output(path, a.force, "--output")?),
        None => None,
    };
    let label = a.file.display().to_string();
    let mut s = String::new();
    let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
    let h = p.h;
    let seed = sampling.seed;
    // Every verdict below is audited independently; a contradiction is an internal defect.
    let mut defect = false;
    let mut audits: Vec<Finding> = Vec::new();

    let (xi, verify_tt) = match xi_given {
        Some(xi) => (xi, false),
        None => {
            let wave = match find_wave(&mut p.store, &names, &sampling, &h, k_given) {
                Ok(w) => w,
                Err(e) => return plane_failure(e),
            };
            let st = &mut p.store;
            let k_up: Vec<String> = (0..4)
                .map(|mu| {
                    let f = if mu == 0 {
                        st.neg(wave.k[0]).unwrap_or(wave.k[0])
                    } else {
                        wave.k[mu]
                    };
                    st.to_text(f)
                })
                .collect();
            let _ = writeln!(
                s,
                "plane wave  phase k_mu x^mu = {}, k^mu = ({})  [{}]",
                st.to_text(wave.phase),
                k_up.join(", "),
                if wave.detected {
                    "read off the perturbation"
                } else {
                    "from --wave-vector"
                }
            );
            // k null, audited from the printed k (the texts shown above).
            let k_texts: Vec<String> = wave.k.iter().map(|f| p.store.to_text(*f)).collect();
            let norm = format!(
                "-({})^2 + ({})^2 + ({})^2 + ({})^2",
                k_texts[0], k_texts[1], k_texts[2], k_texts[3]
            );
            let route = FileQuantities::texts(&p, &[("k_mu k^mu".into(), norm)]);
            let mut null = [wave.null.clone()];
            let finding = audit_verdicts(&route, &mut null, |_| Some(0), seed).remove(0);
            defect |= finding.is_defect();
            let [null] = null;
            let _ = writeln!(
                s,
                "            k null (k_mu k^mu = 0): {}; {}",
                match &null {
                    Verdict::Zero => "proved".to_string(),
                    Verdict::Nonzero(w) => format!("no, nonzero {w}: not a vacuum wave"),
                    Verdict::Undecided(why) => format!("undecided ({why})"),
                },
                finding.method(seed)
            );
            audits.push(finding);
            // The construction starts from Lorenz gauge; say so if the input is not in it.
            let mut lin = Linearized::new(&mut p.store, h);
            let div = lin.lorenz(&mut p.store).map_err(limit_failure)?;
            let mut verdicts: Vec<Verdict> = div
                .iter()
                .map(|f| lingrav::zero::decide(&mut p.store, *f, &sampling))
                .collect();
            let lorenz = Claims {
                gauge: vec![Gauge::Lorenz],
                ..Claims::default()
            };
            let route = FileQuantities::claims(&p, Some(&lorenz));
            let index = |nu: usize| {
                let name = format!("d^mu hbar_mu{}", COORDS[nu]);
                route.as_ref().ok()?.index_of("gauge.lorenz", &name)
            };
            let findings = audit_verdicts(&route, &mut verdicts, index, seed);
            for (nu, (v, finding)) in verdicts.iter().zip(&findings).enumerate() {
                match v {
                    Verdict::Zero => {}
                    Verdict::Nonzero(w) => {
                        let r = match finding {
                            Finding::ProofContradicted(_) => {
                                format!("0 by the exact route, but {}", finding.method(seed))
                            }
                            _ => p.store.to_text(div[nu]),
                        };
                        return Err(Stop::Fail(Failure::Input(miette::miette!(
                            help = "bring the wave to Lorenz gauge first (see `lingrav gauge --vector`), \
                                    or project its TT part with `lingrav project`",
                            "the TT construction needs a Lorenz-gauge wave, but d^mu hbar_mu{} = {r} \
                             is nonzero {w}",
                            COORDS[nu]
                        ))));
                    }
                    Verdict::Undecided(why) => {
                        let _ = writeln!(
                            s,
                            "undecided: cannot decide whether the input is in Lorenz gauge: d^mu hbar_mu{} ({why})",
                            COORDS[nu]
                        );
                        print(&s)?;
                        return Ok(Outcome::Undecided);
                    }
                }
            }
            let refs: Vec<&Finding> = findings.iter().collect();
            let _ = writeln!(
                s,
                "            input in Lorenz gauge: proved; {}",
                summary(&refs, seed)
            );
            audits.extend(findings);
            match tt_gauge_vector(&mut p.store, &names, &wave, &h) {
                Ok(xi) => (xi, true),
                Err(e) => return plane_failure(e),
            }
        }
    };

    let h2 = transform(&mut p.store, &h, &xi).map_err(limit_failure)?;
    // The texts of xi the audit evaluates: as given, or as printed for a constructed one.
    let xi_src: Vec<String> = if xi_texts.is_empty() {
        let st = &mut p.store;
        xi.iter().map(|f| st.to_text(*f)).collect()
    } else {
        xi_texts.clone()
    };
    let st = &mut p.store;
    let _ = writeln!(
        s,
        "gauge vector xi_mu (index down){}:",
        if verify_tt {
            ", constructed to remove h_t mu"
        } else {
            ""
        }
    );
    for (mu, f) in xi.iter().enumerate() {
        let _ = writeln!(s, "  xi_{} = {}", COORDS[mu], st.to_text(*f));
    }
    let _ = writeln!(
        s,
        "transformed perturbation h'_mu nu = h_mu nu - d_mu xi_nu - d_nu xi_mu:"
    );
    list_components(&mut s, st, &h2, "h'", false);

    // Lorenz gauge is preserved exactly when box xi = 0.
    let bx = box_vector(st, &xi).map_err(limit_failure)?;
    let mut verdicts: Vec<Verdict> = bx
        .iter()
        .map(|f| lingrav::zero::decide(st, *f, &sampling))
        .collect();

    // Verify the result on h' itself: the TT construction's claims, or what holds after a
    // given vector. The file gets only claims that were proved.
    let asked = Claims {
        field_equations: Some(true),
        gauge: if verify_tt {
            vec![Gauge::Tt, Gauge::Lorenz]
        } else {
            Gauge::ALL.to_vec()
        },
        pure_gauge: if verify_tt || target.is_none() {
            None
        } else {
            p.claims.as_ref().and_then(|c| c.pure_gauge)
        },
    };
    // The audits of h' and of box xi read xi as defines, so that each of its components is
    // evaluated once per point rather than once per derivative of it.
    let xi_names = fresh_names(&p, "lingrav_xi");
    let xi_defines: Vec<(String, String)> = xi_names.iter().cloned().zip(xi_src.clone()).collect();
    let h2_text = transformed_texts(&p.h_text, &xi_names);
    let (report, findings) = with_derived(
        &mut p,
        h2,
        (h2_text, xi_defines),
        asked.clone(),
        true,
        |d| (check(d), audit_box(d, &xi_names, &mut verdicts, seed)),
    );
    defect |= report
        .claims
        .iter()
        .any(|c| c.components.iter().any(|k| k.audit.is_defect()));

    let refs: Vec<&Verdict> = verdicts.iter().collect();
    let preserved = Status::of(&refs, true);
    let finding_refs: Vec<&Finding> = findings.iter().collect();
    defect |= findings.iter().any(Finding::is_defect);
    let st = &mut p.store;
    let _ = writeln!(
        s,
        "Lorenz gauge preserved (box xi_nu = 0): {}",
        preserved.label()
    );
    let _ = writeln!(s, "  {}", summary(&finding_refs, seed));
    audits.extend(findings);
    for (nu, v) in verdicts.iter().enumerate() {
        match v {
            Verdict::Zero => {}
            Verdict::Nonzero(w) => {
                let _ = writeln!(
                    s,
                    "  box xi_{} = {}, nonzero {w}",
                    COORDS[nu],
                    st.to_text(bx[nu])
                );
            }
            Verdict::Undecided(why) => {
                let _ = writeln!(
                    s,
                    "  box xi_{} = {}, undecided: {why}",
                    COORDS[nu],
                    st.to_text(bx[nu])
                );
            }
        }
    }

    let mut outcome = Outcome::Holds;
    if verify_tt {
        let _ = writeln!(s, "verification of h' (exact):");
        render_verification(&mut s, &report);
        outcome = match (
            claim_status(&report, "gauge.tt"),
            claim_status(&report, "field_equations"),
        ) {
            (Some(Status::Holds), Some(Status::Holds)) => Outcome::Holds,
            (Some(Status::Fails), _) | (_, Some(Status::Fails)) => Outcome::Fails,
            _ => Outcome::Undecided,
        };
        let _ = writeln!(
            s,
            "result: {}",
            match outcome {
                Outcome::Holds =>
                    "h' is in TT gauge and solves the field equations (proved exactly)",
                Outcome::Fails => "the construction did not reach a TT-gauge solution (see above)",
                Outcome::Undecided => "not every condition on h' could be decided",
            }
        );
    } else {
        let holding: Vec<&str> = report
            .claims
            .iter()
            .filter(|c| c.key.starts_with("gauge.") && c.status == Status::Holds)
            .map(|c| c.key.trim_start_matches("gauge."))
            .collect();
        let _ = writeln!(
            s,
            "gauges h' is in (exact): {}",
            if holding.is_empty() {
                "none of lorenz, tt, synchronous".to_string()
            } else {
                holding.join(", ")
            }
        );
        let components: Vec<lingrav::check::Component> = report
            .claims
            .iter()
            .flat_map(|c| c.components.iter().cloned())
            .collect();
        let _ = writeln!(s, "  verdicts on h': {}", audit_text(&components));
    }
    if defect {
        outcome = Outcome::Fails;
        let _ = writeln!(
            s,
            "INTERNAL DEFECT: the exact route and the independent evaluation disagree (see \
             above); no verdict they disagree on is reported as proved"
        );
    }
    if a.audit_points {
        let refs: Vec<&Finding> = audits.iter().collect();
        s.push_str(&point_lines(&refs));
    }

    if let Some(t) = &target {
        // Prefer the simplified text; where it does not read back exactly, write the
        // transformation itself with the derivative operators.
        let fallback_texts = transformed_texts(&p.h_text, &xi_src);
        let used_fallback = std::cell::Cell::new(false);
        let fallback = |mu: usize, nu: usize| -> Option<String> {
            used_fallback.set(true);
            fallback_texts[mu][nu].clone()
        };
        let texts = file_texts(&mut p.store, &names, &h2, fallback).map_err(|why| {
            Failure::Input(miette::miette!(
                "cannot write `{}`: {why}",
                t.path.display()
            ))
        })?;
        let status = |key: &str| claim_status(&report, key);
        let proved = |key: &str| match status(key) {
            Some(Status::Holds) => Some(true),
            Some(Status::Fails) => Some(false),
            _ => None,
        };
        let claims = Claims {
            field_equations: proved("field_equations"),
            gauge: asked
                .gauge
                .iter()
                .copied()
                .filter(|g| status(&format!("gauge.{}", g.name())) == Some(Status::Holds))
                .collect(),
            // A claim that holds keeps the value asked; one that fails is written negated.
            pure_gauge: asked
                .pure_gauge
                .and_then(|want| match status("pure_gauge") {
                    Some(Status::Holds) => Some(want),
                    Some(Status::Fails) => Some(!want),
                    _ => None,
                }),
        };
        let name = format!(
            "{}, {}",
            p.name.clone().unwrap_or_else(|| label.clone()),
            if verify_tt {
                "in TT gauge"
            } else {
                "gauge-transformed"
            }
        );
        // Simplified texts use no defines; the fallback texts may.
        let defines: &[(String, String)] = if used_fallback.get() { &p.defines } else { &[] };
        let body = render_problem(
            Some(&name),
            &p.parameters,
            &p.functions,
            defines,
            &texts,
            p.source_text.as_ref(),
            Some(&claims),
        );
        let xi_line: Vec<String> = {
            let st = &mut p.store;
            xi.iter().map(|f| st.to_text(*f)).collect()
        };
        let header = format!(
            "# {label} after h -> h - d_mu xi_nu - d_nu xi_mu with xi_mu = ({}),\n\
             # written by lingrav gauge; the claims below were proved for the result.\n",
            xi_line.join(", ")
        );
        write_atomic(t, &format!("{header}{body}"))?;
        let _ = writeln!(
            s,
            "wrote {} with claims: {}",
            t.path.display(),
            claims_text(&claims)
        );
    }
    print(&s)?;
    Ok(outcome)
}

/// The verdicts on `box xi_nu` audited from the texts of `xi` (in `p`'s names: the texts or
/// the names of defines).
fn audit_box(p: &Problem, xi: &[String], verdicts: &mut [Verdict], seed: u64) -> Vec<Finding> {
    let texts: Vec<(String, String)> = (0..4)
        .map(|nu| {
            let x = &xi[nu];
            (
                format!("box xi_{}", COORDS[nu]),
                format!("-d_t_t({x}) + d_x_x({x}) + d_y_y({x}) + d_z_z({x})"),
            )
        })
        .collect();
    let route = FileQuantities::texts(p, &texts);
    audit_verdicts(&route, verdicts, Some, seed)
}

/// Four names `stem_t`, ... (with more `_` at the end if needed) that no parameter, function
/// or define of `p` has.
fn fresh_names(p: &Problem, stem: &str) -> Vec<String> {
    let taken = |n: &str| {
        p.parameters.iter().any(|(m, _)| m == n)
            || p.functions.iter().any(|(m, _)| m == n)
            || p.defines.iter().any(|(m, _)| m == n)
    };
    let mut suffix = String::new();
    loop {
        let names: Vec<String> = COORDS
            .iter()
            .map(|c| format!("{stem}_{c}{suffix}"))
            .collect();
        if !names.iter().any(|n| taken(n)) {
            return names;
        }
        suffix.push('_');
    }
}

/// The texts of `h - d xi - d xi` from the texts of `h` and `xi` (in the file's names), for
/// the independent audit and for writing a component whose simplified text does not read
/// back.
fn transformed_texts(h_text: &[[Option<String>; 4]; 4], xi: &[String]) -> [[Option<String>; 4]; 4] {
    std::array::from_fn(|mu| {
        std::array::from_fn(|nu| {
            let orig = h_text[mu][nu].as_deref().unwrap_or("0");
            Some(format!(
                "({orig}) - d_{}({}) - d_{}({})",
                COORDS[mu], xi[nu], COORDS[nu], xi[mu]
            ))
        })
    })
}

// ----- compare ---------------------------------------------------------------------------

/// Differing components listed in text output.
const LISTED: usize = 10;

/// `lingrav compare`.
pub fn run_compare(a: CompareArgs) -> Result<Outcome, Failure> {
    finish(compare_cmd(a))
}

fn compare_cmd(a: CompareArgs) -> Result<Outcome, Stop> {
    let limits = a.limits.start();
    let mut pa = load_with(&a.first, limits)?;
    let mut pb = load_with(&a.second, limits)?;
    let imported = {
        let sampling = pa.sampling.clone();
        import(&mut pa.store, &sampling, &pa.parameters, &pa.functions, &pb).map_err(|why| {
            if let Some((t, ms)) = pa.store.limits.deadline {
                if std::time::Instant::now() > t {
                    return Stop::Limit(lingrav::canon::CanonError::Timeout(ms));
                }
            }
            Stop::Fail(Failure::Input(miette::miette!(
                "cannot read `{}` into the comparison: {why}",
                a.second.display()
            )))
        })?
    };
    let ha = pa.h;
    let mut cmp: Comparison =
        compare(&mut pa.store, &ha, &imported.h, &imported.sampling).map_err(limit_failure)?;
    let seed = imported.sampling.seed;
    let findings = audit_comparison(&mut cmp, &pa, &mut pb, seed);
    let finding_refs: Vec<&Finding> = findings.iter().collect();
    let audit_line = summary(&finding_refs, seed);
    let la = a.first.display().to_string();
    let lb = a.second.display().to_string();
    let differing: Vec<_> = cmp
        .components
        .iter()
        .filter(|c| !matches!(c.verdict, Verdict::Zero))
        .collect();
    let n = cmp.components.len();
    let text = match a.format {
        Format::Text => {
            let mut s = String::new();
            let _ = writeln!(s, "A  {}", heading(&la, pa.name.as_deref()));
            let _ = writeln!(s, "B  {}", heading(&lb, pb.name.as_deref()));
            for note in &imported.notes {
                let _ = writeln!(s, "note: {note}");
            }
            match cmp.status {
                Status::Holds => {
                    let _ = writeln!(
                        s,
                        "same physics: all {n} independent components of the linearized Riemann \
                         tensor agree (exact), so A and B differ by a gauge transformation"
                    );
                }
                Status::Fails | Status::Undecided => {
                    let nonzero = differing
                        .iter()
                        .filter(|c| matches!(c.verdict, Verdict::Nonzero(_)))
                        .count();
                    if cmp.status == Status::Fails {
                        let _ = writeln!(
                            s,
                            "different physics: {nonzero} of {n} Riemann components differ \
                             (certified), {} proved equal",
                            n - differing.len()
                        );
                    } else {
                        let _ = writeln!(
                            s,
                            "undecided: {} of {n} Riemann components could not be decided, none \
                             certified different",
                            differing.len()
                        );
                    }
                    for c in differing.iter().take(LISTED) {
                        let _ = writeln!(
                            s,
                            "  {}[A] - {}[B] = {}",
                            c.name,
                            c.name,
                            c.residual.as_deref().unwrap_or("0")
                        );
                        match &c.verdict {
                            Verdict::Nonzero(w) => {
                                let _ = writeln!(s, "      nonzero {w}");
                            }
                            Verdict::Undecided(why) => {
                                let _ = writeln!(s, "      undecided: {why}");
                            }
                            Verdict::Zero => {}
                        }
                    }
                    if differing.len() > LISTED {
                        let _ = writeln!(
                            s,
                            "  ... and {} more (see --format json)",
                            differing.len() - LISTED
                        );
                    }
                }
            }
            let _ = writeln!(s, "{audit_line}");
            if a.audit_points {
                s.push_str(&point_lines(&finding_refs));
            }
            s
        }
        Format::Json => {
            let j = serde_json::json!({
                "first": la,
                "second": lb,
                "result": match cmp.status { Status::Holds => "same", Status::Fails => "different", Status::Undecided => "undecided" },
                "method": "exact zero test of R[A] - R[B] for the 20 independent linearized Riemann components",
                "notes": imported.notes,
                "audit": {
                    "method": audit_line,
                    "seed": seed,
                    "components": cmp.components.iter().zip(&findings).map(|(c, f)| (c.name.clone(), serde_json::json!(f.label()))).collect::<serde_json::Map<_, _>>(),
                    "points": points_json(&finding_refs),
                },
                "differing": differing.iter().map(|c| serde_json::json!({
                    "component": c.name,
                    "verdict": c.verdict.label(),
                    "residual": c.residual,
                    "detail": match &c.verdict {
                        Verdict::Nonzero(w) => w.to_string(),
                        Verdict::Undecided(why) => why.clone(),
                        Verdict::Zero => String::new(),
                    },
                })).collect::<Vec<_>>(),
            });
            format!("{}\n", serde_json::to_string_pretty(&j).expect("json"))
        }
    };
    print(&text)?;
    Ok(match cmp.status {
        Status::Holds => Outcome::Holds,
        Status::Fails => Outcome::Fails,
        Status::Undecided => Outcome::Undecided,
    })
}

/// Audits the comparison's verdicts from both files' texts and updates them and its status
/// (a contradicted proof becomes nonzero with the independent witness, an unconfirmed
/// witness undecided). Functions both files declare are one arbitrary function sampled as
/// in the first file, as in the comparison, so the second file's audit takes the first
/// file's samples for them (shared parameters get one value at every audit point).
fn audit_comparison(
    cmp: &mut Comparison,
    pa: &Problem,
    pb: &mut Problem,
    seed: u64,
) -> Vec<Finding> {
    for (f, sample) in &mut pb.functions {
        if let Some((_, first)) = pa.functions.iter().find(|(g, _)| g == f) {
            sample.clone_from(first);
        }
    }
    let route = FileQuantities::riemann_difference(pa, pb);
    let names: Vec<String> = cmp.components.iter().map(|c| c.name.clone()).collect();
    let mut verdicts: Vec<Verdict> = cmp.components.iter().map(|c| c.verdict.clone()).collect();
    let index = |i: usize| route.as_ref().ok()?.index_of("riemann", &names[i]);
    let findings = audit_verdicts(&route, &mut verdicts, index, seed);
    for ((c, v), f) in cmp.components.iter_mut().zip(verdicts).zip(&findings) {
        if matches!(f, Finding::ProofContradicted(_)) {
            c.residual =
                Some("0 by the exact route, contradicted by the independent evaluation".into());
        }
        c.verdict = v;
    }
    let refs: Vec<&Verdict> = cmp.components.iter().map(|c| &c.verdict).collect();
    cmp.status = Status::of(&refs, true);
    findings
}

// ----- ring ------------------------------------------------------------------------------

/// Numbers from constant expressions, evaluated with the file's parameter values.
fn numbers(
    p: &mut Problem,
    name: &str,
    text: &str,
    count: Option<usize>,
    what: &str,
) -> Result<Vec<f64>, Failure> {
    let arg = Arg::new(name, text);
    let pieces = match count {
        Some(n) => arg.split_exact(n, what),
        None => arg.split(),
    }
    .map_err(arg_failure)?;
    let names = p.names.clone();
    let mut out = Vec::new();
    for piece in &pieces {
        let f = arg
            .build_constant(&mut p.store, &names, piece)
            .map_err(arg_failure)?;
        let pt = numeric_point(&mut p.store, &p.parameters, &p.sampling, [0.0; 4]);
        match p.store.eval_f64(f, &pt) {
            Some((re, im)) if re.is_finite() && im.abs() <= 1e-12 * (1.0 + re.abs()) => {
                out.push(re)
            }
            _ => {
                return Err(arg_failure(
                    arg.error("not a finite real number", piece.span(), "this entry")
                        .with_help(what.to_string()),
                ));
            }
        }
    }
    Ok(out)
}

/// `lingrav ring`.
pub fn run_ring(a: RingArgs) -> Result<Outcome, Failure> {
    finish(ring_cmd(a))
}

fn ring_cmd(a: RingArgs) -> Result<Outcome, Stop> {
    let mut p = a.limits.load(&a.file)?;
    let dir = plan_direction(&mut p, &a.dir)?;
    let radius = numbers(
        &mut p,
        "--radius",
        &a.radius,
        Some(1),
        "the radius is one positive number",
    )?[0];
    if radius <= 0.0 {
        return Err(Stop::Fail(arg_failure(ArgError::whole(
            "--radius",
            &a.radius,
            "the radius must be positive",
        ))));
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
        return Err(Stop::Fail(arg_failure(
            ArgError::whole(
                "--at",
                &a.at,
                "the radial direction and its basis are undefined on the z axis",
            )
            .with_help("put the ring's centre away from the z axis, e.g. --at 3,4,0"),
        )));
    }
    let target = match &a.svg {
        Some(path) => Some(plan_output(path, a.force, "--svg")?),
        None => None,
    };

    let h = p.h;
    let proj = project_perturbation(&mut p.store, &h, &dir).map_err(limit_failure)?;
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
    let st = &mut p.store;
    let mut s = String::new();
    let _ = writeln!(s, "{}", heading(&label, p.name.as_deref()));
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
    for snap in &snaps {
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
    for snap in &snaps {
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
    if let Some(t) = &target {
        let title = format!(
            "{}: ring transverse to n = {}",
            p.name.clone().unwrap_or_else(|| label.clone()),
            vec_text(&mut p.store, &dir.n)
        );
        let picture = svg(&snaps, radius, &title);
        write_atomic(t, &picture)?;
        let _ = writeln!(
            s,
            "wrote {} ({} panels; displacements exaggerated x{:.3e})",
            t.path.display(),
            snaps.len(),
            lingrav::tt::ring::exaggeration(&snaps, radius)
        );
    }
    print(&s)?;
    Ok(Outcome::Holds)
}

#[cfg(test)]
mod tests {
    use super::*;
    use lingrav::interval::{CInterval, Interval};
    use lingrav::zero::Witness;

    const SEED: u64 = 0x5eed_1a96_7a7e;

    fn worked(name: &str) -> Problem {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("worked")
            .join(name);
        let text = std::fs::read_to_string(&path).expect("readable");
        lingrav::problem::from_str(name, &text).expect("reads")
    }

    fn comparison(a: &str, b: &str) -> (Problem, Problem, Comparison) {
        let mut pa = worked(a);
        let pb = worked(b);
        let sampling = pa.sampling.clone();
        let imported =
            import(&mut pa.store, &sampling, &pa.parameters, &pa.functions, &pb).expect("imports");
        let ha = pa.h;
        let cmp = compare(&mut pa.store, &ha, &imported.h, &imported.sampling).expect("small");
        (pa, pb, cmp)
    }

    /// False proofs (simulated: every verdict of a comparison of different physics replaced
    /// by Zero) are caught: the comparison fails, never "same physics".
    #[test]
    fn issue9_compare_catches_false_proofs() {
        let (pa, mut pb, mut cmp) = comparison("lorenz_wave.toml", "oblique_wave.toml");
        assert_eq!(cmp.status, Status::Fails);
        for c in &mut cmp.components {
            c.verdict = Verdict::Zero;
        }
        cmp.status = Status::Holds;
        let findings = audit_comparison(&mut cmp, &pa, &mut pb, SEED);
        assert_eq!(cmp.status, Status::Fails);
        assert!(findings.iter().all(Finding::is_defect), "{findings:?}");
        let refs: Vec<&Finding> = findings.iter().collect();
        assert!(summary(&refs, SEED).starts_with("INTERNAL DEFECT"));
        assert!(
            cmp.components
                .iter()
                .all(|c| matches!(c.verdict, Verdict::Nonzero(_)))
        );
    }

    /// A false witness (simulated on a comparison of the same physics) is not confirmed: the
    /// comparison becomes undecided, never "different".
    #[test]
    fn issue9_compare_does_not_trust_an_unconfirmed_witness() {
        let (pa, mut pb, mut cmp) = comparison("lorenz_oblique.toml", "lorenz_oblique_tt.toml");
        assert_eq!(cmp.status, Status::Holds);
        cmp.components[3].verdict = Verdict::Nonzero(Witness {
            point: vec![("t".into(), 0.5), ("x".into(), 0.25)],
            value: CInterval::from_real(Interval::new(1.0, 2.0).expect("interval")),
            seed: 1,
        });
        cmp.status = Status::Fails;
        let findings = audit_comparison(&mut cmp, &pa, &mut pb, SEED);
        assert_eq!(cmp.status, Status::Undecided);
        assert!(matches!(findings[3], Finding::WitnessUnconfirmed { .. }));
        assert!(matches!(cmp.components[3].verdict, Verdict::Undecided(_)));
    }

    /// A false proof that box xi vanishes (simulated) is caught; a false witness is not
    /// trusted.
    #[test]
    fn issue9_gauge_box_audit_catches_false_verdicts() {
        let p = worked("lorenz_wave.toml");
        let xi = ["0", "x*sin(t)", "0", "0"].map(String::from);
        let mut verdicts = vec![Verdict::Zero; 4];
        let findings = audit_box(&p, &xi, &mut verdicts, SEED);
        assert!(findings[1].is_defect(), "{:?}", findings[1]);
        assert!(matches!(verdicts[1], Verdict::Nonzero(_)));
        assert!(
            findings
                .iter()
                .enumerate()
                .all(|(i, f)| i == 1 || !f.is_defect())
        );
        let mut verdicts = vec![Verdict::Zero; 4];
        verdicts[0] = Verdict::Nonzero(Witness {
            point: vec![("t".into(), 0.5)],
            value: CInterval::from_real(Interval::new(1.0, 2.0).expect("interval")),
            seed: 1,
        });
        let xi = ["sin(t - z)", "0", "0", "0"].map(String::from);
        let findings = audit_box(&p, &xi, &mut verdicts, SEED);
        assert!(matches!(findings[0], Finding::WitnessUnconfirmed { .. }));
        assert!(matches!(verdicts[0], Verdict::Undecided(_)));
    }

    /// False exact statements of `project` (simulated: "not TT = 0, exactly" for a wave that
    /// is not TT along n; "unit length (proved)" for a vector that is not) are caught and not
    /// shown as exact.
    #[test]
    fn issue9_project_catches_false_exact_statements() {
        let mut p = worked("lorenz_wave.toml");
        let args = DirectionArgs {
            direction: "1,1,0".into(),
            basis: None,
            normalize: true,
        };
        let mut dir = plan_direction(&mut p, &args).unwrap_or_else(|_| panic!("direction"));
        dir.n_note = "unit length (proved)".into();
        let h = p.h;
        let proj = project_perturbation(&mut p.store, &h, &dir).expect("small");
        let tt4 = lingrav::tt::as_perturbation(&p.store, &proj.tt);
        let mut frac = lingrav::tt::NotTt {
            all: Share::Exact(0),
            spatial: Share::Exact(0),
            points: 0,
            seed: 0,
        };
        let audit = audit_projection(
            &mut p,
            &args,
            &dir,
            &tt4,
            (proj.plus, proj.cross),
            &mut frac,
            SEED,
        );
        assert!(audit.defect());
        assert!(audit.unit.as_ref().is_some_and(Finding::is_defect));
        for share in [&frac.all, &frac.spatial] {
            assert!(
                matches!(share, Share::Unavailable(why) if why.starts_with("INTERNAL DEFECT")),
                "{share:?}"
            );
        }
        // The printed TT part itself is right, and so are the polarizations and the basis.
        assert!(
            audit
                .printed
                .iter()
                .chain(&audit.polarizations)
                .all(|f| matches!(f, Finding::ProofConsistent { .. }))
        );
    }

    /// Polarizations printed wrongly (h_plus and h_cross swapped, as a defect in the exact
    /// route would) are caught against the printed TT part and basis.
    #[test]
    fn issue9_project_catches_false_polarizations() {
        let mut p = worked("oblique_wave.toml");
        let args = DirectionArgs {
            direction: "3/5,0,4/5".into(),
            basis: None,
            normalize: false,
        };
        let dir = plan_direction(&mut p, &args).unwrap_or_else(|_| panic!("direction"));
        let h = p.h;
        let proj = project_perturbation(&mut p.store, &h, &dir).expect("small");
        let tt4 = lingrav::tt::as_perturbation(&p.store, &proj.tt);
        let mut frac = lingrav::tt::NotTt {
            all: Share::Numerical(0.5),
            spatial: Share::Numerical(0.5),
            points: 0,
            seed: 0,
        };
        let good = audit_projection(
            &mut p,
            &args,
            &dir,
            &tt4,
            (proj.plus, proj.cross),
            &mut frac,
            SEED,
        );
        assert!(!good.defect(), "{}", good.polarizations_text(SEED));
        let bad = audit_projection(
            &mut p,
            &args,
            &dir,
            &tt4,
            (proj.cross, proj.plus),
            &mut frac,
            SEED,
        );
        assert!(bad.defect());
        assert!(bad.polarizations[0].is_defect() && bad.polarizations[1].is_defect());
        assert!(bad.polarizations[2..].iter().all(|f| !f.is_defect()));
    }
}
