//! Source code that computes a problem's quantities at a point: C, Python (NumPy), Fortran,
//! Rust, or LaTeX equations.
//!
//! Model. Every column of every requested quantity ([`crate::export::quantity`]) is built
//! from the problem's own texts ([`user`]): the components, defines and samples as a DAG that
//! keeps the user's structure, derivatives taken on that DAG, and the quantity formulas of
//! [`crate::export::certify`] (the same code that computes the exported numbers). The result
//! is one hash-consed DAG ([`dag`]); within each generated function every subexpression used
//! twice or more becomes a temporary. One function per quantity, with the same layout in
//! every language:
//!
//! - inputs: the coordinates `t, x, y, z`, then the file's parameters (C, Fortran and Rust
//!   take them as an array `params` in file order; Python as arguments with the file's values
//!   as defaults), then, for arbitrary functions, the user-supplied derivatives;
//! - output: the columns in their fixed order (C, Fortran, Rust: an array `out`; Python: an
//!   array of shape `(columns,) + broadcast shape of the arguments`).
//!
//! Arbitrary functions of one argument (a file's `[functions]`) are calls to functions the
//! user supplies: derivative `k` of `F` is `F_d<k>(u)` (`F_d0` is F itself, `F_d2` is F'').
//! With `inline_samples` they are replaced by the file's samples and their exact derivatives.
//!
//! Key design decision: the code is generated from the user's structure, never from the
//! expanded canonical form, which can lose every digit (a Gaussian pulse in `t - y` expands
//! into `exp((2 t y - t^2 - y^2)/(2 s^2))`); parameters stay symbolic (arguments, not
//! baked-in numbers). The LaTeX output, for reading, prints the canonical forms.
//!
//! **Invariants:** output is deterministic (no hash-map order reaches it); identifiers never
//! collide with the language's keywords or with each other; every emitted name is documented
//! in the file's header comment.

pub mod dag;
mod lang;
pub mod user;

use crate::canon::Store;
use crate::export::quantity::Block;
use dag::{Dag, DagError, Id};
use lang::{Printer, Syntax};
use rustc_hash::FxHashMap;
use std::fmt::Write as _;

/// A target language.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Lang {
    /// C99 with `<math.h>`.
    C,
    /// Python 3 with NumPy.
    Python,
    /// Fortran 2008.
    Fortran,
    /// Rust.
    Rust,
    /// LaTeX `aligned` equations.
    Latex,
}

impl Lang {
    /// Every language, in the order of [`Lang::NAMES`].
    pub const ALL: [Lang; 5] = [
        Lang::C,
        Lang::Python,
        Lang::Fortran,
        Lang::Rust,
        Lang::Latex,
    ];
    /// The names accepted on the command line.
    pub const NAMES: [&'static str; 5] = ["c", "python", "fortran", "rust", "latex"];

    /// The language's name.
    #[must_use]
    pub fn name(self) -> &'static str {
        let i = Lang::ALL.iter().position(|l| *l == self).unwrap_or(0);
        Lang::NAMES[i]
    }
}

/// What the generated file is about, for its header and its inputs.
pub struct Source<'a> {
    /// The problem file's path as given.
    pub file: &'a str,
    /// The problem's `name`.
    pub name: Option<&'a str>,
    /// Parameters and their file values, in file order.
    pub parameters: &'a [(String, f64)],
    /// Arbitrary functions and their sample texts, in file order.
    pub functions: &'a [(String, String)],
    /// The texts the code is computed from.
    pub texts: user::Texts<'a>,
    /// About a background: the coordinates and the texts of gbar (`None`: Minkowski in
    /// Cartesian coordinates t, x, y, z).
    pub about: Option<crate::export::lower::About<'a>>,
    /// A description of the direction of psi4 / hplus / hcross, if one was given.
    pub direction: Option<String>,
}

