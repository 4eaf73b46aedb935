//! From residuals at several resolutions to a verdict.
//!
//! With residuals `r_i` (max norm) at spacings `h_i` (coarse to fine), round-off floors `f_i`
//! and the stencil order `q`, the observed order between successive resolutions is
//! `p_i = log(r_i / r_{i+1}) / log(h_i / h_{i+1})`. On the finest pair (`r`, `f` the finest
//! residual and floor, `p` the last observed order):
//! - `r <= f`: the components vanish to within round-off;
//! - `p >= q - 1/2`: they vanish, the residual being truncation error falling at the
//!   stencil's order;
//! - `|p| < 1/2` and `r > 10 f`: the residual stalls well above the floor: they do not vanish;
//! - anything else is inconclusive, with the reason: falling but more slowly than `q` (not in
//!   the asymptotic range yet), growing under refinement (not smooth in the box, or round-off
//!   above the estimate), or stalling within a factor 10 of the floor.
//!
//! A claim written `= true` holds when its components vanish; one written `= false` holds
//! when they do not.

/// What the residuals show about "these components vanish".
#[derive(Clone, Debug, PartialEq)]
pub enum Finding {
    /// The residual falls at the observed order `order`, at least the stencil's minus 1/2.
    Converges {
        /// The observed order on the finest pair.
        order: f64,
    },
    /// The finest residual is within the round-off floor.
    AtFloor,
    /// The residual stalls well above the floor.
    Stalls {
        /// The observed order on the finest pair.
        order: f64,
    },
    /// No conclusion, with the reason.
    Unclear(String),
}

impl Finding {
    /// `Some(true)` the components vanish, `Some(false)` they do not, `None` unclear.
    #[must_use]
    pub fn vanishes(&self) -> Option<bool> {
        match self {
            Finding::Converges { .. } | Finding::AtFloor => Some(true),
            Finding::Stalls { .. } => Some(false),
            Finding::Unclear(_) => None,
        }
    }
}

/// The observed orders between successive resolutions (`None` where a residual is zero or
/// not finite).
#[must_use]
pub fn observed_orders(residuals: &[f64], spacings: &[f64]) -> Vec<Option<f64>> {
    residuals
        .windows(2)
        .zip(spacings.windows(2))
        .map(|(r, h)| {
            let p = (r[0] / r[1]).ln() / (h[0] / h[1]).ln();
            (r[0] > 0.0 && r[1] > 0.0 && p.is_finite()).then_some(p)
        })
        .collect()
}

/// The finding for residuals, floors and spacings (coarse to fine, at least two) of a
/// stencil of order `q`.
#[must_use]
pub fn classify(residuals: &[f64], floors: &[f64], spacings: &[f64], q: u32) -> Finding {
    let n = residuals.len();
    if n < 2 {
        return Finding::Unclear("fewer than two resolutions".into());
    }
    let (r, f) = (residuals[n - 1], floors[n - 1]);
    if !r.is_finite() {
        return Finding::Unclear("the finest residual is not finite".into());
    }
    if r <= f {
        return Finding::AtFloor;
    }
    let q = f64::from(q);
    let Some(p) = observed_orders(&residuals[n - 2..], &spacings[n - 2..])[0] else {
        return Finding::Unclear(format!(
            "the residual is {:.1e} at the second-finest resolution and {r:.2e} at the finest, \
             so no order can be observed",
            residuals[n - 2]
        ));
    };
    if p >= q - 0.5 {
        Finding::Converges { order: p }
    } else if p.abs() < 0.5 {
        if r > 10.0 * f {
            Finding::Stalls { order: p }
        } else {
            Finding::Unclear(format!(
                "the residual stalls at {r:.2e}, only {:.1} times the round-off floor {f:.1e}",
                r / f
            ))
        }
    } else if p <= -0.5 {
        Finding::Unclear(format!(
            "the residual grows under refinement (observed order {p:.2}): the samples may not \
             be smooth in the box (a singularity nearby?), or round-off exceeds the estimate"
        ))
    } else {
        Finding::Unclear(format!(
            "the residual falls at order {p:.2}, below the stencil order {q}: not yet in the \
             asymptotic range; refine (more points) or shrink the box"
        ))
    }
}
