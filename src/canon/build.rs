//! From a parsed [`Expr`] to a canonical [`Form`], resolving names.
//!
//! Design decision: name resolution happens here, once, with a [`Names`] table that says what
//! every identifier means (symbol, defined subexpression, arbitrary function) and what to do
//! with an unknown one. Errors keep the span of the offending node.

use super::{CanonError, Coeff, Form, KernelId, Mono, Q, Rat, Store};
use crate::expr::{BinOp, Expr, ExprKind, Span};
use num_traits::{One, Signed, ToPrimitive, Zero};
use rustc_hash::{FxHashMap, FxHashSet};

/// What an identifier that [`Names`] does not know means.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Unknown {
    /// A free symbol (a value) or an arbitrary function (when applied).
    Free,
    /// An error, with a "did you mean" hint.
    Error,
}

/// The built-in functions of the expression language.
/// All take one argument except `atan2(y, x)`, which the parser reads as [`ExprKind::Atan2`].
pub const BUILTINS: [&str; 12] = [
    "sin", "cos", "tan", "exp", "log", "sqrt", "sinh", "cosh", "tanh", "atan", "abs", "atan2",
];

/// What "shown real" covers ([`Store::is_real_shown`]), for the help of `abs` and `atan2`.
const REAL_SHOWN: &str = "an argument is shown real when it is built from numbers, symbols, pi, \
     + - * /, integer powers, exp, sin, cos, tan, sinh, cosh, tanh, atan, atan2, abs, arbitrary \
     functions (real-valued by convention) of such arguments, and sqrt, log and non-integer \
     powers of arguments that are also shown nonnegative (sums of even powers, pi, exp, sqrt \
     and abs with positive coefficients, e.g. sqrt(x^2 + 1))";

/// The name table used to build forms.
#[derive(Clone, Debug)]
pub struct Names {
    symbols: FxHashSet<String>,
    defined: FxHashMap<String, Form>,
    functions: FxHashSet<String>,
    /// What an unknown identifier means.
    pub unknown: Unknown,
}

impl Names {
    /// A table in which every unknown name is a free symbol or arbitrary function.
    pub fn free() -> Names {
        Names {
            symbols: FxHashSet::default(),
            defined: FxHashMap::default(),
            functions: FxHashSet::default(),
            unknown: Unknown::Free,
        }
    }
    /// A table in which only declared names are allowed.
    pub fn strict() -> Names {
        Names {
            unknown: Unknown::Error,
            ..Names::free()
        }
    }
    /// Declares a symbol (coordinate, parameter).
    pub fn symbol(&mut self, name: &str) {
        self.symbols.insert(name.to_string());
    }
    /// Declares a named subexpression.
    pub fn define(&mut self, name: &str, f: Form) {
        self.defined.insert(name.to_string(), f);
    }
    /// Declares an arbitrary function of one argument.
    pub fn function(&mut self, name: &str) {
        self.functions.insert(name.to_string());
    }
    /// True if the name is declared as anything (or is built in).
    pub fn is_declared(&self, name: &str) -> bool {
        self.symbols.contains(name)
            || self.defined.contains_key(name)
            || self.functions.contains(name)
            || BUILTINS.contains(&name)
            || name == "pi"
    }
    fn all_names(&self) -> Vec<&str> {
        let mut v: Vec<&str> = self
            .symbols
            .iter()
            .chain(self.defined.keys())
            .chain(self.functions.iter())
            .map(|s| s.as_str())
            .chain(BUILTINS.iter().copied())
            .chain(std::iter::once("pi"))
            .collect();
        v.sort();
        v
    }
    /// The declared name closest to `name`, if any is close.
    pub fn suggest(&self, name: &str) -> Option<String> {
        let mut best: Option<(usize, &str)> = None;
        for cand in self.all_names() {
            let d = edit_distance(name, cand);
            // Short names are all close to each other: for them only a change of case counts.
            let longest = name.len().max(cand.len());
            let limit = if longest <= 2 {
                usize::from(name.eq_ignore_ascii_case(cand))
            } else {
                (longest / 3).max(1)
            };
            if d <= limit && best.is_none_or(|(bd, _)| d < bd) {
                best = Some((d, cand));
            }
        }
        best.map(|b| b.1.to_string())
    }
}

