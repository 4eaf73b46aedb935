//! Printing canonical forms back in readable real form.
//!
//! Design decision: printing goes through a small tree ([`Pretty`]) so that plain text and
//! LaTeX share one conversion. Exponentials `c e^(P + iQ) + c' e^(P - iQ)` are regrouped as
//! `e^P ((c + c') cos Q + i (c - c') sin Q)`, so a real expression prints with sin and cos and
//! no `i`. Terms are ordered by their printed text, never by ids, so output does not depend on
//! the order in which forms were built.
//!
//! Two families of printers. The canonical ones ([`Store::to_text`], [`Store::to_latex`])
//! print the form as it is, in the input syntax; every text the crate parses again, writes
//! to a file or hands to the independent route comes from them. The display ones
//! ([`Store::to_display_text`], [`Store::to_display_latex`], [`Store::to_display_summary`])
//! print in the file's own terms: a [`Naming`] (the file's `[define]` names) replaces every
//! argument, radicand, phase or root that equals a defined form by its name, and cancels
//! powers of a name between numerator and denominator (`2*M*r/r^2` reads `2*M/r`), and
//! writes sums of sines and cosines of combined angles as products of sines and cosines of
//! a few angles where that reads shorter (`sin(th)*cos(ph)`, not `sin(ph + th)/2 - ...`;
//! [`trig`]). Display text reads back, with the file's names, to a form equal to the canonical one (tested on
//! every worked file).

pub(super) mod trig;

use super::{Coeff, Form, Kernel, KernelId, MonoId, Rat, Store};
use num_traits::Signed as _;
use rustc_hash::FxHashMap;
use std::fmt::Write as _;
use std::rc::Rc;

/// A printable expression tree, produced from a canonical form.
#[derive(Clone, Debug, PartialEq)]
pub enum Pretty {
    /// A constant.
    Num(Coeff),
    /// A symbol or `pi`.
    Name(String),
    /// `name(arg)`: sin, cos, exp, log, an arbitrary function with primes; with the form of
    /// the argument.
    Call(String, Box<Pretty>, Form),
    /// `arg^(1/q)`; q = 2 prints as sqrt; with the form of the radicand.
    Root(Box<Pretty>, u32, Form),
    /// `base^n`, n >= 2.
    Pow(Box<Pretty>, u32),
    /// `coeff * numerator factors / denominator factors`.
    Prod(Coeff, Vec<Pretty>, Vec<Pretty>),
    /// A sum of terms.
    Sum(Vec<Pretty>),
    /// `numerator / denominator`.
    Quot(Box<Pretty>, Box<Pretty>),
}

/// The names a display printer writes in place of the forms they stand for.
#[derive(Clone, Debug, Default)]
pub struct Naming {
    /// A defined form and its name.
    forms: FxHashMap<Form, String>,
    /// The negation of a defined form and the name.
    negated: FxHashMap<Form, String>,
    /// A kernel that is by itself a defined form (`r = sqrt(x^2 + y^2 + z^2)`).
    kernels: FxHashMap<KernelId, String>,
    /// The radicand of such a root kernel: the name and the root's order (`x^2 + y^2 + z^2`
    /// is `r^2`).
    powers: FxHashMap<Form, (String, u32)>,
}

impl Naming {
    /// True when no name would be used.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.forms.is_empty()
    }
}

impl Store {
    /// The [`Naming`] of these definitions (a file's `[define]` entries, in file order).
    /// Definitions that are a number or a single symbol are not used (a `2` in a result is
    /// not the user's `two`), nor a form already named by an earlier definition.
    pub fn naming(&mut self, defines: &[(String, Form)]) -> Naming {
        let mut n = Naming::default();
        for (name, f) in defines {
            let f = *f;
            if self.as_constant(f).is_some()
                || self.as_symbol(f).is_some()
                || n.forms.contains_key(&f)
            {
                continue;
            }
            n.forms.insert(f, name.clone());
            if let Ok(g) = self.neg(f) {
                n.negated.entry(g).or_insert_with(|| name.clone());
            }
            let r = self.rats[f.0 as usize].clone();
            if r.den.is_empty()
                && let [(m, c)] = r.num.as_slice()
                && c.is_one()
            {
                let mono = &self.monos[m.0 as usize];
                if mono.exp.is_none()
                    && let [(k, 1)] = mono.pows.as_slice()
                {
                    let k = *k;
                    n.kernels.entry(k).or_insert_with(|| name.clone());
                    if let Kernel::Root { radicand, q } = self.kernel(k).clone() {
                        n.powers
                            .entry(radicand)
                            .or_insert_with(|| (name.clone(), q));
                    }
                }
            }
        }
        n
    }

    /// Sets the names the display printers use (`None`: print canonical forms).
    /// The display printers then also write sums of sines and cosines of combined angles as
    /// products where that reads shorter; with `None` they print as the canonical ones.
    pub fn set_display_names(&mut self, n: Option<Naming>) {
        self.display_on = n.is_some();
        self.display = n.filter(|n| !n.is_empty()).map(Rc::new);
    }

    /// Runs `print` with the display names in force.
    fn with_display<T>(&mut self, print: impl FnOnce(&mut Store) -> T) -> T {
        self.naming = self.display.clone();
        self.displaying = self.display_on;
        let out = print(self);
        self.displaying = false;
        self.naming = None;
        out
    }

    /// The printing tree of `f` in the file's terms (see the module documentation).
    pub fn display_pretty(&mut self, f: Form) -> Pretty {
        self.with_display(|s| lead_positive(cancel_names(tidy_names(s.pretty(f)))))
    }

    /// Plain text in the file's terms; reads back (with the file's names) to `f`.
    pub fn to_display_text(&mut self, f: Form) -> String {
        to_text(&self.display_pretty(f))
    }

    /// LaTeX in the file's terms.
    pub fn to_display_latex(&mut self, f: Form) -> String {
        to_latex(&self.display_pretty(f))
    }

    /// [`Store::to_display_text`] cut as [`Store::to_text_summary`] cuts.
    /// Sums of more than 48 terms (`print/trig.rs`, `SUMMARY_TERMS`) print their sines and cosines as they
    /// are, not regrouped into products (the rewriting would cost more than the cut text is
    /// worth).
    pub fn to_display_summary(&mut self, f: Form, max_chars: usize) -> String {
        let saved = std::mem::replace(&mut self.trig_terms, trig::SUMMARY_TERMS);
        let t = self.to_display_text(f);
        self.trig_terms = saved;
        summary(t, max_chars, || self.num_terms(f))
    }

