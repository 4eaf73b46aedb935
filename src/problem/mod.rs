//! The TOML problem file: from text to a resolved [`Problem`] with every expression built.
//!
//! Model. A problem file states a metric perturbation `h_{mu nu}` (both indices down), an
//! optional source `T_{mu nu}`, the names its expressions use, and the claims to check:
//!
//! ```toml
//! name = 'plane wave, + polarisation'
//! [parameters]          # constant symbols; the number is a typical value for numeric checks
//! A = 1.0e-3
//! omega = 2.0
//! [functions]           # arbitrary functions of one argument, each with a sample in `u`
//! F = 'exp(-u^2)'
//! [define]              # named subexpressions, built in order
//! phase = 'omega*(t - z)'
//! [perturbation]        # keys are pairs of t x y z; `xt` means `tx`; omitted ones are 0
//! xx = 'A*cos(phase)'
//! yy = '-A*cos(phase)'
//! [claims]
//! field_equations = true
//! gauge = ['lorenz', 'tt']
//! ```
//!
//! Reading happens in two stages, so that every input error is found before any work starts:
//! [`ProblemFile::parse`] checks the file's structure (tables, keys, types) and keeps the span
//! of every key and string; [`ProblemFile::build`] resolves names and builds each expression
//! into a canonical form. [`read`](fn@read) and [`from_str`] do both.
//!
//! Key design decision: the file is read as a generic spanned TOML tree and checked by hand,
//! not through a derived deserializer, so that every error (an unknown key, a component given
//! twice, a misspelt gauge) points at the exact key or value in the file, with wording and a
//! "did you mean" hint of our own. Expression errors point inside the string too: a literal
//! string `'...'` (or a basic string without escapes) maps byte for byte onto its content;
//! for any other string the error points at the whole string.
//!
//! **Invariants:** this is the only module that knows TOML; reading never panics, on any
//! input; every error carries the file's text and a span on its char boundaries.

mod bodies;
mod build;
pub use bodies::{DEFAULT_ANOMALY, KeplerOrbitText};
mod error;
mod read;
mod render;
#[cfg(test)]
mod tests;

/// The worked example `worked/NAME`, read (for the unit tests of every module).
#[cfg(test)]
pub(crate) fn worked(name: &str) -> Problem {
    worked_file(name)
        .build()
        .unwrap_or_else(|e| panic!("{name}: {e:?}"))
}

/// The names of the worked files (`*.toml` in worked/), sorted (tests).
#[cfg(test)]
pub(crate) fn worked_names() -> Vec<String> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("worked");
    let mut names: Vec<String> = std::fs::read_dir(&dir)
        .expect("worked/ exists")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .map(|p| {
            p.file_name()
                .expect("a file")
                .to_string_lossy()
                .into_owned()
        })
        .collect();
    names.sort();
    names
}

/// The worked file `name`, read but not built (tests).
#[cfg(test)]
pub(crate) fn worked_file(name: &str) -> ProblemFile {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("worked")
        .join(name);
    let text = std::fs::read_to_string(&path).expect("readable");
    ProblemFile::parse(name, &text).unwrap_or_else(|e| panic!("{name}: {e:?}"))
}

pub use error::ProblemError;
pub use render::{render_grid, render_problem};

use crate::canon::{Form, Limits, Names, Store};
use crate::expr::Span;
use crate::tensor::COORDS;
use crate::zero::Sampling;
use std::fmt;

/// The texts of a symmetric tensor's components as written, at both `[mu][nu]` and
/// `[nu][mu]`; `None` for a component the file omits.
pub type TensorText = [[Option<String>; 4]; 4];

pub use crate::claim::{Claims, Gauge};

/// The texts of a symmetric tensor's components as written (both orders of each pair).
#[must_use]
pub fn tensor_text(components: &[Component]) -> TensorText {
    let mut text: TensorText = Default::default();
    for c in components {
        text[c.mu][c.nu] = Some(c.expr.text.clone());
        text[c.nu][c.mu] = Some(c.expr.text.clone());
    }
    text
}

/// Each name with its expression's text, as written (\[define\], \[functions\]).
#[must_use]
pub fn named_texts(named: &[NamedExpr]) -> Vec<(String, String)> {
    named
        .iter()
        .map(|d| (d.name.clone(), d.expr.text.clone()))
        .collect()
}