impl Source<'_> {
    /// The coordinate names, time first.
    #[must_use]
    pub fn coordinates(&self) -> [String; 4] {
        match &self.about {
            Some(a) => a.coordinates.clone(),
            None => crate::tensor::COORDS.map(String::from),
        }
    }

    /// What the columns of `q` are, in one paragraph, about this source's background.
    fn definition(&self, q: crate::export::quantity::Quantity) -> &'static str {
        match self.about {
            Some(_) => q.definition_about_background().unwrap_or(q.definition()),
            None => q.definition(),
        }
    }
}

/// Why code could not be generated.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("{column}: {error}")]
pub struct EmitError {
    /// The column whose expression failed.
    pub column: String,
    /// What went wrong.
    pub error: DagError,
}

const KEYWORDS_C: &[&str] = &[
    "auto", "break", "case", "char", "const", "continue", "default", "do", "double", "else",
    "enum", "extern", "float", "for", "goto", "if", "inline", "int", "long", "register",
    "restrict", "return", "short", "signed", "sizeof", "static", "struct", "switch", "typedef",
    "union", "unsigned", "void", "volatile", "while", "sin", "cos", "exp", "log", "sqrt", "pow",
    "params", "out", "main", "NULL",
];
const KEYWORDS_PYTHON: &[&str] = &[
    "False", "None", "True", "and", "as", "assert", "async", "await", "break", "class", "continue",
    "def", "del", "elif", "else", "except", "finally", "for", "from", "global", "if", "import",
    "in", "is", "lambda", "nonlocal", "not", "or", "pass", "raise", "return", "try", "while",
    "with", "yield", "match", "case", "np", "out", "float", "print",
];
const KEYWORDS_FORTRAN: &[&str] = &[
    "real64",
    "iso_fortran_env",
    "params",
    "out",
    "sin",
    "cos",
    "exp",
    "log",
    "sqrt",
    "real",
    "integer",
    "lingrav_formulas",
    "lingrav_nparams",
];
const KEYWORDS_RUST: &[&str] = &[
    "as", "break", "const", "continue", "crate", "else", "enum", "extern", "false", "fn", "for",
    "if", "impl", "in", "let", "loop", "match", "mod", "move", "mut", "pub", "ref", "return",
    "self", "Self", "static", "struct", "super", "trait", "true", "type", "unsafe", "use", "where",
    "while", "async", "await", "dyn", "abstract", "become", "box", "do", "final", "macro",
    "override", "priv", "typeof", "unsized", "virtual", "yield", "try", "gen", "union", "f64",
    "params", "out", "_",
];

/// Identifiers for the variables, user functions and temporaries of one language.
struct Idents {
    vars: Vec<String>,
    users: FxHashMap<(u32, u32), String>,
    temp_prefix: String,
}

fn idents(lang: Lang, src: &Source<'_>, funs: &[(u32, u32)]) -> Idents {
    let (keywords, fold) = match lang {
        Lang::C => (KEYWORDS_C, false),
        Lang::Python => (KEYWORDS_PYTHON, false),
        Lang::Fortran => (KEYWORDS_FORTRAN, true),
        Lang::Rust | Lang::Latex => (KEYWORDS_RUST, false),
    };
    let key = |s: &str| {
        if fold {
            s.to_ascii_lowercase()
        } else {
            s.to_string()
        }
    };
    let mut taken: Vec<String> = keywords.iter().map(|k| key(k)).collect();
    let mut vars: Vec<String> = Vec::new();
    let fresh = |base: String, taken: &mut Vec<String>| -> String {
        let mut n = if lang == Lang::Fortran && !base.starts_with(|c: char| c.is_ascii_alphabetic())
        {
            format!("v{base}")
        } else {
            base
        };
        while taken.contains(&key(&n)) {
            n.push('_');
        }
        taken.push(key(&n));
        n
    };
    for c in src.coordinates() {
        let id = fresh(c.clone(), &mut taken);
        vars.push(id);
    }
    for (p, _) in src.parameters {
        let id = fresh(p.clone(), &mut taken);
        vars.push(id);
    }
    let mut users = FxHashMap::default();
    for &(f, k) in funs {
        let name = format!("{}_d{k}", src.functions[f as usize].0);
        users.insert((f, k), fresh(name, &mut taken));
    }
    let mut temp_prefix = "lg_".to_string();
    while taken.iter().any(|t| t.starts_with(&key(&temp_prefix))) {
        temp_prefix.insert(2, '_');
    }
    Idents {
        vars,
        users,
        temp_prefix,
    }
}