    /// A deterministic structural key of a monomial (used to choose a history-independent
    /// leading term).
    pub(super) fn mono_key(&mut self, m: MonoId) -> String {
        let mono = self.monos[m.0 as usize].clone();
        let mut s = String::new();
        for (k, e) in mono.pows {
            let _ = write!(s, "{}^{e};", self.kernel_key(k));
        }
        if let Some(ex) = mono.exp {
            let _ = write!(s, "exp[{}]", self.form_key(ex));
        }
        s
    }

    fn kernel_key(&mut self, k: KernelId) -> String {
        match self.kernel(k).clone() {
            Kernel::Sym(n) => format!("s:{n}"),
            Kernel::Pi => "pi".into(),
            Kernel::Root { radicand, q } => format!("root{q}[{}]", self.form_key(radicand)),
            Kernel::Log(a) => format!("log[{}]", self.form_key(a)),
            Kernel::Atan(a) => format!("atan[{}]", self.form_key(a)),
            Kernel::Func { name, order, arg } => {
                format!("f:{name}:{order}[{}]", self.form_key(arg))
            }
        }
    }

    /// A deterministic structural key of a form.
    pub(super) fn form_key(&mut self, f: Form) -> String {
        let r = self.rats[f.0 as usize].clone();
        let mut terms: Vec<String> = r
            .num
            .iter()
            .map(|(m, c)| format!("{c}*{}", self.mono_key(*m)))
            .collect();
        terms.sort();
        let mut s = terms.join("+");
        let mut dens: Vec<String> = r
            .den
            .iter()
            .map(|(fid, e)| {
                let p = self.factors[fid.0 as usize].clone();
                let pf = self.intern_rat(Rat {
                    num: p,
                    den: Vec::new(),
                });
                format!("({})^{e}", self.form_key(pf))
            })
            .collect();
        dens.sort();
        if !dens.is_empty() {
            s.push_str(" / ");
            s.push_str(&dens.join("*"));
        }
        s
    }

    /// The real-form printing tree of `f`.
    pub fn pretty(&mut self, f: Form) -> Pretty {
        if let Some(n) = &self.naming {
            if let Some(name) = n.forms.get(&f) {
                return Pretty::Name(name.clone());
            }
            if let Some(name) = n.negated.get(&f) {
                return Pretty::Prod(Coeff::int(-1), vec![Pretty::Name(name.clone())], Vec::new());
            }
        }
        let r = self.rats[f.0 as usize].clone();
        if r.den.is_empty() {
            return self.pretty_collected(&r.num, &Coeff::one());
        }
        // Normalise each denominator factor for display so that its first printed term has
        // coefficient one, moving the unit into the numerator.
        let mut scale = Coeff::one();
        let mut den_parts = Vec::new();
        for (fid, e) in &r.den {
            let p = self.factors[fid.0 as usize].clone();
            if let Some(n) = self.naming.clone() {
                let pf = self.intern_rat(Rat {
                    num: p.clone(),
                    den: Vec::new(),
                });
                if let Some((name, q)) = n.powers.get(&pf) {
                    den_parts.push(Pretty::Pow(Box::new(Pretty::Name(name.clone())), q * e));
                    continue;
                }
            }
            let printed: Vec<Coeff> = match self.pretty_poly(&p, &Coeff::one()) {
                Pretty::Sum(ts) => ts.iter().map(leading_num).collect(),
                t => vec![leading_num(&t)],
            };
            let first = printed.first().cloned().unwrap_or_else(Coeff::one);
            let u = if first.is_zero() { Coeff::one() } else { first };
            // Printed coefficients all rational: the factor with coprime integer
            // coefficients and its first printed term positive (`2*M - r`, not
            // `M - r/2`); otherwise the first printed term's coefficient is made one.
            let uinv = match (primitive_scale(&printed), u.as_rational()) {
                (Some(m), Some(q)) if q.is_negative() => m.neg(),
                (Some(m), Some(_)) => m,
                _ => u.inv().unwrap_or_else(Coeff::one),
            };
            for _ in 0..*e {
                scale = scale.mul(&uinv);
            }
            let fp = self.pretty_poly(&p, &uinv);
            den_parts.push(if *e == 1 {
                fp
            } else {
                Pretty::Pow(Box::new(fp), *e)
            });
        }
        den_parts.sort_by_key(to_text);
        let num = self.pretty_collected(&r.num, &scale);
        let den = if den_parts.len() == 1 {
            den_parts.pop().unwrap()
        } else {
            Pretty::Prod(Coeff::one(), den_parts, Vec::new())
        };
        Pretty::Quot(Box::new(num), Box::new(den))
    }

    /// The forms of the arguments of the calls in the printed text of `f` (`sin`, `cos`,
    /// `exp`, `log`, `sqrt`, arbitrary functions), in the order in which the calls begin in
    /// the text (so, like the printed order, independent of the store's history). Calls
    /// inside an argument follow the call itself. Exact coefficients (`sqrt(2)`) are not
    /// calls here.
    pub fn printed_arguments(&mut self, f: Form) -> Vec<Form> {
        fn walk(p: &Pretty, out: &mut Vec<Form>) {
            match p {
                Pretty::Num(_) | Pretty::Name(_) => {}
                Pretty::Call(_, a, f) | Pretty::Root(a, 2, f) => {
                    out.push(*f);
                    walk(a, out);
                }
                Pretty::Root(a, _, _) | Pretty::Pow(a, _) => walk(a, out),
                Pretty::Prod(_, n, d) => n.iter().chain(d).for_each(|x| walk(x, out)),
                Pretty::Sum(ts) => ts.iter().for_each(|x| walk(x, out)),
                Pretty::Quot(a, b) => {
                    walk(a, out);
                    walk(b, out);
                }
            }
        }
        let mut out = Vec::new();
        walk(&self.pretty(f), &mut out);
        out
    }

    /// Plain text in the input syntax.
    pub fn to_text(&mut self, f: Form) -> String {
        to_text(&self.pretty(f))
    }

    /// LaTeX.
    pub fn to_latex(&mut self, f: Form) -> String {
        to_latex(&self.pretty(f))
    }

    /// Plain text for a summary: [`Store::to_text`], cut after `max_chars` characters and
    /// then saying how many terms the whole has (`... (34 terms)`). For text reports only:
    /// a JSON report carries [`Store::to_text`] whole.
    pub fn to_text_summary(&mut self, f: Form, max_chars: usize) -> String {
        let t = self.to_text(f);
        summary(t, max_chars, || self.num_terms(f))
    }

