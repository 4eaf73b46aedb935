//! TOML text to a [`ProblemFile`]: the structure of the file, checked key by key.
//!
//! The file is parsed into toml's spanned document tree, whose tables are sorted by key; the
//! entries are put back into file order by the start of their keys.

use super::{BodyText, RadiationClaimTexts, WaveformTexts};
use super::{
    Claims, Component, Domain, ExprText, Gauge, GridSpec, NamedExpr, Parameter, ProblemError,
    ProblemFile, VectorComponent, closest,
};
use crate::canon::{Names, Store};
use crate::claim::MAX_FAR_ZONE_ORDER;
use crate::expr::Span;
use crate::tensor::{COMPONENTS, COORDS};
use std::borrow::Cow;
use toml::Spanned;
use toml::de::{DeTable, DeValue};

/// The top-level keys, in the order the documentation lists them.
pub(super) const TOP_KEYS: [&str; 16] = [
    "name",
    "coordinates",
    "cosmological_constant",
    "parameters",
    "functions",
    "define",
    "perturbation",
    "source",
    "background",
    "background_source",
    "gauge_vector",
    "domain",
    "body",
    "binary",
    "claims",
    "grid",
];
const CLAIM_KEYS: [&str; 10] = [
    "field_equations",
    "far_zone_order",
    "far_zone_radius",
    "gauge",
    "pure_gauge",
    "luminosity",
    "luminosity_average",
    "waveform",
    "momentum_flux",
    "momentum_flux_average",
];
const WAVEFORM_KEYS: [&str; 4] = ["direction", "distance", "h_plus", "h_cross"];
const BODY_KEYS: [&str; 5] = ["mass", "position", "moments", "axis", "angle"];
const RIGID_HELP: &str = "a rigid body has `moments = ['I1', 'I2', 'I3']` (principal moments of \
    inertia, along x, y, z at angle 0), and optionally a unit `axis = ['0', '0', '1']` and a \
    rotation `angle = 'W*t'` about it (right-handed)";
const BINARY_KEYS: [&str; 9] = [
    "m1",
    "m2",
    "semimajor_axis",
    "period",
    "eccentricity",
    "anomaly",
    "inclination",
    "node",
    "phase",
];
const GRID_KEYS: [&str; 3] = ["center", "width", "points"];
/// Fewest resolutions the grid check needs to estimate a convergence order.
pub(super) const MIN_RESOLUTIONS: usize = 3;
/// Fewest points per side at one resolution.
pub(super) const MIN_POINTS: usize = 5;

const RADIUS_HELP: &str = "name the coordinate that grows along the far-zone ray (the radius \
    of spherical-type coordinates), e.g. `far_zone_radius = 'R'`; without the key it is the \
    coordinate named `r` (in t, x, y, z the ray is Cartesian and needs no radius)";

const PARAMETER_HELP: &str = "a parameter's value is its typical size for numeric checks, \
                              e.g. `A = 1.0e-3` or `k = '3/5'`";

type Key<'i> = Spanned<Cow<'i, str>>;
type Value<'i> = Spanned<DeValue<'i>>;

/// The file being read: where errors point, and its coordinate names.
struct Cx<'a> {
    path: &'a str,
    text: &'a str,
    coords: [String; 4],
}

fn span_of<T>(s: &Spanned<T>) -> Span {
    let r = s.span();
    Span::new(r.start, r.end)
}

/// A table's entries in file order.
fn entries<'t, 'i>(t: &'t DeTable<'i>) -> Vec<(&'t Key<'i>, &'t Value<'i>)> {
    let mut v: Vec<_> = t.iter().collect();
    v.sort_by_key(|(k, _)| k.span().start);
    v
}

