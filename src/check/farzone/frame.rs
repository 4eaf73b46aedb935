//! The orthonormal frame of the radial ray: which power of r each coordinate's components
//! carry, read from the background's own expansion.
//!
//! Model. "Falls off as 1/r^n" is a statement about a physical size, so a residual's
//! components are judged in an orthonormal frame, not in the coordinates: in t, r, th, ph
//! about flat space `E_{th th}` of a field that is O(1/r^n) in the frame is O(r^2/r^n). Per
//! coordinate `a` the *weight* `w_a` is the power of rho in the leading term of
//! `sqrt(|gbar_aa|)` along the ray: the background's `gbar_aa` is expanded with the same
//! series machinery as the residuals ([`super::series`]), and its leading term
//! `c_a eps^(v_a)` must have `c_a` certified nonzero, free of the retarded time (a nonzero
//! constant times a function of the angles and parameters) and `v_a = -2 w_a` even with
//! `w_a >= 0`; the time and the radius must have weight 0 (the background approaches flat
//! space). A component `E_{ab}` (indices down) is then judged by `E_{ab} rho^-(w_a + w_b)`,
//! a vector `V_b` by `V_b rho^-w_b`, `R_{abcd}` by the sum of four weights.
//!
//! Why this is the orthonormal frame's order. Write `D = diag(rho^(w_a))` and the scaled
//! metric `g~ = D^-1 gbar D^-1`. Its diagonal tends to the `c_a` (nonzero), and every
//! off-diagonal entry is required to vanish as rho grows (`gbar_ab rho^-(w_a + w_b)` of
//! valuation >= 1; otherwise the frame is undecided), so `g~` tends to a nondegenerate
//! diagonal matrix. An orthonormal frame of `gbar` is `e = D^-1 M` with `M` an orthonormal
//! frame of `g~` (Gram-Schmidt, continuous), so `M` and `M^-1` stay bounded and tend to
//! `diag(|c_a|^-1/2)` far out. The frame components are `E_frame = M^T E~ M` with
//! `E~ = D^-1 E D^-1` the scaled components: each frame component is a bounded combination
//! of the scaled ones and conversely, and for each pair the diagonal coefficient tends to a
//! nonzero constant while the others vanish. So every scaled component is O(eps^n) exactly
//! when every frame component is: the claim's verdict is the frame's. For a diagonal
//! background `M` is diagonal, each frame component is its scaled component times
//! `1/sqrt(|g~_aa g~_bb|)`, a factor tending to a nonzero constant, and the two have the same
//! leading order; with off-diagonal terms (of lower order, as required) a frame component is
//! its scaled component plus O(eps) times the others, so its order is the scaled one's unless
//! another component is larger by more than the mixing's order. The reports' per-component
//! orders are those of the scaled coordinate components. The leading coefficients `c_a` may
//! vanish at some angles
//! (`sin(th)^2` on the axis): there the frame is singular, so `c_a != 0` is one of the
//! verdict's conditions, as for the residuals' own divisions.

use super::series::{Condition, Expander, Series, Stop};
use super::{RayNames, stop_text};
use crate::canon::{Form, KernelId, Store};
use crate::claim::Part;
use crate::zero::{Sampling, Verdict, decide};

/// The weights and the conditions they rest on.
#[derive(Clone, Debug)]
pub(super) struct Frame {
    /// `w_a` per coordinate.
    pub weights: [i64; 4],
    /// The leading coefficients of the diagonal that are not constants (must not vanish),
    /// and whatever the expansions of gbar rested on.
    pub conditions: Vec<Condition>,
    coords: [String; 4],
    radius: String,
    /// On the Cartesian ray (every weight 0).
    cartesian: bool,
}

/// Relative precisions tried for the background's components.
const PRECISIONS: [usize; 3] = [4, 8, 16];

impl Frame {
    /// The frame of `gbar` along the ray `moving`; the reason when it cannot be set up.
    pub(super) fn of(
        store: &mut Store,
        sampling: &Sampling,
        moving: &[(KernelId, Series)],
        gbar: &[[Form; 4]; 4],
        names: &RayNames,
    ) -> Result<Frame, String> {
        let mut last = String::new();
        for p in PRECISIONS {
            match Self::at(store, sampling, moving, gbar, names, p) {
                Err(Stop::Precision) => last = stop_text(Stop::Precision),
                Err(e) => return Err(stop_text(e)),
                Ok(f) => return Ok(f),
            }
        }
        Err(last)
    }