/// One generated function: its roots, temporaries and what it uses.
struct Function<'a> {
    block: &'a Block,
    roots: Vec<Id>,
    temps: Vec<Id>,
    params_used: Vec<u32>,
    users_used: Vec<(u32, u32)>,
}

fn header_lines(
    src: &Source<'_>,
    blocks: &[Block],
    lang: Lang,
    inline: bool,
    ids: Option<&Idents>,
) -> Vec<String> {
    let mut v = Vec::new();
    let title = match src.name {
        Some(n) => format!("{} ({n})", src.file),
        None => src.file.to_string(),
    };
    v.push(format!(
        "Generated by lingrav {} from {title}.",
        env!("CARGO_PKG_VERSION")
    ));
    let coords = src.coordinates();
    if src.about.is_some() {
        v.push(format!(
            "Conventions: signature (-,+,+,+), coordinates ({}), G = c = 1, g = gbar + h",
            coords.join(",")
        ));
        v.push(
            "to first order in h, all indices down; Riemann sign of Misner, Thorne & Wheeler."
                .into(),
        );
        v.push("The background gbar, as in the file:".into());
        let frame = crate::tensor::Frame::covariant(coords.clone());
        if let Some(a) = &src.about {
            for (mu, nu) in crate::tensor::COMPONENTS {
                if let Some(t) = a.g[mu][nu].as_ref().or(a.g[nu][mu].as_ref()) {
                    v.push(format!("  gbar_{} = {t}", frame.index(&[mu, nu])));
                }
            }
        }
        v.push(
            "Every column is computed from the whole curvature chain of gbar + eps h (inverse by \
             cofactors, Christoffel symbols, Riemann, Ricci, Einstein; the eps parts are the \
             first-order changes)."
                .into(),
        );
    } else {
        v.push(
            "Conventions: signature (-,+,+,+), coordinates (t,x,y,z), G = c = 1, g = eta + h"
                .into(),
        );
        v.push(
            "to first order in h, all indices down; Riemann sign of Misner, Thorne & Wheeler;"
                .into(),
        );
        v.push(
            "extrinsic curvature with the MTW/York sign K_ij = -(1/(2 alpha))(d_t gamma_ij - ...)."
                .into(),
        );
    }
    let coord_ids: Vec<&str> = match ids {
        Some(i) => i.vars[..4].iter().map(String::as_str).collect(),
        None => coords.iter().map(String::as_str).collect(),
    };
    let inputs = coord_ids.join(", ");
    if lang != Lang::Latex {
        v.push(String::new());
        match lang {
            Lang::Python => v.push(format!(
                "Inputs: {inputs}, then the parameters (defaults: the file's values); all may be \
                 NumPy arrays and broadcast together."
            )),
            _ => v.push(format!(
                "Inputs: {inputs}, and params[] holding the parameters in this order:"
            )),
        }
        if src.parameters.is_empty() {
            v.push("  (this problem has no parameters)".into());
        }
        for (k, (p, val)) in src.parameters.iter().enumerate() {
            let id = ids.map_or(p.as_str(), |i| i.vars[4 + k].as_str());
            let index = match lang {
                Lang::Fortran => format!("params({})", k + 1),
                Lang::Python => id.to_string(),
                _ => format!("params[{k}]"),
            };
            let renamed = if id != p {
                format!(" (named {id} here)")
            } else {
                String::new()
            };
            v.push(format!("  {index} = {p}{renamed}, file value {val:?}"));
        }
    }
    if !src.functions.is_empty() {
        v.push(String::new());
        if inline {
            v.push("Arbitrary functions are replaced by the file's samples (--samples):".into());
            for (f, s) in src.functions {
                v.push(format!("  {f}(u) = {s}"));
            }
        } else if lang == Lang::Latex {
            v.push(
                "Arbitrary functions, with primes for derivatives: ".to_string()
                    + &src
                        .functions
                        .iter()
                        .map(|f| f.0.as_str())
                        .collect::<Vec<_>>()
                        .join(", "),
            );
        } else {
            v.push(
                "Arbitrary functions are calls to functions you supply: <F>_d<k>(u) is the".into(),
            );
            v.push("k-th derivative of F (F_d0 = F, F_d2 = F''). This file uses:".into());
            if let Some(ids) = ids {
                let mut used: Vec<(&(u32, u32), &String)> = ids.users.iter().collect();
                used.sort();
                for ((f, k), name) in used {
                    v.push(format!(
                        "  {name}(u) = derivative {k} of {}",
                        src.functions[*f as usize].0
                    ));
                }
            }
            match lang {
                Lang::C => v.push("declared below; define them as double NAME(double u).".into()),
                Lang::Fortran => v.push(
                    "declared external; define them as real(real64) function NAME(u), u real(real64)."
                        .into(),
                ),
                Lang::Rust => v.push("passed as trailing arguments, &dyn Fn(f64) -> f64.".into()),
                Lang::Python => v.push(
                    "passed as keyword arguments, callables that accept NumPy arrays.".into(),
                ),
                Lang::Latex => {}
            }
        }
    }
    if let Some(d) = &src.direction {
        v.push(String::new());
        v.push(format!("Direction: {d}"));
    }
    v.push(String::new());
    v.push("Functions (outputs in this order):".into());
    for b in blocks {
        let cols: Vec<&str> = b.columns.iter().map(|c| c.name.as_str()).collect();
        v.push(format!(
            "  lingrav_{}: {}",
            b.quantity.name(),
            cols.join(", ")
        ));
    }
    v.push(String::new());
    for b in blocks {
        v.push(format!(
            "{}: {}",
            b.quantity.name(),
            src.definition(b.quantity)
        ));
    }
    v
}

