//! The evolution as an SVG picture: three panels over time (a, e, f_gw), drawn by
//! `crate::plot`.

use super::coalesce::Evolution;
use crate::plot::{Panel, svg as plot};

/// The picture of `ev`; `title` goes on top.
#[must_use]
pub fn svg(ev: &Evolution, title: &str) -> String {
    let x_label = "time since the start [s] (rows at equal steps in ln a)";
    let panel = |name: &str, value: fn(&super::coalesce::Sample) -> f64| Panel {
        name: name.into(),
        x_label: x_label.into(),
        points: ev.samples.iter().map(|r| (r.t, value(r))).collect(),
    };
    plot(
        title,
        &[
            panel("a [m]", |r| r.a),
            panel("e", |r| r.e),
            panel("f_gw [Hz]", |r| r.f_gw),
        ],
    )
}
