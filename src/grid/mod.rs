//! The grid check: a numerical second opinion on a problem's claims, by convergence test.
//!
//! Model. The perturbation `h` (and the source `T`) is sampled on a 4-d box of lattice points
//! at three or more resolutions. Derivatives are taken by central finite differences of order
//! `q` (2, 4, 6 or 8; weights from Fornberg's algorithm, [`stencil`]), as a simulation code
//! would; mixed second derivatives are products of first-derivative stencils. Each claim's
//! components are written from the definitions in terms of these samples and derivatives
//! ([`claims`]), never from the symbolic derivatives of [`crate::tensor`], so that this is an
//! independent opinion. The residual of a claim at a resolution is the largest |component|
//! over the components and the interior points of the coarsest grid's interior region (where
//! its stencil fits inside the box), the same region at every resolution so that the
//! residuals compare like with like.
//!
//! If a claim is true its residual is truncation error and falls like `spacing^q` until it
//! reaches round-off; if it is false the residual stalls at the size of the defect. The
//! verdict rule ([`verdict`]): with the observed order `p` between the two finest resolutions,
//! - the finest residual is within the round-off floor: the components vanish *to within
//!   round-off* (and a defect smaller than the floor cannot be seen: the report says so);
//! - `p >= q - 1/2`: they vanish (falling at the stencil's order);
//! - `|p| < 1/2` and the residual more than 10 times the floor: they do not vanish;
//! - otherwise inconclusive, with the reason.
//!
//! A claim `= true` holds when its components vanish, a claim `= false` when they do not.
//! Everything here is numerical evidence, not proof, and is labelled so.
//!
//! Round-off floor. Every sample carries a running error bound from its tape
//! ([`crate::tape::Tape::eval_bounds`]), the largest over a 6^4 lattice spanning the box
//! taken as the sample error `e_c` of channel `c` (a component, or a linear part of the
//! components when they have fewer distinct parts than there are components:
//! [`crate::tape::TapeBuilder::linear_parts`]). A first difference amplifies it by
//! `sum |w1| / spacing`, a second by `sum |w2| / spacing^2` (mixed: `(sum |w1|)^2 /
//! spacing^2`), and a component by the sum of |coefficients| of its terms; the floor of a claim
//! is the largest over its components. It is an estimate (a bound at the probe points), so a
//! claim is called false only well above it.
//!
//! Key design decision: memory stays bounded by streaming ([`sweep`], over `x` with every `t`
//! held, or over `t` when the box is longer in `t`): only a ring of the `q + 2` slabs (3-d
//! cuts of the lattice; `q + 4` on several threads) that the stencils being evaluated reach
//! is held, plus one slab of the channels that do not depend on `t`: about
//! `(q + 3) * n^3 * channels * 8` bytes for `n` points per side, never `n^4`.
//!
//! **Invariants:** no symbolic derivative of `h` or `T` is taken here (samples of arbitrary
//! functions are differentiated symbolically, which defines the sample, not the
//! perturbation); a non-finite sample is an error naming its point unless masking was asked
//! for, and masked points are counted, never silently dropped; results do not depend on the
//! number of threads.

pub mod claims;
pub mod curved;
pub mod plot;
pub mod stencil;
pub mod sweep;
#[cfg(test)]
mod tests;
pub mod verdict;

pub use claims::{Atom, ClaimSpec, Combo, Deriv, Field, box_hbar, claim_specs};
pub use curved::{CurvedPlan, Tracked};
pub use stencil::{ORDERS, Stencil};
pub use sweep::{Box4, Buffers, Sweep};
pub use verdict::{Finding, classify, observed_orders};

use crate::canon::{Form, FunctionSample, Store};
use crate::problem::{Domain, GridSpec, Problem};
use crate::tape::{Binding, Compiler, Lowering, Node, Tape, TapeError, UserExprs};
use rustc_hash::FxHashMap;
use std::rc::Rc;

/// The default centre (t, x, y, z): away from the origin, where point sources sit.
pub const DEFAULT_CENTER: [f64; 4] = [0.3, 0.4, 0.5, 0.6];
/// The default side of the box.
pub const DEFAULT_WIDTH: f64 = 0.2;
/// The default order of the stencils.
pub const DEFAULT_ORDER: u32 = 4;
/// Points per side of the probe lattice for the round-off floor.
pub const PROBE_POINTS: usize = 6;
/// Fewest resolutions for a convergence test.
pub const MIN_RESOLUTIONS: usize = 3;

/// The default resolutions for stencils of order `order`: `n, 2n, 4n` points per side with
/// `n = max(8, order + 4)`, so the coarsest has at least four interior points per side.
#[must_use]
pub fn default_points(order: u32) -> Vec<usize> {
    let n = 8usize.max(order as usize + 4);
    vec![n, 2 * n, 4 * n]
}

