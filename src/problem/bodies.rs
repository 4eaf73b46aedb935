//! A `[binary]` table expanded into the two point masses of its Kepler orbit.
//!
//! Parametrisation (G = c = 1): total mass `M = m1 + m2`; the relative orbit
//! `x1 - x2 = a (cos psi, sin psi cos i, sin psi sin i)` turned by the node angle `Omega`
//! about z, with `psi = w t + phase` and `w = sqrt(M/a^3)` (Kepler's third law; with
//! `period = P` instead, `w = 2 pi/P` and `a = (M P^2/(4 pi^2))^(1/3)`). At `i = 0` the orbit
//! lies in the x-y plane and turns counterclockwise about +z (orbital angular momentum along
//! +z); `i` tilts it about the line of nodes (the x axis before the node turn), `Omega` turns
//! that line about z, `phase` is the orbital phase at t = 0 measured from the line of nodes.
//! Moments are about the centre of mass at the origin: `x1 = (m2/M)(x1 - x2)`,
//! `x2 = -(m1/M)(x1 - x2)`.
//!
//! Only circular orbits have closed forms in t; `eccentricity` other than 0 is refused with
//! what to do instead.

use super::{BodyText, ExprText};

/// What to write in a `[binary]` table.
pub const BINARY_HELP: &str = "[binary] takes m1, m2, semimajor_axis or period (one of them), \
    and optionally eccentricity (0: circular), inclination, node and phase (radians); the orbit \
    is circular, in the x-y plane for inclination 0, turning counterclockwise about +z";

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
    /// The eccentricity (0 only).
    pub eccentricity: Option<ExprText>,
    /// The inclination.
    pub inclination: Option<ExprText>,
    /// The longitude of the line of nodes.
    pub node: Option<ExprText>,
    /// The orbital phase at t = 0.
    pub phase: Option<ExprText>,
}

/// `(text)` of an optional field, or `default`.
fn paren(e: Option<&ExprText>, default: &str) -> String {
    e.map_or_else(|| default.to_string(), |e| format!("({})", e.text))
}

impl BinarySpec {
    /// The two bodies, in the time coordinate `t`; why not, when the table is incomplete or
    /// eccentric.
    ///
    /// # Errors
    ///
    /// A missing mass, both or neither of the semimajor axis and the period, or a nonzero
    /// eccentricity.
    pub fn expand(&self, t: &str) -> Result<Vec<BodyText>, String> {
        let (Some(m1), Some(m2)) = (&self.m1, &self.m2) else {
            return Err("[binary] needs both masses, m1 and m2".into());
        };
        if let Some(e) = &self.eccentricity {
            let v: Option<f64> = e.text.trim().parse().ok();
            if v != Some(0.0) {
                return Err(format!(
                    "[binary] with eccentricity {}: only circular orbits (eccentricity 0) have \
                     closed forms in t here; write the bodies' trajectories with [[body]] \
                     tables instead (or use `lingrav binary` for the orbit-averaged decay)",
                    e.text
                ));
            }
        }
        let mass = format!("({} + {})", m1.text, m2.text);
        let (a, w, token) = match (&self.semimajor_axis, &self.period) {
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
                return Err("[binary] needs exactly one of semimajor_axis and period".into());
            }
        };
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
        Ok(vec![
            body("m1", m1, format!("({})/{mass}", m2.text)),
            body("m2", m2, format!("(-({})/{mass})", m1.text)),
        ])
    }
}