/// The texts of a vector's components as written.
#[must_use]
pub fn vector_text(components: &[VectorComponent]) -> [Option<String>; 4] {
    let mut text: [Option<String>; 4] = Default::default();
    for c in components {
        text[c.mu] = Some(c.expr.text.clone());
    }
    text
}

/// Settings for the numerical grid check, as written (the grid check supplies defaults).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct GridSpec {
    /// The centre `(t, x, y, z)`.
    pub center: Option<[f64; 4]>,
    /// The grid's width in each coordinate; positive.
    pub width: Option<f64>,
    /// Points per side at each resolution: at least three, increasing, each at least 5.
    pub points: Option<Vec<usize>>,
}

/// A string holding an expression, with where it sits in the file.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ExprText {
    /// The expression, as TOML decoded it.
    pub text: String,
    /// The whole string token, quotes included.
    pub token: Span,
    /// Byte offset of `text` in the file when the string maps onto the file byte for byte
    /// (a one-line literal string, or a basic string without escapes); `None` otherwise.
    pub offset: Option<usize>,
}

impl ExprText {
    /// Where a span of [`ExprText::text`] is in the file: exact when the string maps byte
    /// for byte, else the whole string token.
    #[must_use]
    pub fn file_span(&self, span: Span) -> Span {
        match self.offset {
            Some(o) if span.end <= self.text.len() => span.shifted(o),
            _ => self.token,
        }
    }
}

/// A `name = 'expression'` entry of \[functions\] or \[define\].
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct NamedExpr {
    /// The name declared.
    pub name: String,
    /// Where the name is written.
    pub name_span: Span,
    /// The expression (for \[functions\], the sample in `u`).
    pub expr: ExprText,
}

/// A `name = value` entry of \[parameters\].
#[derive(Clone, Debug, PartialEq)]
pub struct Parameter {
    /// The name declared.
    pub name: String,
    /// Where the name is written.
    pub name_span: Span,
    /// The typical value used by numeric checks; finite.
    pub value: f64,
    /// Where the value is written.
    pub value_span: Span,
}

/// One component of \[perturbation\] or \[source\].
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Component {
    /// The smaller index (0 = t, 1 = x, 2 = y, 3 = z).
    pub mu: usize,
    /// The larger index.
    pub nu: usize,
    /// The key as written (`xt`, `tx`, ...).
    pub key: String,
    /// Where the key is written.
    pub key_span: Span,
    /// The component's expression.
    pub expr: ExprText,
}

/// One component of \[gauge_vector\]: `xi_mu`, index down.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct VectorComponent {
    /// The index (a position in the coordinates).
    pub mu: usize,
    /// Where the key is written.
    pub key_span: Span,
    /// The component's expression.
    pub expr: ExprText,
}

/// \[domain\]: a closed range per coordinate, where the fields are meant to hold.
pub type Domain = [Option<(f64, f64)>; 4];

/// A problem file, read and checked for structure but not yet built: every piece keeps its
/// span in the file. Entries are in file order.
#[derive(Clone, Debug)]
pub struct ProblemFile {
    /// The path (or label) shown in error messages.
    pub path: String,
    /// The file's text.
    pub text: String,
    /// The `name` at the top, if any.
    pub name: Option<String>,
    /// \[parameters\].
    pub parameters: Vec<Parameter>,
    /// \[functions\].
    pub functions: Vec<NamedExpr>,
    /// \[define\].
    pub defines: Vec<NamedExpr>,
    /// \[perturbation\]; each component at most once.
    pub perturbation: Vec<Component>,
    /// \[source\], `None` when the file has no such table.
    pub source: Option<Vec<Component>>,
    /// \[claims\], `None` when the file has no such table.
    pub claims: Option<Claims>,
    /// \[grid\], `None` when the file has no such table.
    pub grid: Option<GridSpec>,
    /// The coordinate names, time first (`t, x, y, z` unless the file lists others).
    pub coordinates: [String; 4],
    /// Where `coordinates` is written, if it is.
    pub coordinates_span: Option<Span>,
    /// `cosmological_constant`, if given.
    pub cosmological_constant: Option<ExprText>,
    /// \[background\] (gbar, indices down), `None` for Minkowski in Cartesian coordinates.
    pub background: Option<Vec<Component>>,
    /// \[background_source\] (Tbar, indices down), `None` for vacuum.
    pub background_source: Option<Vec<Component>>,
    /// \[gauge_vector\] (xi, index down), if given.
    pub gauge_vector: Option<Vec<VectorComponent>>,
    /// \[domain\], if given.
    pub domain: Option<Domain>,
    /// `[[body]]` tables and the two bodies of a `[binary]`, in file order.
    pub bodies: Vec<BodyText>,
    /// The clock of an eccentric `[binary]` (its bodies are then functions of the
    /// eccentric anomaly), `None` when the bodies are functions of t.
    pub orbit: Option<KeplerOrbitText>,
    /// The claims about the bodies' radiation in \[claims\].
    pub radiation_claims: RadiationClaimTexts,
    /// Where `far_zone_order` is written, if it is.
    pub far_zone_span: Option<Span>,
    /// Where the value of `far_zone_radius` is written, if it is.
    pub far_zone_radius_span: Option<Span>,
}