/// Why the grid check could not run.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum GridError {
    /// A sample is not finite (a pole, `r = 0` of a point source, an overflow).
    #[error(
        "{component} is {value} at ({coordinates}) = ({}, {}, {}, {}) (a grid point at {points} points per side)",
        point[0], point[1], point[2], point[3]
    )]
    NonFinite {
        /// The component, e.g. `h_tt`.
        component: String,
        /// The coordinate names, e.g. `t, x, y, z`.
        coordinates: String,
        /// The point.
        point: [f64; 4],
        /// `NaN` or `infinite`.
        value: String,
        /// Points per side of the resolution where it happened.
        points: usize,
    },
    /// A sample has an imaginary part that is not round-off.
    #[error(
        "{component} is not real: imaginary part {imaginary:.3e} at ({coordinates}) = ({}, {}, {}, {}), where the largest |value| is {magnitude:.3e}",
        point[0], point[1], point[2], point[3]
    )]
    NotReal {
        /// The component.
        component: String,
        /// The coordinate names, e.g. `t, x, y, z`.
        coordinates: String,
        /// Where the imaginary part is largest.
        point: [f64; 4],
        /// Its size.
        imaginary: f64,
        /// The largest |value| of the component.
        magnitude: f64,
    },
    /// A component cannot be compiled for evaluation.
    #[error("cannot evaluate {component}: {error}")]
    Compile {
        /// The component.
        component: String,
        /// Why.
        error: TapeError,
    },
    /// A resolution too coarse for the stencil.
    #[error(
        "central differences of order {order} need at least {needed} points per side; {got} is too few"
    )]
    TooFewPoints {
        /// The order.
        order: u32,
        /// Points needed.
        needed: usize,
        /// Points given.
        got: usize,
    },
    /// Settings that make no grid.
    #[error("{0}")]
    Settings(String),
}

/// A sampled component of `h` or `T`.
#[derive(Clone, Debug, PartialEq)]
pub struct Channel {
    /// `h_xx`, `T_tt`, ...
    pub name: String,
    /// Which tensor.
    pub field: Field,
    /// Smaller index.
    pub mu: usize,
    /// Larger index.
    pub nu: usize,
    /// Whether it depends on `t` (sampled every slab) or not (sampled once).
    pub dynamic: bool,
    /// Bit `a` set when it depends on coordinate `a` (its derivatives along the others are
    /// exactly 0).
    pub axes: u8,
    /// Its output number in its tape.
    pub(crate) slot: usize,
}

/// A claim component in grid terms.
#[derive(Clone, Debug, PartialEq)]
pub struct ComponentPlan {
    /// Its name, e.g. `G_tx`.
    pub name: String,
    /// `(atom, coefficient)`: indices into [`GridPlan::atoms`].
    pub terms: Vec<(usize, f64)>,
}

/// A claim ready to be evaluated on grids.
#[derive(Clone, Debug, PartialEq)]
pub struct ClaimPlan {
    /// Machine key (as the exact check's).
    pub key: String,
    /// Description.
    pub title: String,
    /// The title as asserted.
    pub heading: String,
    /// What the file asserts.
    pub asserted: Option<bool>,
    /// The components.
    pub components: Vec<ComponentPlan>,
    /// Why the grids do not check this claim (`None`: they do).
    pub not_checked: Option<String>,
    /// Whether components that do not vanish refute the claim; not for a claim that the
    /// file's gauge vector gives `h` (another vector may: [`crate::claim::Kind::refuted_by_witness`]).
    pub refutable: bool,
}

/// Everything compiled before any sampling: the channels and their tapes, the derivatives
/// needed, the claims.
#[derive(Clone, Debug)]
pub struct GridPlan {
    /// The sampled components (those that are not identically zero).
    pub channels: Vec<Channel>,
    /// `(channel, derivative)` pairs the claims need.
    pub atoms: Vec<(usize, Deriv)>,
    /// The claims.
    pub claims: Vec<ClaimPlan>,
    /// True if the file had a [claims] table.
    pub has_claims: bool,
    /// The coordinate names, time first (`t, x, y, z` for flat problems).
    pub coordinates: [String; 4],
    /// About a background: where gbar, h and the rest are sampled, and each component's
    /// [`crate::claim::Part`] (`None`: a flat problem, whose components are the linear
    /// combinations of [`ComponentPlan::terms`]).
    pub curved: Option<CurvedPlan>,
    pub(crate) dynamic: Tape,
    pub(crate) statics: Tape,
    /// When the channels are the linear parts of the components
    /// ([`crate::tape::TapeBuilder::linear_parts`]): the plan with a channel per component.
    pub by_component: Option<Box<GridPlan>>,
}

/// Per component of `h` and `T` (field, indices): its channels with their coefficients.
type Expansion = FxHashMap<(Field, usize, usize), Vec<(usize, f64)>>;

/// Nodes visited at most to write one component as a linear combination
/// ([`crate::tape::TapeBuilder::linear_parts`]); beyond, the component is sampled whole.
const LINEAR_VISITS: usize = 4096;

