//! `lingrav export`: certified reference values at the user's points, written atomically
//! with a JSON sidecar.
//!
//! The plan comes first: the problem file, the quantity list, the direction, the parameter
//! values, the points and the output files (opened as temporary files beside their targets),
//! so every input error, an existing output or an unwritable directory is reported before any
//! algebra. Output appears whole, by rename, or not at all.

use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, file_failure, gave_up, limit_or, print};
use crate::cli::plan::plan_parameters;
use crate::cli::quantities::{
    QuantityArgs, WriteArgs, columns, direction_json, frame_texts, plan_quantities,
};
use crate::cli::report::{self, json};
use crate::export::points::{Grid, PointSet, read_points};
use crate::export::write::{AtomicFile, FileError, Format, RowWriter, commit_with_sidecar};
use crate::export::{ExportError, Numeric, Settings, SidecarInfo, evaluate, sidecar};
use crate::problem::{Problem, ProblemError};
use clap::{Args, ValueEnum};
use std::path::{Path, PathBuf};

/// Data formats of `export`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum DataFormat {
    /// Comma-separated values with a header line.
    Csv,
    /// NumPy .npy (float64, shape (rows, columns)).
    Npy,
    /// JSON: {"columns": [...], "rows": [[...], ...]}.
    Json,
}

/// Arguments of `lingrav export`.
#[derive(Args, Debug)]
#[command(group(clap::ArgGroup::new("where").required(true).args(["at", "grid"])))]
pub struct ExportArgs {
    /// The problem file (TOML).
    file: PathBuf,
    #[command(flatten)]
    quantities: QuantityArgs,
    /// A CSV file of points, one per line in the file's coordinates, `t,x,y,z` unless it
    /// lists others (optional header line naming them, e.g. `t,r,th,ph`).
    #[arg(long, value_name = "POINTS.csv")]
    at: Option<PathBuf>,
    /// Evaluate on a grid: the box of the grid check (the file's [grid] table, its first
    /// resolution, or --center/--width/--points), spatial at the centre's t.
    #[arg(long)]
    grid: bool,
    /// Grid centre (overrides [grid] center; default 0.3,0.4,0.5,0.6).
    #[arg(
        long,
        value_delimiter = ',',
        value_name = "T,X,Y,Z",
        allow_hyphen_values = true,
        requires = "grid"
    )]
    center: Option<Vec<f64>>,
    /// Grid width in each coordinate (overrides [grid] width; default 0.2).
    #[arg(long, value_name = "W", requires = "grid")]
    width: Option<f64>,
    /// Points per coordinate (overrides the first of [grid] points; default 8).
    #[arg(long, value_name = "N", requires = "grid")]
    points: Option<usize>,
    /// Let t vary over the grid too (points^4 rows instead of points^3).
    #[arg(long, requires = "grid")]
    spacetime: bool,
    /// Set a parameter's value for this export, e.g. --set A=1e-6 (repeatable).
    #[arg(long = "set", value_name = "NAME=VALUE", allow_hyphen_values = true)]
    set: Vec<String>,
    /// The data file's type (default: from the extension of --out: .csv, .npy, .json).
    #[arg(long, value_enum, value_name = "TYPE")]
    data_format: Option<DataFormat>,
    /// The data file to write; the sidecar goes to the same path with `.meta.json` appended.
    #[arg(long, value_name = "PATH")]
    out: PathBuf,
    /// The largest relative error bound accepted for a value; values beyond it are computed
    /// again at higher precision, and if that fails nothing is written.
    #[arg(long, value_name = "REL", default_value = "1e-12")]
    tolerance: f64,
    /// The largest absolute error bound accepted for a value indistinguishable from 0
    /// (default: --tolerance times the largest magnitude in its column).
    #[arg(long, value_name = "ABS")]
    zero_tolerance: Option<f64>,
    #[command(flatten)]
    write: WriteArgs,
    #[command(flatten)]
    limits: LimitArgs,
}