/// Edit distance with adjacent transpositions counted as one edit (`omgea` is one from `omega`).
fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, cell) in d[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut v = (d[i - 1][j] + 1)
                .min(d[i][j - 1] + 1)
                .min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                v = v.min(d[i - 2][j - 2] + 1);
            }
            d[i][j] = v;
        }
    }
    d[a.len()][b.len()]
}

/// An error while building a form, with the span of the offending node.
#[derive(Clone, Debug, PartialEq, thiserror::Error, miette::Diagnostic)]
#[error("{message}")]
pub struct BuildError {
    /// What is wrong.
    pub message: String,
    /// Where.
    #[label("here")]
    pub span: Span,
    /// How to fix it.
    #[help]
    pub help: Option<String>,
    /// True when a size or time limit stopped the build (not an error in the input).
    pub limit: bool,
    /// The limit itself, when one stopped the build.
    pub cause: Option<CanonError>,
}

impl BuildError {
    fn new(message: impl Into<String>, span: Span, help: Option<String>) -> BuildError {
        BuildError {
            limit: false,
            cause: None,
            message: message.into(),
            span,
            help,
        }
    }
    fn canon(e: CanonError, span: Span) -> BuildError {
        let limit = e.is_limit();
        BuildError {
            limit,
            cause: limit.then(|| e.clone()),
            ..BuildError::new(e.to_string(), span, None)
        }
    }
}

impl Store {
    /// Builds the canonical form of `e` with the names in `names`.
    pub fn build(&mut self, e: &Expr, names: &Names) -> Result<Form, BuildError> {
        let c = |r: Result<Form, CanonError>| r.map_err(|err| BuildError::canon(err, e.span));
        match &e.kind {
            ExprKind::Num(q) => Ok(self.rational(q.clone())),
            ExprKind::Ident(n) => self.resolve_ident(n, e.span, names),
            ExprKind::Neg(a) => {
                let a = self.build(a, names)?;
                c(self.neg(a))
            }
            ExprKind::Binary(BinOp::Add | BinOp::Sub, _, _) => {
                // A chain of sums and differences, built as one n-ary sum (and without
                // recursing down the chain).
                let mut parts: Vec<(&Expr, bool)> = Vec::new();
                let mut cur = e;
                loop {
                    match &cur.kind {
                        ExprKind::Binary(BinOp::Add, l, r) => {
                            parts.push((r, false));
                            cur = l;
                        }
                        ExprKind::Binary(BinOp::Sub, l, r) => {
                            parts.push((r, true));
                            cur = l;
                        }
                        _ => {
                            parts.push((cur, false));
                            break;
                        }
                    }
                }
                parts.reverse();
                let (plus, minus) = (Coeff::one(), Coeff::int(-1));
                let mut terms = Vec::with_capacity(parts.len());
                for (x, negate) in parts {
                    let f = self.build(x, names)?;
                    terms.push((if negate { &minus } else { &plus }, f));
                }
                c(self.linear(&terms))
            }
            ExprKind::Binary(op, a, b) => {
                if *op == BinOp::Mul
                    && let Some((q, pows)) = self.written_monomial(e, names)
                {
                    return c(self.monomial_form(q, pows));
                }
                let fa = self.build(a, names)?;
                let fb = self.build(b, names)?;
                match op {
                    BinOp::Add => c(self.add(fa, fb)),
                    BinOp::Sub => c(self.sub(fa, fb)),
                    BinOp::Mul => c(self.mul(fa, fb)),
                    BinOp::Div => {
                        let inv = self.inverse_factored(b, fb, names)?;
                        c(self.mul(fa, inv))
                    }
                    BinOp::Pow => c(self.pow(fa, fb)),
                }
            }
            ExprKind::Call {
                name,
                name_span,
                primes,
                arg,
            } => {
                let a = self.build(arg, names)?;
                if BUILTINS.contains(&name.as_str()) {
                    if *primes > 0 {
                        return Err(BuildError::new(
                            format!(
                                "`{name}` is built in; primes mark derivatives of arbitrary functions only"
                            ),
                            *name_span,
                            Some(format!(
                                "differentiate with the operator, e.g. d_x({name}(x))"
                            )),
                        ));
                    }
                    if name == "atan2" {
                        // Only a tree built by hand gets here: the parser reads `atan2(y, x)`.
                        return Err(BuildError::new(
                            "`atan2` takes two arguments, found one",
                            *name_span,
                            Some("write `atan2(y, x)`".into()),
                        ));
                    }
                    if name == "abs" {
                        // abs(u) = sqrt(u^2), the principal root: an identity for real u only.
                        if !self.is_real_shown(a) {
                            return Err(BuildError::new(
                                "`abs` of an argument not shown to be real".to_string(),
                                arg.span,
                                Some(format!(
                                    "abs(u) is read as sqrt(u^2), which is |u| only for real u; \
                                     {REAL_SHOWN}"
                                )),
                            ));
                        }
                        return c(self.abs_of_real(a));
                    }
                    return c(match name.as_str() {
                        "sin" => self.sin(a),
                        "cos" => self.cos(a),
                        "tan" => self.tan(a),
                        "exp" => self.exp(a),
                        "log" => self.log(a),
                        "sqrt" => self.root(a, 2),
                        "sinh" => self.sinh(a),
                        "cosh" => self.cosh(a),
                        "tanh" => self.tanh(a),
                        "atan" => self.atan(a),
                        _ => unreachable!("every builtin is listed"),
                    });
                }
                if names.functions.contains(name)
                    || (names.unknown == Unknown::Free && !names.is_declared(name))
                {
                    return Ok(self.func(name, *primes, a));
                }
                let what = if names.symbols.contains(name) || names.defined.contains_key(name) {
                    format!("`{name}` is not a function")
                } else {
                    format!("unknown function `{name}`")
                };
                let help = if names.symbols.contains(name) || names.defined.contains_key(name) {
                    Some(format!(
                        "to multiply, write `{name}*(...)`; arbitrary functions are declared in [functions]"
                    ))
                } else {
                    Some(match names.suggest(name) {
                        Some(s) => format!(
                            "did you mean `{s}`? Arbitrary functions are declared in [functions]"
                        ),
                        None => "declare arbitrary functions in [functions]".into(),
                    })
                };
                Err(BuildError::new(what, *name_span, help))
            }
            ExprKind::Atan2 { y, x, .. } => {
                let fy = self.build(y, names)?;
                let fx = self.build(x, names)?;
                self.atan2_of(fy, fx, y.span, x.span, e.span)
            }
            ExprKind::Deriv { vars, arg } => {
                let mut f = self.build(arg, names)?;
                for (v, span) in vars {
                    let known_symbol = names.symbols.contains(v);
                    if !known_symbol && (names.unknown == Unknown::Error || names.is_declared(v)) {
                        return Err(BuildError::new(
                            format!(
                                "cannot differentiate by `{v}`: it is not a coordinate or parameter"
                            ),
                            *span,
                            names.suggest(v).map(|s| format!("did you mean `{s}`?")),
                        ));
                    }
                    let k = self.symbol_kernel(v);
                    f = self
                        .diff(f, k)
                        .map_err(|err| BuildError::canon(err, e.span))?;
                }
                Ok(f)
            }
        }
    }