    /// Like `pretty_poly`, but with the common kernel powers and the rational content of the
    /// terms written once in front: `m*sqrt(r2)*(y^2 - 2*x^2)` rather than a sum of products.
    /// Display only: the form itself is unchanged.
    fn pretty_collected(&mut self, p: &super::Poly, scale: &Coeff) -> Pretty {
        if p.len() < 2 {
            return self.pretty_poly(p, scale);
        }
        if let Some(named) = self.pretty_named_powers(p, scale) {
            return named;
        }
        let monos: Vec<super::Mono> = p
            .iter()
            .map(|(m, _)| self.monos[m.0 as usize].clone())
            .collect();
        let kernels: std::collections::BTreeSet<KernelId> = monos
            .iter()
            .flat_map(|m| m.pows.iter().map(|q| q.0))
            .collect();
        let mut content: Vec<(KernelId, i32)> = Vec::new();
        for k in kernels {
            let min = monos
                .iter()
                .map(|m| m.pows.iter().find(|q| q.0 == k).map(|q| q.1).unwrap_or(0))
                .min()
                .unwrap_or(0);
            let max = monos
                .iter()
                .map(|m| m.pows.iter().find(|q| q.0 == k).map(|q| q.1).unwrap_or(0))
                .max()
                .unwrap_or(0);
            // Take out a power shared by all terms (positive), or a common denominator power.
            let take = if min > 0 {
                min
            } else if max < 0 {
                max
            } else {
                0
            };
            if take != 0 {
                content.push((k, take));
            }
        }
        let scaled: Vec<Coeff> = p.iter().map(|(_, c)| c.mul(scale)).collect();
        // A pure fraction (x/2 + 3/4) reads better left alone unless kernels come out too.
        let g =
            rational_content(&scaled).filter(|g| !content.is_empty() || !g.numer().is_one_int());
        if content.is_empty() && g.is_none() {
            return self.pretty_grouped(p, scale);
        }
        let g = g.unwrap_or_else(|| super::Q::from_integer(1.into()));
        let ginv = Coeff::rational(g.recip());
        let mut cofactor: super::Poly = Vec::with_capacity(p.len());
        for (m, c) in monos.iter().zip(&scaled) {
            let mut pows = m.pows.clone();
            for &(k, e) in &content {
                if let Some(x) = pows.iter_mut().find(|q| q.0 == k) {
                    x.1 -= e;
                }
            }
            pows.retain(|q| q.1 != 0);
            let id = self.intern_mono(super::Mono { pows, exp: m.exp });
            cofactor.push((id, c.mul(&ginv)));
        }
        cofactor.sort_by_key(|t| t.0);
        let inner = self.pretty_grouped(&cofactor, &Coeff::one());
        if !matches!(inner, Pretty::Sum(_)) {
            return self.pretty_poly(p, scale);
        }
        let (mut nums, mut dens) = self.kernel_factors(&content);
        nums.sort_by_key(factor_order);
        dens.sort_by_key(factor_order);
        nums.push(inner);
        Pretty::Prod(Coeff::rational(g), nums, dens)
    }

    /// In a display printer, `p` written as a power of a named root times the rest when the
    /// root's radicand divides `p` exactly (`x^3 + x*y^2 + x*z^2` is `r^2*x` for the file's
    /// `r = sqrt(x^2 + y^2 + z^2)`): `r^2` is the radicand, so this is an identity.
    fn pretty_named_powers(&mut self, p: &super::Poly, scale: &Coeff) -> Option<Pretty> {
        let n = self.naming.clone()?;
        let mut powers: Vec<(&Form, &(String, u32))> = n.powers.iter().collect();
        powers.sort_by(|a, b| a.1.cmp(b.1));
        for (&radicand, (name, q)) in powers {
            let r = self.rats[radicand.0 as usize].clone();
            if !r.den.is_empty() || r.num.len() < 2 {
                continue;
            }
            let mut cur = p.clone();
            let mut count = 0;
            while count < 8 {
                match self.poly_div_exact(&cur, &r.num) {
                    Some(quotient) => {
                        cur = quotient;
                        count += 1;
                    }
                    None => break,
                }
            }
            if count == 0 {
                continue;
            }
            let power = name_to(&Pretty::Name(name.clone()), q * count)?;
            return Some(match self.pretty_collected(&cur, scale) {
                Pretty::Prod(c, mut nums, dens) => {
                    nums.insert(0, power);
                    Pretty::Prod(c, nums, dens)
                }
                Pretty::Num(c) => Pretty::Prod(c, vec![power], Vec::new()),
                other => Pretty::Prod(Coeff::one(), vec![power, other], Vec::new()),
            });
        }
        None
    }

    /// In a display printer, the terms of `p` collected by the arbitrary functions and the
    /// named roots they contain (`Q'''(t - r)*(x^2 - y^2) + r*Q''(t - r)*(...)`), each group
    /// with its own common factors; elsewhere, or when no group has two terms, `pretty_poly`.
    fn pretty_grouped(&mut self, p: &super::Poly, scale: &Coeff) -> Pretty {
        let Some(n) = self.naming.clone() else {
            return self.pretty_poly(p, scale);
        };
        let collects = |s: &Store, k: KernelId| {
            matches!(s.kernel(k), Kernel::Func { .. }) || n.kernels.contains_key(&k)
        };
        let mut groups: Vec<(Vec<(KernelId, i32)>, super::Poly)> = Vec::new();
        for (m, c) in p {
            let mono = self.monos[m.0 as usize].clone();
            let (key, rest): (Vec<_>, Vec<_>) =
                mono.pows.iter().partition(|&&(k, _)| collects(self, k));
            let id = self.intern_mono(super::Mono {
                pows: rest,
                exp: mono.exp,
            });
            match groups.iter_mut().find(|g| g.0 == key) {
                Some(g) => g.1.push((id, c.clone())),
                None => groups.push((key, vec![(id, c.clone())])),
            }
        }
        if groups.len() < 2 || groups.iter().all(|g| g.1.len() < 2) {
            return self.pretty_poly(p, scale);
        }
        let mut terms = Vec::with_capacity(groups.len());
        for (key, mut rest) in groups {
            rest.sort_by_key(|t| t.0);
            let (mut nums, mut dens) = self.kernel_factors(&key);
            nums.sort_by_key(factor_order);
            dens.sort_by_key(factor_order);
            let rest = self.pretty_collected(&rest, scale);
            terms.push(match rest {
                Pretty::Prod(c, n, d) => {
                    nums.extend(n);
                    dens.extend(d);
                    Pretty::Prod(c, nums, dens)
                }
                Pretty::Num(c) => Pretty::Prod(c, nums, dens),
                other => {
                    nums.push(other);
                    Pretty::Prod(Coeff::one(), nums, dens)
                }
            });
        }
        // Higher derivatives and higher powers first, then by text.
        terms.sort_by_cached_key(|t| {
            let Pretty::Prod(_, n, d) = t else {
                return (0, 0, String::new());
            };
            let order = n
                .iter()
                .map(|f| to_text(f).matches('\'').count())
                .sum::<usize>();
            let deg =
                n.iter().map(degree).sum::<u32>() as i64 - d.iter().map(degree).sum::<u32>() as i64;
            (
                usize::MAX - order,
                -deg,
                n.iter().map(to_text).collect::<String>(),
            )
        });
        Pretty::Sum(terms)
    }