impl GridPlan {
    /// The plan for a problem's claims (or, without [claims], every property).
    ///
    /// # Errors
    ///
    /// A component that cannot be compiled (a symbol without a value, a function without a
    /// sample).
    pub fn for_problem(p: &mut Problem) -> Result<GridPlan, GridError> {
        if p.background.is_some() {
            return curved::plan(p);
        }
        let specs = claim_specs(p.claims.as_ref(), p.source.is_some());
        let has_claims = p.claims.is_some();
        // Sampled through the user's own expressions (defines, d_ operator, function samples),
        // not through the canonical form: the grid is a second opinion on the exact route.
        let mut bindings = FxHashMap::default();
        for (i, a) in crate::tensor::COORDS.iter().enumerate() {
            bindings.insert((*a).to_string(), Binding::Input(i));
        }
        for (name, v) in &p.parameters {
            bindings.insert(name.clone(), Binding::Value(*v));
        }
        let user = UserExprs {
            defines: p.defines.clone(),
            functions: p.functions.clone(),
        };
        let compile_error =
            |component: String| move |error| GridError::Compile { component, error };
        let mut lowering =
            Lowering::new(4, bindings, &user).map_err(compile_error("[define]".into()))?;
        let mut comps = Vec::new();
        let tensors = [
            (Field::H, "h", Some(&p.h_text)),
            (Field::T, "T", p.source_text.as_ref()),
        ];
        for (field, letter, m) in tensors {
            let Some(m) = m else { continue };
            for (mu, nu) in crate::tensor::COMPONENTS {
                let name = format!("{letter}_{}", crate::tensor::component_name(mu, nu));
                let Some(text) = m[mu][nu].as_ref() else {
                    continue;
                };
                let node = lowering
                    .expression(text)
                    .map_err(compile_error(name.clone()))?;
                comps.push((field, name, mu, nu, node));
            }
        }
        GridPlan::assemble_flat(&lowering.target.builder, comps, specs, has_claims)
    }

    /// The plan for `specs` over the canonical forms `h` and `source`, with parameter values
    /// `constants` and function samples `samples` (tests and benchmarks of the tape).
    ///
    /// # Errors
    ///
    /// As [`GridPlan::for_problem`].
    pub fn new(
        store: &mut Store,
        h: &[[Form; 4]; 4],
        source: Option<&[[Form; 4]; 4]>,
        specs: Vec<ClaimSpec>,
        has_claims: bool,
        constants: &[(String, f64)],
        samples: &FxHashMap<Rc<str>, FunctionSample>,
    ) -> Result<GridPlan, GridError> {
        let mut compiler = Compiler::new(store, &crate::tensor::COORDS, constants, samples);
        let mut comps = Vec::new();
        let tensors = [(Field::H, "h", Some(h)), (Field::T, "T", source)];
        for (field, letter, m) in tensors {
            let Some(m) = m else { continue };
            for (mu, nu) in crate::tensor::COMPONENTS {
                let f = m[mu][nu];
                let name = format!("{letter}_{}", crate::tensor::component_name(mu, nu));
                let node = compiler.form(f).map_err(|error| GridError::Compile {
                    component: name.clone(),
                    error,
                })?;
                comps.push((field, name, mu, nu, node));
            }
        }
        GridPlan::assemble_flat(&compiler.builder, comps, specs, has_claims)
    }

    /// The plan sampling every component of `comps` that is not identically 0 as a channel
    /// of its own (about a background, where the curvature chain takes the components).
    pub(crate) fn assemble(
        builder: &crate::tape::TapeBuilder,
        comps: Vec<(Field, String, usize, usize, Node)>,
        specs: Vec<ClaimSpec>,
        has_claims: bool,
    ) -> Result<GridPlan, GridError> {
        let mut sampled = Vec::new();
        let mut expand: Expansion = FxHashMap::default();
        for (field, name, mu, nu, node) in comps {
            // Identically zero components are not sampled: their terms drop out.
            if builder.is_zero(node) {
                continue;
            }
            expand.insert((field, mu, nu), vec![(sampled.len(), 1.0)]);
            sampled.push((field, name, mu, nu, node));
        }
        Ok(GridPlan::from_channels(
            builder, sampled, &expand, specs, has_claims,
        ))
    }

    /// Flat problems: derivatives are linear, so when the components are linear combinations
    /// (with constant coefficients) of fewer distinct terms than there are components (the
    /// polarizations of a wave: `h_ij = e+_ij hp + ex_ij hc`), the plan samples those terms
    /// ([`crate::tape::TapeBuilder::linear_parts`]) and takes every component's derivatives
    /// as the same combination of theirs: fewer samples and fewer stencils. The plan with a
    /// channel per component is kept in [`GridPlan::by_component`], for what is said about
    /// samples (a sample that is not finite or not real, masking, the sample errors).
    pub(crate) fn assemble_flat(
        builder: &crate::tape::TapeBuilder,
        comps: Vec<(Field, String, usize, usize, Node)>,
        specs: Vec<ClaimSpec>,
        has_claims: bool,
    ) -> Result<GridPlan, GridError> {
        let plain = GridPlan::assemble(builder, comps.clone(), specs.clone(), has_claims)?;
        let mut sampled: Vec<(Field, String, usize, usize, Node)> = Vec::new();
        let mut at: FxHashMap<Node, usize> = FxHashMap::default();
        let mut expand: Expansion = FxHashMap::default();
        for (field, name, mu, nu, node) in comps {
            if builder.is_zero(node) {
                continue;
            }
            let parts = builder
                .linear_parts(node, LINEAR_VISITS)
                .into_iter()
                .map(|(m, c)| {
                    let i = *at.entry(m).or_insert_with(|| {
                        sampled.push((field, name.clone(), mu, nu, m));
                        sampled.len() - 1
                    });
                    (i, c)
                })
                .collect();
            expand.insert((field, mu, nu), parts);
        }
        if sampled.len() >= plain.channels.len() {
            return Ok(plain);
        }
        let mut linear = GridPlan::from_channels(builder, sampled, &expand, specs, has_claims);
        linear.by_component = Some(Box::new(plain));
        Ok(linear)
    }