fn quoted_list(names: &[&str]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

impl Cx<'_> {
    fn err(&self, message: impl Into<String>, span: Span, label: &'static str) -> ProblemError {
        ProblemError::new(self.path, self.text, message, span, label)
    }

    fn type_error(&self, what: &str, expected: &str, v: &Value<'_>) -> ProblemError {
        self.err(
            format!("{what} must be {expected}, not {}", article(v.get_ref())),
            span_of(v),
            "wrong type",
        )
    }

    fn unknown_key(&self, key: &Key<'_>, table: &str, allowed: &[&str]) -> ProblemError {
        let name: &str = key.get_ref();
        let message = if table.is_empty() {
            format!("unknown top-level key `{name}`")
        } else {
            format!("unknown key `{name}` in [{table}]")
        };
        let mut help = format!("the allowed keys are {}", quoted_list(allowed));
        if let Some(s) = closest(name, allowed) {
            help = format!(
                "did you mean `{s}`? The allowed keys are {}",
                quoted_list(allowed)
            );
        }
        self.err(message, span_of(key), "unknown key")
            .with_help(help)
    }

    fn table<'t, 'i>(
        &self,
        key: &Key<'_>,
        v: &'t Value<'i>,
    ) -> Result<&'t DeTable<'i>, ProblemError> {
        match v.get_ref() {
            DeValue::Table(t) => Ok(t),
            _ => {
                let name: &str = key.get_ref();
                Err(self
                    .type_error(&format!("`{name}`"), "a table", v)
                    .with_help(format!(
                        "write `[{name}]` on a line of its own, followed by `key = value` lines"
                    )))
            }
        }
    }

    fn string(&self, what: &str, v: &Value<'_>) -> Result<ExprText, ProblemError> {
        match v.get_ref() {
            DeValue::String(s) => Ok(self.expr_text(s, span_of(v))),
            _ => Err(self.type_error(what, "a string", v).with_help(
                "write expressions in quotes, preferably single quotes: 'A*cos(omega*t)'",
            )),
        }
    }

    fn expr_text(&self, s: &str, token: Span) -> ExprText {
        // The content maps byte for byte exactly when the text between the quotes is the
        // decoded string (no escapes, not multi-line).
        let inner = token
            .end
            .checked_sub(1)
            .filter(|&e| e > token.start)
            .and_then(|e| self.text.get(token.start + 1..e));
        let offset = (inner == Some(s)).then_some(token.start + 1);
        ExprText {
            text: s.to_string(),
            token,
            offset,
        }
    }

    fn bool(&self, what: &str, v: &Value<'_>) -> Result<bool, ProblemError> {
        match v.get_ref() {
            DeValue::Boolean(b) => Ok(*b),
            _ => Err(self
                .type_error(what, "true or false", v)
                .with_help("write `true` or `false`, without quotes")),
        }
    }

    /// A TOML integer or float as a finite f64.
    fn number(&self, what: &str, v: &Value<'_>) -> Result<f64, ProblemError> {
        let x = match v.get_ref() {
            DeValue::Integer(i) => i64::from_str_radix(i.as_str(), i.radix())
                .map(|n| n as f64)
                .map_err(|_| {
                    self.err(format!("{what} is too large"), span_of(v), "out of range")
                })?,
            DeValue::Float(f) => f.as_str().parse::<f64>().map_err(|_| {
                self.err(
                    format!("{what} is not a number"),
                    span_of(v),
                    "not a number",
                )
            })?,
            _ => return Err(self.type_error(what, "a number", v)),
        };
        if !x.is_finite() {
            return Err(self.err(format!("{what} must be finite"), span_of(v), "not finite"));
        }
        Ok(x)
    }

    /// A name declared in \[parameters\], \[functions\] or \[define\]: it must be something an
    /// expression can refer to.
    fn declared_name(&self, key: &Key<'_>) -> Result<(String, Span), ProblemError> {
        let name: &str = key.get_ref();
        let span = span_of(key);
        let mut chars = name.chars();
        let valid = chars
            .next()
            .is_some_and(|c| c.is_ascii_alphabetic() || c == '_')
            && chars.all(|c| c.is_ascii_alphanumeric() || c == '_');
        if !valid {
            return Err(self
                .err(format!("`{name}` is not a valid name"), span, "not a name")
                .with_help(
                    "names are ASCII letters, digits and `_`, starting with a letter or `_`",
                ));
        }
        if self.coords.iter().any(|c| c == name) {
            return Err(self
                .err(
                    format!("`{name}` is a coordinate and cannot be declared"),
                    span,
                    "reserved",
                )
                .with_help(format!(
                    "the coordinates {} are always available; choose another name",
                    self.coords.join(", ")
                )));
        }
        if name == "pi" {
            return Err(self
                .err(
                    "`pi` is a built-in constant and cannot be declared",
                    span,
                    "reserved",
                )
                .with_help("choose another name"));
        }
        if crate::canon::BUILTINS.contains(&name) {
            return Err(self
                .err(
                    format!("`{name}` is a built-in function and cannot be declared"),
                    span,
                    "reserved",
                )
                .with_help(format!(
                    "choose another name; the built-in functions are {}",
                    crate::canon::BUILTINS.join(", ")
                )));
        }
        if name.starts_with("d_") {
            return Err(self
                .err(
                    format!("`{name}` starts with `d_`, which is reserved for derivatives"),
                    span,
                    "reserved",
                )
                .with_help(
                    "`d_x(f)` differentiates f by x; choose a name that does not start with `d_`",
                ));
        }
        Ok((name.to_string(), span))
    }

    fn parameters(&self, t: &DeTable<'_>) -> Result<Vec<Parameter>, ProblemError> {
        let mut out = Vec::new();
        for (k, v) in entries(t) {
            let (name, name_span) = self.declared_name(k)?;
            let what = format!("parameter `{name}`");
            let value = match v.get_ref() {
                DeValue::String(s) => self.constant(&what, &self.expr_text(s, span_of(v)))?,
                DeValue::Integer(_) | DeValue::Float(_) => self.number(&what, v)?,
                _ => {
                    return Err(self
                        .type_error(&what, "a number", v)
                        .with_help(PARAMETER_HELP));
                }
            };
            out.push(Parameter {
                name,
                name_span,
                value,
                value_span: span_of(v),
            });
        }
        Ok(out)
    }

    /// The value of a string holding a constant such as `3/5` or `pi/4`.
    fn constant(&self, what: &str, e: &ExprText) -> Result<f64, ProblemError> {
        let help = "write a number such as 0.6 or a constant such as '3/5'";
        let expr = crate::parse::parse(&e.text).map_err(|pe| {
            self.err(pe.message.clone(), e.file_span(pe.span), pe.label)
                .with_help_opt(pe.help.clone())
        })?;
        if let Some((n, span)) = expr.idents().into_iter().find(|(n, _)| *n != "pi") {
            return Err(self
                .err(
                    format!("{what} must be a constant, but its value uses `{n}`"),
                    e.file_span(span),
                    "not a constant",
                )
                .with_help(help));
        }
        let mut store = Store::new();
        let form = store.build(&expr, &Names::strict()).map_err(|be| {
            self.err(be.message.clone(), e.file_span(be.span), "here")
                .with_help_opt(be.help.clone())
        })?;
        let v = store.eval_interval(form, &crate::canon::Point::default());
        match v {
            Some(z) if z.im == crate::interval::Interval::ZERO && z.re.mid().is_finite() => {
                Ok(z.re.mid())
            }
            _ => Err(self
                .err(
                    format!("{what} must be a finite real number"),
                    e.token,
                    "not a finite real number",
                )
                .with_help(help)),
        }
    }

    fn named_exprs(&self, table: &str, t: &DeTable<'_>) -> Result<Vec<NamedExpr>, ProblemError> {
        let mut out = Vec::new();
        for (k, v) in entries(t) {
            let (name, name_span) = self.declared_name(k)?;
            let what = if table == "functions" {
                format!("the sample of function `{name}`")
            } else {
                format!("the definition of `{name}`")
            };
            let expr = self.string(&what, v)?;
            out.push(NamedExpr {
                name,
                name_span,
                expr,
            });
        }
        Ok(out)
    }

    /// The name of component `(mu, nu)` in this file's coordinates.
    fn component_name(&self, mu: usize, nu: usize) -> String {
        component_key(&self.coords, mu, nu)
    }

    /// A tensor table (\[perturbation\], \[source\], \[background\],
    /// \[background_source\]): keys are pairs of coordinates, written `t.ph` (a TOML dotted
    /// key) or, when every coordinate is one letter, `tx`; in either order, each pair at most
    /// once.
    fn components(&self, table: &str, t: &DeTable<'_>) -> Result<Vec<Component>, ProblemError> {
        let letter = match table {
            "source" => "T",
            "background" => "gbar",
            "background_source" => "Tbar",
            _ => "h",
        };
        let mut keys: Vec<(String, Span, &Value<'_>)> = Vec::new();
        for (k, v) in entries(t) {
            let key: &str = k.get_ref();
            match v.get_ref() {
                // `t.ph = '...'`: a dotted key is a table `t` holding `ph`.
                DeValue::Table(inner) => {
                    for (k2, v2) in entries(inner) {
                        let k2s: &str = k2.get_ref();
                        let span = Span::new(span_of(k).start, span_of(k2).end);
                        keys.push((format!("{key}.{k2s}"), span, v2));
                    }
                }
                _ => keys.push((key.to_string(), span_of(k), v)),
            }
        }
        let mut out: Vec<Component> = Vec::new();
        for (key, key_span, v) in keys {
            let Some((mu, nu)) = component_indices(&key, &self.coords) else {
                let valid: Vec<String> = COMPONENTS
                    .iter()
                    .map(|&(a, b)| self.component_name(a, b))
                    .collect();
                let mut help = format!(
                    "the components of {letter} are {} (either order: `{}` means the same as \
                     `{}`)",
                    valid.join(", "),
                    self.component_name(1, 0),
                    self.component_name(0, 1),
                );
                if component_indices(&key.to_lowercase(), &self.coords).is_some() {
                    help = format!("write the key in lowercase; {help}");
                }
                return Err(self
                    .err(
                        format!("`{key}` is not a component of {letter}_{{mu nu}}"),
                        key_span,
                        "not a component",
                    )
                    .with_help(help));
            };
            if let Some(first) = out.iter().find(|c| (c.mu, c.nu) == (mu, nu)) {
                let first_key = first.key.as_str();
                return Err(self
                    .err(
                        format!(
                            "component {letter}_{} given twice: as `{first_key}` and as `{key}`",
                            self.component_name(mu, nu)
                        ),
                        key_span,
                        "given again here",
                    )
                    .with_related(first.key_span, "first given here")
                    .with_help(format!(
                        "{letter} is symmetric, so `{first_key}` and `{key}` are the same \
                         component; keep one"
                    )));
            }
            let what = format!("component {letter}_{}", self.component_name(mu, nu));
            let expr = self.string(&what, v)?;
            out.push(Component {
                mu,
                nu,
                key,
                key_span,
                expr,
            });
        }
        Ok(out)
    }

    /// The index of the coordinate a key names, or an error with `help`.
    fn coordinate_key(&self, k: &Key<'_>, help: String) -> Result<usize, ProblemError> {
        let key: &str = k.get_ref();
        self.coords.iter().position(|c| c == key).ok_or_else(|| {
            self.err(
                format!("`{key}` is not a coordinate"),
                span_of(k),
                "not a coordinate",
            )
            .with_help(help)
        })
    }

    /// \[gauge_vector\]: `xi_mu` keyed by coordinate names.
    fn vector(&self, t: &DeTable<'_>) -> Result<Vec<VectorComponent>, ProblemError> {
        let mut out: Vec<VectorComponent> = Vec::new();
        for (k, v) in entries(t) {
            let key: &str = k.get_ref();
            let help = format!(
                "the components of xi_mu (index down) are keyed by the coordinates {}",
                self.coords.join(", ")
            );
            let mu = self.coordinate_key(k, help)?;
            let expr = self.string(&format!("component xi_{key}"), v)?;
            out.push(VectorComponent {
                mu,
                key_span: span_of(k),
                expr,
            });
        }
        Ok(out)
    }

    /// \[domain\]: `r = [3, 40]`, a closed range per coordinate.
    fn domain(&self, t: &DeTable<'_>) -> Result<Domain, ProblemError> {
        let mut out: Domain = [None; 4];
        for (k, v) in entries(t) {
            let key: &str = k.get_ref();
            let help = format!(
                "the domain gives a range per coordinate, e.g. `{} = [3, 40]`; the \
                         coordinates are {}",
                self.coords[1],
                self.coords.join(", ")
            );
            let mu = self.coordinate_key(k, help)?;
            let help = format!("write a range as two increasing numbers, e.g. `{key} = [3, 40]`");
            let DeValue::Array(a) = v.get_ref() else {
                return Err(self
                    .type_error(&format!("the range of `{key}`"), "a list of two numbers", v)
                    .with_help(help));
            };
            if a.len() != 2 {
                return Err(self
                    .err(
                        format!(
                            "the range of `{key}` must have two numbers, not {}",
                            a.len()
                        ),
                        span_of(v),
                        "expected two numbers",
                    )
                    .with_help(help));
            }
            let lo = self.number(&format!("the lower end of `{key}`"), &a[0])?;
            let hi = self.number(&format!("the upper end of `{key}`"), &a[1])?;
            if lo >= hi {
                return Err(self
                    .err(
                        format!("the range of `{key}` is empty: {lo} is not below {hi}"),
                        span_of(v),
                        "empty range",
                    )
                    .with_help(help));
            }
            out[mu] = Some((lo, hi));
        }
        Ok(out)
    }

    /// `cosmological_constant`: an expression string, or a number taken as written.
    fn lambda(&self, v: &Value<'_>) -> Result<ExprText, ProblemError> {
        self.expr_or_number("`cosmological_constant`", v)
            .map_err(|e| {
                e.with_help("e.g. cosmological_constant = '3*H^2' or cosmological_constant = 0.5")
            })
    }

    /// An expression string, or a number taken exactly as written.
    fn expr_or_number(&self, what: &str, v: &Value<'_>) -> Result<ExprText, ProblemError> {
        match v.get_ref() {
            DeValue::String(_) => self.string(what, v),
            DeValue::Integer(_) | DeValue::Float(_) => {
                self.number(what, v)?;
                let span = span_of(v);
                let literal = self.text[span.start..span.end].replace('_', "");
                let exact = (literal == self.text[span.start..span.end]).then_some(span.start);
                Ok(ExprText {
                    text: literal,
                    token: span,
                    offset: exact,
                })
            }
            _ => Err(self.type_error(what, "an expression or a number", v)),
        }
    }

    /// `[[body]]`: each a point mass with `mass` and `position` (three expressions in t).
    fn bodies(&self, v: &Value<'_>, out: &mut Vec<BodyText>) -> Result<(), ProblemError> {
        let help = "each body is a table `[[body]]` with `mass = 'm1'` and `position = ['x(t)', \
                    'y(t)', 'z(t)']`";
        let DeValue::Array(items) = v.get_ref() else {
            return Err(self
                .type_error("`body`", "an array of tables `[[body]]`", v)
                .with_help(help));
        };
        for item in items.iter() {
            let DeValue::Table(t) = item.get_ref() else {
                return Err(self.type_error("a body", "a table", item).with_help(help));
            };
            let label = format!("body {}", out.len() + 1);
            let (mut mass, mut position) = (None, None);
            let (mut moments, mut axis, mut angle) = (None, None, None);
            for (k, v) in entries(t) {
                match &**k.get_ref() {
                    "mass" => mass = Some(self.expr_or_number(&format!("the mass of {label}"), v)?),
                    "position" => position = Some(self.position(&label, v)?),
                    "moments" => moments = Some(self.position(&format!("{label}'s moments"), v)?),
                    "axis" => axis = Some(self.position(&format!("{label}'s axis"), v)?),
                    "angle" => {
                        angle = Some(self.expr_or_number(&format!("the angle of {label}"), v)?);
                    }
                    _ => return Err(self.unknown_key(k, "[body]", &BODY_KEYS)),
                }
            }
            let here = |s: &str| ExprText {
                text: s.to_string(),
                token: span_of(item),
                offset: None,
            };
            // A rigid body may sit at the origin; a point mass needs its trajectory.
            let position = match (position, &moments) {
                (Some(p), _) => Some(p),
                (None, Some(_)) => Some([here("0"), here("0"), here("0")]),
                (None, None) => None,
            };
            let (Some(mass), Some(position)) = (mass, position) else {
                return Err(self
                    .err(
                        format!("{label} needs `mass` and `position`"),
                        span_of(item),
                        "this body",
                    )
                    .with_help(help));
            };
            if moments.is_none() && (axis.is_some() || angle.is_some()) {
                return Err(self
                    .err(
                        format!("{label} has an `axis` or `angle` but no `moments`"),
                        span_of(item),
                        "this body",
                    )
                    .with_help(RIGID_HELP));
            }
            let rigid = moments.map(|moments| super::RigidText {
                moments,
                axis: axis.unwrap_or_else(|| [here("0"), here("0"), here("1")]),
                angle: angle.unwrap_or_else(|| here("0")),
            });
            out.push(BodyText {
                label,
                mass,
                position,
                rigid,
            });
        }
        Ok(())
    }

    fn position(&self, label: &str, v: &Value<'_>) -> Result<[ExprText; 3], ProblemError> {
        self.three(
            (
                &format!("the position of {label}"),
                "e.g. position = ['a*cos(w*t)', 'a*sin(w*t)', '0']",
            ),
            v,
            &|x| format!("the {x} coordinate of {label}"),
        )
    }

    /// Three expressions (`what` and a help for a wrong value), the x, y, z components named
    /// by `component`.
    fn three(
        &self,
        (what, help): (&str, &str),
        v: &Value<'_>,
        component: &dyn Fn(&str) -> String,
    ) -> Result<[ExprText; 3], ProblemError> {
        let wrong = || {
            self.type_error(what, "three expressions", v)
                .with_help(help.to_string())
        };
        let DeValue::Array(items) = v.get_ref() else {
            return Err(wrong());
        };
        if items.len() != 3 {
            return Err(wrong());
        }
        let mut c = Vec::with_capacity(3);
        for (item, x) in items.iter().zip(["x", "y", "z"]) {
            c.push(self.expr_or_number(&component(x), item)?);
        }
        Ok([c[0].clone(), c[1].clone(), c[2].clone()])
    }

    /// `[binary]`: two point masses on a Kepler orbit, expanded into two bodies (and, for an
    /// eccentric orbit, its clock).
    fn binary(
        &self,
        key: &Key<'_>,
        t: &DeTable<'_>,
    ) -> Result<(Vec<BodyText>, Option<super::bodies::KeplerOrbitText>), ProblemError> {
        let mut spec = super::bodies::BinarySpec::default();
        for (k, v) in entries(t) {
            let name: &str = k.get_ref();
            let what = format!("`{name}` in [binary]");
            let slot = match name {
                "m1" => &mut spec.m1,
                "m2" => &mut spec.m2,
                "semimajor_axis" => &mut spec.semimajor_axis,
                "period" => &mut spec.period,
                "eccentricity" => &mut spec.eccentricity,
                "anomaly" => &mut spec.anomaly,
                "inclination" => &mut spec.inclination,
                "node" => &mut spec.node,
                "phase" => &mut spec.phase,
                _ => return Err(self.unknown_key(k, "binary", &BINARY_KEYS)),
            };
            *slot = Some(self.expr_or_number(&what, v)?);
        }
        let t_name = self.coords[0].clone();
        spec.expand(&t_name, span_of(key)).map_err(|why| {
            let (span, label) = match why.at {
                Some(s) => (s, "here"),
                None => (span_of(key), "this [binary]"),
            };
            self.err(why.message, span, label)
                .with_help(super::bodies::BINARY_HELP)
        })
    }

    fn claims(
        &self,
        t: &DeTable<'_>,
        radiation: &mut RadiationClaimTexts,
        far_zone_span: &mut Option<Span>,
        radius_span: &mut Option<Span>,
    ) -> Result<Claims, ProblemError> {
        let mut c = Claims::default();
        for (k, v) in entries(t) {
            match &**k.get_ref() {
                "field_equations" => c.field_equations = Some(self.bool("`field_equations`", v)?),
                "pure_gauge" => c.pure_gauge = Some(self.bool("`pure_gauge`", v)?),
                "gauge" => c.gauge = self.gauges(v)?,
                "far_zone_order" => {
                    c.far_zone_order = Some(self.far_zone_order(v)?);
                    *far_zone_span = Some(span_of(k));
                }
                "far_zone_radius" => match v.get_ref() {
                    DeValue::String(name) => {
                        c.far_zone_radius = Some(name.to_string());
                        *radius_span = Some(span_of(v));
                    }
                    _ => {
                        return Err(self
                            .type_error("`far_zone_radius`", "a string", v)
                            .with_help(RADIUS_HELP));
                    }
                },
                "luminosity" => {
                    radiation.luminosity = Some(self.expr_or_number("`luminosity`", v)?);
                }
                "luminosity_average" => {
                    radiation.luminosity_average =
                        Some(self.expr_or_number("`luminosity_average`", v)?);
                }
                "waveform" => radiation.waveform = Some(self.waveform(k, self.table(k, v)?)?),
                "momentum_flux" => {
                    radiation.momentum_flux = Some(self.flux_vector("`momentum_flux`", v)?);
                }
                "momentum_flux_average" => {
                    radiation.momentum_flux_average =
                        Some(self.flux_vector("`momentum_flux_average`", v)?);
                }
                _ => return Err(self.unknown_key(k, "claims", &CLAIM_KEYS)),
            }
        }
        Ok(c)
    }

    /// `far_zone_order = n`: an integer from 1 to [`MAX_FAR_ZONE_ORDER`].
    fn far_zone_order(&self, v: &Value<'_>) -> Result<u32, ProblemError> {
        let help = format!(
            "write the order n of the claim \"every claimed component is O(1/r^n) at fixed \
             t - r\" as a whole number from 1 to {MAX_FAR_ZONE_ORDER}, e.g. `far_zone_order = 2`"
        );
        let n = match v.get_ref() {
            DeValue::Integer(i) => i64::from_str_radix(i.as_str(), i.radix()).ok(),
            _ => {
                return Err(self
                    .type_error("`far_zone_order`", "a whole number", v)
                    .with_help(help));
            }
        };
        match n {
            Some(n) if (1..=i64::from(MAX_FAR_ZONE_ORDER)).contains(&n) => Ok(n as u32),
            _ => Err(self
                .err(
                    format!("`far_zone_order` must be from 1 to {MAX_FAR_ZONE_ORDER}"),
                    span_of(v),
                    "out of range",
                )
                .with_help(help)),
        }
    }

    /// A claimed vector of three expressions, `dP_x/dt, dP_y/dt, dP_z/dt`.
    fn flux_vector(&self, what: &str, v: &Value<'_>) -> Result<[ExprText; 3], ProblemError> {
        self.three(
            (
                what,
                "e.g. momentum_flux = ['...', '...', '0'], the rates dP_x/dt, dP_y/dt, dP_z/dt \
                 as expressions in t",
            ),
            v,
            &|x| format!("the {x} component of {what}"),
        )
    }

    /// `[claims.waveform]`: direction, distance, h_plus, h_cross.
    fn waveform(&self, key: &Key<'_>, t: &DeTable<'_>) -> Result<WaveformTexts, ProblemError> {
        let mut f: [Option<ExprText>; 4] = Default::default();
        for (k, v) in entries(t) {
            let name: &str = k.get_ref();
            let Some(i) = WAVEFORM_KEYS.iter().position(|w| *w == name) else {
                return Err(self.unknown_key(k, "claims.waveform", &WAVEFORM_KEYS));
            };
            f[i] = Some(self.expr_or_number(&format!("`{name}` in [claims.waveform]"), v)?);
        }
        match f {
            [Some(direction), Some(distance), Some(h_plus), Some(h_cross)] => Ok(WaveformTexts {
                direction,
                distance,
                h_plus,
                h_cross,
            }),
            _ => Err(self
                .err(
                    "[claims.waveform] needs direction, distance, h_plus and h_cross",
                    span_of(key),
                    "this table",
                )
                .with_help(
                    "e.g. direction = '0,0,1', distance = 'D', h_plus = '...', h_cross = '...' \
                     (the field at the observer at time t, in the basis of `project`)",
                )),
        }
    }

    /// A gauge name or a list of them.
    fn gauges(&self, v: &Value<'_>) -> Result<Vec<Gauge>, ProblemError> {
        let items: Vec<&Value<'_>> = match v.get_ref() {
            DeValue::Array(a) => a.iter().collect(),
            DeValue::String(_) => vec![v],
            _ => {
                return Err(self
                    .type_error("`gauge`", "a list of gauge names", v)
                    .with_help(format!(
                        "e.g. gauge = ['lorenz']; the gauges are {}",
                        quoted_list(&Gauge::NAMES)
                    )));
            }
        };
        let mut out: Vec<(Gauge, Span)> = Vec::new();
        for item in items {
            let DeValue::String(s) = item.get_ref() else {
                return Err(self
                    .type_error("a gauge", "a string", item)
                    .with_help(format!("the gauges are {}", quoted_list(&Gauge::NAMES))));
            };
            let span = span_of(item);
            let Some(g) = Gauge::parse(s) else {
                let mut help = format!("the gauges are {}", quoted_list(&Gauge::NAMES));
                if let Some(near) = closest(s, &Gauge::NAMES) {
                    help = format!(
                        "did you mean `{near}`? The gauges are {}",
                        quoted_list(&Gauge::NAMES)
                    );
                }
                return Err(self
                    .err(format!("unknown gauge `{s}`"), span, "unknown gauge")
                    .with_help(help));
            };
            if let Some((_, first)) = out.iter().find(|(h, _)| *h == g) {
                return Err(self
                    .err(
                        format!("gauge `{s}` listed twice"),
                        span,
                        "listed again here",
                    )
                    .with_related(*first, "first listed here"));
            }
            out.push((g, span));
        }
        Ok(out.into_iter().map(|(g, _)| g).collect())
    }

    fn grid(&self, t: &DeTable<'_>) -> Result<GridSpec, ProblemError> {
        let mut g = GridSpec::default();
        for (k, v) in entries(t) {
            match &**k.get_ref() {
                "center" => g.center = Some(self.center(v)?),
                "width" => {
                    let w = self.number("`width`", v)?;
                    if w <= 0.0 {
                        return Err(self
                            .err("`width` must be positive", span_of(v), "not positive")
                            .with_help(
                                "the width is the grid's extent in each coordinate, e.g. 0.5",
                            ));
                    }
                    g.width = Some(w);
                }
                "points" => g.points = Some(self.points(v)?),
                _ => return Err(self.unknown_key(k, "grid", &GRID_KEYS)),
            }
        }
        Ok(g)
    }

    fn center(&self, v: &Value<'_>) -> Result<[f64; 4], ProblemError> {
        let help = "the centre is [t, x, y, z], e.g. center = [0.0, 0.1, 0.2, 0.3]";
        let DeValue::Array(a) = v.get_ref() else {
            return Err(self
                .type_error("`center`", "a list of four numbers", v)
                .with_help(help));
        };
        if a.len() != 4 {
            return Err(self
                .err(
                    format!(
                        "`center` must have four numbers (t, x, y, z), not {}",
                        a.len()
                    ),
                    span_of(v),
                    "expected four numbers",
                )
                .with_help(help));
        }
        let mut c = [0.0; 4];
        for (i, item) in a.iter().enumerate() {
            c[i] = self.number(&format!("the {} coordinate of `center`", COORDS[i]), item)?;
        }
        Ok(c)
    }

    fn points(&self, v: &Value<'_>) -> Result<Vec<usize>, ProblemError> {
        let help = format!(
            "list at least {MIN_RESOLUTIONS} increasing resolutions of at least {MIN_POINTS} \
             points each, e.g. points = [8, 16, 32]"
        );
        let DeValue::Array(a) = v.get_ref() else {
            return Err(self
                .type_error("`points`", "a list of integers", v)
                .with_help(help));
        };
        let mut out: Vec<usize> = Vec::new();
        for item in a.iter() {
            let DeValue::Integer(i) = item.get_ref() else {
                return Err(self
                    .type_error("a number of points", "an integer", item)
                    .with_help(help));
            };
            let span = span_of(item);
            let n = i64::from_str_radix(i.as_str(), i.radix()).ok();
            let n = match n.map(usize::try_from) {
                Some(Ok(n)) if n >= MIN_POINTS => n,
                _ => {
                    return Err(self
                        .err(
                            format!("a resolution must have at least {MIN_POINTS} points"),
                            span,
                            "too few points",
                        )
                        .with_help(help));
                }
            };
            if let Some(&prev) = out.last()
                && n <= prev
            {
                return Err(self
                    .err(
                        format!("resolutions must increase, but {n} follows {prev}"),
                        span,
                        "not increasing",
                    )
                    .with_help(help));
            }
            out.push(n);
        }
        if out.len() < MIN_RESOLUTIONS {
            return Err(self
                .err(
                    format!(
                        "`points` must list at least {MIN_RESOLUTIONS} resolutions, not {}",
                        out.len()
                    ),
                    span_of(v),
                    "too few resolutions",
                )
                .with_help(help));
        }
        Ok(out)
    }
}