    fn pretty_kernel(&mut self, k: KernelId) -> Pretty {
        if let Some(name) = self.naming.as_ref().and_then(|n| n.kernels.get(&k)) {
            return Pretty::Name(name.clone());
        }
        // In display form, the root `abs` built reads as `abs(u)` again.
        if self.displaying
            && let Some(&u) = self.abs_args.get(&k)
        {
            return Pretty::Call("abs".into(), Box::new(self.pretty(u)), u);
        }
        match self.kernel(k).clone() {
            Kernel::Sym(n) => Pretty::Name(n.to_string()),
            Kernel::Pi => Pretty::Name("pi".into()),
            Kernel::Root { radicand, q } => {
                Pretty::Root(Box::new(self.pretty(radicand)), q, radicand)
            }
            Kernel::Log(a) => Pretty::Call("log".into(), Box::new(self.pretty(a)), a),
            Kernel::Atan(a) => Pretty::Call("atan".into(), Box::new(self.pretty(a)), a),
            Kernel::Func { name, order, arg } => Pretty::Call(
                format!("{name}{}", "'".repeat(order as usize)),
                Box::new(self.pretty(arg)),
                arg,
            ),
        }
    }

    /// Splits an exponent into real and imaginary parts, each a form; `None` if the exponent
    /// has a denominator.
    pub(super) fn split_re_im(&mut self, e: Form) -> Option<(Form, Form)> {
        if let Some(&parts) = self.re_im_cache.get(&e) {
            return Some(parts);
        }
        let parts = self.split_re_im_uncached(e)?;
        self.re_im_cache.insert(e, parts);
        Some(parts)
    }

    fn split_re_im_uncached(&mut self, e: Form) -> Option<(Form, Form)> {
        // E = P + iQ with P = (E + E*)/2 and Q = (E - E*)/(2i), where E* conjugates every
        // coefficient and exponent but keeps kernels: an algebraic identity for any E, and
        // the true real and imaginary parts when the kernels are real.
        let c = self.conj_formal(e).ok()?;
        let sum = self.add(e, c).ok()?;
        let p = self
            .scale(sum, &Coeff::rational(super::Q::new(1.into(), 2.into())))
            .ok()?;
        let diff = self.sub(e, c).ok()?;
        let q = self
            .scale(
                diff,
                &Coeff::i().mul(&Coeff::rational(super::Q::new((-1).into(), 2.into()))),
            )
            .ok()?;
        Some((p, q))
    }

    /// The powers of kernels `pows` as numerator and denominator factors.
    fn kernel_factors(&mut self, pows: &[(KernelId, i32)]) -> (Vec<Pretty>, Vec<Pretty>) {
        let mut nums = Vec::new();
        let mut dens = Vec::new();
        for &(k, e) in pows {
            let kp = self.pretty_kernel(k);
            let f = if e.unsigned_abs() == 1 {
                kp
            } else {
                Pretty::Pow(Box::new(kp), e.unsigned_abs())
            };
            if e > 0 { nums.push(f) } else { dens.push(f) }
        }
        (nums, dens)
    }

    /// The terms of `p` times `scale`; in a display printer with products of sines and
    /// cosines where that reads shorter ([`trig`]).
    fn pretty_poly(&mut self, p: &super::Poly, scale: &Coeff) -> Pretty {
        let plain = self.pretty_poly_plain(p, scale);
        if self.displaying
            && let Some(products) = self.pretty_trig_products(p, scale, &plain)
        {
            return products;
        }
        plain
    }

    /// How a term's exponential `exp(e)` prints: `(raw, re, phase, sign)` with `raw` the
    /// exponent when it does not split into real and imaginary parts, `re` the real part
    /// (`None` if 0), and `phase` the imaginary part with the sign (`sign`, +1 or -1) that
    /// makes its printed first coefficient positive (a phase the file named prints as
    /// named).
    fn print_split(&mut self, e: Form) -> (Option<Form>, Option<Form>, Option<Form>, i32) {
        let Some((re, im)) = self.split_re_im(e) else {
            return (Some(e), None, None, 1);
        };
        let re = (re != self.zero).then_some(re);
        if im == self.zero {
            return (None, re, None, 1);
        }
        // Decide on the uncollected sum, whose first term carries the sign.
        let named = self
            .naming
            .as_ref()
            .map(|n| (n.forms.contains_key(&im), n.negated.contains_key(&im)));
        let im_num = self.rats[im.0 as usize].num.clone();
        let neg = match named {
            Some((true, _)) => false,
            Some((false, true)) => true,
            _ => match self.pretty_poly(&im_num, &Coeff::one()) {
                Pretty::Sum(ts) => ts.first().map(|t| leading_num(t).looks_negative()),
                t => Some(leading_num(&t).looks_negative()),
            }
            .unwrap_or(false),
        };
        if neg {
            let nim = self.neg(im).unwrap_or(im);
            (None, re, Some(nim), -1)
        } else {
            (None, re, Some(im), 1)
        }
    }