/// Wraps text to about `width` columns at spaces.
fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut out = Vec::new();
    let mut line = String::new();
    let lead: String = text.chars().take_while(|c| *c == ' ').collect();
    for word in text.split_whitespace() {
        if !line.is_empty() && line.len() + 1 + word.len() > width {
            out.push(std::mem::take(&mut line));
            line.push_str(&lead);
            line.push_str("    ");
        } else if !line.is_empty() {
            line.push(' ');
        } else {
            line.push_str(&lead);
        }
        line.push_str(word);
    }
    out.push(line);
    out
}

fn comment(lines: &[String], prefix: &str) -> String {
    let mut s = String::new();
    for l in lines {
        for w in wrap(l, 92) {
            if w.is_empty() {
                let _ = writeln!(s, "{}", prefix.trim_end());
            } else {
                let _ = writeln!(s, "{prefix}{w}");
            }
        }
    }
    s
}

/// Generates the source text computing `blocks` in `lang`.
///
/// # Errors
///
/// An expression with a non-real coefficient, or a sample that cannot be differentiated.
pub fn emit(
    store: &mut Store,
    src: &Source<'_>,
    blocks: &[Block],
    lang: Lang,
    inline_samples: bool,
) -> Result<String, EmitError> {
    if lang == Lang::Latex {
        return Ok(latex(store, src, blocks, inline_samples));
    }
    let target = user::EmitTarget::new(
        src.coordinates()
            .into_iter()
            .chain(src.parameters.iter().map(|p| p.0.clone()))
            .collect(),
        src.functions.iter().map(|(n, _)| n.clone()).collect(),
        inline_samples,
    );
    let quantities: Vec<_> = blocks.iter().map(|b| b.quantity).collect();
    let lowered = match &src.about {
        None => user::roots(target, &src.texts, &quantities),
        Some(about) => user::roots_about(target, &src.texts, about, &quantities),
    };
    let (dag, all_roots) = lowered.map_err(|error| EmitError {
        column: quantities
            .iter()
            .map(|q| q.name())
            .collect::<Vec<_>>()
            .join(", "),
        error: DagError::Lowering(error.to_string()),
    })?;
    let mut functions = Vec::new();
    for (b, roots) in blocks.iter().zip(all_roots) {
        let temps = dag.shared(&roots);
        let (vars, users) = dag.uses(&roots);
        functions.push(Function {
            block: b,
            roots,
            temps,
            params_used: vars.into_iter().filter(|v| *v >= 4).collect(),
            users_used: users,
        });
    }
    let mut all_users: Vec<(u32, u32)> = functions
        .iter()
        .flat_map(|f| f.users_used.clone())
        .collect();
    all_users.sort_unstable();
    all_users.dedup();
    let ids = idents(lang, src, &all_users);
    let header = header_lines(src, blocks, lang, inline_samples, Some(&ids));
    let unit = Unit {
        dag: &dag,
        ids: &ids,
        src,
        header: &header,
        fns: &functions,
    };
    Ok(match lang {
        Lang::C => c_file(&unit, &all_users),
        Lang::Python => python_file(&unit),
        Lang::Fortran => fortran_file(&unit),
        Lang::Rust => rust_file(&unit),
        Lang::Latex => unreachable!("handled above"),
    })
}