fn plan_points(p: &Problem, a: &ExportArgs) -> Result<PointSet, Failure> {
    if let Some(path) = &a.at {
        let label = path.display().to_string();
        let bytes = std::fs::read(path).map_err(|e| {
            Failure::Input(miette::Report::new(ProblemError::whole_file(
                &label,
                format!("cannot read the points file `{label}`: {e}"),
            )))
        })?;
        let text = crate::problem::utf8_text(&label, bytes)
            .map_err(|e| Failure::Input(miette::Report::new(e)))?;
        return read_points(&label, &text, &p.coordinates)
            .map_err(|e| Failure::Input(miette::Report::new(e)));
    }
    let list = p.coordinates.join(",");
    let center = match &a.center {
        Some(c) => Some(<[f64; 4]>::try_from(c.as_slice()).map_err(|_| {
            Failure::Input(miette::miette!(
                help = "e.g. --center 0,0.1,0.2,0.3 (write --center=-1,0,0,2 for a negative \
                        first coordinate)",
                "--center needs four numbers {list}, not {}",
                c.len()
            ))
        })?),
        // Inside the file's [domain]: the middle of each range given.
        None if p.grid.as_ref().and_then(|g| g.center).is_none() => {
            p.domain.filter(|d| d.iter().any(Option::is_some)).map(|d| {
                std::array::from_fn(|i| {
                    d[i].map_or(crate::export::points::DEFAULT_CENTER[i], |(lo, hi)| {
                        lo / 2.0 + hi / 2.0
                    })
                })
            })
        }
        None => None,
    };
    let g = Grid::new(p.grid.as_ref(), center, a.width, a.points, a.spacetime).map_err(|e| {
        Failure::Input(miette::miette!(
            help = "set the grid in the file's [grid] table (center, width, points) or with \
                    --center, --width, --points",
            "{e}"
        ))
    })?;
    Ok(PointSet::grid(g, &p.coordinates))
}

fn sidecar_path(out: &Path) -> PathBuf {
    let mut s = out.as_os_str().to_owned();
    s.push(".meta.json");
    PathBuf::from(s)
}

/// Why an export wrote nothing, as the command's end: a point where the field is not
/// defined is bad input (exit 2); values that cannot be certified, a disagreement of the two
/// routes, and limits are undecided (exit 3).
fn export_failure(e: ExportError) -> Failure {
    match e {
        ExportError::Point(e) => Failure::Input(miette::miette!(
            help = "nothing was written; choose points where the field is defined (away from \
                    singularities such as r = 0)",
            "{e}"
        )),
        ExportError::Limit(l) => gave_up(&l),
        ExportError::Setup(m) => limit_or(&m, || Failure::Input(miette::miette!("{m}"))),
        e @ ExportError::Uncertified { .. } => Failure::GaveUp(format!(
            "{e}. Nothing was written. Raise --tolerance, give --zero-tolerance for values \
             that are meant to vanish, or choose other points"
        )),
        e @ ExportError::Disagreement { .. } => Failure::GaveUp(e.to_string()),
        ExportError::Write(m) => Failure::Input(miette::miette!("{m}")),
    }
}

