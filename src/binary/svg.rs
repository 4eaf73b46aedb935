//! The evolution as an SVG picture: three panels over time (a, e, f_gw), each a polyline
//! through the rows with its range printed. Hand-written SVG: deterministic text.

use super::coalesce::{Evolution, Sample};
use std::fmt::Write as _;

const W: f64 = 720.0;
const PANEL: f64 = 170.0;
const GAP: f64 = 40.0;
const LEFT: f64 = 110.0;
const RIGHT: f64 = 30.0;
const TOP: f64 = 50.0;

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// What a panel shows: one value of a row.
type Column = fn(&Sample) -> f64;

/// One panel: `value` of each row against time, at vertical offset `y0`.
fn panel(s: &mut String, rows: &[Sample], y0: f64, name: &str, value: Column) {
    let pw = W - LEFT - RIGHT;
    let t_end = rows.last().map_or(0.0, |r| r.t);
    let (lo, hi) = rows
        .iter()
        .map(value)
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    let span = if hi > lo { hi - lo } else { 1.0 };
    let px = |t: f64| LEFT + if t_end > 0.0 { t / t_end * pw } else { 0.0 };
    let py = |v: f64| y0 + PANEL - (v - lo) / span * PANEL;
    let _ = writeln!(
        s,
        r##"<rect x="{LEFT}" y="{y0}" width="{pw}" height="{PANEL}" fill="none" stroke="#444"/>"##
    );
    let _ = writeln!(
        s,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"#,
        LEFT - 8.0,
        y0 + PANEL / 2.0,
        esc(name)
    );
    for (v, y) in [(hi, y0 + 12.0), (lo, y0 + PANEL)] {
        let _ = writeln!(
            s,
            r#"<text x="{:.1}" y="{y:.1}" text-anchor="end" font-size="10">{v:.6e}</text>"#,
            LEFT - 8.0
        );
    }
    let points: Vec<String> = rows
        .iter()
        .map(|r| format!("{:.2},{:.2}", px(r.t), py(value(r))))
        .collect();
    let _ = writeln!(
        s,
        r##"<polyline points="{}" fill="none" stroke="#1f6fb4" stroke-width="2"/>"##,
        points.join(" ")
    );
    for r in rows {
        let _ = writeln!(
            s,
            r##"<circle cx="{:.2}" cy="{:.2}" r="2.5" fill="#1f6fb4"/>"##,
            px(r.t),
            py(value(r))
        );
    }
}

/// The picture of `ev`; `title` goes on top.
#[must_use]
pub fn svg(ev: &Evolution, title: &str) -> String {
    let panels: [(&str, Column); 3] = [
        ("a [m]", |r| r.a),
        ("e", |r| r.e),
        ("f_gw [Hz]", |r| r.f_gw),
    ];
    let h = TOP + 3.0 * (PANEL + GAP) + 10.0;
    let mut s = String::new();
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{W}" height="{h}" viewBox="0 0 {W} {h}" font-family="sans-serif" font-size="12">"#
    );
    let _ = writeln!(s, r#"<rect width="{W}" height="{h}" fill="white"/>"#);
    let _ = writeln!(
        s,
        r#"<text x="{LEFT}" y="24" font-size="14">{}</text>"#,
        esc(title)
    );
    for (i, (name, value)) in panels.into_iter().enumerate() {
        let y0 = TOP + i as f64 * (PANEL + GAP);
        panel(&mut s, &ev.samples, y0, name, value);
    }
    let t_end = ev.samples.last().map_or(0.0, |r| r.t);
    let _ = writeln!(
        s,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">time since the start, 0 to {t_end:.6e} s (rows at equal steps in ln a)</text>"#,
        LEFT + (W - LEFT - RIGHT) / 2.0,
        h - 12.0
    );
    s.push_str("</svg>\n");
    s
}