/// Temporaries of one function and their names.
fn temp_names(ids: &Idents, f: &Function<'_>) -> FxHashMap<Id, String> {
    f.temps
        .iter()
        .enumerate()
        .map(|(k, &id)| (id, format!("{}{}", ids.temp_prefix, k + 1)))
        .collect()
}

/// The doc lines of one generated function: its definition, then which output slot
/// (`slot(k)` for column k) holds which column.
fn function_doc(src: &Source<'_>, f: &Function<'_>, slot: impl Fn(usize) -> String) -> Vec<String> {
    let q = f.block.quantity;
    let outputs: Vec<String> = f
        .block
        .columns
        .iter()
        .enumerate()
        .map(|(k, c)| format!("{} = {}", slot(k), c.name))
        .collect();
    vec![
        format!("lingrav_{}: {}.", q.name(), src.definition(q)),
        outputs.join(", "),
    ]
}

/// Appends the statements of one function's body: each temporary (`temp(name, value)`),
/// then each output column (`out(k, value)`).
fn body(
    s: &mut String,
    (f, temps, p): (&Function<'_>, &FxHashMap<Id, String>, &Printer<'_>),
    temp: impl Fn(&str, &str) -> String,
    out: impl Fn(usize, &str) -> String,
) {
    for &t in &f.temps {
        s.push_str(&temp(&temps[&t], &p.expr(t).full()));
    }
    for (k, &r) in f.roots.iter().enumerate() {
        s.push_str(&out(k, &p.reference(r).full()));
    }
}

fn printer<'a>(
    dag: &'a Dag,
    syntax: &'a dyn Syntax,
    ids: &'a Idents,
    temps: &'a FxHashMap<Id, String>,
) -> Printer<'a> {
    Printer {
        dag,
        syntax,
        vars: &ids.vars,
        users: &ids.users,
        temps,
    }
}

/// What every generated file is made of: the DAG, the identifiers, the problem's source,
/// the header lines and the functions, one per quantity.
#[derive(Clone, Copy)]
struct Unit<'a, 'b> {
    dag: &'a Dag,
    ids: &'a Idents,
    src: &'a Source<'b>,
    header: &'a [String],
    fns: &'a [Function<'b>],
}

