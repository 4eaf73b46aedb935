//! A [`ProblemFile`] to a [`Problem`]: names resolved, every expression built.
//!
//! Order of work: all declarations are checked first (a name declared twice is reported at
//! its second place in the file), then parameters, function samples, defines (each with the
//! names declared before it), the perturbation and the source.

use super::{BackgroundData, Component, ExprText, Problem, ProblemError, ProblemFile, TensorText};
use crate::canon::{CanonError, Form, FunctionSample, Limits, Names, Store};
use crate::expr::{Expr, ExprKind, Span};
use crate::tensor::COORDS;
use crate::zero::Sampling;
use rustc_hash::FxHashMap;
use std::rc::Rc;

type Tensor = [[Form; 4]; 4];
/// Parameters confined to a range, by name.
type ParameterRanges = Vec<(String, (f64, f64))>;

#[derive(Clone, Copy, PartialEq, Eq)]
enum Kind {
    Parameter,
    Function,
    Define,
}

impl Kind {
    fn noun(self) -> &'static str {
        match self {
            Kind::Parameter => "a parameter",
            Kind::Function => "a function",
            Kind::Define => "a define",
        }
    }
}

const ONCE: &str = "each name is declared once, in one of [parameters], [functions] and [define]";

/// Said when an error inside a string can only be shown at the whole string.
const WHOLE_STRING: &str = "this string has escapes or line breaks, so the error is shown at \
                            the whole string; a literal string '...' shows the exact place";

struct Builder<'a> {
    file: &'a ProblemFile,
    store: Store,
}

