//! The second opinion on claims: every component evaluated at points by certified jets.
//!
//! Model. The exact route turns a claim into component expressions and proves them zero or
//! finds a certified nonzero witness. The audit recomputes the same components at a point
//! from the problem's *texts*, re-parsed: jets (Taylor coefficients to order 2 in t, x, y, z,
//! with interval coefficients, see [`crate::jet`]) of every `h_{mu nu}` and `T_{mu nu}`,
//! then each component as a linear combination of their derivatives, by the formulas of
//! [`crate::grid::claims`] (written from the definitions, independently of
//! [`crate::tensor`]). So a component the exact route proved zero must get an enclosure
//! containing 0 at every point; one that excludes 0 shows the proof was wrong. A certified
//! witness of the exact route must be certified again here at the same point.
//!
//! Key design decision: independence is structural. The audit shares only the parser with
//! the exact route: texts are parsed again, defines and arbitrary functions are evaluated as
//! written (through their samples), and the component formulas come from the grid check.
//! One [`Program`] plans all of a problem's jets, so each define is evaluated once per point
//! and the jets of `h` are shared by every claim.
//!
//! **Invariant:** never calls `canon`, `zero` or `tensor`; an enclosure is reported only if
//! every step of it was certified, `None` otherwise.

pub mod expr;

use crate::claim::{Kind, Part, Plan, PureGaugeRoute, Setting};
use crate::expr::Expr;
use crate::grid::claims::{Atom, Deriv, Field, claim_specs};
use crate::interval::Interval;
#[cfg(test)]
use crate::jet::eval::{called_functions, free_names};
use crate::jet::{EvalError, Jet, Program, Scalar, Scope};
use crate::parse::{ParseError, parse};
use crate::pointwise;
use crate::problem::Problem;
use crate::tensor::{Frame, component_name};
use rustc_hash::FxHashMap;

/// Why an audit cannot be set up or run.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum AuditError {
    /// A text of the problem does not parse (cannot happen for a problem that was built).
    #[error("{what} does not parse: {error}")]
    Parse {
        /// Which text.
        what: String,
        /// The parser's error.
        error: Box<ParseError>,
    },
    /// The expressions cannot be evaluated at any point.
    #[error("cannot evaluate: {0}")]
    Eval(#[from] EvalError),
    /// A point without a value for a coordinate or symbol.
    #[error("the point has no value for `{0}`")]
    Missing(String),
    /// A point naming something that is not a coordinate or parameter.
    #[error("`{0}` is not a coordinate or parameter of the problem")]
    Unknown(String),
    /// A coefficient of a claim formula that the audit does not know how to enclose.
    #[error("unexpected coefficient {1} in component `{0}`")]
    Coefficient(String, f64),
}

/// One component of one claim at a point.
#[derive(Clone, Debug, PartialEq)]
pub struct ComponentValue {
    /// The claim's key, as in the exact check (`field_equations`, `gauge.lorenz`, ...).
    pub claim: String,
    /// The component's name, as in the exact check (`G_tt`, `d^mu hbar_mux`, `R_txtx`, ...).
    pub component: String,
    /// A certified enclosure of its value; `None` if it cannot be evaluated there.
    pub value: Option<Interval>,
}

/// A claim as the audit evaluates it.
#[derive(Clone, Debug)]
pub struct AuditClaim {
    /// Machine key.
    pub key: String,
    /// What the file asserts: `Some(true)` vanishing, `Some(false)` not, `None` report only.
    pub asserted: Option<bool>,
    /// Each component's name and how it is computed.
    components: Vec<(String, Formula)>,
}

/// How the audit computes a component.
#[derive(Clone, Debug)]
enum Formula {
    /// Flat problems: a combination of derivatives of h and T (coefficient, index of the
    /// atom in [`Audit`]'s list of distinct atoms, each evaluated once per point).
    Combo(Vec<(Coef, usize)>),
    /// About a background: a part of [`crate::pointwise::Quantities`].
    Curved(Part),
}

impl AuditClaim {
    /// The component names, in order.
    pub fn component_names(&self) -> impl Iterator<Item = &str> {
        self.components.iter().map(|(n, _)| n.as_str())
    }
}

/// A coefficient of a claim formula, enclosed in each arithmetic on use.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum Coef {
    /// A small dyadic rational, exact in f64.
    Dyadic(f64),
    /// `-8 pi`, the source term of the field equations.
    MinusEightPi,
}

impl Coef {
    /// An enclosure of the coefficient in arithmetic `S`.
    pub(crate) fn enclose<S: Scalar>(self, ctx: &S::Ctx) -> Option<S> {
        match self {
            Coef::Dyadic(c) => S::from_f64(c),
            Coef::MinusEightPi => S::pi(ctx)?.mul(&S::from_f64(-8.0)?),
        }
    }
}

