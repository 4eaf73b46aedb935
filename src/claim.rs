//! The claims a perturbation can be checked for, described once.
//!
//! Model. A claim is data: its [`Kind`] (which condition), whether the file asserts it
//! ([`Claim::asserted`]), and the ordered list of [`Part`]s, the components that must all
//! vanish for it to hold. A [`Plan`] is the list of claims a problem is checked for, chosen
//! from its \[claims\] table (or, without one, every property, unasserted).
//!
//! Key design decision: keys, titles, negated titles, component names and the "overall"
//! rule live here and nowhere else; each route computes a [`Part`] by its own formulas (the
//! exact check from [`crate::tensor`], the numerical check and the audit from
//! [`crate::grid::claims`]), so the routes stay independent while their reports line up
//! component by component. Adding a gauge condition is one [`Gauge`] variant with its name,
//! titles and parts here, plus the formula of each new [`Part`] in each route.

use crate::tensor::{Frame, riemann_independent};
use std::fmt;

/// A gauge condition that a file can claim.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Gauge {
    /// `d^mu hbar_{mu nu} = 0`, with `hbar` the trace-reversed perturbation.
    Lorenz,
    /// Transverse-traceless: `h_{t mu} = 0`, `d^i h_{ij} = 0`, `h^i_i = 0`.
    Tt,
    /// `h_{t mu} = 0`.
    Synchronous,
}

impl Gauge {
    /// Every gauge, in the order of their names in [`Gauge::NAMES`].
    pub const ALL: [Gauge; 3] = [Gauge::Lorenz, Gauge::Tt, Gauge::Synchronous];
    /// The names accepted in a file.
    pub const NAMES: [&'static str; 3] = ["lorenz", "tt", "synchronous"];

    /// The name used in files: `lorenz`, `tt` or `synchronous`.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Gauge::Lorenz => "lorenz",
            Gauge::Tt => "tt",
            Gauge::Synchronous => "synchronous",
        }
    }

    /// The claim's title, e.g. `Lorenz gauge (d^mu hbar_{mu nu} = 0)`.
    #[must_use]
    pub fn title(self) -> &'static str {
        Kind::Gauge(self).title()
    }

    /// The gauge with this name (exact, lowercase), if there is one.
    #[must_use]
    pub fn parse(name: &str) -> Option<Gauge> {
        Gauge::ALL.into_iter().find(|g| g.name() == name)
    }

    /// The conditions, in report order.
    fn parts(self) -> Vec<Part> {
        self.parts_with(
            Part::SpatialTrace,
            (1..4).map(Part::SpatialDivergence).collect(),
        )
    }

    /// The conditions about a background, in report order (TT: the trace with gbar and
    /// the covariant Lorenz divergence).
    fn covariant_parts(self) -> Vec<Part> {
        self.parts_with(Part::Trace, (0..4).map(Part::Lorenz).collect())
    }

    /// The conditions, TT's trace and transversality given: `h_{t mu}` for synchronous,
    /// then for TT the trace and the divergences.
    fn parts_with(self, trace: Part, transverse: Vec<Part>) -> Vec<Part> {
        let synchronous = (0..4).map(|mu| Part::H(0, mu));
        match self {
            Gauge::Lorenz => (0..4).map(Part::Lorenz).collect(),
            Gauge::Synchronous => synchronous.collect(),
            Gauge::Tt => synchronous.chain([trace]).chain(transverse).collect(),
        }
    }
}

impl std::str::FromStr for Gauge {
    type Err = String;
    fn from_str(s: &str) -> Result<Gauge, String> {
        Gauge::parse(s).ok_or_else(|| {
            format!(
                "unknown gauge `{s}`; the gauges are {}",
                Gauge::NAMES.join(", ")
            )
        })
    }
}

