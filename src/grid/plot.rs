//! A log-log picture of residual against spacing, as SVG text.
//!
//! One colour and one marker shape per claim: the residual (solid, with a marker per
//! resolution), its round-off floor (dotted), and the slope the stencil order predicts
//! (dashed, a decade below the coarsest residual so that a curve converging at that order
//! does not hide it). Curves that coincide stay visible: each claim's line is narrower than
//! the one drawn before it, and its markers smaller. A claim written `= false` (it holds when
//! the quantity is nonzero, so its residual should stay away from 0) is drawn dash-dotted with
//! hollow markers and said so in the legend, not as a failure that stopped converging.
//! Hand-written SVG: deterministic text, no fonts or libraries needed.

use super::{GridReport, GridStatus};
use std::fmt::Write as _;

const W: f64 = 860.0;
const H: f64 = 500.0;
const LEFT: f64 = 80.0;
const RIGHT: f64 = 330.0;
const TOP: f64 = 44.0;
const BOTTOM: f64 = 60.0;
const COLOURS: [&str; 8] = [
    "#1f6fb4", "#d2601a", "#2e9a3c", "#b5283a", "#7b52ab", "#8a5a44", "#c4429c", "#5b6770",
];

/// The marker of claim `i` at `(x, y)`, of size `r`: circle, square, triangle, diamond,
/// inverted triangle, in turn; `hollow` draws the outline only.
fn marker(i: usize, x: f64, y: f64, r: f64, col: &str, hollow: bool) -> String {
    let paint = if hollow {
        format!(r#"fill="white" stroke="{col}" stroke-width="1.5""#)
    } else {
        format!(r#"fill="{col}""#)
    };
    let poly = |pts: &[(f64, f64)]| {
        let p: Vec<String> = pts
            .iter()
            .map(|(dx, dy)| format!("{:.1},{:.1}", x + dx * r, y + dy * r))
            .collect();
        format!(r#"<polygon points="{}" {paint}/>"#, p.join(" "))
    };
    match i % 5 {
        0 => format!(r#"<circle cx="{x:.1}" cy="{y:.1}" r="{r:.1}" {paint}/>"#),
        1 => poly(&[(-0.9, -0.9), (0.9, -0.9), (0.9, 0.9), (-0.9, 0.9)]),
        2 => poly(&[(0.0, -1.2), (1.1, 0.8), (-1.1, 0.8)]),
        3 => poly(&[(0.0, -1.3), (1.1, 0.0), (0.0, 1.3), (-1.1, 0.0)]),
        _ => poly(&[(0.0, 1.2), (1.1, -0.8), (-1.1, -0.8)]),
    }
}

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Tick values `m * 10^k` (m in `mantissas`) within `[lo, hi]` (decimal logarithms).
fn ticks(lo: f64, hi: f64, mantissas: &[f64]) -> Vec<f64> {
    let mut out = Vec::new();
    let (k0, k1) = (lo.floor() as i32 - 1, hi.ceil() as i32 + 1);
    for k in k0..=k1 {
        for &m in mantissas {
            let v = m.log10() + f64::from(k);
            if v >= lo - 1e-9 && v <= hi + 1e-9 {
                out.push(v);
            }
        }
    }
    out
}

fn label(v: f64) -> String {
    let x = 10f64.powf(v);
    let s = format!("{x:.0e}");
    s.replace("e-", "e−")
}

/// The SVG document for `report`; `title` goes on top.
#[must_use]
pub fn svg(report: &GridReport, title: &str) -> String {
    let spacings: Vec<f64> = report.levels.iter().map(|l| l.spacing.log10()).collect();
    let (mut xlo, mut xhi) = spacings
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let pad = ((xhi - xlo) * 0.08).max(0.05);
    xlo -= pad;
    xhi += pad;
    let mut values: Vec<f64> = Vec::new();
    for c in &report.claims {
        for r in &c.rows {
            for v in [r.residual, r.floor] {
                if v > 0.0 && v.is_finite() {
                    values.push(v.log10());
                }
            }
        }
    }
    let (mut ylo, mut yhi) = values
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    if !ylo.is_finite() {
        (ylo, yhi) = (-16.0, 0.0);
    }
    ylo = ylo.floor() - 0.5;
    yhi = yhi.ceil() + 0.5;
    let pw = W - LEFT - RIGHT;
    let ph = H - TOP - BOTTOM;
    let px = |v: f64| LEFT + (v - xlo) / (xhi - xlo) * pw;
    let py = |v: f64| TOP + (yhi - v) / (yhi - ylo) * ph;

    let mut s = String::new();
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{W}" height="{H}" viewBox="0 0 {W} {H}" font-family="sans-serif" font-size="12">"#
    );
    let _ = writeln!(s, r#"<rect width="{W}" height="{H}" fill="white"/>"#);
    let _ = writeln!(
        s,
        r#"<defs><clipPath id="area"><rect x="{LEFT}" y="{TOP}" width="{pw}" height="{ph}"/></clipPath></defs>"#
    );
    let _ = writeln!(
        s,
        r#"<text x="{LEFT}" y="24" font-size="14">{}</text>"#,
        esc(title)
    );
    // Grid lines and tick labels.
    let yt = {
        let all = ticks(ylo, yhi, &[1.0]);
        let step = all.len().div_ceil(10).max(1);
        all.into_iter().step_by(step).collect::<Vec<_>>()
    };
    for v in yt {
        let y = py(v);
        let _ = writeln!(
            s,
            r##"<line x1="{LEFT}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#e3e3e3"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
            LEFT + pw,
            LEFT - 6.0,
            y + 4.0,
            label(v)
        );
    }
    let xt = {
        let fine = ticks(xlo, xhi, &[1.0, 2.0, 5.0]);
        if fine.len() >= 2 {
            fine
        } else {
            ticks(xlo, xhi, &[1.0, 1.5, 2.0, 3.0, 4.0, 5.0, 7.0])
        }
    };
    for v in xt {
        let x = px(v);
        let _ = writeln!(
            s,
            r##"<line x1="{x:.1}" y1="{TOP}" x2="{x:.1}" y2="{:.1}" stroke="#e3e3e3"/><text x="{x:.1}" y="{:.1}" text-anchor="middle">{}</text>"##,
            TOP + ph,
            TOP + ph + 18.0,
            label(v)
        );
    }
    let _ = writeln!(
        s,
        r##"<rect x="{LEFT}" y="{TOP}" width="{pw}" height="{ph}" fill="none" stroke="#444"/>"##
    );
    let _ = writeln!(
        s,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">grid spacing</text>"#,
        LEFT + pw / 2.0,
        H - 18.0
    );
    let _ = writeln!(
        s,
        r#"<text transform="translate(18 {:.1}) rotate(-90)" text-anchor="middle">largest |residual| over interior points</text>"#,
        TOP + ph / 2.0
    );

    let q = f64::from(report.settings.order);
    let n = report.claims.len();
    let mut legend = Vec::new();
    for (i, c) in report.claims.iter().enumerate() {
        let col = COLOURS[i % COLOURS.len()];
        // Earlier claims wider and with larger markers, so a later curve on top of an
        // earlier one leaves its edges showing.
        let width = 2.0 + 1.2 * (n - 1 - i) as f64;
        let size = 3.5 + 1.0 * (n - 1 - i) as f64;
        let nonzero_expected = c.asserted == Some(false);
        let pts: Vec<(f64, f64)> = c
            .rows
            .iter()
            .zip(&spacings)
            .filter(|(r, _)| r.residual > 0.0 && r.residual.is_finite())
            .map(|(r, &h)| (px(h), py(r.residual.log10())))
            .collect();
        let floor: Vec<(f64, f64)> = c
            .rows
            .iter()
            .zip(&spacings)
            .filter(|(r, _)| r.floor > 0.0)
            .map(|(r, &h)| (px(h), py(r.floor.log10())))
            .collect();
        let path = |p: &[(f64, f64)]| {
            p.iter()
                .map(|(x, y)| format!("{x:.1},{y:.1}"))
                .collect::<Vec<_>>()
                .join(" ")
        };
        let _ = writeln!(s, r#"<g clip-path="url(#area)">"#);
        if floor.len() >= 2 {
            let _ = writeln!(
                s,
                r#"<polyline points="{}" fill="none" stroke="{col}" stroke-width="1" stroke-dasharray="2 3"/>"#,
                path(&floor)
            );
        }
        // The expected slope only means something for components that should vanish.
        if let (Some(first), Some(&hl), true) = (
            c.rows.iter().zip(&spacings).find(|(r, _)| r.residual > 0.0),
            spacings.last(),
            c.asserted != Some(false),
        ) {
            // A decade below the coarsest residual: parallel to a curve that converges at
            // the stencil's order, not on top of it.
            let (r0, h0) = (first.0.residual.log10() - 1.0, *first.1);
            let y1 = r0 + q * (hl - h0);
            let _ = writeln!(
                s,
                r#"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{col}" stroke-opacity="0.55" stroke-width="1" stroke-dasharray="7 4"/>"#,
                px(h0),
                py(r0),
                px(hl),
                py(y1)
            );
        }
        if pts.len() >= 2 {
            let dash = if nonzero_expected {
                r#" stroke-dasharray="9 3 2 3""#
            } else {
                ""
            };
            let _ = writeln!(
                s,
                r#"<polyline points="{}" fill="none" stroke="{col}" stroke-width="{width:.1}"{dash}/>"#,
                path(&pts)
            );
        }
        for (x, y) in &pts {
            let _ = writeln!(s, "{}", marker(i, *x, *y, size, col, nonzero_expected));
        }
        let _ = writeln!(s, "</g>");
        let word = match c.status {
            GridStatus::Holds => "holds",
            GridStatus::Fails => "fails",
            GridStatus::Inconclusive => "inconclusive",
            GridStatus::Unresolved => "not resolvable",
        };
        let zero = if pts.is_empty() { ", exactly 0" } else { "" };
        let text = if nonzero_expected {
            format!("not {}: {word} (nonzero, as claimed)", c.key)
        } else {
            format!("{}: {word}{zero}", c.key)
        };
        legend.push((i, col, nonzero_expected, text));
    }
    let lx = LEFT + pw + 16.0;
    let mut ly = TOP + 8.0;
    for (i, col, hollow, text) in legend {
        let _ = writeln!(
            s,
            r#"<line x1="{lx:.1}" y1="{ly:.1}" x2="{:.1}" y2="{ly:.1}" stroke="{col}" stroke-width="3"/>{}<text x="{:.1}" y="{:.1}">{}</text>"#,
            lx + 18.0,
            marker(i, lx + 9.0, ly, 4.0, col, hollow),
            lx + 24.0,
            ly + 4.0,
            esc(&text)
        );
        ly += 18.0;
    }
    ly += 10.0;
    for (dash, text) in [
        ("", "largest |residual|"),
        ("2 3", "round-off floor (estimate)"),
        (
            "7 4",
            &*format!(
                "slope {} (stencil order), a decade below",
                report.settings.order
            ),
        ),
    ] {
        let _ = writeln!(
            s,
            r##"<line x1="{lx:.1}" y1="{ly:.1}" x2="{:.1}" y2="{ly:.1}" stroke="#444" stroke-width="1.5" stroke-dasharray="{dash}"/><text x="{:.1}" y="{:.1}">{}</text>"##,
            lx + 18.0,
            lx + 24.0,
            ly + 4.0,
            esc(text)
        );
        ly += 18.0;
    }
    let _ = writeln!(
        s,
        r##"<text x="{lx:.1}" y="{:.1}" fill="#666">numerical evidence, not proof</text>"##,
        ly + 8.0
    );
    s.push_str("</svg>\n");
    s
}