/// A problem prepared for auditing: parsed texts, the planned jets, the claim formulas.
#[derive(Debug)]
pub struct Audit {
    program: Program,
    /// Root index of each component of `h` (both orders of the indices); `None`: zero.
    h: [[Option<usize>; 4]; 4],
    /// Likewise for `T`, when there is a source.
    t: Option<[[Option<usize>; 4]; 4]>,
    /// Root indices of the extra expressions (values only), in the order given.
    extras: Vec<usize>,
    parameters: Vec<(String, f64)>,
    claims: Vec<AuditClaim>,
    /// The distinct atoms of the flat claims' formulas ([`Formula::Combo`] indexes them).
    atoms: Vec<Atom>,
    /// The coordinate names, time first.
    coords: [String; 4],
    /// The background's roots, for a problem about one.
    background: Option<BackgroundRoots>,
    /// Ranges of coordinates (a problem's \[domain\]).
    domain: [Option<(f64, f64)>; 4],
    /// Parameters confined to a range (an eccentricity).
    parameter_ranges: Vec<(String, (f64, f64))>,
}

/// Root indices of a background's texts.
#[derive(Clone, Debug)]
struct BackgroundRoots {
    g: [[Option<usize>; 4]; 4],
    tbar: Option<[[Option<usize>; 4]; 4]>,
    lambda: Option<usize>,
    xi: Option<[Option<usize>; 4]>,
}

/// Jets to this order in the background metric (curvature needs second derivatives).
const G_ORDER: u32 = 2;

/// Jets to this order in `h`: every claim needs at most second derivatives.
const H_ORDER: u32 = 2;
/// And in `T`: values and first derivatives.
const T_ORDER: u32 = 1;

fn parse_text(what: impl FnOnce() -> String, text: &str) -> Result<Expr, AuditError> {
    parse(text).map_err(|error| AuditError::Parse {
        what: what(),
        error: Box::new(error),
    })
}

/// Roots for the given texts of a symmetric tensor; returns the index table.
fn tensor_roots(
    texts: &[[Option<String>; 4]; 4],
    label: &str,
    order: u32,
    roots: &mut Vec<(Expr, u32)>,
) -> Result<[[Option<usize>; 4]; 4], AuditError> {
    let mut idx = [[None; 4]; 4];
    for mu in 0..4 {
        for nu in mu..4 {
            if let Some(text) = &texts[mu][nu] {
                let e = parse_text(|| format!("{label}_{}", component_name(mu, nu)), text)?;
                roots.push((e, order));
                idx[mu][nu] = Some(roots.len() - 1);
                idx[nu][mu] = Some(roots.len() - 1);
            }
        }
    }
    Ok(idx)
}

/// A claim component's terms with coefficients that can be enclosed exactly: sums of +-1/2
/// and +-1/4 (exact in f64), and the source term of the field equations, -8 pi.
///
/// # Errors
///
/// Any other coefficient (a formula this audit does not know how to enclose).
pub(crate) fn claim_terms(
    name: &str,
    combo: &crate::grid::claims::Combo,
) -> Result<Vec<(Coef, Atom)>, AuditError> {
    let mut terms = Vec::new();
    for (atom, &c) in &combo.0 {
        let coef = if atom.field == Field::T && atom.deriv == Deriv::Value {
            if c != -8.0 * std::f64::consts::PI {
                return Err(AuditError::Coefficient(name.to_string(), c));
            }
            Coef::MinusEightPi
        } else if (c * 4.0).fract() == 0.0 && c.abs() <= 64.0 {
            Coef::Dyadic(c)
        } else {
            return Err(AuditError::Coefficient(name.to_string(), c));
        };
        terms.push((coef, *atom));
    }
    Ok(terms)
}

/// The claims of the problem with enclosed coefficients, named as the exact check names
/// them.
/// With them, the distinct atoms their formulas use (indexed by [`Formula::Combo`]).
fn audit_claims(problem: &Texts) -> Result<(Vec<AuditClaim>, Vec<Atom>), AuditError> {
    if let Some(bg) = &problem.curved {
        return Ok((curved_claims(problem, bg), Vec::new()));
    }
    let specs = claim_specs(problem.claims.as_ref(), problem.has_source);
    let mut out = Vec::new();
    let mut atoms: Vec<Atom> = Vec::new();
    let mut index: FxHashMap<Atom, usize> = FxHashMap::default();
    for spec in specs {
        let mut components = Vec::new();
        for (name, combo) in spec.components {
            let terms = claim_terms(&name, &combo)?
                .into_iter()
                .map(|(c, a)| {
                    let i = *index.entry(a).or_insert_with(|| {
                        atoms.push(a);
                        atoms.len() - 1
                    });
                    (c, i)
                })
                .collect();
            components.push((name, Formula::Combo(terms)));
        }
        out.push(AuditClaim {
            key: spec.key,
            asserted: spec.asserted,
            components,
        });
    }
    Ok((out, atoms))
}