impl fmt::Display for Gauge {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// The largest `far_zone_order` a file may claim (each order is one more coefficient of
/// the expansion in 1/r, whose size grows quickly with the order).
pub const MAX_FAR_ZONE_ORDER: u32 = 8;

/// What the author of a file asserts; every claim is checked.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Claims {
    /// `G1_{mu nu} = 8 pi T_{mu nu}` (vacuum without a source) holds, or fails.
    pub field_equations: Option<bool>,
    /// Gauge conditions that hold, in file order, each at most once.
    pub gauge: Vec<Gauge>,
    /// `h` is, or is not, a pure gauge perturbation `d_mu xi_nu + d_nu xi_mu`.
    pub pure_gauge: Option<bool>,
    /// `far_zone_order = n`: every claim about components of h (and T) is checked as "the
    /// component is O(1/r^n) as r grows at fixed t - r and fixed direction" instead of "the
    /// component is 0" (see `crate::check::farzone`).
    pub far_zone_order: Option<u32>,
    /// `far_zone_radius = 'NAME'`: the coordinate that grows along the far-zone ray in a
    /// file about a background (default `r`; resolved against the coordinates by the
    /// reader). `None` in t, x, y, z about flat space, whose ray is Cartesian.
    pub far_zone_radius: Option<String>,
}

impl Claims {
    /// The claims as written in a file's \[claims\] table, on one line (`none` when empty).
    #[must_use]
    pub fn summary(&self) -> String {
        let mut parts = Vec::new();
        if let Some(b) = self.field_equations {
            parts.push(format!("field_equations = {b}"));
        }
        if !self.gauge.is_empty() {
            let g: Vec<String> = self.gauge.iter().map(|g| format!("'{g}'")).collect();
            parts.push(format!("gauge = [{}]", g.join(", ")));
        }
        if let Some(b) = self.pure_gauge {
            parts.push(format!("pure_gauge = {b}"));
        }
        if let Some(n) = self.far_zone_order {
            parts.push(format!("far_zone_order = {n}"));
        }
        if let Some(r) = &self.far_zone_radius {
            parts.push(format!("far_zone_radius = '{r}'"));
        }
        if parts.is_empty() {
            "none".into()
        } else {
            parts.join(", ")
        }
    }
}

/// `(title, negated title)` for a title negated by a leading `not `.
macro_rules! negated {
    ($title:literal) => {
        ($title, concat!("not ", $title))
    };
}

/// `(title, negated title)` of the background's equations `$eq`: "background solves $eq",
/// "background does not solve $eq".
macro_rules! background {
    ($eq:literal) => {
        (
            concat!("background solves ", $eq),
            concat!("background does not solve ", $eq),
        )
    };
}

/// The entry of `table` for the terms an equation has: none, Lambda, a source, both.
fn by_terms<T: Copy>(lambda: bool, sourced: bool, table: [T; 4]) -> T {
    table[usize::from(lambda) + 2 * usize::from(sourced)]
}

/// Which condition a claim is about.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Kind {
    /// `d^mu T_{mu nu} = 0`.
    SourceConservation,
    /// `G1_{mu nu} = 8 pi T_{mu nu}`, or `G1_{mu nu} = 0` without a source.
    FieldEquations {
        /// Whether the problem has a source.
        sourced: bool,
    },
    /// A gauge condition.
    Gauge(Gauge),
    /// The linearized Riemann tensor vanishes (about a flat background).
    PureGauge,
    /// The background's own equations, Gbar + Lambda gbar = 8 pi Tbar.
    BackgroundEquations {
        /// Whether there is a cosmological constant.
        lambda: bool,
        /// Whether there is a background source.
        sourced: bool,
    },
    /// dG + Lambda h = 8 pi dT about a background.
    CurvedFieldEquations {
        /// Whether there is a cosmological constant.
        lambda: bool,
        /// Whether the perturbation has a source.
        sourced: bool,
    },
    /// A gauge condition about a background (traces and divergences with gbar and its
    /// covariant derivative).
    CovariantGauge(Gauge),
    /// The first-order change of the source's covariant divergence about a background (the
    /// terms in which h acts on Tbar included).
    CurvedConservation,
    /// h = D xi + D xi for the file's gauge vector: pure gauge when it holds; when it does
    /// not, that vector is not the one, which decides nothing.
    GaugeVector,
    /// The file's luminosity equals the quadrupole formula's of its bodies (instantaneous,
    /// or averaged over time); decided in [`crate::radiation`], not from parts of h.
    Luminosity {
        /// Averaged over time.
        average: bool,
    },
    /// The file's h_plus and h_cross equal the quadrupole formula's along its direction and
    /// distance; decided in [`crate::radiation`].
    Waveform,
    /// The file's linear-momentum flux (three components) equals the octupole and
    /// current-quadrupole formula of its bodies (instantaneous, or averaged over time);
    /// decided in [`crate::radiation`].
    MomentumFlux {
        /// Averaged over time.
        average: bool,
    },
}