/// The claims about radiation as written: `luminosity`, `luminosity_average`,
/// `[claims.waveform]`, `momentum_flux` and `momentum_flux_average`.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct RadiationClaimTexts {
    /// The luminosity at time t.
    pub luminosity: Option<ExprText>,
    /// The luminosity averaged over time.
    pub luminosity_average: Option<ExprText>,
    /// The waveform at an observer.
    pub waveform: Option<WaveformTexts>,
    /// The linear momentum carried away per unit time, `dP_i/dt` (x, y, z), at time t.
    pub momentum_flux: Option<[ExprText; 3]>,
    /// The same averaged over time.
    pub momentum_flux_average: Option<[ExprText; 3]>,
}

/// `[claims.waveform]` as written.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct WaveformTexts {
    /// The direction to the observer, written as for `project --direction`.
    pub direction: ExprText,
    /// The observer's distance.
    pub distance: ExprText,
    /// h_plus at the observer at time t.
    pub h_plus: ExprText,
    /// h_cross likewise.
    pub h_cross: ExprText,
}

/// A claimed expression built, with its text.
#[derive(Clone, Debug)]
pub struct Claimed {
    /// The form.
    pub form: Form,
    /// The text as written.
    pub text: String,
}

/// The claims about radiation, built (see [`RadiationClaimTexts`]).
#[derive(Clone, Debug, Default)]
pub struct RadiationClaims {
    /// The luminosity at time t.
    pub luminosity: Option<Claimed>,
    /// The luminosity averaged over time.
    pub luminosity_average: Option<Claimed>,
    /// The waveform: direction text, distance, h_plus, h_cross.
    pub waveform: Option<(String, Claimed, Claimed, Claimed)>,
    /// The linear-momentum flux `dP_i/dt`.
    pub momentum_flux: Option<[Claimed; 3]>,
    /// The same averaged over time.
    pub momentum_flux_average: Option<[Claimed; 3]>,
}

impl RadiationClaims {
    /// True when the file makes no claim about radiation.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.luminosity.is_none()
            && self.luminosity_average.is_none()
            && self.waveform.is_none()
            && self.momentum_flux.is_none()
            && self.momentum_flux_average.is_none()
    }
}

/// A point mass as written: its mass and its position `(x, y, z)` as expressions in t.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct BodyText {
    /// `body 1`, `body 2`, ... or the binary's `m1`, `m2`.
    pub label: String,
    /// The mass.
    pub mass: ExprText,
    /// The position.
    pub position: [ExprText; 3],
    /// For an extended rigid body: its moments of inertia and rotation.
    pub rigid: Option<RigidText>,
}

/// A rigid body's principal moments of inertia (along x, y, z at angle 0) and its rotation
/// by `angle` (a function of t) about the unit `axis`, as written.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct RigidText {
    /// I1, I2, I3.
    pub moments: [ExprText; 3],
    /// The unit rotation axis.
    pub axis: [ExprText; 3],
    /// The rotation angle, right-handed about the axis.
    pub angle: ExprText,
}

/// A rigid body's moments and rotation, built.
#[derive(Clone, Debug)]
pub struct Rigid {
    /// I1, I2, I3.
    pub moments: [Form; 3],
    /// The unit axis.
    pub axis: [Form; 3],
    /// The angle.
    pub angle: Form,
    /// The texts of the moments, the axis and the angle.
    pub texts: ([String; 3], [String; 3], String),
}