/// The claims about a background: every claim the exact route may report (pure gauge both by
/// the Riemann tensor and by the file's vector, whichever the exact route can use), named in
/// the file's coordinates.
fn curved_claims(problem: &Texts, bg: &CurvedTexts) -> Vec<AuditClaim> {
    let setting = |pure| Setting {
        claims: problem.claims.as_ref(),
        sourced: problem.has_source,
        background_sourced: bg.tbar.is_some(),
        lambda: bg.lambda_nonzero,
        pure,
    };
    let mut claims = Plan::curved(setting(PureGaugeRoute::Riemann)).claims;
    if bg.xi.is_some() {
        claims.extend(
            Plan::curved(setting(PureGaugeRoute::Vector))
                .claims
                .into_iter()
                .filter(|c| c.kind == Kind::GaugeVector),
        );
    }
    let frame = Frame::covariant(problem.coordinates.clone());
    claims
        .into_iter()
        .map(|c| AuditClaim {
            key: c.kind.key(),
            asserted: c.asserted,
            components: c
                .kind
                .parts()
                .into_iter()
                .map(|p| (p.name_in(&frame), Formula::Curved(p)))
                .collect(),
        })
        .collect()
}

/// What the audit reads of a problem's background: texts, and whether Lambda is zero (which
/// only names the components).
#[derive(Clone, Debug, PartialEq)]
pub struct CurvedTexts {
    g: crate::problem::TensorText,
    tbar: Option<crate::problem::TensorText>,
    lambda: Option<String>,
    lambda_nonzero: bool,
    xi: Option<[Option<String>; 4]>,
    domain: [Option<(f64, f64)>; 4],
}

/// What the audit reads of a problem: its texts, parameters and claims, owned, so that the
/// audit can run on another thread while the exact route works on the problem's store
/// (see [`crate::check::check`]). Nothing of the canonical forms is in it.
#[derive(Clone, Debug, PartialEq)]
pub struct Texts {
    claims: Option<crate::problem::Claims>,
    has_source: bool,
    parameters: Vec<(String, f64)>,
    defines: Vec<(String, String)>,
    functions: Vec<(String, String)>,
    h_text: crate::problem::TensorText,
    source_text: Option<crate::problem::TensorText>,
    coordinates: [String; 4],
    curved: Option<CurvedTexts>,
    parameter_ranges: Vec<(String, (f64, f64))>,
}

impl Texts {
    /// The problem's parameters with their typical values.
    pub fn parameters(&self) -> &[(String, f64)] {
        &self.parameters
    }

    /// The texts of `problem`.
    pub fn of(problem: &Problem) -> Texts {
        let curved = problem.background.as_ref().map(|b| CurvedTexts {
            g: b.g_text.clone(),
            tbar: b.source_text.clone(),
            lambda: b.lambda_text.clone(),
            lambda_nonzero: !problem.store.is_zero(b.lambda),
            xi: b.gauge_vector_text.clone(),
            domain: problem.domain.unwrap_or([None; 4]),
        });
        Texts {
            coordinates: problem.coordinates.clone(),
            curved,
            claims: problem.claims.clone(),
            has_source: problem.source.is_some(),
            parameters: problem.parameters.clone(),
            defines: problem.defines.clone(),
            functions: problem.functions.clone(),
            h_text: problem.h_text.clone(),
            source_text: problem.source_text.clone(),
            parameter_ranges: problem.parameter_ranges.clone(),
        }
    }

    /// The texts the problem built from `file` will have, foreseen before it is built, so
    /// that the audit can start while the forms are built (see
    /// [`crate::check::EarlyAudit`]); `None` when that needs the built forms (the parameter
    /// ranges of an eccentric orbit). Whether Lambda is zero is foreseen from its text (a
    /// written 0 or none), so the foresight can be wrong: it is compared with
    /// [`Texts::of`] the built problem before it is used.
    pub fn of_file(file: &crate::problem::ProblemFile) -> Option<Texts> {
        use crate::problem::{named_texts, tensor_text, vector_text};
        if file.orbit.is_some() {
            return None;
        }
        let curved = file.has_background().then(|| CurvedTexts {
            g: file.background_text(),
            tbar: file.background_source.as_deref().map(tensor_text),
            lambda: file.cosmological_constant.as_ref().map(|e| e.text.clone()),
            lambda_nonzero: file.cosmological_constant.as_ref().is_some_and(|e| {
                parse(&e.text).map_or(true, |x| {
                    !matches!(x.kind, crate::expr::ExprKind::Num(ref q) if num_traits::Zero::is_zero(q))
                })
            }),
            xi: file.gauge_vector.as_deref().map(vector_text),
            domain: file.domain.unwrap_or([None; 4]),
        });
        Some(Texts {
            coordinates: file.coordinates.clone(),
            curved,
            claims: file.claims.clone(),
            has_source: file.source.is_some(),
            parameters: file.parameter_values(),
            defines: named_texts(&file.defines),
            functions: named_texts(&file.functions),
            h_text: tensor_text(&file.perturbation),
            source_text: file.source.as_deref().map(tensor_text),
            parameter_ranges: Vec::new(),
        })
    }
}

