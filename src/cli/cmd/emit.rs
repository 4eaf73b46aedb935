//! `lingrav emit`: source code (C, Python, Fortran, Rust) or LaTeX that computes the
//! quantities of `export` at a point, built from the user's own structure.

use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, file_failure, limit_or, print};
use crate::cli::quantities::{
    QuantityArgs, WriteArgs, columns, direction_text, frame_texts, plan_quantities,
};
use crate::cli::report::{self, json};
use crate::emit::user::Texts;
use crate::emit::{Lang, Source, emit};
use crate::export::lower::About;
use crate::export::write::AtomicFile;
use crate::tape::UserExprs;
use clap::{Args, ValueEnum};
use std::path::PathBuf;

/// Languages of `emit`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum LangArg {
    /// C99 (math.h).
    C,
    /// Python 3 with NumPy (broadcasts over arrays).
    Python,
    /// Fortran 2008 (a module of subroutines).
    Fortran,
    /// Rust (functions over f64).
    Rust,
    /// LaTeX aligned equations.
    Latex,
}

impl LangArg {
    fn lang(self) -> Lang {
        match self {
            LangArg::C => Lang::C,
            LangArg::Python => Lang::Python,
            LangArg::Fortran => Lang::Fortran,
            LangArg::Rust => Lang::Rust,
            LangArg::Latex => Lang::Latex,
        }
    }
}

/// Arguments of `lingrav emit`.
#[derive(Args, Debug)]
pub struct EmitArgs {
    /// The problem file (TOML).
    file: PathBuf,
    #[command(flatten)]
    quantities: QuantityArgs,
    /// The language.
    #[arg(long, value_enum)]
    lang: LangArg,
    /// Replace arbitrary functions by the file's samples instead of calling functions you
    /// supply (F_d0(u) = F, F_d1(u) = F', ...).
    #[arg(long)]
    samples: bool,
    /// Write to this file instead of standard output.
    #[arg(long, value_name = "PATH")]
    out: Option<PathBuf>,
    #[command(flatten)]
    write: WriteArgs,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav emit`.
pub fn run(a: EmitArgs) -> Result<Outcome, Failure> {
    let mut p = a.limits.load(&a.file)?;
    let (qs, dir) = plan_quantities(&mut p, &a.quantities)?;
    let file = match &a.out {
        Some(o) => Some(AtomicFile::create(o, a.write.force).map_err(file_failure)?),
        None => None,
    };
    let b = columns(&mut p, &qs, dir.as_ref())?;
    let direction = dir.as_ref().map(|d| direction_text(&mut p, d));
    let frame = dir.as_ref().map(|d| frame_texts(&mut p, d));
    let path_label = a.file.display().to_string();
    let src = Source {
        file: &path_label,
        name: p.name.as_deref(),
        parameters: &p.parameters,
        functions: &p.functions,
        direction,
        about: p.background.as_ref().map(|bg| About {
            coordinates: &p.coordinates,
            g: &bg.g_text,
        }),
        texts: Texts {
            h: &p.h_text,
            source: p.source_text.as_ref(),
            user: UserExprs {
                defines: p.defines.clone(),
                functions: p.functions.clone(),
            },
            frame,
        },
    };
    let text = emit(&mut p.store, &src, &b, a.lang.lang(), a.samples).map_err(|e| {
        limit_or(&e.to_string(), || {
            Failure::Input(miette::miette!("cannot generate code: {e}"))
        })
    })?;
    let written = a.out.as_ref().map(|o| o.display().to_string());
    match file {
        Some(mut f) => {
            f.write_all(text.as_bytes())?;
            f.commit()?;
        }
        None if a.write.format == report::Format::Text => print(&text)?,
        None => {}
    }
    if a.write.format == report::Format::Json {
        let mut j = serde_json::json!({
            "result": "generated",
            "file": path_label,
            "language": a.lang.lang().name(),
            "quantities": qs.iter().map(|q| q.name()).collect::<Vec<_>>(),
            "columns": b.iter().map(|b| b.columns.len()).sum::<usize>(),
            "path": written,
            "bytes": text.len(),
            "checksum": crate::output::checksum_of(text.as_bytes()),
        });
        if a.out.is_none() {
            j["code"] = text.into();
        }
        print(&json(&j))?;
    }
    Ok(Outcome::Holds)
}