    fn at(
        store: &mut Store,
        sampling: &Sampling,
        moving: &[(KernelId, Series)],
        gbar: &[[Form; 4]; 4],
        names: &RayNames,
        p: usize,
    ) -> Result<Frame, Stop> {
        let coords = &names.coords;
        // On the Cartesian ray every coordinate moves with rho: all weights must be 0.
        let cartesian = names.radial.is_none();
        let (time, radius) = names.radial.unwrap_or((0, 1));
        let radius_name = if cartesian {
            "r".to_string()
        } else {
            coords[radius].clone()
        };
        let mut ex = Expander::new(sampling, moving.to_vec(), p);
        let mut weights = [0i64; 4];
        let mut leading = Vec::new();
        let key = |a: usize, b: usize| format!("gbar_{{{} {}}}", coords[a], coords[b]);
        for a in 0..4 {
            let s = ex.expand(store, gbar[a][a])?;
            if s.is_zero() {
                return Err(undecided(format!(
                    "{} is 0, so the coordinates have no orthonormal frame built on the diagonal",
                    key(a, a)
                )));
            }
            let Some(&c0) = s.c.first() else {
                return Err(Stop::Precision);
            };
            if store
                .free_symbols(c0)
                .iter()
                .any(|n| **n == *names.u.as_str())
            {
                return Err(undecided(format!(
                    "the leading term of {} along the ray depends on the retarded time, so the \
                     background does not approach a static one far out",
                    key(a, a)
                )));
            }
            if !matches!(decide(store, c0, sampling), Verdict::Nonzero(_)) {
                return Err(undecided(format!(
                    "the leading coefficient of {} along the ray is not certified nonzero",
                    key(a, a)
                )));
            }
            let v = s.v;
            if v > 0 || v % 2 != 0 {
                return Err(undecided(format!(
                    "{} behaves as {} far out, so sqrt(|{}|) is not a whole nonnegative power \
                     of {}",
                    key(a, a),
                    power(&radius_name, -v),
                    key(a, a),
                    radius_name
                )));
            }
            weights[a] = -v / 2;
            if (cartesian || a == time || a == radius) && weights[a] != 0 {
                return Err(undecided(format!(
                    "{} grows like {} far out, so the background does not approach flat space \
                     (it must tend to a nonzero constant)",
                    key(a, a),
                    power(&radius_name, -v)
                )));
            }
            if store.as_constant(c0).is_none() {
                leading.push(Condition::NonZero(c0));
            }
        }
        for a in 0..4 {
            for b in a + 1..4 {
                let s = ex.expand(store, gbar[a][b])?;
                // The scaled entry gbar_ab rho^-(w_a + w_b) must vanish far out.
                if !s.is_zero() && s.v + weights[a] + weights[b] < 1 {
                    return Err(undecided(format!(
                        "{} is not shown to be of lower order than the diagonal (scaled by \
                         the diagonal's powers of {} it does not vanish far out), so the \
                         diagonal does not fix the orthonormal frame's scaling",
                        key(a, b),
                        radius_name
                    )));
                }
            }
        }
        let mut conditions = leading;
        for c in &ex.conditions {
            if !conditions.contains(c) {
                conditions.push(*c);
            }
        }
        Ok(Frame {
            weights,
            conditions,
            coords: coords.clone(),
            radius: radius_name,
            cartesian,
        })
    }

    /// The weight of a component (see the module docs).
    pub(super) fn weight(&self, part: Part) -> i64 {
        let w = &self.weights;
        match part {
            Part::FieldEquation { mu, nu, .. }
            | Part::CurvedFieldEquation { mu, nu, .. }
            | Part::BackgroundEquation { mu, nu, .. }
            | Part::H(mu, nu)
            | Part::GaugeResidual(mu, nu) => w[mu] + w[nu],
            Part::Lorenz(nu) | Part::Conservation(nu) | Part::SpatialDivergence(nu) => w[nu],
            Part::Riemann(idx) => idx.iter().map(|&i| w[i]).sum(),
            Part::Trace | Part::SpatialTrace => 0,
        }
    }

    /// `r^k` in the radius's name (`r` for k = 1).
    pub(super) fn power_text(&self, k: i64) -> String {
        power(&self.radius, k)
    }

    /// The frame, e.g. `e_t = d_t, e_r = d_r, e_th = (1/r) d_th, e_ph = (1/r) d_ph (each up
    /// to a factor tending to a function of the angles)`.
    pub(super) fn text(&self) -> String {
        let each: Vec<String> = self
            .coords
            .iter()
            .zip(self.weights)
            .map(|(c, w)| match w {
                0 => format!("e_{c} = d_{c}"),
                w => format!("e_{c} = (1/{}) d_{c}", self.power_text(w)),
            })
            .collect();
        let of = if self.cartesian {
            "the direction"
        } else {
            "the angles"
        };
        format!(
            "{} (orthonormal up to factors tending to functions of {of})",
            each.join(", ")
        )
    }
}

fn undecided(why: String) -> Stop {
    Stop::Undecided(why)
}