    /// The plan sampling `sampled` (field, name, indices, node), with each component of `h`
    /// and `T` the combination `expand` gives of the channels.
    fn from_channels(
        builder: &crate::tape::TapeBuilder,
        sampled: Vec<(Field, String, usize, usize, Node)>,
        expand: &Expansion,
        specs: Vec<ClaimSpec>,
        has_claims: bool,
    ) -> GridPlan {
        let mut channels = Vec::new();
        let mut nodes: Vec<Node> = Vec::new();
        for (field, name, mu, nu, node) in sampled {
            let axes = builder.mask(node);
            let dynamic = axes & 1 != 0;
            channels.push(Channel {
                name,
                field,
                mu,
                nu,
                dynamic,
                axes,
                slot: 0,
            });
            nodes.push(node);
        }
        let mut dyn_nodes = Vec::new();
        let mut static_nodes = Vec::new();
        for (ch, &n) in channels.iter_mut().zip(&nodes) {
            let list = if ch.dynamic {
                &mut dyn_nodes
            } else {
                &mut static_nodes
            };
            ch.slot = list.len();
            list.push(n);
        }
        let dynamic = builder.finish(&dyn_nodes);
        let statics = builder.finish(&static_nodes);

        let mut atoms: Vec<(usize, Deriv)> = Vec::new();
        let mut atom_index: FxHashMap<(usize, Deriv), usize> = FxHashMap::default();
        let mut claims = Vec::new();
        for spec in specs {
            let mut components = Vec::new();
            for (name, combo) in spec.components {
                let mut terms: Vec<(usize, f64)> = Vec::new();
                for (atom, coef) in combo.0 {
                    let Some(parts) = expand.get(&(atom.field, atom.mu as usize, atom.nu as usize))
                    else {
                        continue;
                    };
                    for &(c, w) in parts {
                        // A channel that does not depend on t has t-derivatives exactly 0.
                        if !channels[c].dynamic && atom.deriv.involves(0) {
                            continue;
                        }
                        let key = (c, atom.deriv);
                        let a = *atom_index.entry(key).or_insert_with(|| {
                            atoms.push(key);
                            atoms.len() - 1
                        });
                        // One term per atom (components sharing a channel add up).
                        match terms.iter_mut().find(|t| t.0 == a) {
                            Some(t) => t.1 += coef * w,
                            None => terms.push((a, coef * w)),
                        }
                    }
                }
                terms.retain(|t| t.1 != 0.0);
                components.push(ComponentPlan { name, terms });
            }
            claims.push(ClaimPlan {
                key: spec.key,
                title: spec.title,
                heading: spec.heading,
                asserted: spec.asserted,
                components,
                not_checked: None,
                refutable: true,
            });
        }
        GridPlan {
            channels,
            atoms,
            claims,
            has_claims,
            coordinates: crate::tensor::COORDS.map(String::from),
            curved: None,
            dynamic,
            statics,
            by_component: None,
        }
    }

    /// The plan whose samples a run with `settings` takes: with masking, a channel per
    /// component (masked samples are counted per component).
    #[must_use]
    pub fn sampled(&self, settings: &GridSettings) -> &GridPlan {
        match &self.by_component {
            Some(plain) if settings.mask_nonfinite => plain,
            _ => self,
        }
    }

    /// Instructions in the tapes: (channels that depend on t, channels that do not).
    #[must_use]
    pub fn instructions(&self) -> (usize, usize) {
        (self.dynamic.len(), self.statics.len())
    }

    /// Channel indices in output order of the `dynamic` (or static) tape.
    pub(crate) fn channel_order(&self, dynamic: bool) -> Vec<usize> {
        let mut v: Vec<(usize, usize)> = self
            .channels
            .iter()
            .enumerate()
            .filter(|(_, c)| c.dynamic == dynamic)
            .map(|(i, c)| (c.slot, i))
            .collect();
        v.sort_unstable();
        v.into_iter().map(|(_, i)| i).collect()
    }

    /// The round-off floor of every component of every claim at spacing `h`, from the
    /// per-channel sample errors `errors`.
    #[must_use]
    pub fn floors(&self, errors: &[f64], st: &Stencil, h: f64) -> Vec<Vec<f64>> {
        let (g1, g2) = (st.d1_gain(), st.d2_gain());
        let gain = |d: Deriv| match d {
            Deriv::Value => 1.0,
            Deriv::D1(_) => g1 / h,
            Deriv::D2(a, b) if a == b => g2 / (h * h),
            Deriv::D2(..) => g1 * g1 / (h * h),
        };
        self.claims
            .iter()
            .map(|c| {
                c.components
                    .iter()
                    .map(|k| {
                        k.terms
                            .iter()
                            .map(|&(a, coef)| {
                                let (ch, d) = self.atoms[a];
                                coef.abs() * gain(d) * errors[ch]
                            })
                            .sum()
                    })
                    .collect()
            })
            .collect()
    }
}