/// An eccentric Kepler orbit's clock, built: the bodies are functions of the eccentric
/// anomaly `E` (a symbol of the problem's names), and time enters through Kepler's equation
/// `n t = E - e sin E` (periapsis at t = 0), so `d/dt = rate * d/dE` with
/// `rate = dE/dt = n/(1 - e cos E)`. See the `[binary]` documentation of the README.
#[derive(Clone, Debug)]
pub struct KeplerOrbit {
    /// The anomaly's name.
    pub anomaly: String,
    /// The eccentricity, `0 <= e < 1` (a number or a parameter confined to `[0, 1)`).
    pub eccentricity: Form,
    /// The eccentricity as written.
    pub eccentricity_text: String,
    /// The mean motion `n = 2 pi/P`.
    pub mean_motion: Form,
    /// The mean motion's text.
    pub mean_motion_text: String,
    /// `dE/dt`.
    pub rate: Form,
    /// With orientation angles: the two bodies in the orbit's own frame (periapsis along +x,
    /// angular momentum along +z) and the rotation `R` (rows in space) that turns that frame
    /// into space, `x_space = R x_plane`. Radiation computes in the orbit's frame and turns
    /// the results (the luminosity is invariant), which keeps the forms small.
    pub frame: Option<(Vec<Body>, [[Form; 3]; 3])>,
    /// For an eccentricity written as an expression of parameters: the condition `0 < e < 1`
    /// the exact averages assume, with the box of parameter values on which it was certified
    /// (the checks sample the parameters inside it). `None` for a number or one parameter.
    pub condition: Option<String>,
}

/// A point mass built: mass and position as forms, with their texts.
#[derive(Clone, Debug)]
pub struct Body {
    /// `body 1`, ... or `m1`, `m2` of a binary.
    pub label: String,
    /// The mass.
    pub mass: Form,
    /// The position `(x, y, z)`, functions of t.
    pub position: [Form; 3],
    /// The mass as written.
    pub mass_text: String,
    /// The position as written.
    pub position_text: [String; 3],
    /// For an extended rigid body: its moments and rotation.
    pub rigid: Option<Rigid>,
}

impl ProblemFile {
    /// Reads the TOML structure of `text`; `path_label` names the file in messages.
    ///
    /// # Errors
    ///
    /// The first structural problem: bad TOML, an unknown key or table, a value of the wrong
    /// type, an invalid component key, a component given twice, an unknown gauge, a bad grid.
    pub fn parse(path_label: &str, text: &str) -> Result<ProblemFile, ProblemError> {
        read::parse_file(path_label, text)
    }

    /// Resolves names and builds every expression into canonical forms in a fresh store.
    ///
    /// # Errors
    ///
    /// The first problem, in file order of the tables: a name declared twice or reserved, an
    /// expression that does not parse, an undeclared name, a define used before it is
    /// defined, a function sample that uses more than `u` and the parameters.
    pub fn build(&self) -> Result<Problem, ProblemError> {
        self.build_with(Limits::default())
    }

    /// As [`ProblemFile::build`], in a store with `limits` in force from the start (the
    /// problem's expressions are built under them, and they stay in the problem's store).
    ///
    /// # Errors
    ///
    /// As [`ProblemFile::build`]; a limit reached while building is an error with
    /// [`ProblemError::limit`] set.
    pub fn build_with(&self, limits: Limits) -> Result<Problem, ProblemError> {
        build::build(self, limits)
    }

    /// As [`ProblemFile::build`], into `store`, the store of another problem (for comparing
    /// two files in one store): this file's names are resolved with its own name table, so
    /// its defines never capture the other file's names, while a parameter or function that
    /// both declare is one symbol of the store. The store's limits are in force and it keeps
    /// whatever was built, also on an error. The returned problem's own
    /// [`Problem::store`] is empty: its forms (perturbation, source, defines, function
    /// samples in [`Problem::sampling`]) live in `store`.
    ///
    /// # Errors
    ///
    /// As [`ProblemFile::build_with`].
    pub fn build_into(&self, store: &mut Store) -> Result<Problem, ProblemError> {
        build::build_into(self, store)
    }

    /// Each parameter with its typical value.
    #[must_use]
    pub fn parameter_values(&self) -> Vec<(String, f64)> {
        self.parameters
            .iter()
            .map(|p| (p.name.clone(), p.value))
            .collect()
    }

    /// True when the file has anything beyond Minkowski in Cartesian coordinates: a
    /// \[background\], other coordinates, a cosmological constant, a background source or a
    /// gauge vector (the built problem then has a [`Problem::background`]).
    #[must_use]
    pub fn has_background(&self) -> bool {
        self.background.is_some()
            || self.coordinates != crate::tensor::COORDS.map(String::from)
            || self.cosmological_constant.is_some()
            || self.background_source.is_some()
            || self.gauge_vector.is_some()
    }