impl Builder<'_> {
    fn err(&self, message: impl Into<String>, span: Span, label: &'static str) -> ProblemError {
        self.file.error(message, span, label)
    }

    /// An error at `span` of the expression `e`, pointed into the file.
    fn expr_err(
        &self,
        e: &ExprText,
        message: String,
        span: Span,
        label: &'static str,
        help: Option<String>,
    ) -> ProblemError {
        let help = match (e.offset, help) {
            (Some(_), h) => h,
            (None, Some(h)) => Some(format!("{h}\n{WHOLE_STRING}")),
            (None, None) => Some(WHOLE_STRING.to_string()),
        };
        self.err(message, e.file_span(span), label)
            .with_help_opt(help)
    }

    fn parse(&self, e: &ExprText) -> Result<Expr, ProblemError> {
        crate::parse::parse(&e.text).map_err(|pe| {
            let mut err = self.expr_err(e, pe.message, pe.span, pe.label, pe.help);
            if let (Some(rs), Some(_)) = (pe.related_span, e.offset) {
                err = err.with_related(e.file_span(rs), pe.related_label);
            }
            err
        })
    }

    fn build(&mut self, e: &ExprText, expr: &Expr, names: &Names) -> Result<Form, ProblemError> {
        self.store.build(expr, names).map_err(|be| {
            let limit = be
                .limit
                .then(|| be.cause.clone().unwrap_or_else(|| self.limit_reached()));
            let err = self.expr_err(e, be.message, be.span, "here", be.help);
            match limit {
                Some(l) => err.with_limit(l),
                None => err,
            }
        })
    }

    /// A limit reached in the algebra after building, at the start of the file.
    fn limit_error(&self, e: CanonError) -> ProblemError {
        self.err(
            format!("an algebra limit was reached: {e}"),
            Span::new(0, 0),
            "here",
        )
        .with_limit(e)
    }

    /// Which limit stopped a build: the deadline if it has passed, else the term limit.
    fn limit_reached(&self) -> CanonError {
        match self.store.limits.deadline {
            Some((t, ms)) if std::time::Instant::now() >= t => CanonError::Timeout(ms),
            _ => CanonError::TooLarge(self.store.limits.max_terms),
        }
    }

    fn parse_and_build(&mut self, e: &ExprText, names: &Names) -> Result<Form, ProblemError> {
        let expr = self.parse(e)?;
        self.build(e, &expr, names)
    }

    /// Each name at most once across \[parameters\], \[functions\] and \[define\].
    fn check_declarations(&self) -> Result<(), ProblemError> {
        let f = self.file;
        let mut decls: Vec<(&str, Span, Kind)> = f
            .parameters
            .iter()
            .map(|p| (p.name.as_str(), p.name_span, Kind::Parameter))
            .chain(
                f.functions
                    .iter()
                    .map(|d| (d.name.as_str(), d.name_span, Kind::Function)),
            )
            .chain(
                f.defines
                    .iter()
                    .map(|d| (d.name.as_str(), d.name_span, Kind::Define)),
            )
            .collect();
        decls.sort_by_key(|d| d.1.start);
        let mut seen: FxHashMap<&str, (Span, Kind)> = FxHashMap::default();
        for (name, span, kind) in decls {
            if let Some(&(first, first_kind)) = seen.get(name) {
                return Err(self
                    .err(
                        format!(
                            "`{name}` is declared twice: as {} and as {}",
                            first_kind.noun(),
                            kind.noun()
                        ),
                        span,
                        "declared again here",
                    )
                    .with_related(first, "first declared here")
                    .with_help(ONCE));
            }
            seen.insert(name, (span, kind));
        }
        Ok(())
    }

    /// A function sample may use only `u`, the parameters and built-in functions.
    fn check_sample(&self, e: &ExprText, expr: &Expr) -> Result<(), ProblemError> {
        let help = "a sample is a function of `u` alone: it may use `u`, the parameters, `pi` and \
                    the built-in functions, e.g. F = 'exp(-u^2)'";
        let f = self.file;
        let mut bad: Option<(String, Span)> = None;
        expr.walk(&mut |node| {
            if bad.is_some() {
                return;
            }
            let mut uses = |n: &str, span: Span| {
                if n == "u" || f.parameters.iter().any(|p| p.name == n) {
                    return;
                }
                let what = if COORDS.contains(&n) {
                    format!("the coordinate `{n}`")
                } else if f.defines.iter().any(|d| d.name == n) {
                    format!("the define `{n}`")
                } else {
                    return;
                };
                bad = Some((what, span));
            };
            match &node.kind {
                ExprKind::Ident(n) => uses(n, node.span),
                ExprKind::Deriv { vars, .. } => {
                    for (v, span) in vars {
                        uses(v, *span);
                    }
                }
                ExprKind::Call {
                    name, name_span, ..
                } if f.functions.iter().any(|d| &d.name == name) => {
                    bad = Some((format!("the arbitrary function `{name}`"), *name_span));
                }
                _ => {}
            }
        });
        match bad {
            Some((what, span)) => Err(self.expr_err(
                e,
                format!("a function sample may not use {what}"),
                span,
                "not allowed in a sample",
                Some(help.to_string()),
            )),
            None => Ok(()),
        }
    }

    /// A define may use only the defines before it.
    fn check_define_order(
        &self,
        index: usize,
        e: &ExprText,
        expr: &Expr,
    ) -> Result<(), ProblemError> {
        let defines = &self.file.defines;
        for (n, span) in expr.idents() {
            let Some(j) = defines.iter().position(|d| d.name == n) else {
                continue;
            };
            if j == index {
                return Err(self.expr_err(
                    e,
                    format!("`{n}` is used in its own definition"),
                    span,
                    "used here",
                    Some("a define cannot refer to itself".to_string()),
                ));
            }
            if j > index {
                let this = &defines[index].name;
                return Err(self
                    .expr_err(
                        e,
                        format!("`{n}` is used in the definition of `{this}` but defined later"),
                        span,
                        "defined later",
                        Some(format!(
                            "defines are built in order: move `{n}` above `{this}` in [define]"
                        )),
                    )
                    .with_related(defines[j].name_span, "defined here"));
            }
        }
        Ok(())
    }

    fn tensor(
        &mut self,
        components: &[Component],
        names: &Names,
    ) -> Result<(Tensor, TensorText), ProblemError> {
        let zero = self.store.zero();
        let mut m = [[zero; 4]; 4];
        for c in components {
            let f = self.parse_and_build(&c.expr, names)?;
            m[c.mu][c.nu] = f;
            m[c.nu][c.mu] = f;
        }
        Ok((m, super::tensor_text(components)))
    }
}