/// What a run will cost, estimated from the plan and the settings before any sampling.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Estimate {
    /// Samples taken over all resolutions (lattice points times sampled components).
    pub samples: u64,
    /// Peak bytes of the sample buffers (the largest resolution's slabs).
    pub bytes: u64,
    /// Seconds of work at about one nanosecond per tape instruction and stencil term per
    /// point: the order of magnitude of an optimised build on one core, not a promise.
    pub seconds: f64,
}

impl GridPlan {
    /// The cost of running `settings`: per resolution of `n` points per side, `n^4` lattice
    /// points each evaluating the tape and every claim's stencils, and the sweep's ring
    /// (`order + 2` slabs of `n^3` points of every `t`-dependent channel, `order + 4` on
    /// several threads) plus one slab of the others in memory.
    #[must_use]
    pub fn estimate(&self, settings: &GridSettings) -> Estimate {
        let sampled = self.sampled(settings);
        if !std::ptr::eq(sampled, self) {
            return sampled.estimate(settings);
        }
        let nd = self.dynamic.outputs() as f64;
        let ns = self.statics.outputs() as f64;
        let slabs = sweep::ring_slabs(settings.order) as f64;
        let per_point = self.dynamic.len() as f64
            + self.atoms.len() as f64 * (2.0 * f64::from(settings.order) + 1.0)
            + self
                .claims
                .iter()
                .map(|c| c.components.iter().map(|k| k.terms.len()).sum::<usize>())
                .sum::<usize>() as f64;
        let mut samples = 0.0f64;
        let mut bytes = 0.0f64;
        let mut seconds = 0.0f64;
        // About a background every measured point (the coarsest grid's interior, a fraction
        // `inner` of the box per axis) runs the curvature chain once.
        let coarsest = settings.points.first().map_or(1.0, |&n| n as f64);
        let inner = (1.0 - f64::from(settings.order) / (coarsest - 1.0).max(1.0)).max(0.0);
        for &n in &settings.points {
            let n = n as f64;
            let cube = n * n * n;
            samples += cube * n * nd + cube * ns;
            bytes = bytes.max((slabs * nd + ns) * cube * 8.0);
            seconds += cube * n * per_point * 1e-9;
            if self.curved.is_some() {
                let m = (n - 1.0) * inner + 1.0;
                seconds += m.powi(4) * curved::POINT_COST * 1e-9;
            }
        }
        let to_u64 = |v: f64| {
            if v >= u64::MAX as f64 {
                u64::MAX
            } else {
                v as u64
            }
        };
        Estimate {
            samples: to_u64(samples),
            bytes: to_u64(bytes),
            seconds,
        }
    }
}

/// Resolved settings of a grid check.
#[derive(Clone, Debug, PartialEq)]
pub struct GridSettings {
    /// Centre of the box (t, x, y, z).
    pub center: [f64; 4],
    /// Side of the box.
    pub width: f64,
    /// Points per side at each resolution, increasing.
    pub points: Vec<usize>,
    /// Order of the stencils.
    pub order: u32,
    /// Skip stencils that touch a non-finite sample instead of stopping.
    pub mask_nonfinite: bool,
}

impl GridSettings {
    /// Settings from a file's \[grid\] table (if any) with defaults for what it leaves out.
    #[must_use]
    pub fn from_spec(spec: Option<&GridSpec>, order: u32) -> GridSettings {
        let spec = spec.cloned().unwrap_or_default();
        GridSettings {
            center: spec.center.unwrap_or(DEFAULT_CENTER),
            width: spec.width.unwrap_or(DEFAULT_WIDTH),
            points: spec.points.unwrap_or_else(|| default_points(order)),
            order,
            mask_nonfinite: false,
        }
    }

    /// The default centre for a problem with coordinate ranges `domain`: the middle of each
    /// given range, [`DEFAULT_CENTER`]'s value along the others.
    #[must_use]
    pub fn default_center(domain: Option<&Domain>) -> [f64; 4] {
        std::array::from_fn(|a| match domain.and_then(|d| d[a]) {
            Some((lo, hi)) => lo + (hi - lo) / 2.0,
            None => DEFAULT_CENTER[a],
        })
    }

    /// The default side of a box centred on `center` for coordinate ranges `domain`:
    /// [`DEFAULT_WIDTH`], or less so that the box takes at most half of the room on either
    /// side of the centre within every given range (half of the range for a centre in the
    /// middle). Not positive when the centre lies outside a range.
    #[must_use]
    pub fn default_width(center: &[f64; 4], domain: Option<&Domain>) -> f64 {
        let mut w = DEFAULT_WIDTH;
        for (a, range) in domain.into_iter().flatten().enumerate() {
            if let Some((lo, hi)) = range {
                w = w.min((center[a] - lo).min(hi - center[a]));
            }
        }
        w
    }