impl Kind {
    /// The machine key: `source_conservation`, `field_equations`, `gauge.lorenz`,
    /// `pure_gauge`.
    #[must_use]
    pub fn key(self) -> String {
        match self {
            Kind::SourceConservation | Kind::CurvedConservation => "source_conservation".into(),
            Kind::FieldEquations { .. } => "field_equations".into(),
            Kind::Gauge(g) | Kind::CovariantGauge(g) => format!("gauge.{}", g.name()),
            Kind::PureGauge | Kind::GaugeVector => "pure_gauge".into(),
            Kind::BackgroundEquations { .. } => "background".into(),
            Kind::CurvedFieldEquations { .. } => "field_equations".into(),
            Kind::Luminosity { average: false } => "luminosity".into(),
            Kind::Luminosity { average: true } => "luminosity_average".into(),
            Kind::Waveform => "waveform".into(),
            Kind::MomentumFlux { average: false } => "momentum_flux".into(),
            Kind::MomentumFlux { average: true } => "momentum_flux_average".into(),
        }
    }

    /// The title of the claim that the parts vanish.
    #[must_use]
    pub fn title(self) -> &'static str {
        self.titles().0
    }

    /// The title of the claim that they do not all vanish (a claim written `= false`).
    #[must_use]
    pub fn negated_title(self) -> &'static str {
        self.titles().1
    }

    /// The title and the negated title.
    fn titles(self) -> (&'static str, &'static str) {
        match self {
            Kind::SourceConservation => (
                "source conservation (d^mu T_{mu nu} = 0)",
                "not source conservation (d^mu T_{mu nu} != 0)",
            ),
            Kind::FieldEquations { sourced: true } => negated!("field equations G1 = 8 pi T"),
            Kind::FieldEquations { sourced: false } => negated!("vacuum field equations G1 = 0"),
            Kind::Gauge(Gauge::Lorenz) => (
                "Lorenz gauge (d^mu hbar_{mu nu} = 0)",
                "not Lorenz gauge (d^mu hbar_{mu nu} != 0)",
            ),
            Kind::Gauge(Gauge::Tt) => (
                "TT gauge (h_{t mu} = 0, h^i_i = 0, d_i h_{ij} = 0)",
                "not TT gauge (one of h_{t mu}, h^i_i, d_i h_{ij} != 0)",
            ),
            Kind::Gauge(Gauge::Synchronous) => (
                "synchronous gauge (h_{t mu} = 0)",
                "not synchronous gauge (h_{t mu} != 0)",
            ),
            Kind::PureGauge => (
                "pure gauge (linearized Riemann tensor = 0)",
                "not pure gauge (linearized Riemann tensor != 0)",
            ),
            Kind::BackgroundEquations { lambda, sourced } => by_terms(
                lambda,
                sourced,
                [
                    (
                        "background is a vacuum solution (Gbar = 0)",
                        "background is not a vacuum solution (Gbar != 0)",
                    ),
                    background!("Gbar + Lambda gbar = 0"),
                    background!("Gbar = 8 pi Tbar"),
                    background!("Gbar + Lambda gbar = 8 pi Tbar"),
                ],
            ),
            Kind::CurvedFieldEquations { lambda, sourced } => by_terms(
                lambda,
                sourced,
                [
                    negated!("linearized equations about the background dG = 0 (dT = 0)"),
                    negated!("linearized equations about the background dG + Lambda h = 0"),
                    negated!("linearized equations about the background dG = 8 pi dT"),
                    negated!("linearized equations about the background dG + Lambda h = 8 pi dT"),
                ],
            ),
            Kind::CovariantGauge(Gauge::Lorenz) => (
                "Lorenz gauge (gbar^{mu a} D_a hbar_{mu nu} = 0)",
                "not Lorenz gauge (gbar^{mu a} D_a hbar_{mu nu} != 0)",
            ),
            Kind::CovariantGauge(Gauge::Tt) => (
                "TT gauge (h_{0 mu} = 0, gbar^{mu nu} h_{mu nu} = 0, D^mu hbar_{mu nu} = 0)",
                "not TT gauge (one of h_{0 mu}, gbar^{mu nu} h_{mu nu}, D^mu hbar_{mu nu} != 0)",
            ),
            Kind::CovariantGauge(Gauge::Synchronous) => (
                "synchronous gauge (h_{0 mu} = 0)",
                "not synchronous gauge (h_{0 mu} != 0)",
            ),
            Kind::CurvedConservation => (
                "source conservation (first-order change of gbar^{mu a} D_a T_{mu nu} = 0)",
                "not source conservation (first-order change of gbar^{mu a} D_a T_{mu nu} != 0)",
            ),
            Kind::GaugeVector => (
                "pure gauge by the file's vector (h = D xi + D xi)",
                "not pure gauge (h = D xi + D xi for the file's vector)",
            ),
            Kind::Luminosity { average: false } => (
                "luminosity = (1/5) dddQ_ij dddQ_ij of the bodies",
                "luminosity != (1/5) dddQ_ij dddQ_ij of the bodies",
            ),
            Kind::Luminosity { average: true } => (
                "time-averaged luminosity = <(1/5) dddQ_ij dddQ_ij> of the bodies",
                "time-averaged luminosity != <(1/5) dddQ_ij dddQ_ij> of the bodies",
            ),
            Kind::Waveform => (
                "waveform = (2/r) Lambda ddQ(t - r) of the bodies (h_plus, h_cross)",
                "waveform != (2/r) Lambda ddQ(t - r) of the bodies (h_plus, h_cross)",
            ),
            Kind::MomentumFlux { average: false } => (
                "momentum flux dP_i/dt = (2/63) d^4Q_iab d^3Q_ab + (16/45) eps_ipq d^3Q_pa d^3S_qa \
                 of the bodies",
                "momentum flux dP_i/dt != (2/63) d^4Q_iab d^3Q_ab + (16/45) eps_ipq d^3Q_pa \
                 d^3S_qa of the bodies",
            ),
            Kind::MomentumFlux { average: true } => (
                "time-averaged momentum flux <dP_i/dt> = <(2/63) d^4Q_iab d^3Q_ab + (16/45) \
                 eps_ipq d^3Q_pa d^3S_qa> of the bodies",
                "time-averaged momentum flux <dP_i/dt> != <(2/63) d^4Q_iab d^3Q_ab + (16/45) \
                 eps_ipq d^3Q_pa d^3S_qa> of the bodies",
            ),
        }
    }

    /// The components that must vanish, in report order (none for the claims about
    /// radiation, which are not parts of h: see [`crate::radiation`]).
    #[must_use]
    pub fn parts(self) -> Vec<Part> {
        match self {
            Kind::Luminosity { .. } | Kind::Waveform | Kind::MomentumFlux { .. } => Vec::new(),
            Kind::SourceConservation | Kind::CurvedConservation => {
                (0..4).map(Part::Conservation).collect()
            }
            Kind::FieldEquations { sourced } => {
                per_component(|mu, nu| Part::FieldEquation { mu, nu, sourced })
            }
            Kind::Gauge(g) => g.parts(),
            Kind::PureGauge => riemann_independent()
                .into_iter()
                .map(Part::Riemann)
                .collect(),
            Kind::BackgroundEquations { lambda, sourced } => {
                per_component(|mu, nu| Part::BackgroundEquation {
                    mu,
                    nu,
                    lambda,
                    sourced,
                })
            }
            Kind::CurvedFieldEquations { lambda, sourced } => {
                per_component(|mu, nu| Part::CurvedFieldEquation {
                    mu,
                    nu,
                    lambda,
                    sourced,
                })
            }
            Kind::CovariantGauge(g) => g.covariant_parts(),
            Kind::GaugeVector => per_component(Part::GaugeResidual),
        }
    }

    /// Whether a certified nonzero part refutes the claim. Not for [`Kind::GaugeVector`]:
    /// that h differs from one vector's gauge transformation says nothing about others.
    #[must_use]
    pub fn refuted_by_witness(self) -> bool {
        !matches!(self, Kind::GaugeVector)
    }
}

