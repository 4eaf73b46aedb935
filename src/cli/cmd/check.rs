//! `lingrav check`: every claim of a problem file decided exactly, as text or JSON.

use crate::canon::Store;
use crate::check::{CheckReport, ClaimReport, Status};
use crate::cli::limits::LimitArgs;
use crate::cli::out::{Failure, Outcome, print};
use crate::cli::report::{
    Format, claim_json, claim_lines, conventions, heading, json, limit_in_report,
};
use clap::Args;
use std::fmt::Write as _;
use std::path::PathBuf;

/// Arguments of `lingrav check`.
#[derive(Args, Debug)]
pub struct CheckArgs {
    /// The problem files (TOML); with several, each is reported in turn, then a summary line,
    /// and the exit code is the worst (bad input, then fails, then undecided).
    #[arg(required = true, num_args = 1..)]
    files: Vec<PathBuf>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Print failing residuals as canonical (expanded) forms, without the file's [define]
    /// names.
    #[arg(long)]
    expanded: bool,
    #[command(flatten)]
    limits: LimitArgs,
}

/// `lingrav check`.
pub fn run(a: CheckArgs) -> Result<Outcome, Failure> {
    if let [file] = a.files.as_slice() {
        let (text, outcome) = one(&a, file)?;
        print(&text)?;
        return Ok(outcome);
    }
    several(&a)
}

/// How one of several files ended.
#[derive(Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum End {
    Holds,
    Undecided,
    Fails,
    BadInput,
}

/// Several files: each report in turn, a summary, the worst outcome.
fn several(a: &CheckArgs) -> Result<Outcome, Failure> {
    let json_mode = a.format == Format::Json;
    let mut ends = Vec::with_capacity(a.files.len());
    let mut items = Vec::new();
    for file in &a.files {
        let label = file.display().to_string();
        let (end, text) = match one(a, file) {
            Ok((text, o)) => {
                let end = match o {
                    Outcome::Holds => End::Holds,
                    Outcome::Fails => End::Fails,
                    Outcome::Undecided => End::Undecided,
                };
                (end, text)
            }
            Err(e @ (Failure::BrokenPipe | Failure::Quiet(_))) => return Err(e),
            Err(Failure::GaveUp(why)) => (
                End::Undecided,
                if json_mode {
                    json(&serde_json::json!({
                        "file": label, "result": "undecided", "limit": why,
                    }))
                } else {
                    format!("{label}\nundecided: {why}\n")
                },
            ),
            Err(Failure::Input(report)) => {
                let report = crate::cli::render::safe(report);
                eprintln!("{report:?}");
                (
                    End::BadInput,
                    if json_mode {
                        json(&serde_json::json!({
                            "file": label, "result": "error", "error": report.to_string(),
                        }))
                    } else {
                        format!("{label}\nbad input (see the error above)\n")
                    },
                )
            }
        };
        ends.push(end);
        if json_mode {
            items.push(serde_json::from_str::<serde_json::Value>(&text).unwrap_or_default());
        } else {
            print(&format!("{text}\n"))?;
        }
    }
    let count = |e: End| ends.iter().filter(|x| **x == e).count();
    let summary = format!(
        "{} files: {} hold, {} fail, {} undecided, {} bad input",
        ends.len(),
        count(End::Holds),
        count(End::Fails),
        count(End::Undecided),
        count(End::BadInput)
    );
    let worst = ends.iter().copied().max().unwrap_or(End::Holds);
    if json_mode {
        print(&json(&serde_json::json!({
            "files": items,
            "summary": summary,
            "result": match worst {
                End::Holds => "holds",
                End::Undecided => "undecided",
                End::Fails => "fails",
                End::BadInput => "error",
            },
        })))?;
    } else {
        print(&format!("summary: {summary}\n"))?;
    }
    match worst {
        End::Holds => Ok(Outcome::Holds),
        End::Undecided => Ok(Outcome::Undecided),
        End::Fails => Ok(Outcome::Fails),
        // The errors were rendered above; this only sets the exit code.
        End::BadInput => Err(Failure::Quiet(2)),
    }
}

/// One file's report (text or JSON) and outcome.
fn one(a: &CheckArgs, file: &std::path::Path) -> Result<(String, Outcome), Failure> {
    let limits = a.limits.start();
    let parsed = crate::problem::read_file(file).map_err(crate::cli::limits::load_failure)?;
    let (mut problem, report) =
        crate::check_file(&parsed, limits).map_err(crate::cli::limits::load_failure)?;
    if a.expanded {
        problem.store.set_display_names(None);
    }
    let report = report.map_err(|e| match e {
        crate::radiation::claims::ClaimsError::Limit(l) => crate::cli::out::gave_up(&l),
        e => Failure::Input(miette::miette!("{}: {e}", problem.path)),
    })?;
    let label = file.display().to_string();
    let text = match a.format {
        Format::Text => render_text(&mut problem.store, &label, problem.name.as_deref(), &report),
        Format::Json => render_json(&mut problem, &label, &report),
    };
    // An INTERNAL DEFECT (the two routes disagree) ends as 1, whatever the claims say.
    let outcome = if report.has_defect() {
        Outcome::Fails
    } else {
        Outcome::of(report.overall())
    };
    Ok((text, outcome))
}

fn status_word(c: &ClaimReport, has_claims: bool) -> &'static str {
    match (has_claims, c.asserted, c.status) {
        (true, Some(_), s) => s.label(),
        (_, _, Status::Holds) => "yes",
        (_, _, Status::Fails) => "no",
        (_, _, Status::Undecided) => "undecided",
    }
}

/// Components listed per claim in text output.
const LISTED: usize = 10;

fn render_text(store: &mut Store, label: &str, name: Option<&str>, r: &CheckReport) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{}", heading(label, name));
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
        claim_lines(&mut s, store, c, &word, LISTED, false);
    }
    let overall = r.overall();
    let summary = if r.has_claims {
        let asserted: Vec<_> = r.claims.iter().filter(|c| c.asserted.is_some()).collect();
        let count = |st: Status| asserted.iter().filter(|c| c.status == st).count();
        match overall {
            Status::Holds => format!("every claim holds ({} checked, exact)", asserted.len()),
            Status::Fails => format!("{} of {} claims fail", count(Status::Fails), asserted.len()),
            Status::Undecided => format!(
                "{} of {} claims undecided, none fails",
                count(Status::Undecided),
                asserted.len()
            ),
        }
    } else {
        match overall {
            Status::Undecided => "some properties are undecided".to_string(),
            _ => "every property decided".to_string(),
        }
    };
    let _ = writeln!(s, "result: {summary}");
    if overall == Status::Undecided
        && let Some(why) = limit_in_report(r)
    {
        let _ = writeln!(s, "undecided: {why}");
    }
    s
}

fn render_json(problem: &mut crate::Problem, label: &str, r: &CheckReport) -> String {
    let coordinates = problem.coordinates.clone();
    let name = problem.name.clone();
    let store = &mut problem.store;
    let mut j = serde_json::json!({
        "file": label,
        "name": name,
        "has_claims": r.has_claims,
        "result": r.overall().label(),
        "claims": r.claims.iter().map(|c| claim_json(store, c)).collect::<Vec<_>>(),
        "conventions": conventions(&coordinates),
    });
    if r.overall() == Status::Undecided
        && let Some(why) = limit_in_report(r)
    {
        j["limit"] = why.into();
    }
    json(&j)
}