    fn pretty_poly_plain(&mut self, p: &super::Poly, scale: &Coeff) -> Pretty {
        // Group terms by (kernel powers, real exponent, |imaginary exponent|).
        type Key = (
            Vec<(KernelId, i32)>,
            Option<Form>,
            Option<Form>,
            Option<Form>,
        );
        let mut groups: FxHashMap<Key, (Coeff, Coeff)> = FxHashMap::default();
        let mut order: Vec<Key> = Vec::new();
        // How each exponential prints (raw, real part, phase, sign of the phase): many terms
        // share one exponential.
        type Split = (Option<Form>, Option<Form>, Option<Form>, i32);
        let mut splits: FxHashMap<Form, Split> = FxHashMap::default();
        for (m, c) in p {
            let c = c.mul(scale);
            let mono = &self.monos[m.0 as usize];
            let (pows, exp) = (mono.pows.clone(), mono.exp);
            let (raw, re, im, sign) = match exp {
                None => (None, None, None, 1),
                Some(e) if splits.contains_key(&e) => splits[&e],
                Some(e) => {
                    let split = self.print_split(e);
                    splits.insert(e, split);
                    split
                }
            };
            let key = (pows, raw, re, im);
            let entry = groups.entry(key.clone()).or_insert_with(|| {
                order.push(key);
                (Coeff::zero(), Coeff::zero())
            });
            if sign > 0 {
                entry.0 = entry.0.add(&c);
            } else {
                entry.1 = entry.1.add(&c);
            }
        }
        let mut terms = Vec::new();
        for key in order {
            let (a, b) = groups[&key].clone();
            let (pows, raw, re, im) = key;
            let (mut nums, dens) = self.kernel_factors(&pows);
            if let Some(raw) = raw {
                nums.push(Pretty::Call("exp".into(), Box::new(self.pretty(raw)), raw));
            }
            if let Some(re) = re {
                nums.push(Pretty::Call("exp".into(), Box::new(self.pretty(re)), re));
            }
            match im {
                None => {
                    if !a.is_zero() {
                        terms.push(Pretty::Prod(a, nums, dens));
                    }
                }
                Some(q) => {
                    let qp = self.pretty(q);
                    let cc = a.add(&b);
                    let sc = a.sub(&b).mul(&Coeff::i());
                    if !cc.is_zero() {
                        let mut n = nums.clone();
                        n.push(Pretty::Call("cos".into(), Box::new(qp.clone()), q));
                        terms.push(Pretty::Prod(cc, n, dens.clone()));
                    }
                    if !sc.is_zero() {
                        let mut n = nums;
                        n.push(Pretty::Call("sin".into(), Box::new(qp), q));
                        terms.push(Pretty::Prod(sc, n, dens));
                    }
                }
            }
        }
        finish_terms(terms)
    }
}

/// Sorts the factors of each term and the terms (stable, history-independent order) and
/// makes them one printing tree.
fn finish_terms(mut terms: Vec<Pretty>) -> Pretty {
    for t in &mut terms {
        if let Pretty::Prod(_, n, d) = t {
            n.sort_by_key(factor_order);
            d.sort_by_key(factor_order);
        }
    }
    // Order: higher degree first, then terms made of plain names before composite ones
    // (so `t - sqrt(...)`), then by text, so output is stable.
    terms.sort_by_cached_key(|t| match t {
        Pretty::Prod(_, n, d) => {
            let deg: u32 = n.iter().map(degree).sum::<u32>();
            let composite = n.iter().chain(d.iter()).filter(|f| !is_plain(f)).count();
            let text: String = n
                .iter()
                .chain(d.iter())
                .map(to_text)
                .collect::<Vec<_>>()
                .join("*");
            (u32::MAX - deg, text.is_empty(), composite, text)
        }
        _ => (0, false, 0, String::new()),
    });
    match terms.len() {
        0 => Pretty::Num(Coeff::zero()),
        1 => terms.pop().unwrap_or(Pretty::Num(Coeff::zero())),
        _ => Pretty::Sum(terms),
    }
}

/// `t` cut after `max_chars` characters, saying how many terms the whole has.
fn summary(t: String, max_chars: usize, terms: impl FnOnce() -> usize) -> String {
    if t.chars().count() > max_chars {
        let cut: String = t.chars().take(max_chars).collect();
        format!("{cut}... ({} terms)", terms())
    } else {
        t
    }
}

/// Every sum of `p` (at any depth) with a positive term first where it has one, the rest in
/// their order: `t - r`, not `-r + t`. Display only.
fn lead_positive(p: Pretty) -> Pretty {
    let boxed = |b: Box<Pretty>| Box::new(lead_positive(*b));
    match p {
        Pretty::Num(_) | Pretty::Name(_) => p,
        Pretty::Call(n, a, f) => Pretty::Call(n, boxed(a), f),
        Pretty::Root(a, q, f) => Pretty::Root(boxed(a), q, f),
        Pretty::Pow(a, e) => Pretty::Pow(boxed(a), e),
        Pretty::Prod(c, n, d) => Pretty::Prod(
            c,
            n.into_iter().map(lead_positive).collect(),
            d.into_iter().map(lead_positive).collect(),
        ),
        Pretty::Quot(a, b) => Pretty::Quot(boxed(a), boxed(b)),
        Pretty::Sum(ts) => {
            let mut ts: Vec<Pretty> = ts.into_iter().map(lead_positive).collect();
            if let Some(i) = ts.iter().position(|t| !leading_num(t).looks_negative())
                && i > 0
            {
                let t = ts.remove(i);
                ts.insert(0, t);
            }
            Pretty::Sum(ts)
        }
    }
}

/// The power of a bare name or call in a factor: `r` is `(r, 1)`, `r^3` is `(r, 3)`,
/// `(sin(th)^2)^2` is `(sin(th), 4)`.
fn name_power(p: &Pretty) -> Option<(Pretty, u32)> {
    match p {
        Pretty::Name(_) | Pretty::Call(..) => Some((p.clone(), 1)),
        Pretty::Pow(b, e) => name_power(b).map(|(x, a)| (x, a * e)),
        Pretty::Prod(c, n, d) if c.is_one() && d.is_empty() && n.len() == 1 => name_power(&n[0]),
        _ => None,
    }
}

/// A name or call to a power (`None` for the power 0).
fn name_to(base: &Pretty, e: u32) -> Option<Pretty> {
    match e {
        0 => None,
        1 => Some(base.clone()),
        e => Some(Pretty::Pow(Box::new(base.clone()), e)),
    }
}

