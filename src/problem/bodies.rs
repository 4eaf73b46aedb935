//! A `[binary]` table expanded into the two point masses of its Kepler orbit.
//!
//! Parametrisation (G = c = 1): total mass `M = m1 + m2`, semimajor axis `a` and mean motion
//! `n = sqrt(M/a^3)` (Kepler's third law; with `period = P` instead, `n = 2 pi/P` and
//! `a = (M P^2/(4 pi^2))^(1/3)`). In the orbit's own plane the relative orbit `x1 - x2` is
//! `(X, Y)` turned by `phase` about the orbit's normal, then tilted by the inclination `i`
//! about the line of nodes (the x axis before the node turn) and turned by the node angle
//! `Omega` about z: `x1 - x2 = (X' cos Omega - Y' cos i sin Omega, X' sin Omega + Y' cos i
//! cos Omega, Y' sin i)` with `X' = X cos(phase) - Y sin(phase)`, `Y' = X sin(phase) + Y
//! cos(phase)`. At `i = 0` the orbit lies in the x-y plane and turns counterclockwise about +z
//! (orbital angular momentum along +z). Moments are about the centre of mass at the origin:
//! `x1 = (m2/M)(x1 - x2)`, `x2 = -(m1/M)(x1 - x2)`.
//!
//! - **Circular** (no `eccentricity`, or the number 0): `(X, Y) = a (cos n t, sin n t)`, so
//!   `phase` is the orbital phase at t = 0 measured from the line of nodes. The bodies are
//!   functions of the time coordinate (exactly the expansion of earlier versions).
//! - **Eccentric** (`0 <= e < 1`, a number, a parameter, or an expression of parameters
//!   certified in (0, 1) on a box around their values, see `problem::build`): the bodies are functions of the
//!   eccentric anomaly, named by `anomaly` (default `E`): `X = a (cos E - e)`,
//!   `Y = a sqrt(1 - e^2) sin E` (focus at the origin of the relative orbit, periapsis along
//!   +X at E = 0), and time enters only through Kepler's equation `n t = E - e sin E`: the
//!   clock runs from periapsis at t = 0, so `phase` is the argument of periapsis (from the line
//!   of nodes, in the orbit plane). Time derivatives are `d/dt = n/(1 - e cos E) d/dE`
//!   ([`KeplerOrbitText::rate`]); at e = 0 this is the circular orbit with `E = n t`.
//!
//! Closed forms in t exist only for circular orbits (Kepler's equation has no elementary
//! inverse), which is why an eccentric orbit is written in the anomaly.

use super::{BodyText, ExprText};
use crate::expr::Span;

/// What to write in a `[binary]` table.
pub const BINARY_HELP: &str = "[binary] takes m1, m2, semimajor_axis or period (one of them), \
    and optionally eccentricity (0 <= e < 1: a number, a parameter, or an expression of \
    parameters strictly between 0 and 1 at their values; 0 means circular), \
    anomaly (the name of the eccentric anomaly, default E), inclination, node and phase \
    (radians); at inclination 0 the orbit is in the x-y plane, turning counterclockwise about \
    +z; an eccentric orbit is written in its eccentric anomaly, n t = E - e sin E";

/// The default name of the eccentric anomaly.
pub const DEFAULT_ANOMALY: &str = "E";

/// The fields of a `[binary]` table as written.
#[derive(Clone, Debug, Default)]
pub struct BinarySpec {
    /// The first mass.
    pub m1: Option<ExprText>,
    /// The second mass.
    pub m2: Option<ExprText>,
    /// The semimajor axis of the relative orbit.
    pub semimajor_axis: Option<ExprText>,
    /// The orbital period.
    pub period: Option<ExprText>,
    /// The eccentricity, `0 <= e < 1` (a number, a parameter or an expression of parameters).
    pub eccentricity: Option<ExprText>,
    /// The name of the eccentric anomaly (eccentric orbits only).
    pub anomaly: Option<ExprText>,
    /// The inclination.
    pub inclination: Option<ExprText>,
    /// The longitude of the line of nodes.
    pub node: Option<ExprText>,
    /// The orbital phase at t = 0 (circular), or the argument of periapsis (eccentric).
    pub phase: Option<ExprText>,
}