impl Builder<'_> {
    /// The background, when the file has anything beyond Minkowski in Cartesian coordinates
    /// (a \[background\], other coordinates, a cosmological constant, a background source or
    /// a gauge vector); Minkowski's components fill in a missing \[background\].
    fn background(&mut self, names: &Names) -> Result<Option<BackgroundData>, ProblemError> {
        let f = self.file;
        if !f.has_background() {
            return Ok(None);
        }
        let (g, g_text) = match &f.background {
            Some(components) => self.tensor(components, names)?,
            None => {
                let zero = self.store.zero();
                let one = self.store.one();
                let minus = self.store.int(-1);
                let mut g = [[zero; 4]; 4];
                for (mu, row) in g.iter_mut().enumerate() {
                    row[mu] = if mu == 0 { minus } else { one };
                }
                (g, f.background_text())
            }
        };
        let (source, source_text) = match &f.background_source {
            Some(components) => {
                let (m, t) = self.tensor(components, names)?;
                (Some(m), Some(t))
            }
            None => (None, None),
        };
        let (lambda, lambda_text) = match &f.cosmological_constant {
            Some(e) => (self.parse_and_build(e, names)?, Some(e.text.clone())),
            None => (self.store.zero(), None),
        };
        let (gauge_vector, gauge_vector_text) = match &f.gauge_vector {
            Some(components) => {
                let mut xi = [self.store.zero(); 4];
                for c in components {
                    xi[c.mu] = self.parse_and_build(&c.expr, names)?;
                }
                (Some(xi), Some(super::vector_text(components)))
            }
            None => (None, None),
        };
        Ok(Some(BackgroundData {
            g,
            g_text,
            source,
            source_text,
            lambda,
            lambda_text,
            gauge_vector,
            gauge_vector_text,
        }))
    }
}

pub(super) fn build(file: &ProblemFile, limits: Limits) -> Result<Problem, ProblemError> {
    let mut store = Store::new();
    store.limits = limits;
    let mut p = build_into(file, &mut store)?;
    p.store = store;
    Ok(p)
}

/// Builds `file` into `store` (which keeps its limits and its forms, and receives the new
/// ones, also when an error stops the build); the returned problem's own store is empty.
pub(super) fn build_into(file: &ProblemFile, store: &mut Store) -> Result<Problem, ProblemError> {
    let mut b = Builder {
        file,
        store: std::mem::take(store),
    };
    let built = b.build_all();
    *store = b.store;
    built
}

