//! Line plots as hand-written SVG: stacked panels, each a polyline through its points with
//! its own axis ranges printed. Deterministic text (fixed number formatting), no plotting
//! dependency.
//!
//! **Invariants:** knows nothing about physics; never reads or writes files.

use std::fmt::Write as _;

const W: f64 = 720.0;
const PANEL: f64 = 170.0;
const GAP: f64 = 56.0;
const LEFT: f64 = 110.0;
const RIGHT: f64 = 30.0;
const TOP: f64 = 50.0;

/// One panel: a curve `points` (x, y), with the names of its axes.
#[derive(Clone, Debug)]
pub struct Panel {
    /// The quantity on the vertical axis.
    pub name: String,
    /// The quantity on the horizontal axis.
    pub x_label: String,
    /// The points, in drawing order (non-finite ones are left out).
    pub points: Vec<(f64, f64)>,
}

/// Text escaped for SVG.
#[must_use]
pub fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

fn range(v: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = v.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
        (a.min(x), b.max(x))
    });
    if lo.is_finite() && hi > lo {
        (lo, hi)
    } else if lo.is_finite() {
        (lo - 0.5, lo + 0.5)
    } else {
        (0.0, 1.0)
    }
}

fn panel(s: &mut String, p: &Panel, y0: f64) {
    let pw = W - LEFT - RIGHT;
    let pts: Vec<(f64, f64)> = p
        .points
        .iter()
        .copied()
        .filter(|(x, y)| x.is_finite() && y.is_finite())
        .collect();
    let (x0, x1) = range(pts.iter().map(|q| q.0));
    let (lo, hi) = range(pts.iter().map(|q| q.1));
    let px = |x: f64| LEFT + (x - x0) / (x1 - x0) * pw;
    let py = |y: f64| y0 + PANEL - (y - lo) / (hi - lo) * PANEL;
    let _ = writeln!(
        s,
        r##"<rect x="{LEFT}" y="{y0}" width="{pw}" height="{PANEL}" fill="none" stroke="#444"/>"##
    );
    let _ = writeln!(
        s,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"#,
        LEFT - 8.0,
        y0 + PANEL / 2.0,
        esc(&p.name)
    );
    for (v, y) in [(hi, y0 + 12.0), (lo, y0 + PANEL)] {
        let _ = writeln!(
            s,
            r#"<text x="{:.1}" y="{y:.1}" text-anchor="end" font-size="10">{v:.6e}</text>"#,
            LEFT - 8.0
        );
    }
    let _ = writeln!(
        s,
        r#"<text x="{LEFT}" y="{:.1}" font-size="10">{x0:.6e}</text>"#,
        y0 + PANEL + 14.0
    );
    let _ = writeln!(
        s,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="end" font-size="10">{x1:.6e}</text>"#,
        LEFT + pw,
        y0 + PANEL + 14.0
    );
    let _ = writeln!(
        s,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
        LEFT + pw / 2.0,
        y0 + PANEL + 30.0,
        esc(&p.x_label)
    );
    let line: Vec<String> = pts
        .iter()
        .map(|&(x, y)| format!("{:.2},{:.2}", px(x), py(y)))
        .collect();
    let _ = writeln!(
        s,
        r##"<polyline points="{}" fill="none" stroke="#1f6fb4" stroke-width="2"/>"##,
        line.join(" ")
    );
}

/// The panels stacked under `title`.
#[must_use]
pub fn svg(title: &str, panels: &[Panel]) -> String {
    let h = TOP + panels.len() as f64 * (PANEL + GAP) + 10.0;
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
    for (i, p) in panels.iter().enumerate() {
        panel(&mut s, p, TOP + i as f64 * (PANEL + GAP));
    }
    s.push_str("</svg>\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn panels_are_drawn_with_their_ranges_and_escaped_labels() {
        let p = Panel {
            name: "h_plus <r>".into(),
            x_label: "t".into(),
            points: vec![(0.0, -1.0), (1.0, 2.0), (2.0, f64::NAN)],
        };
        let s = svg("a & b", &[p.clone(), p]);
        assert!(s.starts_with("<svg") && s.ends_with("</svg>\n"));
        assert_eq!(s.matches("<polyline").count(), 2);
        assert!(s.contains("a &amp; b") && s.contains("h_plus &lt;r&gt;"));
        assert!(s.contains("2.000000e0") && s.contains("-1.000000e0"));
        // The NaN point is left out: two points per polyline.
        let line = s.lines().find(|l| l.starts_with("<polyline")).unwrap();
        assert_eq!(line.matches(',').count(), 2, "{line}");
    }
}