/// Cancels powers of the same name between the numerator factors of a product and the
/// denominator factors: `r*(...)/r^3` becomes `(...)/r^2`. Each name stands for a form that
/// is finite and nonzero wherever the printed expression is defined (it divides by it), so
/// this is an identity there.
fn cancel_pair(nums: &mut Vec<Pretty>, dens: &mut Vec<Pretty>) {
    let mut i = 0;
    while i < nums.len() {
        let Some((name, a)) = name_power(&nums[i]) else {
            i += 1;
            continue;
        };
        let Some(j) = dens
            .iter()
            .position(|d| name_power(d).is_some_and(|(m, _)| m == name))
        else {
            i += 1;
            continue;
        };
        let b = name_power(&dens[j]).map_or(0, |x| x.1);
        let (top, bottom) = (a.saturating_sub(b), b.saturating_sub(a));
        match name_to(&name, bottom) {
            Some(d) => dens[j] = d,
            None => {
                dens.remove(j);
            }
        }
        match name_to(&name, top) {
            Some(t) => {
                nums[i] = t;
                i += 1;
            }
            None => {
                nums.remove(i);
            }
        }
    }
}

/// Powers of a name written once per product, everywhere in a display tree: repeated
/// factors merge (`r*Q''*r^2` is `r^3*Q''`), a power of a name that every term of a sum
/// factor has moves out of the sum, and powers cancel between a product's numerator and
/// denominator ([`cancel_pair`]). Each is an identity wherever the printed expression is
/// defined.
fn tidy_names(p: Pretty) -> Pretty {
    match p {
        Pretty::Prod(c, nums, dens) => {
            let mut n = Vec::with_capacity(nums.len());
            for f in nums {
                match tidy_names(f) {
                    Pretty::Sum(ts) => {
                        let (common, ts) = common_names(ts);
                        n.extend(common);
                        n.push(Pretty::Sum(ts));
                    }
                    other => n.push(other),
                }
            }
            let mut d: Vec<Pretty> = dens.into_iter().map(tidy_names).collect();
            merge_names(&mut n);
            merge_names(&mut d);
            cancel_pair(&mut n, &mut d);
            n.sort_by_key(display_factor_order);
            d.sort_by_key(display_factor_order);
            Pretty::Prod(c, n, d)
        }
        Pretty::Sum(ts) => Pretty::Sum(ts.into_iter().map(tidy_names).collect()),
        Pretty::Quot(a, b) => {
            let a = match tidy_names(*a) {
                Pretty::Sum(ts) => {
                    let (common, ts) = common_names(ts);
                    if common.is_empty() {
                        Pretty::Sum(ts)
                    } else {
                        let mut n = common;
                        n.push(Pretty::Sum(ts));
                        Pretty::Prod(Coeff::one(), n, Vec::new())
                    }
                }
                other => other,
            };
            Pretty::Quot(Box::new(a), Box::new(tidy_names(*b)))
        }
        Pretty::Pow(b, e) => Pretty::Pow(Box::new(tidy_names(*b)), e),
        other => other,
    }
}

/// Repeated powers of one name among product factors merged into one.
fn merge_names(fs: &mut Vec<Pretty>) {
    let mut i = 0;
    while i < fs.len() {
        let Some((name, a)) = name_power(&fs[i]) else {
            i += 1;
            continue;
        };
        let mut total = a;
        let mut j = i + 1;
        while j < fs.len() {
            match name_power(&fs[j]) {
                Some((m, b)) if m == name => {
                    total += b;
                    fs.remove(j);
                }
                _ => j += 1,
            }
        }
        if let Some(p) = name_to(&name, total) {
            fs[i] = p;
        }
        i += 1;
    }
}

/// The powers of names that every term of a sum has in its numerator (each term a product),
/// and the terms without them.
fn common_names(ts: Vec<Pretty>) -> (Vec<Pretty>, Vec<Pretty>) {
    let powers = |t: &Pretty| -> Vec<(Pretty, u32)> {
        match t {
            Pretty::Prod(_, n, _) => {
                let mut v: Vec<(Pretty, u32)> = Vec::new();
                for f in n {
                    if let Some((m, e)) = name_power(f) {
                        match v.iter_mut().find(|x| x.0 == m) {
                            Some(x) => x.1 += e,
                            None => v.push((m, e)),
                        }
                    }
                }
                v
            }
            _ => Vec::new(),
        }
    };
    let Some(first) = ts.first() else {
        return (Vec::new(), ts);
    };
    let mut common = powers(first);
    for t in &ts[1..] {
        let p = powers(t);
        common.retain_mut(|(m, e)| match p.iter().find(|x| x.0 == *m) {
            Some(x) => {
                *e = (*e).min(x.1);
                true
            }
            None => false,
        });
    }
    if common.is_empty() || ts.len() < 2 {
        return (Vec::new(), ts);
    }
    let ts = ts
        .into_iter()
        .map(|t| match t {
            Pretty::Prod(c, mut n, d) => {
                merge_names(&mut n);
                for (m, e) in &common {
                    if let Some(i) = n
                        .iter()
                        .position(|f| name_power(f).is_some_and(|(x, _)| x == *m))
                    {
                        let left = name_power(&n[i]).map_or(0, |x| x.1) - e;
                        match name_to(m, left) {
                            Some(p) => n[i] = p,
                            None => {
                                n.remove(i);
                            }
                        }
                    }
                }
                n.sort_by_key(display_factor_order);
                Pretty::Prod(c, n, d)
            }
            other => other,
        })
        .collect();
    let front = common.iter().filter_map(|(m, e)| name_to(m, *e)).collect();
    (front, ts)
}

/// [`cancel_pair`] applied where a display tree divides: a product's own factors, and a
/// quotient whose numerator is a product (or a bare name power) and whose denominator is a
/// product or one factor.
fn cancel_names(p: Pretty) -> Pretty {
    match p {
        Pretty::Prod(c, mut n, mut d) => {
            cancel_pair(&mut n, &mut d);
            Pretty::Prod(c, n, d)
        }
        Pretty::Quot(num, den) => {
            let (c, mut n, inner) = match *num {
                Pretty::Prod(c, n, d) => (c, n, d),
                other if name_power(&other).is_some() => (Coeff::one(), vec![other], Vec::new()),
                other => return Pretty::Quot(Box::new(other), den),
            };
            let mut d = match *den {
                Pretty::Prod(k, d, dd) if k.is_one() && dd.is_empty() => d,
                other => vec![other],
            };
            // One denominator: `x/(6561*a^2*(cos(E) - 5/3)^8)`, not `x/(6561*a^2)/(...)^8`.
            d.extend(inner);
            d.sort_by_key(factor_order);
            cancel_pair(&mut n, &mut d);
            if d.is_empty() {
                return Pretty::Prod(c, n, Vec::new());
            }
            // One product: the numerator's factors over the remaining denominator factors.
            Pretty::Prod(c, n, d)
        }
        other => other,
    }
}

