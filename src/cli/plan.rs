//! The plan stage shared by the commands: arguments read against a problem's names (a
//! direction and its basis, numbers, command-line expressions) and output files opened
//! before any algebra, so that every input error is reported before work starts. (Loading a
//! problem under the limits is [`super::limits::LimitArgs::load`].)

use super::limits::timeout_if_past;
use super::out::{Failure, gave_up, limit_or, with_source};
use crate::canon::{CanonError, Form, Names, Store};
use crate::output::AtomicFile;
use crate::problem::Problem;
use crate::tt::{
    Arg, ArgError, Direction, DirectionKind, numeric_point, parse_direction, set_basis,
};
use clap::Args;
use std::cell::RefCell;
use std::path::{Path, PathBuf};

/// A bad argument, unless what stopped it was an algebra limit (then undecided).
pub fn arg_failure(e: ArgError) -> Failure {
    limit_or(&e.to_string(), || Failure::Input(miette::Report::new(e)))
}

/// How the direction and its polarization basis are given (shared by `project` and `ring`).
#[derive(Args, Debug)]
pub struct DirectionArgs {
    /// The direction n: a unit vector `nx,ny,nz` (exact numbers, pi, sqrt, the file's
    /// parameters), an axis (`z`, `-x`, ...), polar angles `theta=..,phi=..`, or `radial`
    /// (n = x/r).
    #[arg(long, value_name = "D", allow_hyphen_values = true)]
    pub direction: String,
    /// First polarization vector u, perpendicular to n (default: e_theta of n's polar
    /// angles); v = n x u.
    #[arg(long, value_name = "AX,AY,AZ", allow_hyphen_values = true)]
    pub basis: Option<String>,
    /// Divide the direction (and the basis vector) by its length instead of refusing a
    /// vector that is not of unit length.
    #[arg(long)]
    pub normalize: bool,
}

/// A two-arm detector's arms (shared by `antenna` and `response`).
#[derive(Args, Debug)]
pub struct ArmArgs {
    /// The first arm: a unit vector `ax,ay,az` (exact: `1/2,sqrt(3)/2,0`; symbols allowed) or
    /// an axis (`x`, `-y`, ...).
    #[arg(
        long,
        value_name = "AX,AY,AZ",
        default_value = "1,0,0",
        allow_hyphen_values = true
    )]
    pub arm_a: String,
    /// The second arm, as the first; not parallel to it.
    #[arg(
        long,
        value_name = "BX,BY,BZ",
        default_value = "0,1,0",
        allow_hyphen_values = true
    )]
    pub arm_b: String,
}

/// Reads a direction (`--direction`) and, if given, its basis vector (`--basis`).
pub fn plan_direction(
    p: &mut Problem,
    direction: &str,
    basis: Option<&str>,
    normalize: bool,
) -> Result<Direction, Failure> {
    let names = p.names.clone();
    let sampling = p.sampling.clone();
    let mut dir = parse_direction(
        &mut p.store,
        &names,
        &sampling,
        Arg::new("--direction", direction),
        normalize,
    )
    .map_err(arg_failure)?;
    if let Some(b) = basis {
        set_basis(
            &mut p.store,
            &names,
            &sampling,
            &mut dir,
            Arg::new("--basis", b),
            normalize,
        )
        .map_err(arg_failure)?;
    }
    Ok(dir)
}

impl DirectionArgs {
    /// The direction and basis these arguments give, read against `p`'s names.
    pub fn plan(&self, p: &mut Problem) -> Result<Direction, Failure> {
        plan_direction(p, &self.direction, self.basis.as_deref(), self.normalize)
    }
}

/// How a direction was given, in a word.
pub fn kind_word(k: DirectionKind) -> &'static str {
    match k {
        DirectionKind::Vector => "vector",
        DirectionKind::Angles => "angles",
        DirectionKind::Radial => "radial",
    }
}

/// An output file, checked (and its temporary opened) before any work.
pub struct Target {
    pub path: PathBuf,
    file: RefCell<Option<AtomicFile>>,
}

pub fn plan_output(path: &Path, force: bool, option: &str) -> Result<Target, Failure> {
    let file = AtomicFile::create(path, force)
        .map_err(|e| Failure::Input(miette::miette!(help = e.help(), "{option} {e}")))?;
    Ok(Target {
        path: path.to_path_buf(),
        file: RefCell::new(Some(file)),
    })
}

/// Writes `contents` to the target's temporary file and moves it into place.
pub fn write_atomic(t: &Target, contents: &str) -> Result<(), Failure> {
    let mut file = t.file.borrow_mut().take().expect("written once");
    file.write_all(contents.as_bytes())?;
    file.commit()?;
    Ok(())
}

/// An output file for `option`, if given.
pub fn plan_optional_output(
    path: Option<&Path>,
    force: bool,
    option: &str,
) -> Result<Option<Target>, Failure> {
    path.map(|p| plan_output(p, force, option)).transpose()
}