fn power(r: &str, k: i64) -> String {
    match k {
        0 => "1".into(),
        1 => r.to_string(),
        k => format!("{r}^{k}"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::problem::from_str;

    fn frame_of(background: &str) -> Result<Frame, String> {
        let text = format!(
            "name = 'f'\ncoordinates = ['t', 'r', 'th', 'ph']\n[parameters]\nM = 1.0\n\
             L = 0.5\n[background]\n{background}\n[perturbation]\nt.t = '1/r'\n"
        );
        let mut p = from_str("f.toml", &text).expect("reads");
        let names = RayNames::radial(&p, 1);
        let sampling = p.sampling.clone();
        let g = p.background.as_ref().expect("background").g;
        let store = &mut p.store;
        let (t, r) = (store.symbol_kernel("t"), store.symbol_kernel("r"));
        let u = store.symbol(&names.u);
        let moving = super::super::series::radial_ray(store, t, r, u);
        Frame::of(store, &sampling, &moving, &g, &names)
    }

    #[test]
    fn spherical_weights_are_read_from_the_metric() {
        for bg in [
            "t.t = '-1'\nr.r = '1'\nth.th = 'r^2'\nph.ph = 'r^2*sin(th)^2'",
            "t.t = '-(1 - 2*M/r)'\nr.r = '1/(1 - 2*M/r)'\nth.th = 'r^2'\n\
             ph.ph = 'r^2*sin(th)^2'",
            // Kerr-like slow rotation: an off-diagonal term of lower order is allowed.
            "t.t = '-(1 - 2*M/r)'\nr.r = '1/(1 - 2*M/r)'\nth.th = 'r^2'\n\
             ph.ph = 'r^2*sin(th)^2'\nt.ph = '-2*M*L*sin(th)^2/r'",
        ] {
            let f = frame_of(bg).unwrap_or_else(|e| panic!("{bg}: {e}"));
            assert_eq!(f.weights, [0, 0, 1, 1], "{bg}");
            assert!(f.text().contains("e_th = (1/r) d_th"), "{}", f.text());
            // sin(th)^2 != 0: the frame is singular on the axis.
            assert!(
                f.conditions
                    .iter()
                    .any(|c| matches!(c, Condition::NonZero(_))),
                "{bg}"
            );
        }
    }

    #[test]
    fn backgrounds_that_do_not_approach_flat_space_are_refused_with_a_reason() {
        for (bg, why) in [
            // de Sitter's static patch: gbar_tt grows like r^2.
            (
                "t.t = '-(1 - L*r^2)'\nr.r = '1/(1 - L*r^2)'\nth.th = 'r^2'\n\
                 ph.ph = 'r^2*sin(th)^2'",
                "does not approach flat space",
            ),
            // A fractional power: sqrt(r) in gbar_thth's root.
            (
                "t.t = '-1'\nr.r = '1'\nth.th = 'r'\nph.ph = 'r^2*sin(th)^2'",
                "not a whole nonnegative power",
            ),
            // Ingoing Eddington-Finkelstein-like: gbar_rr = 0.
            (
                "t.t = '-1'\nt.r = '1'\nth.th = 'r^2'\nph.ph = 'r^2*sin(th)^2'",
                "is 0",
            ),
            // An off-diagonal term as large as the diagonal.
            (
                "t.t = '-1'\nr.r = '1'\nt.th = 'r/2'\nth.th = 'r^2'\nph.ph = 'r^2*sin(th)^2'",
                "not shown to be of lower order",
            ),
            // A background that changes with the retarded time far out.
            (
                "t.t = '-1'\nr.r = '1'\nth.th = 'r^2*exp(L*(t - r))'\nph.ph = 'r^2*sin(th)^2'",
                "depends on the retarded time",
            ),
        ] {
            let e = frame_of(bg).expect_err(bg);
            assert!(e.contains(why), "{bg}: {e}");
        }
    }

    #[test]
    fn weights_of_parts() {
        let f = Frame {
            weights: [0, 0, 1, 1],
            conditions: Vec::new(),
            coords: ["t", "r", "th", "ph"].map(String::from),
            radius: "r".into(),
            cartesian: false,
        };
        let field = |mu, nu| Part::CurvedFieldEquation {
            mu,
            nu,
            lambda: false,
            sourced: false,
        };
        assert_eq!(f.weight(field(2, 3)), 2);
        assert_eq!(f.weight(field(0, 2)), 1);
        assert_eq!(f.weight(field(0, 1)), 0);
        assert_eq!(f.weight(Part::Lorenz(3)), 1);
        assert_eq!(f.weight(Part::Riemann([0, 2, 1, 3])), 2);
        assert_eq!(f.weight(Part::Trace), 0);
        assert_eq!(f.power_text(2), "r^2");
    }
}