/// `lingrav export`.
pub fn run(a: ExportArgs) -> Result<Outcome, Failure> {
    // Plan: every input and output checked before any algebra.
    let mut p = a.limits.load(&a.file)?;
    let (qs, dir) = plan_quantities(&mut p, &a.quantities)?;
    let (params, overridden) = plan_parameters(&p, &a.set)?;
    let points = plan_points(&p, &a)?;
    for (name, v) in [
        ("--tolerance", Some(a.tolerance)),
        ("--zero-tolerance", a.zero_tolerance),
    ] {
        if let Some(v) = v
            && !(v.is_finite() && v >= 0.0)
        {
            return Err(Failure::Input(miette::miette!(
                help = "e.g. --tolerance 1e-10",
                "{name} must be a finite number >= 0, not {v}"
            )));
        }
    }
    let format = match a.data_format {
        Some(DataFormat::Csv) => Format::Csv,
        Some(DataFormat::Npy) => Format::Npy,
        Some(DataFormat::Json) => Format::Json,
        None => Format::from_path(&a.out).ok_or_else(|| {
            Failure::Input(miette::miette!(
                help = "give --data-format csv|npy|json, or an --out name ending in .csv, .npy or .json",
                "cannot tell the format of `{}` from its name",
                a.out.display()
            ))
        })?,
    };
    let meta_path = sidecar_path(&a.out);
    let mut data_file = AtomicFile::create(&a.out, a.write.force).map_err(file_failure)?;
    let mut meta_file = AtomicFile::create(&meta_path, a.write.force).map_err(file_failure)?;

    // Compute.
    let b = columns(&mut p, &qs, dir.as_ref())?;
    let frame = dir.as_ref().map(|d| frame_texts(&mut p, d));
    let numeric = Numeric::new(&p, &qs, frame, &params)
        .map_err(|e| Failure::Input(miette::miette!("cannot evaluate the problem's texts: {e}")))?;
    let settings = Settings {
        tolerance: a.tolerance,
        zero_tolerance: a.zero_tolerance,
        deadline: p.store.limits.deadline,
        ..Settings::default()
    };
    // The rows go to the temporary data file as they are computed (dropped with it if the
    // evaluation fails; placed, with the sidecar, only when everything is certified).
    let mut names = p.coordinates.to_vec();
    names.extend(
        b.iter()
            .flat_map(|b| b.columns.iter().map(|c| c.name.clone())),
    );
    let io_error = |e: std::io::Error| file_failure(FileError::Io(a.out.clone(), e));
    let mut rows = RowWriter::begin(data_file.writer(), &names, points.coords.len(), format)
        .map_err(io_error)?;
    let mut write_error = None;
    let mut sink = |r: &[f64]| {
        rows.rows(r).inspect_err(|e| {
            write_error.get_or_insert_with(|| std::io::Error::new(e.kind(), e.to_string()));
        })
    };
    let ev = evaluate(
        &mut p.store,
        &numeric,
        &b,
        &points,
        &params,
        &p.sampling,
        &settings,
        &mut sink,
    );
    let ev = match (ev, write_error) {
        (Err(_), Some(e)) => return Err(io_error(e)),
        (ev, _) => ev.map_err(export_failure)?,
    };
    rows.finish().map_err(io_error)?;
    let direction = dir.as_ref().map(|d| direction_json(&mut p, d));
    let data_name = a
        .out
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let path_label = a.file.display().to_string();
    let info = SidecarInfo {
        file: &path_label,
        name: p.name.as_deref(),
        parameters: &params,
        overridden: &overridden,
        functions: &p.functions,
        defines: &p.defines,
        coordinates: &p.coordinates,
        background: crate::export::background_json(&p),
        h_text: &p.h_text,
        source_text: p.source_text.as_ref(),
        direction,
        data_file: &data_name,
        format,
        points: &points,
        tolerance: a.tolerance,
        zero_tolerance: a.zero_tolerance,
    };
    let meta = sidecar(&mut p.store, &b, &ev, &info);

    // Write the data, then the sidecar that records its size and checksum, then put both in
    // place (old sidecar removed, data renamed, sidecar renamed: see crate::output).
    let mut meta = meta;
    let bytes = data_file.writer().len();
    let checksum = data_file.writer().checksum();
    meta["data_file_bytes"] = bytes.into();
    meta["data_file_checksum"] = checksum.clone().into();
    let text = serde_json::to_string_pretty(&meta).expect("json");
    meta_file.write_all(format!("{text}\n").as_bytes())?;
    commit_with_sidecar(data_file, meta_file)?;
    let names: Vec<&str> = qs.iter().map(|q| q.name()).collect();
    print(&match a.write.format {
        report::Format::Text => format!(
            "wrote {} rows x {} columns ({}) to {} ({}), sidecar {}\n",
            ev.rows,
            ev.names.len(),
            names.join(", "),
            a.out.display(),
            format.name(),
            meta_path.display()
        ),
        report::Format::Json => json(&serde_json::json!({
            "result": "written",
            "file": path_label,
            "quantities": names,
            "rows": ev.rows,
            "columns": ev.names,
            "data_file": a.out.display().to_string(),
            "data_format": format.name(),
            "data_file_bytes": bytes,
            "data_file_checksum": checksum,
            "sidecar": meta_path.display().to_string(),
        })),
    })?;
    Ok(Outcome::Holds)
}