fn c_file(u: &Unit<'_, '_>, users: &[(u32, u32)]) -> String {
    let mut s = String::from("/*\n");
    s.push_str(&comment(u.header, " * "));
    let cargs = u.ids.vars[..4]
        .iter()
        .map(|v| format!("double {v}"))
        .collect::<Vec<_>>()
        .join(", ");
    let _ = writeln!(s, " *\n * Each function: void lingrav_<quantity>({cargs},");
    s.push_str(" *                                    const double *params, double *out);\n");
    s.push_str(" * params may be NULL when the problem has no parameters; out receives the columns.\n */\n");
    s.push_str("#include <math.h>\n\n");
    let _ = writeln!(s, "#define LINGRAV_NPARAMS {}\n", u.ids.vars.len() - 4);
    if !users.is_empty() {
        s.push_str("/* Supplied by you: derivatives of the arbitrary functions. */\n");
        for fu in users {
            let _ = writeln!(s, "double {}(double u);", u.ids.users[fu]);
        }
        s.push('\n');
    }
    for f in u.fns {
        let temps = temp_names(u.ids, f);
        let p = printer(u.dag, &lang::C, u.ids, &temps);
        let q = f.block.quantity.name();
        let n = f.roots.len();
        let _ = writeln!(s, "#define LINGRAV_{}_COLUMNS {n}", q.to_ascii_uppercase());
        let names: Vec<String> = f
            .block
            .columns
            .iter()
            .map(|c| format!("\"{}\"", c.name))
            .collect();
        let _ = writeln!(
            s,
            "const char *const lingrav_{q}_columns[{n}] = {{{}}};\n",
            names.join(", ")
        );
        let doc = function_doc(u.src, f, |k| format!("out[{k}]"));
        s.push_str("/*\n");
        s.push_str(&comment(&doc, " * "));
        s.push_str(" */\n");
        let _ = writeln!(
            s,
            "void lingrav_{q}({cargs}, const double *params, double *out)\n{{"
        );
        if f.params_used.is_empty() {
            s.push_str("    (void)params;\n");
        }
        for &v in &f.params_used {
            let _ = writeln!(
                s,
                "    const double {} = params[{}];",
                u.ids.vars[v as usize],
                v - 4
            );
        }
        body(
            &mut s,
            (f, &temps, &p),
            |name, value| format!("    const double {name} = {value};\n"),
            |k, value| format!("    out[{k}] = {value};\n"),
        );
        s.push_str("}\n\n");
    }
    s
}

fn py_string(s: &str) -> String {
    serde_json::to_string(s).unwrap_or_else(|_| "\"\"".into())
}