/// The positive rational gcd of rational coefficients (gcd of the numerators over lcm of
/// the denominators); `None` if one is not rational or all are zero.
fn coeff_content(cs: &[Coeff]) -> Option<super::Q> {
    let qs: Vec<super::Q> = cs.iter().map(Coeff::as_rational).collect::<Option<_>>()?;
    trig::content(qs.iter())
}

/// [`coeff_content`] when it is not one.
fn rational_content(cs: &[Coeff]) -> Option<super::Q> {
    coeff_content(cs).filter(|g| *g != super::Q::from_integer(1.into()))
}

/// Factors of a product print plain names and their powers first (`a*w^2*cos(...)`).
fn factor_order(p: &Pretty) -> (bool, String) {
    (!is_plain(p), to_text(p))
}

/// In a display printer: plain names and their powers, then calls and other factors, then
/// sums (`x*y*Q''(t - r)*(x^2 - y^2)`).
fn display_factor_order(p: &Pretty) -> (u8, String) {
    let rank = match p {
        _ if is_plain(p) => 0,
        Pretty::Sum(_) => 2,
        Pretty::Pow(b, _) if matches!(**b, Pretty::Sum(_)) => 2,
        _ => 1,
    };
    (rank, to_text(p))
}

fn is_plain(p: &Pretty) -> bool {
    match p {
        Pretty::Name(_) => true,
        Pretty::Pow(b, _) => matches!(**b, Pretty::Name(_)),
        _ => false,
    }
}

fn degree(p: &Pretty) -> u32 {
    match p {
        Pretty::Pow(_, n) => *n,
        _ => 1,
    }
}

/// The positive rational that makes rational coefficients coprime integers (the reciprocal
/// of [`coeff_content`]); `None` if one is not rational or all are zero.
fn primitive_scale(coeffs: &[Coeff]) -> Option<Coeff> {
    coeff_content(coeffs).map(|g| Coeff::rational(g.recip()))
}

fn leading_num(t: &Pretty) -> Coeff {
    match t {
        Pretty::Prod(c, _, _) => c.clone(),
        Pretty::Num(c) => c.clone(),
        _ => Coeff::one(),
    }
}

/// Writes the terms of a sum with ` + ` and ` - ` between them, in either renderer.
fn join_terms(ts: &[Pretty], render: fn(&Pretty, &mut String), s: &mut String) {
    for (i, t) in ts.iter().enumerate() {
        let mut piece = String::new();
        render(t, &mut piece);
        if i > 0 {
            if let Some(rest) = piece.strip_prefix('-') {
                s.push_str(" - ");
                s.push_str(rest);
                continue;
            }
            s.push_str(" + ");
        }
        s.push_str(&piece);
    }
}

/// Plain text in the input syntax (parses back to an equal canonical form).
pub fn to_text(p: &Pretty) -> String {
    let mut s = String::new();
    text(p, &mut s);
    s
}

fn text_atom(p: &Pretty, s: &mut String) {
    match p {
        Pretty::Name(_) | Pretty::Call(..) | Pretty::Root(_, 2, _) => text(p, s),
        Pretty::Num(c)
            if c.as_rational().is_some_and(|q| {
                q.is_integer() && q >= num_rational::BigRational::from_integer(0.into())
            }) =>
        {
            text(p, s)
        }
        Pretty::Prod(c, n, d) if c.is_one() && n.len() == 1 && d.is_empty() => text_atom(&n[0], s),
        _ => {
            s.push('(');
            text(p, s);
            s.push(')');
        }
    }
}

/// A factor of a product: powers need no parentheses, since `^` binds tighter than `*`.
fn text_factor(p: &Pretty, s: &mut String) {
    match p {
        Pretty::Pow(..) | Pretty::Root(..) => text(p, s),
        _ => text_atom(p, s),
    }
}

fn text(p: &Pretty, s: &mut String) {
    match p {
        Pretty::Num(c) => {
            let _ = write!(s, "{c}");
        }
        Pretty::Name(n) => s.push_str(n),
        Pretty::Call(f, a, _) => {
            s.push_str(f);
            s.push('(');
            text(a, s);
            s.push(')');
        }
        Pretty::Root(a, 2, _) => {
            s.push_str("sqrt(");
            text(a, s);
            s.push(')');
        }
        Pretty::Root(a, q, _) => {
            text_atom(a, s);
            let _ = write!(s, "^(1/{q})");
        }
        Pretty::Pow(b, n) => {
            text_atom(b, s);
            let _ = write!(s, "^{n}");
        }
        Pretty::Prod(c, n, d) => {
            let neg = c.looks_negative();
            let c = if neg { c.neg() } else { c.clone() };
            if neg {
                s.push('-');
            }
            // Write the rational coefficient's numerator in front and its denominator below.
            let (cn, cd) = match c
                .as_rational()
                .filter(|q| super::coeff::big_power_of_ten(q.denom()).is_none())
            {
                Some(q) => (
                    Some(Coeff::rational(num_rational::BigRational::from_integer(
                        q.numer().clone(),
                    ))),
                    {
                        let d = q.denom().clone();
                        (d != 1.into()).then_some(d)
                    },
                ),
                None => (Some(c.clone()), None),
            };
            let mut first = true;
            if let Some(cn) = cn
                && (!cn.is_one() || n.is_empty())
            {
                let _ = write!(s, "{cn}");
                first = false;
            }
            for f in n {
                if !first {
                    s.push('*');
                }
                text_factor(f, s);
                first = false;
            }
            let mut dens: Vec<String> = Vec::new();
            if let Some(cd) = cd {
                dens.push(cd.to_string());
            }
            for f in d {
                let mut t = String::new();
                text_factor(f, &mut t);
                dens.push(t);
            }
            if !dens.is_empty() {
                s.push('/');
                if dens.len() == 1 {
                    s.push_str(&dens[0]);
                } else {
                    let _ = write!(s, "({})", dens.join("*"));
                }
            }
        }
        Pretty::Sum(ts) => join_terms(ts, text, s),
        Pretty::Quot(a, b) => {
            match **a {
                Pretty::Sum(_) => {
                    s.push('(');
                    text(a, s);
                    s.push(')');
                }
                _ => text(a, s),
            }
            s.push('/');
            text_factor(b, s);
        }
    }
}

/// LaTeX rendering of the same tree.
pub fn to_latex(p: &Pretty) -> String {
    let mut s = String::new();
    latex(p, &mut s);
    s
}

