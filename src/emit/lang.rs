//! Printing DAG nodes as expressions of a programming language.
//!
//! One printer for every language: precedence and signs are handled here, and a [`Syntax`]
//! says how a language spells numbers, functions, powers and roots. Negative operands are
//! always parenthesized inside products and powers (Fortran forbids `a*-b`), and subtraction
//! is written `a - b`.

use super::dag::{Dag, Fun, Id, Op};
use rustc_hash::FxHashMap;

/// Binding strength of a printed expression.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub(crate) enum Prec {
    Sum,
    Prod,
    Pow,
    Atom,
}

/// A printed expression: its text without a leading sign, whether it is negated, and how
/// strongly it binds.
#[derive(Clone, Debug)]
pub(crate) struct Printed {
    text: String,
    prec: Prec,
    neg: bool,
}

impl Printed {
    fn atom(text: String) -> Printed {
        Printed {
            text,
            prec: Prec::Atom,
            neg: false,
        }
    }

    /// The whole expression, sign included.
    pub(crate) fn full(&self) -> String {
        match (self.neg, self.prec) {
            (false, _) => self.text.clone(),
            (true, Prec::Sum) => format!("-({})", self.text),
            (true, _) => format!("-{}", self.text),
        }
    }

    /// As an operand that must bind at least as strongly as `min`.
    pub(crate) fn operand(&self, min: Prec) -> String {
        if self.neg || self.prec < min {
            format!("({})", self.full())
        } else {
            self.text.clone()
        }
    }
}

/// How a language spells what the printer needs.
pub(crate) trait Syntax {
    /// The names of the built-in functions: sin, cos, exp, log, the square root, atan, the
    /// absolute value and atan2 (arguments `y, x`).
    fn functions(&self) -> &'static [&'static str; 8];
    /// A non-negative finite number (shortest round-trip digits unless the language needs
    /// more).
    fn num(&self, v: f64) -> String {
        float(v)
    }
    /// `base^n`.
    fn pow(&self, base: &Printed, n: u32) -> Printed;
    /// The principal `arg^(1/q)`, q >= 3 (q = 2 is `fun_sqrt`).
    fn root(&self, arg: &Printed, q: u32) -> Printed;
    /// The name of a built-in function.
    fn fun(&self, f: Fun) -> &'static str {
        let k = match f {
            Fun::Sin => 0,
            Fun::Cos => 1,
            Fun::Exp => 2,
            Fun::Log => 3,
            Fun::Atan => 5,
            Fun::Abs => 6,
        };
        self.functions()[k]
    }
    /// The square root's name.
    fn sqrt(&self) -> &'static str {
        self.functions()[4]
    }
}

/// C (C99, `<math.h>`).
pub(crate) struct C;
/// Python with NumPy.
pub(crate) struct Python;
/// Fortran 2008, `real64`.
pub(crate) struct Fortran;
/// Rust, `f64`.
pub(crate) struct Rust;

/// Shortest round-trip digits, always recognisably a floating-point literal.
fn float(v: f64) -> String {
    let s = format!("{:?}", v + 0.0);
    if s.contains(['.', 'e', 'E']) {
        s
    } else {
        format!("{s}.0")
    }
}

/// `base**exponent` (Python, Fortran), the base parenthesized unless it is an atom.
fn star_star(base: &Printed, exponent: &str) -> Printed {
    Printed {
        text: format!("{}**{exponent}", base.operand(Prec::Atom)),
        prec: Prec::Pow,
        neg: false,
    }
}

/// The functions of C's `<math.h>` and Fortran's intrinsics.
const PLAIN: [&str; 8] = ["sin", "cos", "exp", "log", "sqrt", "atan", "fabs", "atan2"];
/// Fortran's intrinsics (generic `abs`).
const FORTRAN: [&str; 8] = ["sin", "cos", "exp", "log", "sqrt", "atan", "abs", "atan2"];