    /// Checks that the box lies inside the coordinate ranges `domain` (where the problem is
    /// meant to hold; a box outside may meet a horizon, an axis or a singularity).
    ///
    /// # Errors
    ///
    /// The first coordinate whose range the box leaves, with the box's extent.
    pub fn check_domain(
        &self,
        domain: Option<&Domain>,
        names: &[String; 4],
    ) -> Result<(), GridError> {
        let Some(d) = domain else { return Ok(()) };
        for (a, range) in d.iter().enumerate() {
            let Some((lo, hi)) = *range else { continue };
            let c = self.center[a];
            if !(c >= lo && c <= hi) {
                return Err(GridError::Settings(format!(
                    "the grid's centre lies outside [domain]: {} = {c}, but the domain of {} is \
                     [{lo}, {hi}]",
                    names[a], names[a]
                )));
            }
            let (from, to) = (
                self.center[a] - self.width / 2.0,
                self.center[a] + self.width / 2.0,
            );
            if !(from >= lo && to <= hi) {
                return Err(GridError::Settings(format!(
                    "the grid's box reaches outside [domain]: {} runs over [{from}, {to}] \
                     (centre {}, side {}), but the domain of {} is [{lo}, {hi}]",
                    names[a], self.center[a], self.width, names[a]
                )));
            }
        }
        Ok(())
    }

    /// The spacing at `points` points per side.
    #[must_use]
    pub fn spacing(&self, points: usize) -> f64 {
        self.width / (points as f64 - 1.0)
    }

    /// Checks that the settings make a convergence test.
    ///
    /// # Errors
    ///
    /// An order other than 2, 4, 6, 8; fewer than three resolutions; resolutions not
    /// increasing; a resolution too coarse for the stencil; a width or centre not finite and
    /// positive.
    pub fn validate(&self) -> Result<(), GridError> {
        if !ORDERS.contains(&self.order) {
            return Err(GridError::Settings(format!(
                "the order must be 2, 4, 6 or 8, not {}",
                self.order
            )));
        }
        if self.points.len() < MIN_RESOLUTIONS {
            return Err(GridError::Settings(format!(
                "a convergence test needs at least {MIN_RESOLUTIONS} resolutions, not {}",
                self.points.len()
            )));
        }
        if self.points.windows(2).any(|w| w[1] <= w[0]) {
            return Err(GridError::Settings(
                "the points per side must increase from one resolution to the next".into(),
            ));
        }
        let needed = self.order as usize + 1;
        if let Some(&got) = self.points.iter().find(|&&n| n < needed) {
            return Err(GridError::TooFewPoints {
                order: self.order,
                needed,
                got,
            });
        }
        if !(self.width.is_finite() && self.width > 0.0) {
            return Err(GridError::Settings(format!(
                "the width must be a positive number, not {}",
                self.width
            )));
        }
        if self.center.iter().any(|c| !c.is_finite()) {
            return Err(GridError::Settings(
                "the centre must be four finite numbers".into(),
            ));
        }
        Ok(())
    }
}

/// Where a run is, for a progress display.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Progress {
    /// Resolution number (0-based) and how many.
    pub level: usize,
    /// How many resolutions.
    pub levels: usize,
    /// Points per side of this resolution.
    pub points: usize,
    /// Slabs done at this resolution (3-d cuts along the axis the sweep streams over).
    pub slab: usize,
    /// Slabs at this resolution.
    pub slabs: usize,
    /// Lattice points done so far over all resolutions, and in all.
    pub work: (u64, u64),
}

/// A claim's verdict on the grids.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum GridStatus {
    /// The numbers support the claim.
    Holds,
    /// The numbers contradict it.
    Fails,
    /// Neither.
    Inconclusive,
    /// The residual is within the round-off floor (and not exactly zero): a defect below the
    /// floor cannot be seen, so the numbers neither support nor contradict the claim.
    Unresolved,
}

impl GridStatus {
    /// `holds`, `fails`, `inconclusive`, `unresolved` (within the round-off floor).
    #[must_use]
    pub fn label(self) -> &'static str {
        match self {
            GridStatus::Holds => "holds",
            GridStatus::Fails => "fails",
            GridStatus::Inconclusive => "inconclusive",
            GridStatus::Unresolved => "unresolved",
        }
    }
}

/// Where a residual was largest.
#[derive(Clone, Debug, PartialEq)]
pub struct Worst {
    /// The component.
    pub component: String,
    /// The point (t, x, y, z).
    pub point: [f64; 4],
}

/// One resolution of one claim.
#[derive(Clone, Debug, PartialEq)]
pub struct Row {
    /// Largest |component| over the interior points.
    pub residual: f64,
    /// The estimated round-off floor.
    pub floor: f64,
    /// Where the residual is largest (`None` when it is exactly 0).
    pub worst: Option<Worst>,
    /// Interior points skipped because their stencil touched a masked sample.
    pub skipped: usize,
}

/// A claim and what the grids show.
#[derive(Clone, Debug, PartialEq)]
pub struct ClaimResult {
    /// Machine key.
    pub key: String,
    /// Description.
    pub title: String,
    /// The title as asserted (negated for a claim asserted false).
    pub heading: String,
    /// What the file asserts.
    pub asserted: Option<bool>,
    /// One row per resolution.
    pub rows: Vec<Row>,
    /// Observed orders between successive resolutions.
    pub orders: Vec<Option<f64>>,
    /// What the residuals show.
    pub finding: Finding,
    /// The verdict.
    pub status: GridStatus,
    /// The verdict in words.
    pub explanation: String,
}

impl ClaimResult {
    /// True if the verdict rests on the round-off floor (a defect below it is invisible).
    #[must_use]
    pub fn at_floor(&self) -> bool {
        self.finding == Finding::AtFloor
    }
}

