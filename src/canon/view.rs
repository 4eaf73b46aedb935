//! A read-only structural view of canonical forms.
//!
//! Model. A [`Form`] is `N / D` (see the module doc of [`crate::canon`]); [`Store::view`]
//! shows it as it is stored, without printing it:
//! - [`FormView::numerator`]: a [`PolyView`], the sum of its [`TermView`]s, each an exact
//!   [`Coeff`] (components in Q(sqrt 2, sqrt 3, i) through [`Coeff::components`]) times a
//!   [`MonoView`]: kernels with integer exponents (negative allowed) and at most one
//!   exponential factor `exp(E)`, `E` a form;
//! - [`FormView::denominator`]: the factors of `D`, each a [`PolyView`] (two or more terms)
//!   with its positive exponent;
//! - a kernel is a [`Kernel`](super::Kernel) ([`Store::kernel`]): a symbol, `pi`, a principal root, a
//!   logarithm or an arbitrary function with its derivative order, whose arguments are forms
//!   of the same store, to be viewed in turn.
//!
//! Key design decision: consumers that need the structure of a form (the tape compiler, the
//! plane-wave integrator) read it here instead of printing the form and parsing the text back:
//! nothing is rebuilt, coefficients stay exact, and no printing choice (term order, the
//! regrouping of `exp(i a)` pairs as sin and cos) leaks into what they see. Term order is the
//! store's internal order (by interned id): deterministic for one history of the store, but
//! not a printed order.
//!
//! [`Store::exponent_parts`] is the one derived reading offered here: an exponent split into
//! real and imaginary parts as the printer does, so that a consumer can pair `exp(P + iQ)`
//! with `exp(P - iQ)` as `exp(P) cos Q` and `exp(P) sin Q`.

use super::{Coeff, Form, KernelId, Mono, Rat, Store, Term};

/// A form seen as numerator over factored denominator. Borrowed from its [`Store`].
#[derive(Clone, Copy)]
pub struct FormView<'s> {
    store: &'s Store,
    rat: &'s Rat,
}

/// A polynomial: the numerator of a form, or a denominator factor.
#[derive(Clone, Copy)]
pub struct PolyView<'s> {
    store: &'s Store,
    terms: &'s [Term],
}

/// One term of a polynomial: an exact coefficient times a monomial.
#[derive(Clone, Copy)]
pub struct TermView<'s> {
    coeff: &'s Coeff,
    mono: MonoView<'s>,
}

/// A monomial: kernel powers times at most one exponential.
#[derive(Clone, Copy)]
pub struct MonoView<'s> {
    mono: &'s Mono,
}

impl Store {
    /// The structure of `f`.
    #[must_use]
    pub fn view(&self, f: Form) -> FormView<'_> {
        FormView {
            store: self,
            rat: &self.rats[f.0 as usize],
        }
    }

    /// The form of a lone term `coeff * mono` (a view's term taken out as a form of its own).
    pub fn term_form(&mut self, t: &OwnedTerm) -> Form {
        if t.coeff.is_zero() {
            return self.zero;
        }
        let m = self.intern_mono(Mono {
            pows: t.powers.clone(),
            exp: t.exp,
        });
        self.intern_rat(Rat {
            num: vec![(m, t.coeff.clone())],
            den: Vec::new(),
        })
    }

    /// The exponent `e` as the printer reads it: `e = re + i*im` with both parts formal (every
    /// coefficient and nested exponent conjugated, kernels kept: the true real and imaginary
    /// parts where the kernels are real), and `im` chosen up to sign so that `e` and its
    /// formal conjugate give the same `im` with opposite `conjugate`. [`ExpSplit::Whole`]
    /// when an algebra limit stops the split (then `e` is used as it is).
    pub fn exponent_parts(&mut self, e: Form) -> ExpSplit {
        if self.view(e).is_formally_real() {
            return ExpSplit::Parts {
                re: e,
                im: self.zero,
                conjugate: false,
            };
        }
        let Some((re, im)) = self.split_re_im(e) else {
            return ExpSplit::Whole(e);
        };
        // Normalise the sign of `im` by the first component of its first term.
        let negative = self
            .view(im)
            .numerator()
            .terms()
            .next()
            .and_then(|t| {
                t.coeff()
                    .components()
                    .first()
                    .map(|(_, q)| q < &super::Q::default())
            })
            .unwrap_or(false);
        if negative {
            match self.neg(im) {
                Ok(n) => ExpSplit::Parts {
                    re,
                    im: n,
                    conjugate: true,
                },
                Err(_) => ExpSplit::Whole(e),
            }
        } else {
            ExpSplit::Parts {
                re,
                im,
                conjugate: false,
            }
        }
    }
}