impl Audit {
    /// Prepares the audit of `problem` from its texts.
    ///
    /// # Errors
    ///
    /// A text that does not parse or cannot be planned (an unknown name, jets too large).
    pub fn new(problem: &Problem) -> Result<Audit, AuditError> {
        Audit::of_texts(&Texts::of(problem))
    }

    /// Prepares the audit from a problem's texts (see [`Texts`]).
    ///
    /// # Errors
    ///
    /// As [`Audit::new`].
    pub fn of_texts(texts: &Texts) -> Result<Audit, AuditError> {
        let mut audit = Audit::fields_of(texts, H_ORDER, &[], &[])?;
        (audit.claims, audit.atoms) = audit_claims(texts)?;
        Ok(audit)
    }

    /// Prepares the jets of `h` to order `h_order` (and of `T` to first order, when there is a
    /// source) from the problem's texts, plus the values of the `extras` (texts in the
    /// coordinates and parameters, e.g. the components of a direction field), without any
    /// claim: for quantities computed from the fields ([`crate::export`]).
    ///
    /// # Errors
    ///
    /// A text that does not parse or cannot be planned (an unknown name, jets too large).
    pub fn fields(
        problem: &Problem,
        h_order: u32,
        extras: &[(String, String)],
    ) -> Result<Audit, AuditError> {
        Audit::fields_from(&Texts::of(problem), h_order, extras)
    }

    /// [`Audit::fields`] from the problem's texts ([`Texts::of`]): the same plan, built
    /// where the problem is not at hand (another thread: the jets are not shared between
    /// threads, their texts are).
    ///
    /// # Errors
    ///
    /// As [`Audit::fields`].
    pub fn fields_from(
        texts: &Texts,
        h_order: u32,
        extras: &[(String, String)],
    ) -> Result<Audit, AuditError> {
        Audit::fields_of(texts, h_order, &[], extras)
    }

    /// [`Audit::fields`] with named parts the extras may use: `defines`, each a `(name,
    /// text)` in the file's names and the parts before it. A part is evaluated once per point
    /// (at the highest order its uses need), however often the extras use it, so long
    /// definitions built from repeated pieces are written once. The names must not be names
    /// of the file (the caller chooses them).
    ///
    /// # Errors
    ///
    /// As [`Audit::fields`]; a part that does not parse.
    pub fn fields_with(
        problem: &Problem,
        h_order: u32,
        defines: &[(String, String)],
        extras: &[(String, String)],
    ) -> Result<Audit, AuditError> {
        Audit::fields_of(&Texts::of(problem), h_order, defines, extras)
    }

    fn fields_of(
        problem: &Texts,
        h_order: u32,
        parts: &[(String, String)],
        extras: &[(String, String)],
    ) -> Result<Audit, AuditError> {
        let mut scope = Scope {
            vars: problem.coordinates.to_vec(),
            parameters: problem.parameters.iter().map(|(n, _)| n.clone()).collect(),
            ..Scope::default()
        };
        for (name, text) in &problem.defines {
            let e = parse_text(|| format!("define `{name}`"), text)?;
            scope.defines.push((name.clone(), e));
        }
        for (name, text) in parts {
            let e = parse_text(|| format!("part `{name}` of a definition"), text)?;
            scope.defines.push((name.clone(), e));
        }
        for (name, text) in &problem.functions {
            let e = parse_text(|| format!("sample of `{name}`"), text)?;
            scope.functions.push((name.clone(), e));
        }
        let mut roots = Vec::new();
        let h = tensor_roots(&problem.h_text, "h", h_order, &mut roots)?;
        let t = match &problem.source_text {
            Some(texts) => Some(tensor_roots(texts, "T", T_ORDER, &mut roots)?),
            None => None,
        };
        let background = match &problem.curved {
            Some(bg) => Some(BackgroundRoots {
                g: tensor_roots(&bg.g, "gbar", G_ORDER, &mut roots)?,
                tbar: match &bg.tbar {
                    Some(texts) => Some(tensor_roots(texts, "Tbar", T_ORDER, &mut roots)?),
                    None => None,
                },
                lambda: match &bg.lambda {
                    Some(text) => {
                        roots.push((parse_text(|| "cosmological_constant".into(), text)?, 0));
                        Some(roots.len() - 1)
                    }
                    None => None,
                },
                xi: match &bg.xi {
                    Some(texts) => {
                        let mut idx = [None; 4];
                        for (mu, t) in texts.iter().enumerate() {
                            if let Some(t) = t {
                                roots.push((parse_text(|| format!("xi_{mu}"), t)?, 1));
                                idx[mu] = Some(roots.len() - 1);
                            }
                        }
                        Some(idx)
                    }
                    None => None,
                },
            }),
            None => None,
        };
        let mut extra_roots = Vec::with_capacity(extras.len());
        for (what, text) in extras {
            roots.push((parse_text(|| what.clone(), text)?, 0));
            extra_roots.push(roots.len() - 1);
        }
        let program = Program::of_scope(scope, roots)?;
        Ok(Audit {
            program,
            h,
            t,
            extras: extra_roots,
            parameters: problem.parameters.clone(),
            claims: Vec::new(),
            atoms: Vec::new(),
            coords: problem.coordinates.clone(),
            background,
            domain: problem.curved.as_ref().map_or([None; 4], |b| b.domain),
            parameter_ranges: problem.parameter_ranges.clone(),
        })
    }