fn latex_coeff(c: &Coeff) -> String {
    let t = c.to_string();
    t.replace("sqrt(2)", "\\sqrt{2}")
        .replace("sqrt(3)", "\\sqrt{3}")
        .replace("sqrt(6)", "\\sqrt{6}")
        .replace('*', " ")
}

/// A name as a physicist typesets it: Greek names as Greek letters (`omega`, `Lambda`), a
/// single letter in italic, a longer name upright (`\mathrm{phase}`), a subscript after `_`
/// or trailing digits (`a_plus` as `a_{\mathrm{plus}}`, `m1` as `m_{1}`).
pub fn latex_name(n: &str) -> String {
    const GREEK: [&str; 35] = [
        "alpha", "beta", "gamma", "delta", "epsilon", "zeta", "eta", "theta", "iota", "kappa",
        "lambda", "mu", "nu", "xi", "pi", "rho", "sigma", "tau", "upsilon", "phi", "chi", "psi",
        "omega", "Gamma", "Delta", "Theta", "Lambda", "Xi", "Pi", "Sigma", "Upsilon", "Phi", "Psi",
        "Omega", "varphi",
    ];
    let part = |t: &str| -> String {
        if GREEK.contains(&t) {
            format!("\\{t}")
        } else if t.chars().count() == 1 || t.chars().all(|c| c.is_ascii_digit()) {
            t.to_string()
        } else {
            format!("\\mathrm{{{t}}}")
        }
    };
    let (base, sub) = match n.split_once('_') {
        Some((b, s)) if !b.is_empty() && !s.is_empty() => (b, Some(s.to_string())),
        _ => {
            // Trailing digits are an index: m1 -> m_{1}.
            let cut = n.trim_end_matches(|c: char| c.is_ascii_digit());
            if cut.is_empty() || cut.len() == n.len() {
                (n, None)
            } else {
                (cut, Some(n[cut.len()..].to_string()))
            }
        }
    };
    match sub {
        Some(s) => format!("{}_{{{}}}", part(base), part(&s)),
        None => part(base),
    }
}

/// Appends a factor of a product after `out`'s earlier factors: separated by a space (LaTeX
/// sets a product of symbols without a sign), by a thin space `\,` only where two numbers
/// would otherwise run together.
fn push_factor(out: &mut String, f: &Pretty) {
    let mut t = String::new();
    latex_factor(f, &mut t);
    if !out.is_empty() {
        let digit_next = t.starts_with(|c: char| c.is_ascii_digit());
        let digit_before = out.ends_with(|c: char| c.is_ascii_digit());
        out.push_str(if digit_next && digit_before {
            " \\, "
        } else {
            " "
        });
    }
    out.push_str(&t);
}

fn latex_factor(p: &Pretty, s: &mut String) {
    match p {
        Pretty::Pow(..) => latex(p, s),
        _ => latex_atom(p, s),
    }
}

fn latex_atom(p: &Pretty, s: &mut String) {
    match p {
        Pretty::Name(_) | Pretty::Call(..) | Pretty::Root(..) => latex(p, s),
        _ => {
            s.push_str("\\left(");
            latex(p, s);
            s.push_str("\\right)");
        }
    }
}

fn latex(p: &Pretty, s: &mut String) {
    match p {
        Pretty::Num(c) => s.push_str(&latex_coeff(c)),
        Pretty::Name(n) => s.push_str(&latex_name(n)),
        Pretty::Call(f, a, _) if f == "abs" => {
            s.push_str("\\left|");
            latex(a, s);
            s.push_str("\\right|");
        }
        Pretty::Call(f, a, _) => {
            let primes = f.chars().filter(|c| *c == '\'').count();
            let base: String = f.chars().filter(|c| *c != '\'').collect();
            match base.as_str() {
                "sin" | "cos" | "exp" | "log" => {
                    let _ = write!(s, "\\{base}");
                }
                "atan" => s.push_str("\\arctan"),
                _ => s.push_str(&latex_name(&base)),
            }
            s.push_str(&"'".repeat(primes));
            s.push_str("\\left(");
            latex(a, s);
            s.push_str("\\right)");
        }
        Pretty::Root(a, q, _) => {
            if *q == 2 {
                s.push_str("\\sqrt{");
            } else {
                let _ = write!(s, "\\sqrt[{q}]{{");
            }
            latex(a, s);
            s.push('}');
        }
        // sin^2(x), as typeset, rather than sin(x)^2.
        Pretty::Pow(b, n) if matches!(b.as_ref(), Pretty::Call(f, ..) if matches!(f.as_str(), "sin" | "cos")) => {
            if let Pretty::Call(f, a, _) = b.as_ref() {
                let _ = write!(s, "\\{f}^{{{n}}}\\left(");
                latex(a, s);
                s.push_str("\\right)");
            }
        }
        Pretty::Pow(b, n) => {
            latex_atom(b, s);
            let _ = write!(s, "^{{{n}}}");
        }
        Pretty::Prod(c, n, d) => {
            let neg = c.looks_negative();
            let c = if neg { c.neg() } else { c.clone() };
            if neg {
                s.push('-');
            }
            let mut top = String::new();
            let mut bottom = String::new();
            match c.as_rational() {
                Some(q) => {
                    if !q.numer().is_one_int() || n.is_empty() {
                        top.push_str(&q.numer().to_string());
                    }
                    if !q.denom().is_one_int() {
                        bottom.push_str(&q.denom().to_string());
                    }
                }
                None => {
                    if !c.is_one() {
                        top.push_str(&latex_coeff(&c));
                    }
                }
            }
            for f in n {
                push_factor(&mut top, f);
            }
            for f in d {
                push_factor(&mut bottom, f);
            }
            if top.is_empty() {
                top.push('1');
            }
            if bottom.is_empty() {
                s.push_str(&top);
            } else {
                let _ = write!(s, "\\frac{{{top}}}{{{bottom}}}");
            }
        }
        Pretty::Sum(ts) => join_terms(ts, latex, s),
        Pretty::Quot(a, b) => {
            s.push_str("\\frac{");
            latex(a, s);
            s.push_str("}{");
            latex(b, s);
            s.push('}');
        }
    }
}

trait IsOneInt {
    fn is_one_int(&self) -> bool;
}
impl IsOneInt for num_bigint::BigInt {
    fn is_one_int(&self) -> bool {
        *self == num_bigint::BigInt::from(1)
    }
}