impl Syntax for C {
    fn functions(&self) -> &'static [&'static str; 8] {
        &PLAIN
    }
    fn pow(&self, base: &Printed, n: u32) -> Printed {
        Printed::atom(format!("pow({}, {n})", base.full()))
    }
    fn root(&self, arg: &Printed, q: u32) -> Printed {
        Printed::atom(format!("pow({}, 1.0/{q}.0)", arg.full()))
    }
}

impl Syntax for Python {
    fn functions(&self) -> &'static [&'static str; 8] {
        &[
            "np.sin",
            "np.cos",
            "np.exp",
            "np.log",
            "np.sqrt",
            "np.arctan",
            "np.abs",
            "np.arctan2",
        ]
    }
    fn pow(&self, base: &Printed, n: u32) -> Printed {
        star_star(base, &n.to_string())
    }
    fn root(&self, arg: &Printed, q: u32) -> Printed {
        Printed::atom(format!("np.power({}, 1.0/{q}.0)", arg.full()))
    }
}

impl Syntax for Fortran {
    fn functions(&self) -> &'static [&'static str; 8] {
        &FORTRAN
    }
    fn num(&self, v: f64) -> String {
        format!("{}_real64", float(v))
    }
    fn pow(&self, base: &Printed, n: u32) -> Printed {
        star_star(base, &n.to_string())
    }
    fn root(&self, arg: &Printed, q: u32) -> Printed {
        star_star(arg, &format!("(1.0_real64/{q}.0_real64)"))
    }
}

impl Syntax for Rust {
    fn functions(&self) -> &'static [&'static str; 8] {
        &[
            "f64::sin",
            "f64::cos",
            "f64::exp",
            "f64::ln",
            "f64::sqrt",
            "f64::atan",
            "f64::abs",
            "f64::atan2",
        ]
    }
    fn pow(&self, base: &Printed, n: u32) -> Printed {
        Printed::atom(format!("f64::powi({}, {n})", base.full()))
    }
    fn root(&self, arg: &Printed, q: u32) -> Printed {
        Printed::atom(format!("f64::powf({}, 1.0/{q}.0)", arg.full()))
    }
}

/// Prints nodes of a DAG with given identifiers for variables, user functions and
/// temporaries.
pub(crate) struct Printer<'a> {
    pub dag: &'a Dag,
    pub syntax: &'a dyn Syntax,
    /// Identifier of each variable (t, x, y, z, parameters).
    pub vars: &'a [String],
    /// Identifier of each user function derivative `(function, order)`.
    pub users: &'a FxHashMap<(u32, u32), String>,
    /// Identifier of each temporary.
    pub temps: &'a FxHashMap<Id, String>,
}