/// One part per component `mu <= nu`, in the order of [`crate::tensor::COMPONENTS`].
fn per_component(part: impl Fn(usize, usize) -> Part) -> Vec<Part> {
    crate::tensor::COMPONENTS
        .iter()
        .map(|&(mu, nu)| part(mu, nu))
        .collect()
}

/// One component of a claim: an expression in h (and T) that must vanish.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Part {
    /// `d^mu T_{mu nu}` for this `nu`.
    Conservation(usize),
    /// `G1_{mu nu} - 8 pi T_{mu nu}` (or `G1_{mu nu}` without a source), `mu <= nu`.
    FieldEquation {
        /// The first index.
        mu: usize,
        /// The second index.
        nu: usize,
        /// Whether the source term is subtracted.
        sourced: bool,
    },
    /// `d^mu hbar_{mu nu}` for this `nu`.
    Lorenz(usize),
    /// The component `h_{mu nu}` itself.
    H(usize, usize),
    /// The spatial trace `h_xx + h_yy + h_zz`.
    SpatialTrace,
    /// The spatial divergence `d_i h_{ij}` for this `j`.
    SpatialDivergence(usize),
    /// The linearized Riemann component `R_{abcd}`.
    Riemann([usize; 4]),
    /// `Gbar_{mu nu} + Lambda gbar_{mu nu} - 8 pi Tbar_{mu nu}`, `mu <= nu`.
    BackgroundEquation {
        /// The first index.
        mu: usize,
        /// The second index.
        nu: usize,
        /// Whether the Lambda term is there.
        lambda: bool,
        /// Whether the source term is there.
        sourced: bool,
    },
    /// `dG_{mu nu} + Lambda h_{mu nu} - 8 pi dT_{mu nu}` about a background, `mu <= nu`.
    CurvedFieldEquation {
        /// The first index.
        mu: usize,
        /// The second index.
        nu: usize,
        /// Whether the Lambda term is there.
        lambda: bool,
        /// Whether the source term is there.
        sourced: bool,
    },
    /// The trace `gbar^{mu nu} h_{mu nu}`.
    Trace,
    /// `h_{mu nu} - D_mu xi_nu - D_nu xi_mu` for the file's gauge vector, `mu <= nu`.
    GaugeResidual(usize, usize),
}