impl Builder<'_> {
    /// Every expression of the file, in file order, into `self.store`; the problem's own
    /// store is left empty.
    fn build_all(&mut self) -> Result<Problem, ProblemError> {
        let file = self.file;
        let b = self;
        b.check_declarations()?;

        let mut names = Names::strict();
        for c in &file.coordinates {
            names.symbol(c);
        }
        if let Some(o) = &file.orbit {
            b.check_anomaly(o)?;
            names.symbol(&o.anomaly);
        }
        let mut sampling = Sampling::default();
        for p in &file.parameters {
            names.symbol(&p.name);
            let k = b.store.symbol_kernel(&p.name);
            sampling.typical.insert(k, p.value);
        }

        let mut sample_names = Names::strict();
        sample_names.symbol("u");
        for p in &file.parameters {
            sample_names.symbol(&p.name);
        }
        let var = b.store.symbol_kernel("u");
        for f in &file.functions {
            names.function(&f.name);
            let expr = b.parse(&f.expr)?;
            b.check_sample(&f.expr, &expr)?;
            let form = b.build(&f.expr, &expr, &sample_names)?;
            sampling
                .samples
                .insert(Rc::from(f.name.as_str()), FunctionSample { var, form });
        }

        let mut defined = Vec::with_capacity(file.defines.len());
        for (i, d) in file.defines.iter().enumerate() {
            let expr = b.parse(&d.expr)?;
            b.check_define_order(i, &d.expr, &expr)?;
            let form = b.build(&d.expr, &expr, &names)?;
            names.define(&d.name, form);
            defined.push((d.name.clone(), form));
        }
        // Results print in the file's terms (`--expanded` turns this off).
        let naming = b.store.naming(&defined);
        b.store.set_display_names(Some(naming));

        let (h, h_text) = b.tensor(&file.perturbation, &names)?;
        let (source, source_text) = match &file.source {
            Some(components) => {
                let (m, t) = b.tensor(components, &names)?;
                (Some(m), Some(t))
            }
            None => (None, None),
        };

        let background = b.background(&names)?;
        let mut bodies = Vec::with_capacity(file.bodies.len());
        for body in &file.bodies {
            let mass = b.parse_and_build(&body.mass, &names)?;
            let mut position = [mass; 3];
            for (slot, e) in position.iter_mut().zip(&body.position) {
                *slot = b.parse_and_build(e, &names)?;
            }
            let rigid = match &body.rigid {
                None => None,
                Some(r) => {
                    let mut f = [mass; 7];
                    let texts: Vec<&ExprText> =
                        r.moments.iter().chain(&r.axis).chain([&r.angle]).collect();
                    for (slot, e) in f.iter_mut().zip(&texts) {
                        *slot = b.parse_and_build(e, &names)?;
                    }
                    let axis = [f[3], f[4], f[5]];
                    // The axis must be proved a unit vector (Rodrigues' rotation needs it).
                    let mut sq = Vec::new();
                    for a in axis {
                        sq.push(b.store.mul(a, a).map_err(|e| b.limit_error(e))?);
                    }
                    let n2 = b.store.sum(&sq).map_err(|e| b.limit_error(e))?;
                    let one = b.store.one();
                    let d = b.store.sub(n2, one).map_err(|e| b.limit_error(e))?;
                    if !b.store.is_zero(d) {
                        return Err(b
                            .err(
                                format!("the axis of {} is not a unit vector", body.label),
                                r.axis[0].token,
                                "not of length 1",
                            )
                            .with_help("give a unit axis, e.g. axis = ['0', '0', '1']"));
                    }
                    Some(super::Rigid {
                        moments: [f[0], f[1], f[2]],
                        axis,
                        angle: f[6],
                        texts: (
                            r.moments.clone().map(|e| e.text),
                            r.axis.clone().map(|e| e.text),
                            r.angle.text.clone(),
                        ),
                    })
                }
            };
            bodies.push(super::Body {
                label: body.label.clone(),
                mass,
                position,
                mass_text: body.mass.text.clone(),
                position_text: body.position.clone().map(|e| e.text),
                rigid,
            });
        }
        let mut parameter_ranges = Vec::new();
        let orbit = match &file.orbit {
            Some(o) => Some(b.orbit(o, &names, (&mut sampling, &mut parameter_ranges))?),
            None => None,
        };
        let rc = &file.radiation_claims;
        let claimed = |b: &mut Self, e: &ExprText| -> Result<super::Claimed, ProblemError> {
            Ok(super::Claimed {
                form: b.parse_and_build(e, &names)?,
                text: e.text.clone(),
            })
        };
        let mut radiation_claims = super::RadiationClaims::default();
        if let Some(e) = &rc.luminosity {
            radiation_claims.luminosity = Some(claimed(b, e)?);
        }
        if let Some(e) = &rc.luminosity_average {
            radiation_claims.luminosity_average = Some(claimed(b, e)?);
        }
        if let Some(w) = &rc.waveform {
            radiation_claims.waveform = Some((
                w.direction.text.clone(),
                claimed(b, &w.distance)?,
                claimed(b, &w.h_plus)?,
                claimed(b, &w.h_cross)?,
            ));
        }
        if let Some(v) = &rc.momentum_flux {
            radiation_claims.momentum_flux =
                Some([claimed(b, &v[0])?, claimed(b, &v[1])?, claimed(b, &v[2])?]);
        }
        if let Some(v) = &rc.momentum_flux_average {
            radiation_claims.momentum_flux_average =
                Some([claimed(b, &v[0])?, claimed(b, &v[1])?, claimed(b, &v[2])?]);
        }
        if !radiation_claims.is_empty() && bodies.is_empty() {
            return Err(b.err(
                "claims about radiation (luminosity, waveform, momentum flux) need the bodies \
                 that radiate: [[body]] tables or a [binary]",
                Span::new(0, 0),
                "no bodies",
            ));
        }
        if let Some(domain) = &file.domain {
            for (mu, range) in domain.iter().enumerate() {
                if let Some(r) = range {
                    let k = b.store.symbol_kernel(&file.coordinates[mu]);
                    sampling.ranges.insert(k, *r);
                }
            }
        }

        Ok(Problem {
            name: file.name.clone(),
            path: file.path.clone(),
            text: file.text.clone(),
            store: Store::new(),
            names,
            parameters: file.parameter_values(),
            functions: super::named_texts(&file.functions),
            defines: super::named_texts(&file.defines),
            h,
            h_text,
            source,
            source_text,
            claims: file.claims.clone(),
            grid: file.grid.clone(),
            sampling,
            coordinates: file.coordinates.clone(),
            background,
            domain: file.domain,
            bodies,
            orbit,
            parameter_ranges,
            radiation_claims,
        })
    }
}