    /// `atan2(y, x)` as `2 atan(y / (sqrt(x^2 + y^2) + x))`, for arguments shown real.
    ///
    /// Soundness. For real `(x, y)` off the cut `x <= 0, y = 0`, let `r = sqrt(x^2 + y^2)`
    /// (the principal root of a nonnegative number, so `r >= 0` and `r + x > 0` there: `r > |x|`
    /// when `y != 0`, `r = x > 0` when `y = 0`) and `theta = atan2(y, x)` in `(-pi, pi)`. Then
    /// `y / (r + x) = sin(theta) / (1 + cos(theta)) = tan(theta / 2)` with `theta / 2` in
    /// `(-pi/2, pi/2)`, where the principal `atan` inverts `tan`: the formula is exact off the
    /// cut. On the cut `r + x = 0`, the formula is undefined and so is lingrav's `atan2` (its
    /// value `pi` on the negative axis is not represented): identities proved with it hold
    /// wherever both sides are defined, like every identity of the canonical form. For complex
    /// arguments the formula is not atan2 of anything standard, so they are refused, like
    /// `abs`'s.
    fn atan2_of(
        &mut self,
        fy: Form,
        fx: Form,
        y_span: Span,
        x_span: Span,
        span: Span,
    ) -> Result<Form, BuildError> {
        for (f, at, which) in [(fy, y_span, "first"), (fx, x_span, "second")] {
            if !self.is_real_shown(f) {
                return Err(BuildError::new(
                    format!("`atan2`'s {which} argument is not shown to be real"),
                    at,
                    Some(format!(
                        "atan2(y, x) is read as 2*atan(y/(sqrt(x^2 + y^2) + x)), the angle of \
                         the point (x, y) only for real x and y; {REAL_SHOWN}"
                    )),
                ));
            }
        }
        let c = |r: Result<Form, CanonError>| r.map_err(|err| BuildError::canon(err, span));
        let xx = c(self.mul(fx, fx))?;
        let yy = c(self.mul(fy, fy))?;
        let rr = c(self.add(xx, yy))?;
        // x^2 + y^2 >= 0 for the real x, y checked above.
        let r = c(self.sqrt_of_squares(rr))?;
        let den = c(self.add(r, fx))?;
        if den == self.zero {
            return Err(BuildError::new(
                "`atan2(y, x)` on its cut: y = 0 and x <= 0 here",
                span,
                Some(
                    "atan2 is defined off the cut x <= 0, y = 0 (where sqrt(x^2 + y^2) + x = 0)"
                        .into(),
                ),
            ));
        }
        if fy == self.zero {
            return Ok(self.zero);
        }
        let inv = c(self.inv(den))?;
        let q = c(self.mul(fy, inv))?;
        let a = c(self.half_angle_atan(q, fy, fx))?;
        c(self.scale(a, &Coeff::int(2)))
    }