/// The clock of an eccentric binary as written: the anomaly's name and the texts from which
/// the orbit's time derivatives and averages are built.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct KeplerOrbitText {
    /// The name of the eccentric anomaly.
    pub anomaly: String,
    /// Where the name is written (the `[binary]` key when it is the default).
    pub anomaly_span: Span,
    /// Whether the name was written (`anomaly = '...'`) rather than the default.
    pub anomaly_written: bool,
    /// The eccentricity as written.
    pub eccentricity: ExprText,
    /// The mean motion `n` (generated text).
    pub mean_motion: String,
    /// `dE/dt = n/(1 - e cos E)` (generated text).
    pub rate: String,
    /// The masses' texts and the relative orbit `(X, Y)` in the orbit's own frame (periapsis
    /// along +X, angular momentum along +Z), before the orientation turns it.
    pub plane: ([String; 2], [String; 2]),
    /// The orientation angles (inclination, node, argument of periapsis), when any is given:
    /// the orbit frame turns into space by `R = Rz(node) Rx(inclination) Rz(phase)`.
    pub angles: Option<[String; 3]>,
}

/// Why a `[binary]` table cannot be expanded, and where (the table's key when `None`).
#[derive(Clone, Debug)]
pub struct BinaryError {
    /// The message.
    pub message: String,
    /// The offending value, if one is to blame.
    pub at: Option<Span>,
}

impl BinaryError {
    fn table(message: impl Into<String>) -> BinaryError {
        BinaryError {
            message: message.into(),
            at: None,
        }
    }
}

/// `(text)` of an optional field, or `default`.
fn paren(e: Option<&ExprText>, default: &str) -> String {
    e.map_or_else(|| default.to_string(), |e| format!("({})", e.text))
}

/// The value of a literal number (`0.5`, `1e-1`, `3/5`), `None` for anything else.
fn literal_value(text: &str) -> Option<f64> {
    let t = text.trim();
    if let Ok(v) = t.parse::<f64>() {
        return Some(v);
    }
    let (p, q) = t.split_once('/')?;
    let (p, q): (f64, f64) = (p.trim().parse().ok()?, q.trim().parse().ok()?);
    Some(p / q)
}

/// True for a name the parser reads as one identifier.
fn is_identifier(s: &str) -> bool {
    let mut c = s.chars();
    c.next().is_some_and(|f| f.is_ascii_alphabetic())
        && c.all(|x| x.is_ascii_alphanumeric() || x == '_')
}