    /// The coordinate names, time first.
    pub fn coordinates(&self) -> &[String; 4] {
        &self.coords
    }

    /// The coordinates confined to a range by the problem's \[domain\], and the parameters
    /// confined to one (an eccentricity to `[0, 1)`).
    pub fn ranges(&self) -> Vec<(String, (f64, f64))> {
        self.coords
            .iter()
            .zip(self.domain)
            .filter_map(|(c, r)| Some((c.clone(), r?)))
            .chain(self.parameter_ranges.iter().cloned())
            .collect()
    }

    /// The claims, in the order of the exact check's report.
    pub fn claims(&self) -> &[AuditClaim] {
        &self.claims
    }

    /// The values of every variable and parameter: the point's, else a parameter's typical
    /// value, as exact inputs at the context's precision.
    fn values<N: AsRef<str>, S: Scalar>(
        &self,
        point: &[(N, f64)],
        ctx: &S::Ctx,
    ) -> Result<FxHashMap<String, S>, AuditError> {
        let mut values = FxHashMap::default();
        for (name, v) in &self.parameters {
            values.insert(
                name.clone(),
                S::input(*v, ctx).ok_or(AuditError::Missing(name.clone()))?,
            );
        }
        for (name, v) in point {
            let name = name.as_ref();
            if !self.coords.iter().any(|c| c == name)
                && !self.parameters.iter().any(|(p, _)| p == name)
            {
                return Err(AuditError::Unknown(name.to_string()));
            }
            let v = S::input(*v, ctx).ok_or(AuditError::Missing(name.to_string()))?;
            values.insert(name.to_string(), v);
        }
        for c in &self.coords {
            if !values.contains_key(c) {
                return Err(AuditError::Missing(c.clone()));
            }
        }
        Ok(values)
    }

    /// Jets of `h` (and `T`) at the point: values and derivatives up to second order.
    ///
    /// `point` gives every coordinate and may override parameters' typical values.
    ///
    /// # Errors
    ///
    /// A coordinate without a value, or a name that is neither coordinate nor parameter.
    pub fn fields_at<N: AsRef<str>>(&self, point: &[(N, f64)]) -> Result<Fields, AuditError> {
        self.fields_in(point, &())
    }

    /// [`Audit::fields_at`] in any enclosure arithmetic: f64 intervals (`ctx` is `()`) or
    /// multiprecision balls (`ctx` is the working precision in bits).
    ///
    /// # Errors
    ///
    /// As [`Audit::fields_at`].
    pub fn fields_in<N: AsRef<str>, S: Scalar>(
        &self,
        point: &[(N, f64)],
        ctx: &S::Ctx,
    ) -> Result<Fields<S>, AuditError> {
        let values = self.values::<N, S>(point, ctx)?;
        let jets = self.program.eval_roots(&values, ctx)?;
        let table = |idx: &[[Option<usize>; 4]; 4]| {
            std::array::from_fn(|mu| {
                std::array::from_fn(|nu| match idx[mu][nu] {
                    None => Comp::Zero,
                    Some(i) => match &jets[i] {
                        Some(j) => Comp::Jet(j.clone()),
                        None => Comp::NotHere,
                    },
                })
            })
        };
        let one = |i: Option<usize>| match i {
            None => Comp::Zero,
            Some(i) => match &jets[i] {
                Some(j) => Comp::Jet(j.clone()),
                None => Comp::NotHere,
            },
        };
        Ok(Fields {
            background: self.background.as_ref().map(|b| BackgroundFields {
                g: table(&b.g),
                tbar: b.tbar.as_ref().map(table),
                lambda: one(b.lambda),
                xi: b.xi.map(|x| x.map(one)),
            }),
            h: table(&self.h),
            t: self.t.as_ref().map(table),
            extras: self
                .extras
                .iter()
                .map(|&i| jets[i].as_ref().map(|j| j.value().clone()))
                .collect(),
            ctx: ctx.clone(),
        })
    }

    /// Every component of every claim at the point, in the exact check's order.
    ///
    /// # Errors
    ///
    /// As [`Audit::fields_at`].
    pub fn components_at<N: AsRef<str>>(
        &self,
        point: &[(N, f64)],
    ) -> Result<Vec<ComponentValue>, AuditError> {
        self.components_in::<N, Interval>(point, &())
    }