impl Part {
    /// The component's name in reports, e.g. `G_tx - 8*pi*T_tx`, `d^mu hbar_muz`, `R_txtx`
    /// (Cartesian coordinates, partial derivatives).
    #[must_use]
    pub fn name(self) -> String {
        static CARTESIAN: std::sync::OnceLock<Frame> = std::sync::OnceLock::new();
        self.name_in(CARTESIAN.get_or_init(Frame::cartesian))
    }

    /// The component's name in `frame`'s coordinates and derivatives.
    #[must_use]
    pub fn name_in(self, frame: &Frame) -> String {
        let c = |mu: usize, nu: usize| frame.index(&[mu, nu]);
        let d = if frame.covariant { "D" } else { "d" };
        // A free index after `mu`: `muz` with one-letter names, `{mu th}` otherwise.
        let after_mu = |n: usize| {
            if frame.one_letter() && !frame.covariant {
                format!("mu{}", frame.coord(n))
            } else {
                format!("{{mu {}}}", frame.coord(n))
            }
        };
        match self {
            Part::Conservation(nu) => format!("{d}^mu T_{}", after_mu(nu)),
            Part::FieldEquation {
                mu,
                nu,
                sourced: true,
            } => format!("G_{0} - 8*pi*T_{0}", c(mu, nu)),
            Part::FieldEquation {
                mu,
                nu,
                sourced: false,
            } => format!("G_{}", c(mu, nu)),
            Part::Lorenz(nu) => format!("{d}^mu hbar_{}", after_mu(nu)),
            Part::H(mu, nu) => format!("h_{}", c(mu, nu)),
            Part::SpatialTrace => "h_xx + h_yy + h_zz".into(),
            Part::SpatialDivergence(j) => format!("d_i h_i{}", frame.coord(j)),
            Part::Riemann(idx) => format!("R_{}", frame.index(&idx)),
            Part::BackgroundEquation {
                mu,
                nu,
                lambda,
                sourced,
            } => equation_name(&c(mu, nu), ["Gbar", "gbar", "Tbar"], lambda, sourced),
            Part::CurvedFieldEquation {
                mu,
                nu,
                lambda,
                sourced,
            } => equation_name(&c(mu, nu), ["dG", "h", "dT"], lambda, sourced),
            Part::Trace => "gbar^{mu nu} h_{mu nu}".into(),
            Part::GaugeResidual(mu, nu) => {
                let (a, b) = (frame.coord(mu), frame.coord(nu));
                format!("h_{} - {d}_{a} xi_{b} - {d}_{b} xi_{a}", c(mu, nu))
            }
        }
    }
}