    /// The texts of the background metric as the built problem keeps them: the file's
    /// \[background\], or Minkowski's `-1, 1, 1, 1` on the diagonal when it has none.
    #[must_use]
    pub fn background_text(&self) -> TensorText {
        match &self.background {
            Some(components) => tensor_text(components),
            None => {
                let mut text: TensorText = Default::default();
                for (mu, row) in text.iter_mut().enumerate() {
                    row[mu] = Some(if mu == 0 { "-1" } else { "1" }.to_string());
                }
                text
            }
        }
    }

    /// An error at `span` of this file.
    #[must_use]
    pub fn error(
        &self,
        message: impl Into<String>,
        span: Span,
        label: &'static str,
    ) -> ProblemError {
        ProblemError::new(&self.path, &self.text, message, span, label)
    }
}

/// A problem with every expression built into canonical forms in [`Problem::store`].
pub struct Problem {
    /// The `name` at the top of the file, if any.
    pub name: Option<String>,
    /// The path (or label) of the file.
    pub path: String,
    /// The file's text.
    pub text: String,
    /// The store holding every form of this problem (empty for a problem built into another
    /// problem's store, see [`ProblemFile::build_into`]).
    pub store: Store,
    /// The strict name table (coordinates, parameters, functions, defines), for building
    /// more expressions with the same names.
    pub names: Names,
    /// Parameters and their typical values, in file order.
    pub parameters: Vec<(String, f64)>,
    /// Arbitrary functions and their sample texts (in `u`), in file order.
    pub functions: Vec<(String, String)>,
    /// Named subexpressions and their texts, in file order.
    pub defines: Vec<(String, String)>,
    /// `h_{mu nu}`, symmetric; omitted components are zero.
    pub h: [[Form; 4]; 4],
    /// The texts of `h` as written, at both `[mu][nu]` and `[nu][mu]`.
    pub h_text: TensorText,
    /// `T_{mu nu}`, symmetric; `None` when the file has no \[source\] table.
    pub source: Option<[[Form; 4]; 4]>,
    /// The texts of `T` as written, like [`Problem::h_text`]; `None` exactly when
    /// [`Problem::source`] is.
    pub source_text: Option<TensorText>,
    /// The claims, `None` when the file has no \[claims\] table.
    pub claims: Option<Claims>,
    /// The grid settings, `None` when the file has no \[grid\] table.
    pub grid: Option<GridSpec>,
    /// Typical values (the parameter values) and function samples for the zero test.
    pub sampling: Sampling,
    /// The coordinate names, time first.
    pub coordinates: [String; 4],
    /// The background and what comes with it; `None` for Minkowski in Cartesian coordinates
    /// without a cosmological constant or gauge vector.
    pub background: Option<BackgroundData>,
    /// \[domain\], if given.
    pub domain: Option<Domain>,
    /// The source's bodies (`[[body]]`, `[binary]`), in file order; empty without.
    pub bodies: Vec<Body>,
    /// The clock of an eccentric binary: its bodies are functions of the eccentric anomaly
    /// (see [`KeplerOrbit`]); `None` when the bodies are functions of the time.
    pub orbit: Option<KeplerOrbit>,
    /// Parameters confined to a range (an eccentricity to `[0, 1)`): the zero test's and the
    /// audit's sampled values stay inside.
    pub parameter_ranges: Vec<(String, (f64, f64))>,
    /// The claims about the bodies' radiation.
    pub radiation_claims: RadiationClaims,
}

/// A problem's background: gbar, Tbar, Lambda and the gauge vector, as forms and texts.
#[derive(Clone, Debug)]
pub struct BackgroundData {
    /// gbar_{mu nu}, symmetric.
    pub g: [[Form; 4]; 4],
    /// The texts of gbar as written (Minkowski's when the file has no \[background\]).
    pub g_text: TensorText,
    /// Tbar_{mu nu}, `None` for vacuum.
    pub source: Option<[[Form; 4]; 4]>,
    /// The texts of Tbar.
    pub source_text: Option<TensorText>,
    /// Lambda (0 unless given).
    pub lambda: Form,
    /// The text of Lambda, if given.
    pub lambda_text: Option<String>,
    /// xi_mu (index down), if \[gauge_vector\] is given.
    pub gauge_vector: Option<[Form; 4]>,
    /// The texts of xi.
    pub gauge_vector_text: Option<[Option<String>; 4]>,
}