/// `(mu, nu)` with `mu <= nu` for a key naming two coordinates: `a.b`, or `ab` when both are
/// one letter.
fn component_indices(key: &str, coords: &[String; 4]) -> Option<(usize, usize)> {
    let idx = |n: &str| coords.iter().position(|c| c == n);
    let (a, b) = match key.split_once('.') {
        Some((a, b)) => (idx(a)?, idx(b)?),
        None => {
            if !coords.iter().all(|c| c.chars().count() == 1) {
                return None;
            }
            let mut chars = key.chars();
            let (x, y) = (chars.next()?, chars.next()?);
            if chars.next().is_some() {
                return None;
            }
            (idx(&x.to_string())?, idx(&y.to_string())?)
        }
    };
    Some((a.min(b), a.max(b)))
}

/// The key of component `(mu, nu)` in `coords`: joined (`tx`) when every coordinate is one
/// letter, else dotted (`t.ph`).
#[must_use]
pub fn component_key(coords: &[String; 4], mu: usize, nu: usize) -> String {
    let name = |i: usize| coords.get(i).map_or("?", String::as_str);
    if coords.iter().all(|c| c.chars().count() == 1) {
        format!("{}{}", name(mu), name(nu))
    } else {
        format!("{}.{}", name(mu), name(nu))
    }
}