    /// `1 / b` for the denominator `b` (already built as `fb`), inverting a written product
    /// or integer power factor by factor: 1/(p*q) = (1/p)(1/q) and 1/p^n = (1/p)^n. This keeps
    /// the denominator factored as written, so printed forms read back to the same form.
    fn inverse_factored(&mut self, b: &Expr, fb: Form, names: &Names) -> Result<Form, BuildError> {
        let zero_div = |span: Span| {
            BuildError::new(
                "division by an expression that is identically zero",
                span,
                Some("this denominator simplifies to 0".into()),
            )
        };
        match &b.kind {
            ExprKind::Binary(BinOp::Mul, l, r) => {
                let fl = self.build(l, names)?;
                let fr = self.build(r, names)?;
                let il = self.inverse_factored(l, fl, names)?;
                let ir = self.inverse_factored(r, fr, names)?;
                self.mul(il, ir)
                    .map_err(|err| BuildError::canon(err, b.span))
            }
            // A written integer power: (1/P)^n keeps the factor P with exponent n.
            ExprKind::Binary(BinOp::Pow, base, exp) if matches!(&exp.kind, ExprKind::Num(q) if q.is_integer()) =>
            {
                let fbase = self.build(base, names)?;
                let ib = self.inverse_factored(base, fbase, names)?;
                let n = match &exp.kind {
                    ExprKind::Num(q) => q.to_integer(),
                    _ => unreachable!("guarded above"),
                };
                let n: i64 = n.try_into().map_err(|_| {
                    BuildError::canon(CanonError::TooLarge(self.limits.max_terms), b.span)
                })?;
                self.powi(ib, n).map_err(|err| match err {
                    CanonError::DivisionByZero => zero_div(b.span),
                    other => BuildError::canon(other, b.span),
                })
            }
            _ => self.inv(fb).map_err(|err| match err {
                CanonError::DivisionByZero => zero_div(b.span),
                other => BuildError::canon(other, b.span),
            }),
        }
    }