impl Problem {
    /// The background as a spacetime in this problem's store: the file's `[background]`, or
    /// Minkowski in the file's (Cartesian) coordinates without one.
    ///
    /// # Errors
    ///
    /// A degenerate metric (`DivisionByZero`) or a limit.
    pub fn spacetime(&mut self) -> crate::canon::CResult<crate::tensor::curved::Background> {
        let store = &mut self.store;
        let coords = self.coordinates.clone().map(|c| store.symbol_kernel(&c));
        let (g, lambda, source) = match &self.background {
            Some(b) => (b.g, b.lambda, b.source),
            None => {
                let (zero, one, minus) = (store.zero(), store.one(), store.int(-1));
                let mut g = [[zero; 4]; 4];
                for (i, row) in g.iter_mut().enumerate() {
                    row[i] = if i == 0 { minus } else { one };
                }
                (g, zero, None)
            }
        };
        crate::tensor::curved::Background::new(store, coords, g, lambda, source)
    }

    /// True for the flat problems of Cartesian (t, x, y, z) about Minkowski without Lambda:
    /// every command works on them.
    #[must_use]
    pub fn is_flat_cartesian(&self) -> bool {
        self.background.is_none()
    }
}

impl Problem {
    /// `f` of a perturbation `h` derived from this problem (a projection, a gauge
    /// transformation), built in this problem's store, which is lent to it and given back.
    /// `h_text` are texts of its components in this problem's names and `defines` named
    /// texts after this problem's own (the check audits its verdicts by evaluating them
    /// independently; without texts it says "not audited"). The source is kept only with
    /// `keep_source`.
    pub fn with_derived<T>(
        &mut self,
        h: [[Form; 4]; 4],
        (h_text, defines): (TensorText, Vec<(String, String)>),
        claims: Claims,
        keep_source: bool,
        f: impl FnOnce(&mut Problem) -> T,
    ) -> T {
        let mut derived = Problem {
            name: self.name.clone(),
            path: self.path.clone(),
            text: String::new(),
            store: std::mem::take(&mut self.store),
            names: self.names.clone(),
            parameters: self.parameters.clone(),
            functions: self.functions.clone(),
            defines: self.defines.iter().cloned().chain(defines).collect(),
            h,
            h_text,
            source: if keep_source { self.source } else { None },
            bodies: self.bodies.clone(),
            orbit: self.orbit.clone(),
            parameter_ranges: self.parameter_ranges.clone(),
            radiation_claims: RadiationClaims::default(),
            source_text: if keep_source {
                self.source_text.clone()
            } else {
                None
            },
            claims: Some(claims),
            grid: None,
            sampling: self.sampling.clone(),
            coordinates: self.coordinates.clone(),
            background: self.background.clone(),
            domain: self.domain,
        };
        let out = f(&mut derived);
        self.store = derived.store;
        out
    }

    /// Names `stem_t`, `stem_x`, `stem_y`, `stem_z` (with more `_` at the end if needed)
    /// that no parameter, function or define of this problem has.
    #[must_use]
    pub fn fresh_names(&self, stem: &str) -> [String; 4] {
        let taken = |n: &str| {
            self.parameters.iter().any(|(m, _)| m == n)
                || self.functions.iter().any(|(m, _)| m == n)
                || self.defines.iter().any(|(m, _)| m == n)
        };
        let mut suffix = String::new();
        loop {
            let names: [String; 4] =
                std::array::from_fn(|i| format!("{stem}_{}{suffix}", COORDS[i]));
            if !names.iter().any(|n| taken(n)) {
                return names;
            }
            suffix.push('_');
        }
    }
}

impl fmt::Debug for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Problem")
            .field("name", &self.name)
            .field("path", &self.path)
            .field("parameters", &self.parameters)
            .field("functions", &self.functions)
            .field("defines", &self.defines)
            .field("h_text", &self.h_text)
            .field("source_text", &self.source_text)
            .field("claims", &self.claims)
            .field("grid", &self.grid)
            .finish_non_exhaustive()
    }
}