/// `G_k + Lambda*g_k - 8*pi*T_k` for the names `[G, g, T]`, with the terms there are.
fn equation_name(k: &str, [g_big, g, t]: [&str; 3], lambda: bool, sourced: bool) -> String {
    let mut s = format!("{g_big}_{k}");
    if lambda {
        s.push_str(&format!(" + Lambda*{g}_{k}"));
    }
    if sourced {
        s.push_str(&format!(" - 8*pi*{t}_{k}"));
    }
    s
}

/// A claim of a plan: what is checked and what the file asserts about it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Claim {
    /// The condition.
    pub kind: Kind,
    /// `Some(true)`: the parts vanish; `Some(false)`: they do not all vanish; `None`: only
    /// reported.
    pub asserted: Option<bool>,
}

impl Claim {
    /// The title as asserted: the negated title for a claim asserted false.
    #[must_use]
    pub fn heading(self) -> &'static str {
        match self.asserted {
            Some(false) => self.kind.negated_title(),
            _ => self.kind.title(),
        }
    }
}

/// The claims a problem is checked for, in report order: source conservation (when there
/// is a source), field equations, gauge conditions, pure gauge.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Plan {
    /// The claims.
    pub claims: Vec<Claim>,
    /// True if the file had a \[claims\] table (otherwise every property is reported,
    /// unasserted, and none counts as failing).
    pub has_claims: bool,
}