/// An exponent split by [`Store::exponent_parts`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ExpSplit {
    /// `e = re + i*im` (`conjugate` false) or `e = re - i*im` (`conjugate` true); `im` may be
    /// the zero form (then `conjugate` is false).
    Parts {
        /// The formal real part.
        re: Form,
        /// The formal imaginary part, up to the sign `conjugate`.
        im: Form,
        /// True when `e = re - i*im`.
        conjugate: bool,
    },
    /// The split stopped at a limit: the exponent itself.
    Whole(Form),
}

/// A term copied out of a view, so that the store can be changed while it is used.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct OwnedTerm {
    /// The exact coefficient.
    pub coeff: Coeff,
    /// Kernel powers, sorted by kernel id, no zero exponents.
    pub powers: Vec<(KernelId, i32)>,
    /// The exponent of the exponential factor, if any.
    pub exp: Option<Form>,
}

impl<'s> FormView<'s> {
    /// The numerator `N`, an expanded sum of terms (no terms: the form is zero).
    #[must_use]
    pub fn numerator(&self) -> PolyView<'s> {
        PolyView {
            store: self.store,
            terms: &self.rat.num,
        }
    }

    /// The factors of the denominator `D` with their positive exponents (none: `D = 1`).
    pub fn denominator(&self) -> impl ExactSizeIterator<Item = (PolyView<'s>, u32)> + 's {
        let store = self.store;
        self.rat.den.iter().map(move |(fid, e)| {
            (
                PolyView {
                    store,
                    terms: &store.factors[fid.0 as usize],
                },
                *e,
            )
        })
    }

    /// True if the denominator is 1.
    #[must_use]
    pub fn is_polynomial(&self) -> bool {
        self.rat.den.is_empty()
    }

    /// True if conjugating formally changes nothing: every coefficient, in the numerator and
    /// in the denominator, is real and no term has an exponential factor.
    #[must_use]
    pub fn is_formally_real(&self) -> bool {
        self.numerator().is_formally_real() && self.denominator().all(|(p, _)| p.is_formally_real())
    }
}

impl<'s> PolyView<'s> {
    /// The number of terms.
    #[must_use]
    pub fn len(&self) -> usize {
        self.terms.len()
    }

    /// True if there are no terms (the zero polynomial).
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.terms.is_empty()
    }

    /// The terms, in the store's internal order.
    pub fn terms(&self) -> impl ExactSizeIterator<Item = TermView<'s>> + 's {
        let store = self.store;
        self.terms.iter().map(move |(m, c)| TermView {
            coeff: c,
            mono: MonoView {
                mono: &store.monos[m.0 as usize],
            },
        })
    }

    /// The terms, copied.
    #[must_use]
    pub fn owned_terms(&self) -> Vec<OwnedTerm> {
        self.terms().map(|t| t.to_owned()).collect()
    }

    fn is_formally_real(&self) -> bool {
        self.terms()
            .all(|t| t.coeff().is_real() && t.monomial().exp().is_none())
    }
}