fn python_file(u: &Unit<'_, '_>) -> String {
    let mut s = String::from("\"\"\"\n");
    for l in u.header {
        for w in wrap(l, 92) {
            s.push_str(&w.replace('\\', "\\\\").replace("\"\"\"", "\\\"\\\"\\\""));
            s.push('\n');
        }
    }
    s.push_str(
        "\nEach function returns an array of shape (columns,) + the broadcast shape of its\n\
         arguments (a scalar point gives shape (columns,)).\n\"\"\"\n\nimport numpy as np\n\n",
    );
    let params: Vec<String> = u
        .src
        .parameters
        .iter()
        .enumerate()
        .map(|(k, (_, v))| format!("{}: {:?}", py_string(&u.ids.vars[4 + k]), v))
        .collect();
    let _ = writeln!(s, "PARAMETERS = {{{}}}", params.join(", "));
    s.push_str("COLUMNS = {\n");
    for f in u.fns {
        let names: Vec<String> = f.block.columns.iter().map(|c| py_string(&c.name)).collect();
        let _ = writeln!(
            s,
            "    {}: ({},),",
            py_string(f.block.quantity.name()),
            names.join(", ")
        );
    }
    s.push_str("}\n");
    for f in u.fns {
        let temps = temp_names(u.ids, f);
        let p = printer(u.dag, &lang::Python, u.ids, &temps);
        let q = f.block.quantity.name();
        let mut args: Vec<String> = u.ids.vars[..4].to_vec();
        for (k, (_, v)) in u.src.parameters.iter().enumerate() {
            args.push(format!("{}={:?}", u.ids.vars[4 + k], v));
        }
        if !f.users_used.is_empty() {
            args.push("*".into());
            args.extend(f.users_used.iter().map(|fu| u.ids.users[fu].clone()));
        }
        let _ = writeln!(s, "\n\ndef lingrav_{q}({}):", args.join(", "));
        let doc = format!(
            "{}. Returns COLUMNS[{}] stacked along the first axis.",
            u.src.definition(f.block.quantity),
            py_string(q)
        );
        s.push_str("    \"\"\"");
        let lines = wrap(&doc, 88);
        for (k, l) in lines.iter().enumerate() {
            if k > 0 {
                s.push_str("\n    ");
            }
            s.push_str(&l.replace('\\', "\\\\"));
        }
        s.push_str("\"\"\"\n");
        let inputs: Vec<String> = u.ids.vars.clone();
        let _ = writeln!(
            s,
            "    {} = (np.asarray(v, dtype=float) for v in ({},))",
            inputs.join(", "),
            inputs.join(", ")
        );
        let _ = writeln!(
            s,
            "    out = np.empty(({},) + np.broadcast_shapes({}))",
            f.roots.len(),
            inputs
                .iter()
                .map(|i| format!("np.shape({i})"))
                .collect::<Vec<_>>()
                .join(", ")
        );
        body(
            &mut s,
            (f, &temps, &p),
            |name, value| format!("    {name} = {value}\n"),
            |k, value| format!("    out[{k}] = {value}\n"),
        );
        s.push_str("    return out\n");
    }
    s
}

fn fortran_file(u: &Unit<'_, '_>) -> String {
    let mut s = comment(u.header, "! ");
    let fargs = u.ids.vars[..4].join(", ");
    let _ = writeln!(
        s,
        "!\n! Each routine: subroutine lingrav_<quantity>({fargs}, params, out) with"
    );
    let _ = writeln!(
        s,
        "! real(real64), intent(in) :: {fargs}, params(*) and real(real64), intent(out) :: out(n)."
    );
    s.push_str("module lingrav_formulas\n  use, intrinsic :: iso_fortran_env, only: real64\n  implicit none\n  private\n");
    for f in u.fns {
        let _ = writeln!(s, "  public :: lingrav_{}", f.block.quantity.name());
    }
    let _ = writeln!(
        s,
        "  integer, parameter, public :: lingrav_nparams = {}",
        u.src.parameters.len()
    );
    s.push_str("contains\n");
    for f in u.fns {
        let temps = temp_names(u.ids, f);
        let p = printer(u.dag, &lang::Fortran, u.ids, &temps);
        let q = f.block.quantity.name();
        let doc = function_doc(u.src, f, |k| format!("out({})", k + 1));
        s.push('\n');
        s.push_str(&comment(&doc, "  ! "));
        let _ = writeln!(s, "  subroutine lingrav_{q}({fargs}, params, out)");
        let _ = writeln!(s, "    real(real64), intent(in) :: {fargs}");
        s.push_str("    real(real64), intent(in) :: params(*)\n");
        let _ = writeln!(s, "    real(real64), intent(out) :: out({})", f.roots.len());
        let mut locals: Vec<String> = f
            .params_used
            .iter()
            .map(|&v| u.ids.vars[v as usize].clone())
            .collect();
        locals.extend(f.temps.iter().map(|t| temps[t].clone()));
        for chunk in locals.chunks(8) {
            let _ = writeln!(s, "    real(real64) :: {}", chunk.join(", "));
        }
        for fu in &f.users_used {
            let _ = writeln!(s, "    real(real64), external :: {}", u.ids.users[fu]);
        }
        for &v in &f.params_used {
            let _ = writeln!(s, "    {} = params({})", u.ids.vars[v as usize], v - 3);
        }
        body(
            &mut s,
            (f, &temps, &p),
            |name, value| lang::fortran_lines("    ", &format!("{name} = {value}"), 100),
            |k, value| lang::fortran_lines("    ", &format!("out({}) = {value}", k + 1), 100),
        );
        let _ = writeln!(s, "  end subroutine lingrav_{q}");
    }
    s.push_str("\nend module lingrav_formulas\n");
    s
}