/// One resolution.
#[derive(Clone, Debug, PartialEq)]
pub struct Level {
    /// Points per side.
    pub points: usize,
    /// Spacing.
    pub spacing: f64,
    /// Interior points.
    pub interior: usize,
    /// Non-finite sample values that were masked.
    pub masked: usize,
}

/// The result of a grid check.
#[derive(Clone, Debug, PartialEq)]
pub struct GridReport {
    /// The settings used.
    pub settings: GridSettings,
    /// The resolutions.
    pub levels: Vec<Level>,
    /// The claims.
    pub claims: Vec<ClaimResult>,
    /// True if the file had a [claims] table.
    pub has_claims: bool,
    /// Per channel: name and estimated rounding error of its samples.
    pub sample_errors: Vec<(String, f64)>,
    /// The coordinate names, time first.
    pub coordinates: [String; 4],
    /// True for a problem about a background (the claims from the curvature chain).
    pub background: bool,
}

impl GridReport {
    /// The overall status by the one rule of [`crate::claim::overall`]: fails if an
    /// asserted claim fails, else inconclusive, else unresolved if any counted claim is.
    #[must_use]
    pub fn overall(&self) -> GridStatus {
        crate::claim::overall(
            self.has_claims,
            self.claims.iter().map(|c| (c.asserted, c.status)),
            GridStatus::Fails,
            &[GridStatus::Inconclusive, GridStatus::Unresolved],
            GridStatus::Holds,
        )
    }
}

fn point_text(p: &[f64; 4]) -> String {
    format!("({:.4}, {:.4}, {:.4}, {:.4})", p[0], p[1], p[2], p[3])
}

fn explain(finding: &Finding, rows: &[Row], q: u32, axes: &str) -> String {
    let last = rows.last().expect("at least one resolution");
    let (r, f) = (last.residual, last.floor);
    match finding {
        Finding::Converges { order } => format!(
            "the residual falls at order {order:.2} (stencil order {q}) down to {r:.1e}: the \
             components vanish; a defect smaller than about {r:.0e} would not show at these \
             resolutions"
        ),
        Finding::AtFloor => {
            if rows.iter().all(|w| w.residual == 0.0) {
                "the residual is exactly 0 at every resolution: the components vanish".into()
            } else {
                format!(
                    "not resolvable at this floor: the residual {r:.1e} is within the round-off \
                     floor {f:.1e}, so a defect below about {f:.0e} cannot be seen numerically \
                     (neither evidence that the components vanish nor that they do not)"
                )
            }
        }
        Finding::Stalls { order } => {
            let at = last
                .worst
                .as_ref()
                .map(|w| {
                    format!(
                        "; largest: {} at ({axes}) = {}",
                        w.component,
                        point_text(&w.point)
                    )
                })
                .unwrap_or_default();
            format!(
                "the residual stalls at {r:.2e} (observed order {order:.2}), {:.0e} times the \
                 round-off floor: the components do not vanish{at}",
                r / f.max(f64::MIN_POSITIVE)
            )
        }
        Finding::Unclear(why) => why.clone(),
    }
}

/// Runs the grid check: samples at every resolution, residuals, floors, verdicts.
/// `progress` is called after every slab.
///
/// # Errors
///
/// Settings that make no convergence test, a non-finite sample (unless masking), a sample
/// that is not real.
pub fn run(
    plan: &GridPlan,
    settings: &GridSettings,
    progress: &mut dyn FnMut(Progress),
) -> Result<GridReport, GridError> {
    let Some(plain) = &plan.by_component else {
        return run_sampled(plan, settings, progress);
    };
    if settings.mask_nonfinite {
        return run_sampled(plain, settings, progress);
    }
    // What is said about samples is said of the components: a sample of a linear part that
    // is not finite, or not real, sends the run to the plan with a channel per component,
    // whose report (or error) it then is.
    match run_sampled(plan, settings, progress) {
        Err(GridError::NonFinite { .. } | GridError::NotReal { .. }) => {
            run_sampled(plain, settings, progress)
        }
        Ok(mut report) => {
            let errors = sweep::probe_errors(plain, settings.center, settings.width, PROBE_POINTS);
            report.sample_errors = named_errors(plain, &errors);
            Ok(report)
        }
        Err(e) => Err(e),
    }
}

/// Each channel's name with the estimated rounding error of its samples.
fn named_errors(plan: &GridPlan, errors: &[f64]) -> Vec<(String, f64)> {
    plan.channels
        .iter()
        .zip(errors)
        .map(|(c, &e)| (c.name.clone(), e))
        .collect()
}