impl Printer<'_> {
    /// Node `id` as an expression; temporaries other than `id` itself by their names.
    pub(crate) fn expr(&self, id: Id) -> Printed {
        self.node(id, true)
    }

    /// Node `id` where it is used: a temporary by its name.
    pub(crate) fn reference(&self, id: Id) -> Printed {
        self.node(id, false)
    }

    fn child(&self, id: Id) -> Printed {
        self.node(id, false)
    }

    fn node(&self, id: Id, top: bool) -> Printed {
        if !top && let Some(name) = self.temps.get(&id) {
            return Printed::atom(name.clone());
        }
        let s = self.syntax;
        match self.dag.op(id) {
            Op::Num(b) => {
                let v = f64::from_bits(*b);
                Printed {
                    text: s.num(v.abs()),
                    prec: Prec::Atom,
                    neg: v < 0.0,
                }
            }
            Op::Var(i) => Printed::atom(self.vars[*i as usize].clone()),
            Op::Call(f, a) => Printed::atom(format!("{}({})", s.fun(*f), self.child(*a).full())),
            Op::Atan2(y, x) => Printed::atom(format!(
                "{}({}, {})",
                s.functions()[7],
                self.child(*y).full(),
                self.child(*x).full()
            )),
            Op::User(f, k, a) => Printed::atom(format!(
                "{}({})",
                self.users[&(*f, *k)],
                self.child(*a).full()
            )),
            Op::Pow(b, n) => s.pow(&self.child(*b), *n),
            Op::Root(a, 2) => Printed::atom(format!("{}({})", s.sqrt(), self.child(*a).full())),
            Op::Root(a, q) => s.root(&self.child(*a), *q),
            Op::Prod(c, n, d) => {
                let c = f64::from_bits(*c);
                let mut parts: Vec<String> = Vec::new();
                if c.abs() != 1.0 || n.is_empty() {
                    parts.push(s.num(c.abs()));
                }
                for &f in n {
                    parts.push(self.child(f).operand(Prec::Pow));
                }
                let mut text = parts.join("*");
                if !d.is_empty() {
                    let dens: Vec<Printed> = d.iter().map(|&f| self.child(f)).collect();
                    if dens.len() == 1 {
                        text = format!("{text}/{}", dens[0].operand(Prec::Atom));
                    } else {
                        let ds: Vec<String> = dens.iter().map(|p| p.operand(Prec::Pow)).collect();
                        text = format!("{text}/({})", ds.join("*"));
                    }
                }
                Printed {
                    text,
                    prec: Prec::Prod,
                    neg: c < 0.0,
                }
            }
            Op::Sum(ts) => {
                let mut text = String::new();
                for (k, &t) in ts.iter().enumerate() {
                    let p = self.child(t);
                    if k == 0 {
                        text.push_str(&if p.neg && p.prec == Prec::Sum {
                            format!("-({})", p.text)
                        } else {
                            p.full()
                        });
                    } else if p.neg {
                        text.push_str(" - ");
                        if p.prec == Prec::Sum {
                            text.push('(');
                            text.push_str(&p.text);
                            text.push(')');
                        } else {
                            text.push_str(&p.text);
                        }
                    } else {
                        text.push_str(" + ");
                        text.push_str(&p.text);
                    }
                }
                Printed {
                    text,
                    prec: Prec::Sum,
                    neg: false,
                }
            }
            Op::Quot(a, b) => {
                let a = self.child(*a);
                let b = self.child(*b);
                let num = if a.prec < Prec::Prod {
                    format!("({})", a.text)
                } else {
                    a.text.clone()
                };
                Printed {
                    text: format!("{num}/{}", b.operand(Prec::Atom)),
                    prec: Prec::Prod,
                    neg: a.neg,
                }
            }
        }
    }
}

/// Splits a long Fortran statement into continuation lines of at most about `width`
/// characters, breaking only after a space, a comma, an opening parenthesis or a single `*`.
pub(crate) fn fortran_lines(indent: &str, statement: &str, width: usize) -> String {
    let chars: Vec<char> = statement.chars().collect();
    let mut out = String::new();
    let mut line = String::new();
    let mut last_break: Option<usize> = None; // index into `line` (chars) after which to break
    let mut i = 0;
    let mut first = true;
    while i < chars.len() {
        let c = chars[i];
        line.push(c);
        let single_star =
            c == '*' && chars.get(i + 1) != Some(&'*') && (i == 0 || chars[i - 1] != '*');
        if c == ' ' || c == ',' || c == '(' || single_star {
            last_break = Some(line.chars().count());
        }
        if line.chars().count() >= width
            && let Some(b) = last_break
        {
            let head: String = line.chars().take(b).collect();
            let tail: String = line.chars().skip(b).collect();
            out.push_str(indent);
            if !first {
                out.push_str("  & ");
            }
            out.push_str(head.trim_end());
            out.push_str(" &\n");
            first = false;
            line = tail;
            last_break = None;
        }
        i += 1;
    }
    out.push_str(indent);
    if !first {
        out.push_str("  & ");
    }
    out.push_str(&line);
    out.push('\n');
    out
}