fn rust_file(u: &Unit<'_, '_>) -> String {
    let mut s = comment(u.header, "// ");
    let _ = writeln!(
        s,
        "//\n// Each function: fn lingrav_<quantity>({}, params: &[f64; LINGRAV_NPARAMS],",
        u.ids.vars[..4].join(", ")
    );
    s.push_str("// out: &mut [f64; N], then the supplied functions, if any).\n\n");
    let np = u.src.parameters.len();
    let _ = writeln!(
        s,
        "/// Number of parameters, in file order.\npub const LINGRAV_NPARAMS: usize = {np};"
    );
    for f in u.fns {
        let temps = temp_names(u.ids, f);
        let p = printer(u.dag, &lang::Rust, u.ids, &temps);
        let q = f.block.quantity.name();
        let n = f.roots.len();
        let names: Vec<String> = f.block.columns.iter().map(|c| py_string(&c.name)).collect();
        let _ = writeln!(
            s,
            "\n/// The columns of [`lingrav_{q}`], in order.\npub const LINGRAV_{}_COLUMNS: [&str; {n}] = [{}];\n",
            q.to_ascii_uppercase(),
            names.join(", ")
        );
        for l in wrap(&format!("{}.", u.src.definition(f.block.quantity)), 92) {
            let _ = writeln!(s, "/// {}", l.trim_start());
        }
        s.push_str("#[allow(non_snake_case, unused_variables, clippy::all)]\n");
        let mut args: Vec<String> = u.ids.vars[..4]
            .iter()
            .map(|v| format!("{v}: f64"))
            .collect();
        args.push(format!("params: &[f64; {np}]"));
        args.push(format!("out: &mut [f64; {n}]"));
        args.extend(
            f.users_used
                .iter()
                .map(|fu| format!("{}: &dyn Fn(f64) -> f64", u.ids.users[fu])),
        );
        let _ = writeln!(s, "pub fn lingrav_{q}({}) {{", args.join(", "));
        for &v in &f.params_used {
            let _ = writeln!(s, "    let {} = params[{}];", u.ids.vars[v as usize], v - 4);
        }
        body(
            &mut s,
            (f, &temps, &p),
            |name, value| format!("    let {name} = {value};\n"),
            |k, value| format!("    out[{k}] = {value};\n"),
        );
        s.push_str("}\n");
    }
    s
}

fn latex(store: &mut Store, src: &Source<'_>, blocks: &[Block], inline: bool) -> String {
    let header = header_lines(src, blocks, Lang::Latex, inline, None);
    let mut s = comment(&header, "% ");
    for b in blocks {
        let _ = writeln!(s, "\n% {}", b.quantity.name());
        s.push_str("\\begin{aligned}\n");
        let n = b.columns.len();
        for (k, c) in b.columns.iter().enumerate() {
            let body = if store.is_zero(c.form) {
                "0".to_string()
            } else {
                store.to_latex(c.form)
            };
            let end = if k + 1 < n { " \\\\" } else { "" };
            let _ = writeln!(s, "  {} &= {body}{end}", c.latex);
        }
        s.push_str("\\end{aligned}\n");
    }
    s
}

#[cfg(test)]
mod tests;