impl Plan {
    /// The plan for a file's \[claims\] table (`None`: every property, unasserted).
    ///
    /// Source conservation is checked whenever there is a source, asserted when the field
    /// equations are (a source that is not conserved cannot satisfy them); gauge conditions
    /// are asserted to hold.
    #[must_use]
    pub fn of(claims: Option<&Claims>, sourced: bool) -> Plan {
        Plan::assemble(
            claims,
            Vec::new(),
            sourced.then_some(Kind::SourceConservation),
            Kind::FieldEquations { sourced },
            Kind::Gauge,
            Kind::PureGauge,
        )
    }

    /// The plan in report order: `first`, the conservation claim (asserted with the field
    /// equations), the field equations, the gauges (every one without \[claims\]) and pure
    /// gauge, each as the file asserts it (every property, unasserted, without \[claims\]).
    fn assemble(
        claims: Option<&Claims>,
        first: Vec<Claim>,
        conservation: Option<Kind>,
        field_equations: Kind,
        gauge: fn(Gauge) -> Kind,
        pure_gauge: Kind,
    ) -> Plan {
        let has_claims = claims.is_some();
        let mut out = first;
        if let Some(kind) = conservation {
            out.push(Claim {
                kind,
                asserted: claims.and_then(|c| c.field_equations.filter(|b| *b)),
            });
        }
        let (fe, gauges, pg) = match claims {
            Some(c) => (c.field_equations, c.gauge.clone(), c.pure_gauge),
            None => (None, Gauge::ALL.to_vec(), None),
        };
        if fe.is_some() || !has_claims {
            out.push(Claim {
                kind: field_equations,
                asserted: fe,
            });
        }
        for g in gauges {
            out.push(Claim {
                kind: gauge(g),
                asserted: has_claims.then_some(true),
            });
        }
        if pg.is_some() || !has_claims {
            out.push(Claim {
                kind: pure_gauge,
                asserted: pg,
            });
        }
        Plan {
            claims: out,
            has_claims,
        }
    }
}

/// How pure gauge can be decided about a background.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PureGaugeRoute {
    /// The background's Riemann tensor is proved zero: the linearized Riemann tensor decides.
    Riemann,
    /// By the file's gauge vector (proves, never refutes).
    Vector,
    /// Neither: undecided.
    None,
}

/// What the plan of a problem about a background depends on.
#[derive(Clone, Copy, Debug)]
pub struct Setting<'a> {
    /// The file's \[claims\].
    pub claims: Option<&'a Claims>,
    /// The perturbation has a source dT.
    pub sourced: bool,
    /// The background has a source Tbar.
    pub background_sourced: bool,
    /// Lambda is not zero.
    pub lambda: bool,
    /// How pure gauge is decided.
    pub pure: PureGaugeRoute,
}

impl Plan {
    /// The claims of a problem about a background, in report order: the background's own
    /// equations (always asserted), source conservation, field equations, gauges, pure gauge.
    #[must_use]
    pub fn curved(s: Setting<'_>) -> Plan {
        let background = Claim {
            kind: Kind::BackgroundEquations {
                lambda: s.lambda,
                sourced: s.background_sourced,
            },
            asserted: Some(true),
        };
        Plan::assemble(
            s.claims,
            vec![background],
            (s.sourced || s.background_sourced).then_some(Kind::CurvedConservation),
            Kind::CurvedFieldEquations {
                lambda: s.lambda,
                sourced: s.sourced,
            },
            Kind::CovariantGauge,
            match s.pure {
                PureGaugeRoute::Vector => Kind::GaugeVector,
                PureGaugeRoute::Riemann | PureGaugeRoute::None => Kind::PureGauge,
            },
        )
    }
}