impl Builder<'_> {
    /// The anomaly's name must be free: not a coordinate, parameter, function, define or
    /// built-in name.
    fn check_anomaly(&self, o: &super::KeplerOrbitText) -> Result<(), ProblemError> {
        let f = self.file;
        let n = o.anomaly.as_str();
        let taken = if f.coordinates.iter().any(|c| c == n) {
            Some("a coordinate")
        } else if f.parameters.iter().any(|p| p.name == n) {
            Some("a parameter")
        } else if f.functions.iter().any(|d| d.name == n) {
            Some("a function")
        } else if f.defines.iter().any(|d| d.name == n) {
            Some("a define")
        } else if n == "pi" || crate::canon::BUILTINS.contains(&n) {
            Some("a built-in name")
        } else {
            None
        };
        let Some(what) = taken else { return Ok(()) };
        let message = if o.anomaly_written {
            format!("the anomaly `{n}` is already {what}")
        } else {
            format!("the eccentric anomaly is named `{n}` by default, but `{n}` is already {what}")
        };
        Err(self
            .err(message, o.anomaly_span, "the anomaly's name")
            .with_help(
                "name the eccentric anomaly with a free name in [binary], e.g. anomaly = 'EA'",
            ))
    }

    /// The eccentric orbit's clock: the eccentricity (a number in [0, 1) or one parameter,
    /// then confined to (0, 1) in `ranges` and the sampling), the mean motion and dE/dt.
    fn orbit(
        &mut self,
        o: &super::KeplerOrbitText,
        names: &Names,
        (sampling, ranges): (&mut Sampling, &mut ParameterRanges),
    ) -> Result<super::KeplerOrbit, ProblemError> {
        let help = "give the eccentricity as a number, eccentricity = 0.5, as one parameter \
                    with its value in [0, 1), eccentricity = 'e0', or as an expression of \
                    parameters whose value is in (0, 1), eccentricity = 'sqrt(1 - b^2/a^2)'";
        let mut condition_text = None;
        let e_text = &o.eccentricity;
        let e = self.parse_and_build(e_text, names)?;
        let symbols = self.store.free_symbols(e);
        let bad = |b: &Self, why: String| b.err(why, e_text.token, "here").with_help(help);
        match symbols.as_slice() {
            [] => {
                let at = crate::canon::Point::default();
                let value = self.store.eval_interval(e, &at);
                // Real: exactly (a rational or surd coefficient), or shown real (a root of a
                // certified positive number, `sqrt(1/3)`), and then its real part is its value.
                let real = value.is_some_and(|z| z.im.lo() == 0.0 && z.im.hi() == 0.0)
                    || self.store.is_real_on(e, &at);
                let inside = real && value.is_some_and(|z| z.re.lo() >= 0.0 && z.re.hi() < 1.0);
                // An expression that is 0 (`1/2 - 1/2`; the number 0 itself is read as a
                // circular orbit) would be an eccentric orbit whose averages divide by e.
                if self.store.is_zero(e) {
                    return Err(bad(
                        self,
                        format!(
                            "the eccentricity {} is 0: a circular orbit, written without \
                             eccentricity (the eccentric anomaly's averages divide by e)",
                            e_text.text
                        ),
                    ));
                }
                if !inside {
                    return Err(bad(
                        self,
                        format!(
                            "the eccentricity {} is not certified to lie in [0, 1) (a Kepler \
                             orbit is a bound ellipse)",
                            e_text.text
                        ),
                    ));
                }
            }
            [name] if self.store.symbol(name) == e => {
                let Some(p) = self.file.parameters.iter().find(|p| *p.name == **name) else {
                    return Err(bad(
                        self,
                        format!("the eccentricity `{name}` is not a parameter"),
                    ));
                };
                if !(0.0..1.0).contains(&p.value) {
                    return Err(self
                        .err(
                            format!(
                                "the eccentricity `{name}` has the value {}; a Kepler orbit \
                                 has 0 <= e < 1",
                                p.value
                            ),
                            p.value_span,
                            "not in [0, 1)",
                        )
                        .with_related(e_text.token, "the eccentricity")
                        .with_help(help));
                }
                let k = self.store.symbol_kernel(name);
                sampling.ranges.insert(k, (0.0, 1.0));
                ranges.push((name.to_string(), (0.0, 1.0)));
            }
            syms => {
                let condition = self.eccentricity_box(e, e_text, syms, (sampling, ranges))?;
                condition_text = Some(condition);
            }
        }
        let generated = |text: &str| ExprText {
            text: text.to_string(),
            token: o.anomaly_span,
            offset: None,
        };
        let mean_motion = self.parse_and_build(&generated(&o.mean_motion), names)?;
        let rate = self.parse_and_build(&generated(&o.rate), names)?;
        let frame = match &o.angles {
            None => None,
            Some(angles) => Some(self.orbit_frame(o, angles, names)?),
        };
        Ok(super::KeplerOrbit {
            anomaly: o.anomaly.clone(),
            eccentricity: e,
            eccentricity_text: e_text.text.clone(),
            mean_motion,
            mean_motion_text: o.mean_motion.clone(),
            rate,
            frame,
            condition: condition_text,
        })
    }

    /// An eccentricity written as an expression of parameters: every name in it a parameter,
    /// not identically 0, and a box of parameter values around the file's values on which
    /// interval arithmetic certifies `0 < e < 1`. The parameters of `e` are then confined to
    /// that box for the zero test's and the audit's points (`sampling.ranges`,
    /// `parameter_ranges`), so that every point where a verdict is certified is one where the
    /// orbit's formulas hold (the exact averages divide by `e` and take `sqrt(1 - e^2)`).
    /// Returns the condition as printed, with the box.
    fn eccentricity_box(
        &mut self,
        e: Form,
        e_text: &ExprText,
        symbols: &[Rc<str>],
        (sampling, ranges): (&mut Sampling, &mut ParameterRanges),
    ) -> Result<String, ProblemError> {
        let help = "an eccentricity expression may use parameters only, and its value at the \
                    file's parameter values must lie strictly between 0 and 1 (e = 0 is a \
                    circular orbit: leave eccentricity out)";
        let bad = |b: &Self, why: String| b.err(why, e_text.token, "here").with_help(help);
        let mut values = Vec::with_capacity(symbols.len());
        for name in symbols {
            match self.file.parameters.iter().find(|p| *p.name == **name) {
                Some(p) => values.push((name.to_string(), p.value)),
                None => {
                    return Err(bad(
                        self,
                        format!(
                            "the eccentricity {} uses `{name}`, which is not a parameter",
                            e_text.text
                        ),
                    ));
                }
            }
        }
        if let Some(f) = self.store.functions_used(e).first() {
            return Err(bad(
                self,
                format!(
                    "the eccentricity {} uses the arbitrary function `{f}`",
                    e_text.text
                ),
            ));
        }
        // The box: each parameter within delta of its value (relative, at least 1e-3
        // absolute), delta halved from 1/4 until the enclosure of e over the whole box lies
        // in (0, 1).
        let kernels: Vec<_> = values
            .iter()
            .map(|(n, _)| self.store.symbol_kernel(n))
            .collect();
        let mut delta = 0.25_f64;
        let mut found = None;
        let mut at_values = None;
        for _ in 0..24 {
            let mut pt = crate::canon::Point::default();
            let mut boxes = Vec::with_capacity(values.len());
            for ((name, v), k) in values.iter().zip(&kernels) {
                let w = delta * v.abs().max(1e-3);
                let (mut lo, mut hi) = (v - w, v + w);
                // A [domain] range already confining the name is kept.
                if let Some(&(dlo, dhi)) = sampling.ranges.get(k) {
                    lo = lo.max(dlo);
                    hi = hi.min(dhi);
                }
                let Some(iv) = crate::interval::Interval::new(lo.min(*v), hi.max(*v)) else {
                    return Err(bad(
                        self,
                        format!("the parameter `{name}` has no finite range"),
                    ));
                };
                pt.values
                    .insert(*k, crate::interval::CInterval::from_real(iv));
                boxes.push((name.clone(), (iv.lo(), iv.hi())));
            }
            if at_values.is_none() {
                let mut exact = crate::canon::Point::default();
                for ((_, v), k) in values.iter().zip(&kernels) {
                    if let Some(iv) = crate::interval::Interval::point(*v) {
                        exact
                            .values
                            .insert(*k, crate::interval::CInterval::from_real(iv));
                    }
                }
                at_values = Some(self.store.eval_interval(e, &exact));
            }
            // Real on the box (roots of certified positive radicands), and its real part,
            // which is then its value, inside (0, 1).
            let inside = self.store.is_real_on(e, &pt)
                && self
                    .store
                    .eval_interval(e, &pt)
                    .is_some_and(|z| z.re.lo() > 0.0 && z.re.hi() < 1.0);
            if inside {
                found = Some(boxes);
                break;
            }
            delta *= 0.5;
        }
        let Some(boxes) = found else {
            let value = match at_values.flatten() {
                Some(z) if z.im.mag() <= 1e-12 * (1.0 + z.re.mag()) => {
                    format!("about {:.6e}", z.re.mid())
                }
                _ => "not a real number".to_string(),
            };
            return Err(bad(
                self,
                format!(
                    "the eccentricity {} is {value} at the file's parameter values, not \
                     certified to lie strictly between 0 and 1 near them (a Kepler orbit is a \
                     bound ellipse; the exact averages divide by e)",
                    e_text.text
                ),
            ));
        };
        let mut parts = Vec::with_capacity(boxes.len());
        for ((name, (lo, hi)), k) in boxes.into_iter().zip(kernels) {
            sampling.ranges.insert(k, (lo, hi));
            ranges.retain(|(n, _)| *n != name);
            ranges.push((name.clone(), (lo, hi)));
            parts.push(format!("{name} in [{lo:.6e}, {hi:.6e}]"));
        }
        Ok(format!(
            "0 < {} < 1 (the exact averages assume it; certified by interval arithmetic for {}, \
             where the checks sample these parameters)",
            e_text.text,
            parts.join(", ")
        ))
    }

    /// The bodies in the orbit's own frame and the rotation `Rz(node) Rx(i) Rz(phase)`.
    fn orbit_frame(
        &mut self,
        o: &super::KeplerOrbitText,
        angles: &[String; 3],
        names: &Names,
    ) -> Result<(Vec<super::Body>, [[Form; 3]; 3]), ProblemError> {
        let generated = |text: String| ExprText {
            text,
            token: o.anomaly_span,
            offset: None,
        };
        let ([m1, m2], [x, y]) = &o.plane;
        let mass = format!("({m1} + {m2})");
        let mut bodies = Vec::with_capacity(2);
        for (label, m, share) in [
            ("m1", m1, format!("({m2})/{mass}")),
            ("m2", m2, format!("(-({m1})/{mass})")),
        ] {
            let position_text = [
                format!("{share}*({x})"),
                format!("{share}*({y})"),
                "0".to_string(),
            ];
            let mass_form = self.parse_and_build(&generated(m.clone()), names)?;
            let mut position = [mass_form; 3];
            for (slot, t) in position.iter_mut().zip(&position_text) {
                *slot = self.parse_and_build(&generated(t.clone()), names)?;
            }
            bodies.push(super::Body {
                label: label.to_string(),
                mass: mass_form,
                position,
                mass_text: m.clone(),
                position_text,
                rigid: None,
            });
        }
        let lim = |b: &Self, e| b.limit_error(e);
        let mut turns = Vec::with_capacity(3);
        for (k, a) in angles.iter().enumerate() {
            let f = self.parse_and_build(&generated(a.clone()), names)?;
            let st = &mut self.store;
            let (c, s) = match (st.cos(f), st.sin(f)) {
                (Ok(c), Ok(s)) => (c, s),
                (Err(e), _) | (_, Err(e)) => return Err(lim(self, e)),
            };
            let (z, one) = (self.store.zero(), self.store.one());
            let ms = match self.store.neg(s) {
                Ok(v) => v,
                Err(e) => return Err(lim(self, e)),
            };
            // k = 0: Rx(i); k = 1, 2: Rz(node), Rz(phase).
            turns.push(if k == 0 {
                [[one, z, z], [z, c, ms], [z, s, c]]
            } else {
                [[c, ms, z], [s, c, z], [z, z, one]]
            });
        }
        let product = |b: &mut Self, p: [[Form; 3]; 3], q: [[Form; 3]; 3]| {
            let mut out = p;
            for i in 0..3 {
                for j in 0..3 {
                    let mut terms = Vec::with_capacity(3);
                    for k in 0..3 {
                        terms.push(b.store.mul(p[i][k], q[k][j]).map_err(|e| lim(b, e))?);
                    }
                    out[i][j] = b.store.sum(&terms).map_err(|e| lim(b, e))?;
                }
            }
            Ok::<_, ProblemError>(out)
        };
        let ri = product(self, turns[0], turns[2])?;
        let r = product(self, turns[1], ri)?;
        Ok((bodies, r))
    }
}