/// Numbers from constant expressions, evaluated with the file's parameter values.
pub fn numbers(
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

/// Parameter values in file order, and the names set on the command line.
pub type Parameters = (Vec<(String, f64)>, Vec<String>);

/// `--set NAME=VALUE` entries applied to the file's parameter values (`export`, and the SI
/// numbers of `radiation`).
pub fn plan_parameters(p: &Problem, set: &[String]) -> Result<Parameters, Failure> {
    let mut params = p.parameters.clone();
    let mut overridden = Vec::new();
    for s in set {
        let arg = Arg::new("--set", s);
        let Some((name, value)) = s.split_once('=') else {
            return Err(arg_failure(
                arg.error("expected NAME=VALUE", crate::Span::new(0, s.len()), "here")
                    .with_help("e.g. --set A=1e-6"),
            ));
        };
        let name_t = name.trim();
        let Some(slot) = params.iter_mut().find(|(n, _)| n == name_t) else {
            let known: Vec<&str> = p.parameters.iter().map(|(n, _)| n.as_str()).collect();
            let help = if known.is_empty() {
                "this problem has no [parameters]".to_string()
            } else {
                format!("the parameters are {}", known.join(", "))
            };
            return Err(arg_failure(
                arg.error(
                    format!("`{name_t}` is not a parameter of this problem"),
                    crate::Span::new(0, name.len()),
                    "unknown",
                )
                .with_help(help),
            ));
        };
        let v: f64 = match value.trim().parse::<f64>() {
            Ok(v) if v.is_finite() => v,
            _ => {
                return Err(arg_failure(
                    arg.error(
                        format!("`{}` is not a finite number", value.trim()),
                        crate::Span::new(name.len() + 1, s.len()),
                        "not a number",
                    )
                    .with_help("e.g. --set A=1e-6"),
                ));
            }
        };
        slot.1 = v;
        if !overridden.iter().any(|o| o == name_t) {
            overridden.push(name_t.to_string());
        }
    }
    Ok((params, overridden))
}

/// Parses and builds one command-line expression, with errors pointing into it. A size or
/// time limit reached while building is not bad input: it ends the command as undecided.
pub fn build_arg(store: &mut Store, text: &str, label: &str) -> Result<Form, Failure> {
    let e = crate::parse::parse(text).map_err(|e| with_source(e, label, text))?;
    store.build(&e, &Names::free()).map_err(|e| {
        if e.limit {
            gave_up(&e.cause.clone().unwrap_or_else(|| {
                timeout_if_past(&store.limits)
                    .unwrap_or(CanonError::TooLarge(store.limits.max_terms))
            }))
        } else {
            Failure::Input(with_source(e, label, text))
        }
    })
}

/// `--output FILE.toml` and `--force`, for the commands that write the perturbation they
/// derive (`gauge`: h'; `project`: the TT part) as a new problem file.
#[derive(Args, Debug)]
pub struct ProblemOutput {
    /// Also write the result as a new problem file, with the claims proved for it.
    #[arg(long, value_name = "FILE.toml")]
    pub output: Option<PathBuf>,
    /// Replace the output file if it exists.
    #[arg(long)]
    pub force: bool,
}

impl ProblemOutput {
    /// The output file, opened before any work (`None` without `--output`).
    pub fn plan(&self) -> Result<Option<Target>, Failure> {
        plan_optional_output(self.output.as_deref(), self.force, "--output")
    }
}

/// The names that the expression commands read as arbitrary functions in `forms` and in the
/// input `texts` they were built from (a name applied to an argument that is not a built-in
/// function, `erf(x)` or `F(t - r)`), sorted. The texts count too, so that a name is reported
/// even where it cancels (`erf(x) - erf(x)` is 0 for every function, the error function
/// included, but the reader should know how `erf` was read).
pub fn arbitrary_functions(
    st: &mut crate::canon::Store,
    forms: &[crate::canon::Form],
    texts: &[&str],
) -> Vec<String> {
    let mut names: Vec<String> = forms
        .iter()
        .flat_map(|&f| st.functions_used(f))
        .map(|n| n.to_string())
        .collect();
    for t in texts {
        if let Ok(e) = crate::parse::parse(t) {
            names.extend(crate::jet::eval::called_functions(&e));
        }
    }
    names.sort();
    names.dedup();
    names
}

/// The line that says that `i`, `I` or `j` in `texts` was read as a real variable (the
/// expression language has no imaginary unit), so that a witness at `i = 1.97` is not taken
/// for a verdict about complex numbers; `None` when no text uses those names.
pub fn unit_note(texts: &[&str]) -> Option<String> {
    let mut used: Vec<String> = Vec::new();
    for t in texts {
        if let Ok(e) = crate::parse::parse(t) {
            for n in crate::jet::eval::free_names(&e) {
                if matches!(n.as_str(), "i" | "I" | "j") && !used.contains(&n) {
                    used.push(n);
                }
            }
        }
    }
    if used.is_empty() {
        return None;
    }
    let list: Vec<String> = used.iter().map(|n| format!("`{n}`")).collect();
    Some(format!(
        "note: {} {} read as a real variable: there is no imaginary unit (write a complex \
         quantity through its real and imaginary parts, e.g. cos and sin for exp(i*x))",
        list.join(", "),
        if used.len() == 1 { "is" } else { "are" }
    ))
}

/// The line that says how those names were read, so that a verdict about an unknown name is
/// not taken for one about the function the user meant; `None` when there are none.
pub fn arbitrary_note(names: &[String]) -> Option<String> {
    if names.is_empty() {
        return None;
    }
    let list: Vec<String> = names.iter().map(|n| format!("`{n}`")).collect();
    Some(format!(
        "note: {} {} not a built-in function; read as an arbitrary function of its argument \
         (a proof holds for every such function; a witness uses a generic sample of it)",
        list.join(", "),
        if names.len() == 1 { "is" } else { "are" }
    ))
}