    /// [`Audit::components_at`] computed in enclosure arithmetic `S` (multiprecision balls
    /// for a value that f64 intervals cannot separate from 0), each value then rounded
    /// outward to an f64 interval.
    ///
    /// # Errors
    ///
    /// As [`Audit::fields_at`].
    /// What the pointwise route must compute for this audit's claims (the full Riemann
    /// tensors only for a pure-gauge claim).
    fn curved_needs(&self) -> pointwise::Needs {
        let riemann = self.claims.iter().any(|c| {
            c.components
                .iter()
                .any(|(_, f)| matches!(f, Formula::Curved(Part::Riemann(_))))
        });
        pointwise::Needs { riemann }
    }

    pub fn components_in<N: AsRef<str>, S: Scalar>(
        &self,
        point: &[(N, f64)],
        ctx: &S::Ctx,
    ) -> Result<Vec<ComponentValue>, AuditError> {
        let fields = self.fields_in::<N, S>(point, ctx)?;
        // Every distinct atom once, in the order of first use.
        let atoms: Vec<Option<S>> = self.atoms.iter().map(|a| fields.atom(a)).collect();
        // About a background: every quantity at once, by the pointwise route.
        let quantities = match &fields.background {
            Some(_) => fields.curved_quantities(ctx, self.curved_needs()),
            None => None,
        };
        let mut out = Vec::new();
        for claim in &self.claims {
            for (name, formula) in &claim.components {
                let acc = match formula {
                    Formula::Combo(terms) => {
                        let mut acc = Some(S::zero());
                        for &(c, i) in terms {
                            let v = atoms[i].as_ref();
                            acc = acc.and_then(|a| a.add(&v?.mul(&c.enclose::<S>(ctx)?)?));
                        }
                        acc
                    }
                    Formula::Curved(p) => {
                        let curved = quantities.as_ref();
                        curved.and_then(|(q, f)| crate::grid::claims::curved_part(q, f, *p))
                    }
                };
                out.push(ComponentValue {
                    claim: claim.key.clone(),
                    component: name.clone(),
                    value: acc.and_then(|v| {
                        let (lo, hi) = v.bounds_f64();
                        Interval::new(lo, hi)
                    }),
                });
            }
        }
        Ok(out)
    }

    /// `point` with every coordinate it lacks set to `fill`: a witness of the exact route
    /// names only the symbols its component depends on, and the audit needs all four
    /// coordinates (other components of `h` may depend on the missing ones).
    pub fn complete<N: AsRef<str>>(&self, point: &[(N, f64)], fill: f64) -> Vec<(String, f64)> {
        let mut out: Vec<(String, f64)> = point
            .iter()
            .map(|(n, v)| (n.as_ref().to_string(), *v))
            .collect();
        for (i, c) in self.coords.iter().enumerate() {
            if !out.iter().any(|(n, _)| n == c) {
                // Inside the coordinate's range, if it has one.
                let v = match self.domain[i] {
                    Some((lo, hi)) if !(lo..=hi).contains(&fill) => (lo + hi) / 2.0,
                    _ => fill,
                };
                out.push((c.clone(), v));
            }
        }
        out
    }

    /// `count` reproducible points for `seed`: coordinates in `±[0.25, 2]` (or inside their
    /// \[domain\] range), parameters within
    /// a factor of 2 of their typical value (same sign), each rounded to six significant
    /// digits so it can be typed back in.
    pub fn seeded_points(&self, seed: u64, count: usize) -> Vec<Vec<(String, f64)>> {
        let mut rng = SplitMix64(seed);
        (0..count)
            .map(|_| {
                let mut p = Vec::new();
                for (i, c) in self.coords.iter().enumerate() {
                    let v = match self.domain[i] {
                        Some((lo, hi)) => {
                            let m = (hi - lo) * 1e-3;
                            let v = round6(lo + m + (hi - lo - 2.0 * m) * rng.next_f64());
                            v.clamp(lo, hi)
                        }
                        None => rng.signed_unit(),
                    };
                    p.push((c.clone(), v));
                }
                for (name, typical) in &self.parameters {
                    let range = self.parameter_ranges.iter().find(|(n, _)| n == name);
                    let v = if let Some((_, (lo, hi))) = range {
                        let m = (hi - lo) * 1e-3;
                        round6(lo + m + (hi - lo - 2.0 * m) * rng.next_f64()).clamp(*lo, *hi)
                    } else if *typical == 0.0 {
                        rng.signed_unit()
                    } else {
                        round6(typical * (0.5 + 1.5 * rng.next_f64()))
                    };
                    p.push((name.clone(), v));
                }
                p
            })
            .collect()
    }
}

fn round6(v: f64) -> f64 {
    format!("{v:.5e}").parse().unwrap_or(v)
}

/// A small deterministic generator (SplitMix64), kept here so the audit depends on nothing
/// of the zero test.
struct SplitMix64(u64);