/// [`run`] on the samples of `plan` itself.
fn run_sampled(
    plan: &GridPlan,
    settings: &GridSettings,
    progress: &mut dyn FnMut(Progress),
) -> Result<GridReport, GridError> {
    settings.validate()?;
    let st = Stencil::central(settings.order).expect("validated order");
    let errors = sweep::probe_errors(plan, settings.center, settings.width, PROBE_POINTS);
    let total: u64 = settings.points.iter().map(|&n| (n as u64).pow(4)).sum();
    let mut done = 0u64;
    let mut levels = Vec::new();
    let mut sweeps = Vec::new();
    let nlev = settings.points.len();
    // Residuals are compared on one region: the interior of the coarsest grid.
    let inset = settings.spacing(settings.points[0]) * st.half as f64;
    let region: [[f64; 2]; 4] = std::array::from_fn(|a| {
        let c = settings.center[a];
        [
            c - settings.width / 2.0 + inset,
            c + settings.width / 2.0 - inset,
        ]
    });
    // One set of sample buffers for every resolution (they grow to the finest).
    let mut bufs = sweep::Buffers::new();
    for (li, &n) in settings.points.iter().enumerate() {
        let b = Box4 {
            center: settings.center,
            spacing: settings.spacing(n),
            counts: [n; 4],
        };
        let per_slab = (n as u64).pow(3);
        let base = done;
        let at = sweep::SweepAt {
            b: &b,
            st: &st,
            mask: settings.mask_nonfinite,
            region: Some(region),
        };
        let sw = sweep::sweep_errors(&mut bufs, plan, at, &errors, &mut |slab, slabs| {
            progress(Progress {
                level: li,
                levels: nlev,
                points: n,
                slab,
                slabs,
                work: (base + slab as u64 * per_slab, total),
            });
        })?;
        done += (n as u64).pow(4);
        levels.push(Level {
            points: n,
            spacing: b.spacing,
            interior: sw.interior,
            masked: sw.masked,
        });
        sweeps.push((b, sw));
    }
    let spacings: Vec<f64> = levels.iter().map(|l| l.spacing).collect();
    // Flat problems: the floors of linear combinations; about a background the sweep carried
    // the sample errors through the curvature chain at every point.
    let floors: Vec<Vec<Vec<f64>>> = spacings
        .iter()
        .zip(&sweeps)
        .map(|(&h, (_, sw))| match &sw.floors {
            Some(f) => f.clone(),
            None => plan.floors(&errors, &st, h),
        })
        .collect();
    let axes = plan.coordinates.join(", ");
    let mut claims = Vec::new();
    for (ci, claim) in plan.claims.iter().enumerate() {
        if let Some(why) = &claim.not_checked {
            claims.push(ClaimResult {
                key: claim.key.clone(),
                title: claim.title.clone(),
                heading: claim.heading.clone(),
                asserted: claim.asserted,
                rows: Vec::new(),
                orders: Vec::new(),
                finding: Finding::Unclear(why.clone()),
                status: GridStatus::Inconclusive,
                explanation: format!("not checked on grids: {why}"),
            });
            continue;
        }
        let mut rows = Vec::new();
        for (li, (b, sw)) in sweeps.iter().enumerate() {
            let comps = &sw.best[ci];
            let mut worst: Option<(f64, usize)> = None;
            for (k, &(v, _)) in comps.iter().enumerate() {
                if v > 0.0 && worst.is_none_or(|(w, _)| v > w) {
                    worst = Some((v, k));
                }
            }
            let floor = floors[li][ci].iter().copied().fold(0.0, f64::max);
            rows.push(Row {
                residual: worst.map_or(0.0, |w| w.0),
                floor,
                worst: worst.map(|(_, k)| Worst {
                    component: claim.components[k].name.clone(),
                    point: b.point(comps[k].1),
                }),
                skipped: sw.skipped[ci],
            });
        }
        let residuals: Vec<f64> = rows.iter().map(|r| r.residual).collect();
        let fl: Vec<f64> = rows.iter().map(|r| r.floor).collect();
        let orders = observed_orders(&residuals, &spacings);
        let last = sweeps.last().expect("resolutions");
        let finding = if last.1.skipped[ci] >= last.1.interior {
            Finding::Unclear("every interior point's stencil touches a masked sample".into())
        } else {
            classify(&residuals, &fl, &spacings, settings.order)
        };
        let expect = claim.asserted.unwrap_or(true);
        // Within the round-off floor nothing below the floor can be seen: unless the residual
        // is exactly 0 at every resolution, that is "not resolvable", never evidence.
        let unresolved = finding == Finding::AtFloor && rows.iter().any(|w| w.residual != 0.0);
        // Components of a gauge vector's residual that do not vanish show only that this
        // vector is not the one: that decides nothing.
        let unrefuted = !claim.refutable && finding.vanishes() == Some(false);
        let status = match finding.vanishes() {
            _ if unresolved => GridStatus::Unresolved,
            _ if unrefuted => GridStatus::Inconclusive,
            Some(v) if v == expect => GridStatus::Holds,
            Some(_) => GridStatus::Fails,
            None => GridStatus::Inconclusive,
        };
        let mut explanation = explain(&finding, &rows, settings.order, &axes);
        if unrefuted && !unresolved {
            explanation.push_str(
                "; so h is not the gauge transformation of the file's vector, which decides \
                 nothing: another vector may still give h",
            );
        }
        claims.push(ClaimResult {
            key: claim.key.clone(),
            title: claim.title.clone(),
            heading: claim.heading.clone(),
            asserted: claim.asserted,
            rows,
            orders,
            finding,
            status,
            explanation,
        });
    }
    Ok(GridReport {
        settings: settings.clone(),
        levels,
        claims,
        has_claims: plan.has_claims,
        coordinates: plan.coordinates.clone(),
        background: plan.curved.is_some(),
        sample_errors: named_errors(plan, &errors),
    })
}