impl BinarySpec {
    /// The two bodies, in the time coordinate `t` (circular) or in the eccentric anomaly
    /// (eccentric, with the orbit's clock); why not, when the table is incomplete or its
    /// eccentricity impossible. `key` is where the table is written.
    ///
    /// # Errors
    ///
    /// A missing mass, both or neither of the semimajor axis and the period, an eccentricity
    /// that is a number outside `0 <= e < 1`, an anomaly that is not a name, an anomaly given
    /// to a circular orbit.
    pub fn expand(
        &self,
        t: &str,
        key: Span,
    ) -> Result<(Vec<BodyText>, Option<KeplerOrbitText>), BinaryError> {
        let (Some(m1), Some(m2)) = (&self.m1, &self.m2) else {
            return Err(BinaryError::table("[binary] needs both masses, m1 and m2"));
        };
        let eccentric = match &self.eccentricity {
            None => None,
            Some(e) => match literal_value(&e.text) {
                Some(0.0) => None,
                Some(v) if !(0.0..1.0).contains(&v) => {
                    return Err(BinaryError {
                        message: format!(
                            "[binary] eccentricity {}: a Kepler orbit (a bound ellipse) has \
                             0 <= e < 1",
                            e.text
                        ),
                        at: Some(e.token),
                    });
                }
                _ => Some(e),
            },
        };
        if eccentric.is_none()
            && let Some(an) = &self.anomaly
        {
            return Err(BinaryError {
                message: "[binary] anomaly names the eccentric anomaly of an eccentric orbit; \
                          this orbit is circular (written in t)"
                    .into(),
                at: Some(an.token),
            });
        }
        let mass = format!("({} + {})", m1.text, m2.text);
        let (a, n, token) = match (&self.semimajor_axis, &self.period) {
            (Some(a), None) => (
                format!("({})", a.text),
                format!("sqrt({mass}/({})^3)", a.text),
                a.token,
            ),
            (None, Some(p)) => (
                format!("({mass}*({})^2/(4*pi^2))^(1/3)", p.text),
                format!("(2*pi/({}))", p.text),
                p.token,
            ),
            _ => {
                return Err(BinaryError::table(
                    "[binary] needs exactly one of semimajor_axis and period",
                ));
            }
        };
        let Some(e) = eccentric else {
            return Ok((self.circular(t, (&a, &n, token), (m1, m2)), None));
        };
        let (name, span, written) = match &self.anomaly {
            Some(an) => {
                let name = an.text.trim().to_string();
                if !is_identifier(&name) {
                    return Err(BinaryError {
                        message: format!(
                            "[binary] anomaly `{}` is not a name (a letter, then letters, \
                             digits or _)",
                            an.text
                        ),
                        at: Some(an.token),
                    });
                }
                (name, an.token, true)
            }
            None => (DEFAULT_ANOMALY.to_string(), key, false),
        };
        let ecc = format!("({})", e.text);
        let x = format!("{a}*(cos({name}) - {ecc})");
        let y = format!("{a}*sqrt(1 - {ecc}^2)*sin({name})");
        let plane = ([m1.text.clone(), m2.text.clone()], [x.clone(), y.clone()]);
        let angles = (self.inclination.is_some() || self.node.is_some() || self.phase.is_some())
            .then(|| [&self.inclination, &self.node, &self.phase].map(|a| paren(a.as_ref(), "0")));
        // The in-plane turn by the argument of periapsis, written out only when given.
        let [x, y] = match &self.phase {
            None => [x, y],
            Some(ph) => {
                let w = format!("({})", ph.text);
                [
                    format!("(({x})*cos({w}) - ({y})*sin({w}))"),
                    format!("(({x})*sin({w}) + ({y})*cos({w}))"),
                ]
            }
        };
        let rel = if self.inclination.is_none() && self.node.is_none() {
            [x, y, "0".to_string()]
        } else {
            let i = paren(self.inclination.as_ref(), "0");
            let node = paren(self.node.as_ref(), "0");
            [
                format!("({x})*cos({node}) - ({y})*cos({i})*sin({node})"),
                format!("({x})*sin({node}) + ({y})*cos({i})*cos({node})"),
                format!("({y})*sin({i})"),
            ]
        };
        let orbit = KeplerOrbitText {
            rate: format!("{n}/(1 - {ecc}*cos({name}))"),
            anomaly: name,
            anomaly_span: span,
            anomaly_written: written,
            eccentricity: e.clone(),
            mean_motion: n.clone(),
            plane,
            angles,
        };
        let text = |s: String| ExprText {
            text: s,
            token,
            offset: None,
        };
        let body = |label: &str, m: &ExprText, share: String| BodyText {
            label: label.to_string(),
            mass: m.clone(),
            position: rel.clone().map(|c| text(format!("{share}*({c})"))),
            rigid: None,
        };
        Ok((
            vec![
                body("m1", m1, format!("({})/{mass}", m2.text)),
                body("m2", m2, format!("(-({})/{mass})", m1.text)),
            ],
            Some(orbit),
        ))
    }

    /// The circular orbit's two bodies in `t` (the expansion of earlier versions, text for
    /// text): `a` the semimajor axis text, `w` the angular frequency text.
    fn circular(
        &self,
        t: &str,
        (a, w, token): (&str, &str, Span),
        (m1, m2): (&ExprText, &ExprText),
    ) -> Vec<BodyText> {
        let mass = format!("({} + {})", m1.text, m2.text);
        let psi = match &self.phase {
            Some(ph) => format!("({w}*{t} + ({}))", ph.text),
            None => format!("{w}*{t}"),
        };
        // Written out only as far as the file's angles need (the same orbit either way).
        let rel = if self.inclination.is_none() && self.node.is_none() {
            [
                format!("{a}*cos({psi})"),
                format!("{a}*sin({psi})"),
                "0".to_string(),
            ]
        } else {
            let i = paren(self.inclination.as_ref(), "0");
            let node = paren(self.node.as_ref(), "0");
            [
                format!("{a}*(cos({psi})*cos({node}) - sin({psi})*cos({i})*sin({node}))"),
                format!("{a}*(cos({psi})*sin({node}) + sin({psi})*cos({i})*cos({node}))"),
                format!("{a}*sin({psi})*sin({i})"),
            ]
        };
        let text = |s: String| ExprText {
            text: s,
            token,
            offset: None,
        };
        let body = |label: &str, m: &ExprText, share: String| BodyText {
            label: label.to_string(),
            mass: m.clone(),
            position: rel.clone().map(|c| text(format!("{share}*{c}"))),
            rigid: None,
        };
        vec![
            body("m1", m1, format!("({})/{mass}", m2.text)),
            body("m2", m2, format!("(-({})/{mass})", m1.text)),
        ]
    }
}