impl<'s> TermView<'s> {
    /// The exact coefficient.
    #[must_use]
    pub fn coeff(&self) -> &'s Coeff {
        self.coeff
    }

    /// The monomial.
    #[must_use]
    pub fn monomial(&self) -> MonoView<'s> {
        self.mono
    }

    /// The term, copied.
    #[must_use]
    pub fn to_owned(&self) -> OwnedTerm {
        OwnedTerm {
            coeff: self.coeff.clone(),
            powers: self.mono.powers().to_vec(),
            exp: self.mono.exp(),
        }
    }
}

impl<'s> MonoView<'s> {
    /// The kernel powers, sorted by kernel id, no zero exponents; see [`Store::kernel`].
    #[must_use]
    pub fn powers(&self) -> &'s [(KernelId, i32)] {
        &self.mono.pows
    }

    /// The exponent `E` of the factor `exp(E)`, if any (never the zero form).
    #[must_use]
    pub fn exp(&self) -> Option<Form> {
        self.mono.exp
    }

    /// True for the monomial 1.
    #[must_use]
    pub fn is_one(&self) -> bool {
        self.mono.pows.is_empty() && self.mono.exp.is_none()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::canon::{Kernel, Names};

    fn form(store: &mut Store, s: &str) -> Form {
        let e = crate::parse::parse(s).unwrap_or_else(|e| panic!("parse {s}: {e:?}"));
        store
            .build(&e, &Names::free())
            .unwrap_or_else(|e| panic!("build {s}: {e:?}"))
    }

    /// The form of a kernel, rebuilt from its view through the public constructors.
    fn kernel(store: &mut Store, k: KernelId) -> Form {
        match store.kernel(k).clone() {
            Kernel::Sym(n) => store.symbol(&n),
            Kernel::Pi => store.pi(),
            Kernel::Root { radicand, q } => {
                let r = rebuild(store, radicand);
                store.root(r, q).unwrap()
            }
            Kernel::Log(a) => {
                let a = rebuild(store, a);
                store.log(a).unwrap()
            }
            Kernel::Atan(a) => {
                let a = rebuild(store, a);
                store.atan(a).unwrap()
            }
            Kernel::Func { name, order, arg } => {
                let a = rebuild(store, arg);
                store.func(&name, order, a)
            }
        }
    }

    fn poly(store: &mut Store, terms: Vec<OwnedTerm>) -> Form {
        let mut acc = store.zero();
        for t in terms {
            let mut x = store.constant(t.coeff.clone());
            for (k, e) in t.powers {
                let kf = kernel(store, k);
                let p = store.powi(kf, i64::from(e)).unwrap();
                x = store.mul(x, p).unwrap();
            }
            if let Some(e) = t.exp {
                let e = rebuild(store, e);
                let p = store.exp(e).unwrap();
                x = store.mul(x, p).unwrap();
            }
            acc = store.add(acc, x).unwrap();
        }
        acc
    }

    /// `f` rebuilt from nothing but its view.
    fn rebuild(store: &mut Store, f: Form) -> Form {
        let v = store.view(f);
        let num = v.numerator().owned_terms();
        let den: Vec<(Vec<OwnedTerm>, u32)> =
            v.denominator().map(|(p, e)| (p.owned_terms(), e)).collect();
        let mut r = poly(store, num);
        for (p, e) in den {
            // 1/d to the power e keeps the factor as it is (d^e would be expanded).
            let d = poly(store, p);
            let d = store.inv(d).unwrap();
            let d = store.powi(d, i64::from(e)).unwrap();
            r = store.mul(r, d).unwrap();
        }
        r
    }

    #[test]
    fn a_form_rebuilt_from_its_view_is_the_same_form() {
        let mut st = Store::new();
        for text in [
            "0",
            "1",
            "-3/7",
            "sqrt(2)*x + sqrt(6)/5",
            "x^2*y^-3 + pi*t",
            "sqrt(x^2 + y^2 + z^2)^3/(1 + x^2)^2",
            "(x^3 + 1)^(1/3) - log(1 + t^2)*x",
            "a*cos(w*(t - z)) + b*sin(2*w*(t - z) + pi/3)",
            "exp(-x^2/2)*sinh(y) + exp(exp(t))",
            "F''(t - z)*G(x/(1 + y^2)) + F(sin(x))",
            "sqrt(-1 - x^2) + log(-2)",
            "tan(x)/(x - y)",
        ] {
            let f = form(&mut st, text);
            let g = rebuild(&mut st, f);
            assert_eq!(
                f,
                g,
                "{text}: {} rebuilt as {}",
                st.to_text(f),
                st.to_text(g)
            );
        }
    }

    #[test]
    fn the_view_shows_coefficients_kernels_exponentials_and_denominators() {
        let mut st = Store::new();
        let f = form(&mut st, "3*sqrt(2)*x^2*exp(t)/(4*(1 + y^2)^2)");
        let v = st.view(f);
        let terms: Vec<OwnedTerm> = v.numerator().owned_terms();
        assert_eq!(terms.len(), 1);
        let t = &terms[0];
        let parts = t.coeff.components();
        assert_eq!(parts.len(), 1);
        assert_eq!(parts[0].0.radicand(), 2);
        assert!(!parts[0].0.is_imaginary());
        assert_eq!(t.powers.len(), 1);
        assert!(matches!(st.kernel(t.powers[0].0), Kernel::Sym(n) if &**n == "x"));
        assert_eq!(t.powers[0].1, 2);
        let e = t.exp.expect("exp(t)");
        let x_t = st.symbol("t");
        assert_eq!(e, x_t);
        let v = st.view(f);
        let den: Vec<(usize, u32)> = v.denominator().map(|(p, e)| (p.len(), e)).collect();
        assert_eq!(den, [(2, 2)]);
        assert!(!v.is_polynomial());
        let zero = st.zero();
        assert!(st.view(zero).numerator().is_empty());
        let one = st.one();
        assert!(
            st.view(one)
                .numerator()
                .terms()
                .next()
                .unwrap()
                .monomial()
                .is_one()
        );
        // A lone term taken out as a form.
        let g = form(&mut st, "3*x*exp(t) + y");
        let terms = st.view(g).numerator().owned_terms();
        let parts: Vec<Form> = terms.iter().map(|t| st.term_form(t)).collect();
        let s = st.sum(&parts).unwrap();
        assert_eq!(s, g);
    }

    #[test]
    fn exponents_split_into_conjugate_pairs() {
        let mut st = Store::new();
        let f = form(&mut st, "sin(w*(t - z))");
        let exps: Vec<Form> = st
            .view(f)
            .numerator()
            .terms()
            .filter_map(|t| t.monomial().exp())
            .collect();
        assert_eq!(exps.len(), 2);
        let a = st.exponent_parts(exps[0]);
        let b = st.exponent_parts(exps[1]);
        let (
            ExpSplit::Parts {
                re: r1,
                im: i1,
                conjugate: c1,
            },
            ExpSplit::Parts {
                re: r2,
                im: i2,
                conjugate: c2,
            },
        ) = (a, b)
        else {
            panic!("{a:?} {b:?}");
        };
        assert!(st.is_zero(r1) && st.is_zero(r2));
        assert_eq!(i1, i2);
        assert_ne!(c1, c2);
        let phase = form(&mut st, "w*(t - z)");
        let neg = st.neg(phase).unwrap();
        assert!(i1 == phase || i1 == neg);
        // A real exponent is its own real part.
        let g = form(&mut st, "exp(x/(1 + y^2))");
        let e = st
            .view(g)
            .numerator()
            .terms()
            .next()
            .unwrap()
            .monomial()
            .exp()
            .unwrap();
        assert_eq!(
            st.exponent_parts(e),
            ExpSplit::Parts {
                re: e,
                im: st.zero(),
                conjugate: false
            }
        );
    }
}