impl SplitMix64 {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    fn next_f64(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// `±[0.25, 2]`, rounded to six digits.
    fn signed_unit(&mut self) -> f64 {
        let mag = 0.25 + 1.75 * self.next_f64();
        round6(if self.next_u64() & 1 == 1 { -mag } else { mag })
    }
}

/// One component of `h` or `T` at a point.
#[derive(Clone, Debug)]
enum Comp<S: Scalar> {
    /// Omitted in the file: exactly 0.
    Zero,
    /// Its jet.
    Jet(Jet<S>),
    /// Cannot be evaluated at this point.
    NotHere,
}

/// `h_{mu nu}` and `T_{mu nu}` at a point with their derivatives (h to second order, T to
/// first), as certified enclosures, and the values of the extra expressions.
#[derive(Clone, Debug)]
pub struct Fields<S: Scalar = Interval> {
    background: Option<BackgroundFields<S>>,
    h: [[Comp<S>; 4]; 4],
    t: Option<[[Comp<S>; 4]; 4]>,
    extras: Vec<Option<S>>,
    ctx: S::Ctx,
}

impl<S: Scalar> Fields<S> {
    fn get(&self, field: Field, mu: usize, nu: usize, d: &[usize]) -> Option<S> {
        let comp = match field {
            Field::H => &self.h[mu][nu],
            Field::T => &self.t.as_ref()?[mu][nu],
            // The flat claims' formulas never name the background's fields.
            Field::Gbar | Field::Tbar | Field::Xi | Field::Lambda => return None,
        };
        comp.partial(d, &self.ctx)
    }

    /// The value of extra expression `i` (in the order given to [`Audit::fields`]); `None`
    /// if it cannot be evaluated here.
    pub fn extra(&self, i: usize) -> Option<S> {
        self.extras.get(i).cloned().flatten()
    }

    /// True if the problem has a source.
    pub fn has_source(&self) -> bool {
        self.t.is_some()
    }

    /// The context the enclosures were computed in.
    pub fn ctx(&self) -> &S::Ctx {
        &self.ctx
    }

    /// `h_{mu nu}`; `None` if it cannot be evaluated here.
    pub fn h(&self, mu: usize, nu: usize) -> Option<S> {
        self.get(Field::H, mu, nu, &[])
    }

    /// `d_rho h_{mu nu}`.
    pub fn dh(&self, rho: usize, mu: usize, nu: usize) -> Option<S> {
        self.get(Field::H, mu, nu, &[rho])
    }

    /// `d_a d_b h_{mu nu}`.
    pub fn ddh(&self, a: usize, b: usize, mu: usize, nu: usize) -> Option<S> {
        self.get(Field::H, mu, nu, &[a, b])
    }

    /// `T_{mu nu}`; `None` without a source or if it cannot be evaluated here.
    pub fn t(&self, mu: usize, nu: usize) -> Option<S> {
        self.get(Field::T, mu, nu, &[])
    }

    /// `d_rho T_{mu nu}`.
    pub fn dt(&self, rho: usize, mu: usize, nu: usize) -> Option<S> {
        self.get(Field::T, mu, nu, &[rho])
    }

    /// The value of an atom of a claim formula.
    pub fn atom(&self, a: &Atom) -> Option<S> {
        let (mu, nu) = (a.mu as usize, a.nu as usize);
        match a.deriv {
            Deriv::Value => self.get(a.field, mu, nu, &[]),
            Deriv::D1(r) => self.get(a.field, mu, nu, &[r as usize]),
            Deriv::D2(r, s) => self.get(a.field, mu, nu, &[r as usize, s as usize]),
        }
    }
}

/// A background's fields at a point.
#[derive(Clone, Debug)]
struct BackgroundFields<S: Scalar> {
    g: [[Comp<S>; 4]; 4],
    tbar: Option<[[Comp<S>; 4]; 4]>,
    lambda: Comp<S>,
    xi: Option<[Comp<S>; 4]>,
}

impl<S: Scalar> Comp<S> {
    /// The partial derivative by the coordinates `d` (indices, repeated for higher order).
    fn partial(&self, d: &[usize], ctx: &S::Ctx) -> Option<S> {
        match self {
            Comp::Zero => Some(S::zero()),
            Comp::NotHere => None,
            Comp::Jet(j) => {
                let vars = j.space().vars();
                let mut small = [0u8; 8];
                let mut large = Vec::new();
                let exps: &mut [u8] = if vars <= small.len() {
                    &mut small[..vars]
                } else {
                    large.resize(vars, 0);
                    &mut large
                };
                for &a in d {
                    exps[a] += 1;
                }
                j.partial(exps, ctx)
            }
        }
    }
}

impl<S: Scalar> Fields<S> {
    /// Every quantity about the background at this point, with the fields it came from;
    /// `None` without a background or if something cannot be evaluated here.
    pub(crate) fn curved_quantities(
        &self,
        ctx: &S::Ctx,
        needs: pointwise::Needs,
    ) -> Option<(pointwise::Quantities<S>, pointwise::Fields<S>)> {
        let f = self.pointwise()?;
        Some((pointwise::evaluate_for(&f, ctx, needs)?, f))
    }