    /// A product as written of numbers, declared symbols and declared symbols to positive
    /// integer powers (a term of a written polynomial, `3*t^2*x*y`): its rational
    /// coefficient and the powers of its symbol kernels, sorted, without zeros. `None` for
    /// any other product, which is built factor by factor.
    ///
    /// Soundness. Multiplying such factors one at a time multiplies single terms without
    /// denominators whose monomials are powers of symbols (no root to reduce, no exponential):
    /// the result is the one term with the product of the numbers as coefficient and the
    /// summed powers as monomial, which [`Store::monomial_form`] interns directly. Numbers
    /// above 64 bits, and powers whose sum leaves `i32`, go the long way, so that its limits
    /// and errors stay the same.
    fn written_monomial(&mut self, e: &Expr, names: &Names) -> Option<(Q, Vec<(KernelId, i32)>)> {
        let small = |q: &Q| q.numer().bits() <= 64 && q.denom().bits() <= 64;
        // What `resolve_ident` reads as a symbol: a declared one, or with free names any
        // name that is not declared as something else.
        let symbol = |n: &str| {
            names.symbols.contains(n)
                && !names.defined.contains_key(n)
                && !names.functions.contains(n)
                && !BUILTINS.contains(&n)
                && n != "pi"
                || names.unknown == Unknown::Free && !names.is_declared(n)
        };
        // The numbers, multiplied at the end (most terms have one).
        let mut numbers: Vec<(&Q, bool)> = Vec::new();
        let mut pows: Vec<(KernelId, i64)> = Vec::new();
        let mut cur = e;
        loop {
            let (factor, rest) = match &cur.kind {
                ExprKind::Binary(BinOp::Mul, l, r) => (&**r, Some(&**l)),
                _ => (cur, None),
            };
            let (name, power) = match &factor.kind {
                ExprKind::Num(x) if small(x) => {
                    numbers.push((x, false));
                    (None, 0)
                }
                ExprKind::Neg(x) => match &x.kind {
                    ExprKind::Num(x) if small(x) => {
                        numbers.push((x, true));
                        (None, 0)
                    }
                    _ => return None,
                },
                ExprKind::Ident(n) if symbol(n) => (Some(n), 1),
                ExprKind::Binary(BinOp::Pow, base, exp) => match (&base.kind, &exp.kind) {
                    (ExprKind::Ident(n), ExprKind::Num(x))
                        if symbol(n) && x.denom().is_one() && x.is_positive() =>
                    {
                        (
                            Some(n),
                            x.numer().to_i64().filter(|&k| k <= super::MAX_POWER)?,
                        )
                    }
                    _ => return None,
                },
                _ => return None,
            };
            if let Some(n) = name {
                let k = self.symbol_kernel(n);
                match pows.iter_mut().find(|p| p.0 == k) {
                    Some(p) => p.1 += power,
                    None => pows.push((k, power)),
                }
            }
            match rest {
                Some(l) => cur = l,
                None => break,
            }
        }
        let negative = numbers.iter().filter(|n| n.1).count() % 2 == 1;
        let mut q = match numbers.split_first() {
            None => Q::one(),
            Some((first, rest)) => rest.iter().fold(first.0.clone(), |q, n| q * n.0),
        };
        if negative {
            q = -q;
        }
        pows.sort_unstable_by_key(|p| p.0);
        let pows = pows
            .into_iter()
            .map(|(k, e)| i32::try_from(e).ok().map(|e| (k, e)))
            .collect::<Option<Vec<_>>>()?;
        Some((q, pows))
    }

    /// The form `q` times the monomial `pows` (sorted by kernel, positive powers of symbol
    /// kernels), interned directly: see [`Store::written_monomial`].
    fn monomial_form(&mut self, q: Q, pows: Vec<(KernelId, i32)>) -> Result<Form, CanonError> {
        self.check_size(1)?;
        if q.is_zero() {
            return Ok(self.zero);
        }
        let c = Coeff::rational(q);
        if pows.is_empty() {
            return Ok(self.constant(c));
        }
        let m = self.intern_mono(Mono { pows, exp: None });
        Ok(self.intern_rat(Rat {
            num: vec![(m, c)],
            den: Vec::new(),
        }))
    }

    fn resolve_ident(&mut self, n: &str, span: Span, names: &Names) -> Result<Form, BuildError> {
        if let Some(&f) = names.defined.get(n) {
            return Ok(f);
        }
        if names.symbols.contains(n) {
            return Ok(self.symbol(n));
        }
        if n == "pi" {
            return Ok(self.pi());
        }
        if BUILTINS.contains(&n) || names.functions.contains(n) {
            return Err(BuildError::new(
                format!("`{n}` is a function and needs an argument"),
                span,
                Some(format!("write `{n}(...)`")),
            ));
        }
        match names.unknown {
            Unknown::Free => Ok(self.symbol(n)),
            Unknown::Error => Err(BuildError::new(
                format!("undeclared name `{n}`"),
                span,
                Some(match names.suggest(n) {
                    _ if matches!(n, "i" | "I" | "j") => format!(
                        "there is no imaginary unit: fields are real, so write a complex wave's real part with cos and sin; or declare `{n}` in [parameters] if it is one"
                    ),
                    Some(s) => format!(
                        "did you mean `{s}`? Parameters go in [parameters], named subexpressions in [define]"
                    ),
                    None => "declare it in [parameters] or [define]".into(),
                }),
            )),
        }
    }
}