/// The one rule from claim outcomes to a file's overall outcome, for any route's statuses:
/// `fails` if the file has claims and an asserted one fails; else the first status of
/// `pending` (most severe first) that any counted claim has; else `holds`. Counted are the
/// asserted claims, or every claim of a file without \[claims\] (whose properties are only
/// reported, so a property that does not hold is no failure). With nothing counted, nothing
/// was checked: the most severe pending status, never `holds`.
pub fn overall<S: Copy + PartialEq>(
    has_claims: bool,
    claims: impl IntoIterator<Item = (Option<bool>, S)>,
    fails: S,
    pending: &[S],
    holds: S,
) -> S {
    let counted: Vec<S> = claims
        .into_iter()
        .filter(|(asserted, _)| asserted.is_some() || !has_claims)
        .map(|(_, s)| s)
        .collect();
    if counted.is_empty() {
        return pending.first().copied().unwrap_or(holds);
    }
    if has_claims && counted.contains(&fails) {
        return fails;
    }
    pending
        .iter()
        .copied()
        .find(|p| counted.contains(p))
        .unwrap_or(holds)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_gauge_reads_back_from_its_name() {
        for g in Gauge::ALL {
            assert_eq!(Gauge::parse(g.name()), Some(g));
            assert_eq!(g.name().parse::<Gauge>(), Ok(g));
        }
        assert!("Lorenz".parse::<Gauge>().is_err());
    }

    #[test]
    fn keys_and_part_names_are_distinct_within_a_plan() {
        let plan = Plan::of(None, true);
        let keys: Vec<String> = plan.claims.iter().map(|c| c.kind.key()).collect();
        let mut unique = keys.clone();
        unique.sort();
        unique.dedup();
        assert_eq!(keys.len(), unique.len(), "{keys:?}");
        for c in &plan.claims {
            let names: Vec<String> = c.kind.parts().iter().map(|p| p.name()).collect();
            let mut u = names.clone();
            u.sort();
            u.dedup();
            assert_eq!(names.len(), u.len(), "{names:?}");
            assert!(c.kind.title() != c.kind.negated_title());
        }
    }

    #[test]
    fn the_plan_follows_the_claims_table() {
        let claims = Claims {
            field_equations: Some(false),
            gauge: vec![Gauge::Tt],
            pure_gauge: None,
            far_zone_order: None,
            far_zone_radius: None,
        };
        let plan = Plan::of(Some(&claims), true);
        let kinds: Vec<(Kind, Option<bool>)> =
            plan.claims.iter().map(|c| (c.kind, c.asserted)).collect();
        assert_eq!(
            kinds,
            vec![
                // Not asserted: the field equations are claimed to fail.
                (Kind::SourceConservation, None),
                (Kind::FieldEquations { sourced: true }, Some(false)),
                (Kind::Gauge(Gauge::Tt), Some(true)),
            ]
        );
        assert_eq!(plan.claims[1].heading(), "not field equations G1 = 8 pi T");
        let all = Plan::of(None, false);
        assert_eq!(all.claims.len(), 5);
        assert!(all.claims.iter().all(|c| c.asserted.is_none()));
    }

    #[test]
    fn overall_counts_asserted_claims_and_reported_properties() {
        #[derive(Clone, Copy, PartialEq, Debug)]
        enum S {
            H,
            F,
            U,
        }
        let rule =
            |has, v: &[(Option<bool>, S)]| overall(has, v.iter().copied(), S::F, &[S::U], S::H);
        assert_eq!(rule(true, &[(Some(true), S::H), (Some(true), S::F)]), S::F);
        assert_eq!(rule(true, &[(None, S::F), (Some(true), S::H)]), S::H);
        assert_eq!(rule(true, &[(Some(true), S::U), (Some(true), S::H)]), S::U);
        assert_eq!(rule(true, &[(Some(true), S::U), (Some(true), S::F)]), S::F);
        // Without claims a failing property is only reported; an undecided one still counts.
        assert_eq!(rule(false, &[(None, S::F), (None, S::H)]), S::H);
        assert_eq!(rule(false, &[(None, S::F), (None, S::U)]), S::U);
        // Nothing counted is nothing checked: never "holds" (an empty [claims] table, or a
        // grid of a file that has only claims about radiation).
        assert_eq!(rule(true, &[]), S::U);
        assert_eq!(rule(true, &[(None, S::H)]), S::U);
    }
}