/// `coordinates = [...]`: four distinct valid names, the first being time.
fn coordinates(cx: &Cx<'_>, v: &Value<'_>) -> Result<[String; 4], ProblemError> {
    let help =
        "list four coordinate names, time first, e.g. coordinates = [\"t\", \"r\", \"th\", \"ph\"]";
    let DeValue::Array(a) = v.get_ref() else {
        return Err(cx
            .type_error("`coordinates`", "a list of four names", v)
            .with_help(help));
    };
    if a.len() != 4 {
        return Err(cx
            .err(
                format!("`coordinates` must list four names, not {}", a.len()),
                span_of(v),
                "expected four names",
            )
            .with_help(help));
    }
    let mut out: [String; 4] = Default::default();
    for (i, item) in a.iter().enumerate() {
        let DeValue::String(s) = item.get_ref() else {
            return Err(cx
                .type_error("a coordinate", "a string", item)
                .with_help(help));
        };
        // The same rules as any declared name, spans included.
        let key: Key<'_> = Spanned::new(item.span(), Cow::Borrowed(&**s));
        let (name, span) = cx.declared_name(&key)?;
        if let Some(j) = out[..i].iter().position(|c| *c == name) {
            return Err(cx
                .err(
                    format!("coordinate `{name}` is listed twice"),
                    span,
                    "listed again here",
                )
                .with_related(span_of(&a[j]), "first listed here"));
        }
        out[i] = name;
    }
    Ok(out)
}