    /// The inputs of [`pointwise::evaluate`]; `None` without a background or if a field
    /// cannot be evaluated here.
    fn pointwise(&self) -> Option<pointwise::Fields<S>> {
        let bg = self.background.as_ref()?;
        let ctx = &self.ctx;
        let sym1 =
            |m: &[[Comp<S>; 4]; 4]| pointwise::Sym1::from_fn(|mu, nu, d| m[mu][nu].partial(d, ctx));
        Some(pointwise::Fields {
            gbar: pointwise::Sym2::from_fn(|mu, nu, d| bg.g[mu][nu].partial(d, ctx))?,
            h: pointwise::Sym2::from_fn(|mu, nu, d| self.h[mu][nu].partial(d, ctx))?,
            lambda: bg.lambda.partial(&[], ctx)?,
            tbar: match &bg.tbar {
                Some(m) => Some(sym1(m)?),
                None => None,
            },
            dt: match &self.t {
                Some(m) => Some(sym1(m)?),
                None => None,
            },
            xi: match &bg.xi {
                Some(x) => Some(pointwise::Covector1::from_fn(|mu, d| {
                    x[mu].partial(d, ctx)
                })?),
                None => None,
            },
        })
    }
}

/// The text of the generic sample of the `index`-th arbitrary function without one: smooth,
/// with all derivatives nonzero at generic points, different for each index. The same
/// formula as the zero test's, written out again so that the audit does not depend on it.
pub fn generic_sample_text(index: usize) -> String {
    let j = index as i64;
    format!(
        "exp(-u^2/{}) * (1 + {}*u/7) + sin({}*u/4)/{}",
        4 + j,
        j + 2,
        5 + 2 * j,
        j + 2
    )
}

/// A single expression's jet at a point, with the names of its variables (tests read jets
/// through it).
#[cfg(test)]
#[derive(Clone, Debug)]
pub struct ExprJet {
    /// The jet's variables, in order.
    pub vars: Vec<String>,
    /// The jet; `None` if the expression cannot be evaluated at the point.
    pub jet: Option<Jet<Interval>>,
}

#[cfg(test)]
impl ExprJet {
    /// The value.
    pub fn value(&self) -> Option<Interval> {
        self.jet.as_ref().map(|j| *j.value())
    }

    /// The partial derivative by the listed variables (repetition for higher order), e.g.
    /// `["x", "x", "t"]`; `None` beyond the order, for a name that is not a variable, or if
    /// the expression cannot be evaluated.
    pub fn derivative(&self, by: &[&str]) -> Option<Interval> {
        let j = self.jet.as_ref()?;
        let mut exps = vec![0u8; self.vars.len()];
        for v in by {
            let i = self.vars.iter().position(|n| n == v)?;
            exps[i] = exps[i].checked_add(1)?;
        }
        j.partial(&exps, &())
    }
}

/// The jet of one expression, as the `zero` and `diff` commands see it: every name is a free
/// symbol and must have a value in `point`; `vars` (and every name differentiated by `d_`)
/// are the jet's variables, to total order `order`; calls of unknown names are arbitrary
/// functions, with the sample given in `samples` (texts in `u`) or else the generic sample
/// ([`generic_sample_text`]) numbered by the function's first appearance among those without
/// one.
///
/// # Errors
///
/// A sample that does not parse, a name without a value, a primed built-in, jets too large.
#[cfg(test)]
pub fn eval_expr_at<N: AsRef<str>>(
    expr: &Expr,
    point: &[(N, f64)],
    vars: &[&str],
    order: u32,
    samples: &[(&str, &str)],
) -> Result<ExprJet, AuditError> {
    let mut scope = Scope {
        vars: vars.iter().map(|v| v.to_string()).collect(),
        ..Scope::default()
    };
    for n in free_names(expr) {
        if !scope.vars.contains(&n) {
            scope.parameters.push(n);
        }
    }
    let mut generic = 0;
    for f in called_functions(expr) {
        let text = match samples.iter().find(|(n, _)| *n == f) {
            Some((_, t)) => t.to_string(),
            None => {
                generic += 1;
                generic_sample_text(generic - 1)
            }
        };
        let e = parse_text(|| format!("sample of `{f}`"), &text)?;
        scope.functions.push((f, e));
    }
    // Sample parameters need values too.
    for (_, e) in &scope.functions {
        for n in free_names(e) {
            if n != crate::jet::eval::SAMPLE_VAR && !scope.parameters.contains(&n) {
                scope.parameters.push(n);
            }
        }
    }
    let program = Program::new(&scope, vec![(expr.clone(), order)])?;
    let mut values = FxHashMap::default();
    for (name, v) in point {
        let v = Interval::point(*v).ok_or(AuditError::Missing(name.as_ref().to_string()))?;
        values.insert(name.as_ref().to_string(), v);
    }
    for n in program.vars().iter().chain(&scope.parameters) {
        if !values.contains_key(n) {
            return Err(AuditError::Missing(n.clone()));
        }
    }
    let jet = program.eval_roots(&values, &())?.remove(0);
    Ok(ExprJet {
        vars: program.vars().to_vec(),
        jet,
    })
}

#[cfg(test)]
mod tests;