impl Problem {
    /// An error at `span` of this problem's file.
    #[must_use]
    pub fn error(
        &self,
        message: impl Into<String>,
        span: Span,
        label: &'static str,
    ) -> ProblemError {
        ProblemError::new(&self.path, &self.text, message, span, label)
    }
}

/// Reads and builds the problem file at `path`.
///
/// # Errors
///
/// A [`ProblemError`] with an empty span when the file cannot be read, else as
/// [`ProblemFile::parse`] and [`ProblemFile::build`].
pub fn read(path: &std::path::Path) -> Result<Problem, ProblemError> {
    read_with(path, Limits::default())
}

/// Reads and builds the problem file at `path` with `limits` in force.
///
/// # Errors
///
/// As [`read`](fn@read); a file that is not valid UTF-8 is an error at its first invalid byte (byte
/// offset, line and column in the message).
pub fn read_with(path: &std::path::Path, limits: Limits) -> Result<Problem, ProblemError> {
    read_file(path)?.build_with(limits)
}

/// Reads the problem file at `path` and checks its structure, without building it.
///
/// # Errors
///
/// As [`read`](fn@read), except the errors of building.
pub fn read_file(path: &std::path::Path) -> Result<ProblemFile, ProblemError> {
    let label = path.display().to_string();
    let bytes = std::fs::read(path)
        .map_err(|e| ProblemError::whole_file(&label, format!("cannot read `{label}`: {e}")))?;
    let text = utf8_text(&label, bytes)?;
    ProblemFile::parse(&label, &text)
}

/// The text of a file read as `bytes`, or an error at its first byte that is not UTF-8 (byte
/// offset, line and column in the message; `label` names the file).
///
/// # Errors
///
/// Bytes that are not UTF-8.
pub fn utf8_text(label: &str, bytes: Vec<u8>) -> Result<String, ProblemError> {
    match String::from_utf8(bytes) {
        Ok(t) => Ok(t),
        Err(e) => {
            let at = e.utf8_error().valid_up_to();
            let bad = e.utf8_error().error_len().unwrap_or(1);
            let shown = String::from_utf8_lossy(e.as_bytes()).into_owned();
            let hex: Vec<String> = e.as_bytes()[at..at + bad]
                .iter()
                .map(|b| format!("{b:#04x}"))
                .collect();
            // The lossy text equals the original up to `at`, where U+FFFD stands for the bad
            // bytes, so the span points at it.
            let (line, col) = error::line_col(&shown, at);
            Err(ProblemError::new(
                label,
                &shown,
                format!(
                    "`{label}` is not valid UTF-8: byte {at} (line {line}, column {col}) is {}",
                    hex.join(" ")
                ),
                Span::new(at, at + '\u{fffd}'.len_utf8()),
                "not UTF-8",
            )
            .with_help("save the file as UTF-8 text"))
        }
    }
}

/// Reads and builds a problem from `text`; `path_label` names it in messages.
///
/// # Errors
///
/// As [`ProblemFile::parse`] and [`ProblemFile::build`].
pub fn from_str(path_label: &str, text: &str) -> Result<Problem, ProblemError> {
    ProblemFile::parse(path_label, text)?.build()
}

/// As [`from_str`], with `limits` in force.
///
/// # Errors
///
/// As [`from_str`].
pub fn from_str_with(
    path_label: &str,
    text: &str,
    limits: Limits,
) -> Result<Problem, ProblemError> {
    ProblemFile::parse(path_label, text)?.build_with(limits)
}

/// Edit distance between two short names (Levenshtein, by chars), for "did you mean"
/// suggestions.
#[must_use]
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for i in 1..=a.len() {
        let mut cur = vec![i; b.len() + 1];
        for j in 1..=b.len() {
            let sub = prev[j - 1] + usize::from(a[i - 1] != b[j - 1]);
            cur[j] = sub.min(prev[j] + 1).min(cur[j - 1] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// The candidate closest to `name`, if one is close (at most a third of the letters differ,
/// ignoring case).
fn closest<'a>(name: &str, candidates: &[&'a str]) -> Option<&'a str> {
    if name.chars().count() > 64 {
        return None;
    }
    let lower = name.to_lowercase();
    let mut best: Option<(usize, &str)> = None;
    for &cand in candidates {
        let d = edit_distance(&lower, cand);
        let limit = (lower.chars().count().max(cand.len()) / 3).max(1);
        if d <= limit && best.is_none_or(|(bd, _)| d < bd) {
            best = Some((d, cand));
        }
    }
    best.map(|b| b.1)
}