/// "a string", "an integer", ... for a value's type.
fn article(v: &DeValue<'_>) -> &'static str {
    match v {
        DeValue::String(_) => "a string",
        DeValue::Integer(_) => "an integer",
        DeValue::Float(_) => "a float",
        DeValue::Boolean(_) => "a boolean",
        DeValue::Datetime(_) => "a date-time",
        DeValue::Array(_) => "a list",
        DeValue::Table(_) => "a table",
    }
}

pub(super) fn parse_file(path: &str, text: &str) -> Result<ProblemFile, ProblemError> {
    let mut cx = Cx {
        path,
        text,
        coords: Default::default(),
    };
    let root = DeTable::parse(text).map_err(|e| {
        let span = e
            .span()
            .map_or(Span::new(0, 0), |r| Span::new(r.start, r.end));
        cx.err(
            format!("invalid TOML: {}", e.message().trim()),
            span,
            "here",
        )
    })?;
    // The coordinates first: every other table is read in their names.
    let written = entries(root.get_ref())
        .into_iter()
        .find(|(k, _)| &**k.get_ref() == "coordinates");
    let coordinates = match written {
        Some((k, v)) => Some((coordinates(&cx, v)?, span_of(k))),
        None => None,
    };
    cx.coords = match &coordinates {
        Some((c, _)) => c.clone(),
        None => COORDS.map(String::from),
    };
    let mut file = ProblemFile {
        path: path.to_string(),
        text: text.to_string(),
        name: None,
        parameters: Vec::new(),
        functions: Vec::new(),
        defines: Vec::new(),
        perturbation: Vec::new(),
        source: None,
        claims: None,
        grid: None,
        coordinates: cx.coords.clone(),
        coordinates_span: coordinates.as_ref().map(|(_, s)| *s),
        cosmological_constant: None,
        background: None,
        background_source: None,
        gauge_vector: None,
        domain: None,
        bodies: Vec::new(),
        orbit: None,
        radiation_claims: RadiationClaimTexts::default(),
        far_zone_span: None,
        far_zone_radius_span: None,
    };
    let mut saw_perturbation = false;
    for (k, v) in entries(root.get_ref()) {
        match &**k.get_ref() {
            "name" => match v.get_ref() {
                DeValue::String(s) => file.name = Some(s.to_string()),
                _ => return Err(cx.type_error("`name`", "a string", v)),
            },
            "parameters" => file.parameters = cx.parameters(cx.table(k, v)?)?,
            "functions" => file.functions = cx.named_exprs("functions", cx.table(k, v)?)?,
            "define" => file.defines = cx.named_exprs("define", cx.table(k, v)?)?,
            "perturbation" => {
                file.perturbation = cx.components("perturbation", cx.table(k, v)?)?;
                saw_perturbation = true;
            }
            "source" => file.source = Some(cx.components("source", cx.table(k, v)?)?),
            "coordinates" => {}
            "cosmological_constant" => file.cosmological_constant = Some(cx.lambda(v)?),
            "background" => file.background = Some(cx.components("background", cx.table(k, v)?)?),
            "background_source" => {
                file.background_source = Some(cx.components("background_source", cx.table(k, v)?)?);
            }
            "gauge_vector" => file.gauge_vector = Some(cx.vector(cx.table(k, v)?)?),
            "domain" => file.domain = Some(cx.domain(cx.table(k, v)?)?),
            "claims" => {
                file.claims = Some(cx.claims(
                    cx.table(k, v)?,
                    &mut file.radiation_claims,
                    &mut file.far_zone_span,
                    &mut file.far_zone_radius_span,
                )?);
            }
            "grid" => file.grid = Some(cx.grid(cx.table(k, v)?)?),
            "body" => cx.bodies(v, &mut file.bodies)?,
            "binary" => {
                let (two, orbit) = cx.binary(k, cx.table(k, v)?)?;
                file.bodies.extend(two);
                file.orbit = orbit;
            }
            _ => {
                let mut e = cx.unknown_key(k, "", &TOP_KEYS);
                if matches!(v.get_ref(), DeValue::Table(_)) {
                    e.message = format!("unknown table [{}]", &**k.get_ref());
                }
                return Err(e);
            }
        }
    }
    if !file.bodies.is_empty() && file.coordinates != COORDS.map(String::from) {
        return Err(cx
            .err(
                "bodies ([[body]], [binary]) are described in Cartesian coordinates t, x, y, z",
                file.coordinates_span.unwrap_or(Span::new(0, 0)),
                "not Cartesian",
            )
            .with_help("remove `coordinates` (or list t, x, y, z) in a file with bodies"));
    }
    if let Some(orbit) = &file.orbit
        && file.bodies.len() > 2
    {
        return Err(cx
            .err(
                "an eccentric [binary] is written in its eccentric anomaly, [[body]] tables in \
                 the time: the two cannot describe one source",
                orbit.anomaly_span,
                "eccentric orbit",
            )
            .with_help(
                "describe the source either by the eccentric [binary] alone or by [[body]] \
                 tables (a circular [binary] may sit beside them)",
            ));
    }
    if !saw_perturbation && file.bodies.is_empty() {
        return Err(cx
            .err(
                "the file has no [perturbation] table",
                Span::new(0, 0),
                "no [perturbation] table",
            )
            .with_help(
                "give h_{mu nu} in a [perturbation] table, e.g. `xx = 'A*cos(omega*(t - z))'`; \
                 omitted components are 0 (a file describing a source by [[body]] or [binary] \
                 may leave it out)",
            ));
    }
    let cartesian = file.coordinates == COORDS.map(String::from);
    let about_a_background = file.background.is_some()
        || file.cosmological_constant.is_some()
        || file.background_source.is_some()
        || file.gauge_vector.is_some()
        || !cartesian;
    far_zone_radius(&cx, &file, about_a_background)?;
    if file.background.is_none()
        && let Some(span) = file.coordinates_span.filter(|_| !cartesian)
    {
        return Err(cx
            .err(
                "coordinates other than t, x, y, z need a [background] table",
                span,
                "not Cartesian",
            )
            .with_help({
                let c = &file.coordinates;
                let key = |i: usize| component_key(c, i, i);
                format!(
                    "give the background metric gbar_{{mu nu}} in these coordinates, e.g. for \
                     flat space in spherical ones:\n[background]\n{} = '-1'\n{} = '1'\n\
                     {} = '{r}^2'\n{} = '{r}^2*sin({th})^2'",
                    key(0),
                    key(1),
                    key(2),
                    key(3),
                    r = c[1],
                    th = c[2],
                )
            }));
    }
    Ok(file)
}

/// The far-zone ray's coordinates: about flat space in t, x, y, z the ray is Cartesian and
/// takes no radius (about a background in t, x, y, z too, unless `far_zone_radius` names
/// one); anywhere else the radius is `far_zone_radius` or the coordinate named `r`, a
/// coordinate other than the first (time). Errors point at the key.
fn far_zone_radius(
    cx: &Cx<'_>,
    file: &ProblemFile,
    about_a_background: bool,
) -> Result<(), ProblemError> {
    let radius = file
        .claims
        .as_ref()
        .and_then(|c| c.far_zone_radius.as_deref());
    let radius_span = file.far_zone_radius_span.unwrap_or(Span::new(0, 0));
    let Some(order_span) = file.far_zone_span else {
        if radius.is_some() {
            return Err(cx
                .err(
                    "`far_zone_radius` names the radius of a far-zone claim, but the file has \
                     no `far_zone_order`",
                    radius_span,
                    "no far-zone claim",
                )
                .with_help("add `far_zone_order = n` to [claims], or remove `far_zone_radius`"));
        }
        return Ok(());
    };
    let coords = &file.coordinates;
    let listed = coords
        .iter()
        .map(|c| format!("`{c}`"))
        .collect::<Vec<_>>()
        .join(", ");
    if !about_a_background {
        return match radius {
            None => Ok(()),
            Some(_) => Err(cx
                .err(
                    "`far_zone_radius` is for files about a [background]: about flat space in \
                     t, x, y, z the far-zone ray is Cartesian (t = u + r, (x, y, z) = r n)",
                    radius_span,
                    "not used here",
                )
                .with_help("remove `far_zone_radius`")),
        };
    }
    match radius {
        Some(name) => match coords.iter().position(|c| c == name) {
            Some(0) => Err(cx
                .err(
                    format!("`far_zone_radius` names `{name}`, the time coordinate"),
                    radius_span,
                    "the time coordinate",
                )
                .with_help(format!(
                    "the ray runs out at fixed retarded time: name one of {listed} other than \
                     the first (time) coordinate"
                ))),
            Some(_) => Ok(()),
            None => Err(cx
                .err(
                    format!("`far_zone_radius` names `{name}`, which is not a coordinate"),
                    radius_span,
                    "not a coordinate",
                )
                .with_help(format!("the coordinates are {listed}; {RADIUS_HELP}"))),
        },
        None => match coords.iter().position(|c| c == "r") {
            Some(i) if i > 0 => Ok(()),
            // t, x, y, z: the Cartesian ray, as about flat space.
            _ if *coords == COORDS.map(String::from) => Ok(()),
            _ => Err(cx
                .err(
                    "`far_zone_order` about a background needs a radial coordinate, and no \
                     coordinate is named `r`",
                    order_span,
                    "which coordinate is the radius?",
                )
                .with_help(format!(
                    "the coordinates are {listed}; the far-zone ray is t = u + r, r growing, \
                     the other coordinates fixed: write spherical-type coordinates with a radius \
                     `r`, or {RADIUS_HELP}"
                ))),
        },
    }
}
