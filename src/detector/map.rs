//! The sky map: an equirectangular grid of cells over (phi, theta) of the source direction,
//! each cell's value from the f64 route at its centre ([`super::numeric::pattern`]), every
//! cell audited against the jet route's enclosure of the printed general forms
//! ([`audit_map`]); and its SVG picture ([`svg`]), with axis labels and a colour legend.

use super::audit::jet_enclosure;
use super::numeric::{V3, pattern};
use crate::audit::expr::Expressions;
use std::f64::consts::{PI, TAU};
use std::fmt::Write as _;

/// What the map shows.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Quantity {
    /// `sqrt(F_+^2 + F_x^2)`, independent of psi.
    Rms,
    /// `F_+` at the given psi.
    Plus,
    /// `F_x` at the given psi.
    Cross,
}

impl Quantity {
    /// The quantity in words.
    #[must_use]
    pub fn label(self) -> &'static str {
        match self {
            Quantity::Rms => "sqrt(F_plus^2 + F_cross^2)",
            Quantity::Plus => "F_plus",
            Quantity::Cross => "F_cross",
        }
    }

    fn of(self, plus: f64, cross: f64) -> f64 {
        match self {
            Quantity::Rms => plus.hypot(cross),
            Quantity::Plus => plus,
            Quantity::Cross => cross,
        }
    }
}

/// A map: `rows` cells in theta (from 0 at the top) times `cols` cells in phi.
#[derive(Clone, Debug)]
pub struct SkyMap {
    /// What it shows.
    pub quantity: Quantity,
    /// The polarization angle used.
    pub psi: f64,
    /// Cells in theta.
    pub rows: usize,
    /// Cells in phi.
    pub cols: usize,
    /// `(F_+, F_x)` at each cell centre, row by row.
    pub cells: Vec<(f64, f64)>,
}

impl SkyMap {
    /// `(theta, phi)` of the centre of cell `(row, col)`.
    #[must_use]
    pub fn centre(&self, row: usize, col: usize) -> (f64, f64) {
        (
            (row as f64 + 0.5) * PI / self.rows as f64,
            (col as f64 + 0.5) * TAU / self.cols as f64,
        )
    }

    /// The shown value of cell `(row, col)`.
    #[must_use]
    pub fn value(&self, row: usize, col: usize) -> f64 {
        let (p, c) = self.cells[row * self.cols + col];
        self.quantity.of(p, c)
    }

    /// The smallest and largest shown value.
    #[must_use]
    pub fn range(&self) -> (f64, f64) {
        let v = self.cells.iter().map(|&(p, c)| self.quantity.of(p, c));
        v.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| {
            (lo.min(x), hi.max(x))
        })
    }
}

/// Computes the map for unit arms `a`, `b` at polarization angle `psi`.
#[must_use]
pub fn sky_map(a: &V3, b: &V3, psi: f64, quantity: Quantity, rows: usize, cols: usize) -> SkyMap {
    let mut map = SkyMap {
        quantity,
        psi,
        rows,
        cols,
        cells: Vec::with_capacity(rows * cols),
    };
    for r in 0..rows {
        for c in 0..cols {
            let (theta, phi) = map.centre(r, c);
            map.cells.push(pattern(a, b, theta, phi, psi));
        }
    }
    map
}

/// A cell where the routes disagree: `(theta, phi, which, f64 value, enclosure)`.
pub type CellDefect = (f64, f64, &'static str, f64, (f64, f64));

/// The map's audit.
#[derive(Clone, Debug, PartialEq)]
pub struct MapAudit {
    /// Cells compared (both `F_+` and `F_x`).
    pub cells: usize,
    /// Cells the jet route could not evaluate.
    pub not_evaluable: usize,
    /// The first disagreement: `(theta, phi, which, f64 value, enclosure)`.
    pub defect: Option<CellDefect>,
    /// Why nothing could be audited.
    pub not_audited: Option<String>,
}

/// Compares every cell's `F_+` and `F_x` with the jet route's enclosures of the printed
/// general forms (`names`: their symbols for theta, phi, psi), within
/// [`super::audit::TOLERANCE`].
#[must_use]
pub fn audit_map(map: &SkyMap, general: [&str; 2], names: &[String; 3]) -> MapAudit {
    let mut out = MapAudit {
        cells: 0,
        not_evaluable: 0,
        defect: None,
        not_audited: None,
    };
    let routes: Result<Vec<Expressions>, String> = general
        .iter()
        .map(|t| Expressions::new(t, None, &[], &[]).map_err(|e| e.to_string()))
        .collect();
    let routes = match routes {
        Ok(r) => r,
        Err(why) => {
            out.not_audited = Some(format!("the general forms cannot be read back: {why}"));
            return out;
        }
    };
    for r in 0..map.rows {
        for c in 0..map.cols {
            let (theta, phi) = map.centre(r, c);
            let point = vec![
                (names[0].clone(), theta),
                (names[1].clone(), phi),
                (names[2].clone(), map.psi),
            ];
            let (p, x) = map.cells[r * map.cols + c];
            let mut evaluated = true;
            for ((route, which), direct) in routes.iter().zip(["F_plus", "F_cross"]).zip([p, x]) {
                let Some((lo, hi)) = jet_enclosure(route, &point) else {
                    evaluated = false;
                    continue;
                };
                let tol = super::audit::TOLERANCE * (1.0 + direct.abs());
                if (direct < lo - tol || direct > hi + tol) && out.defect.is_none() {
                    out.defect = Some((theta, phi, which, direct, (lo, hi)));
                }
            }
            if evaluated {
                out.cells += 1;
            } else {
                out.not_evaluable += 1;
            }
        }
    }
    out
}

const VIRIDIS: [(f64, f64, f64); 5] = [
    (68.0, 1.0, 84.0),
    (59.0, 82.0, 139.0),
    (33.0, 145.0, 140.0),
    (94.0, 201.0, 98.0),
    (253.0, 231.0, 37.0),
];
const DIVERGING: [(f64, f64, f64); 5] = [
    (33.0, 102.0, 172.0),
    (103.0, 169.0, 207.0),
    (247.0, 247.0, 247.0),
    (239.0, 138.0, 98.0),
    (178.0, 24.0, 43.0),
];

/// The colour of `t` in [0, 1] on a palette of five stops.
fn colour(palette: &[(f64, f64, f64); 5], t: f64) -> String {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let x = t * 4.0;
    let i = (x.floor() as usize).min(3);
    let f = x - i as f64;
    let (a, b) = (palette[i], palette[i + 1]);
    let mix = |p: f64, q: f64| (p + (q - p) * f).round() as u8;
    format!(
        "#{:02x}{:02x}{:02x}",
        mix(a.0, b.0),
        mix(a.1, b.1),
        mix(a.2, b.2)
    )
}

/// The colour scale: `(low, high, palette)`; signed quantities get a diverging scale
/// symmetric about 0.
fn scale(map: &SkyMap) -> (f64, f64, &'static [(f64, f64, f64); 5]) {
    let (lo, hi) = map.range();
    match map.quantity {
        Quantity::Rms => (0.0, hi.max(1e-300), &VIRIDIS),
        Quantity::Plus | Quantity::Cross => {
            let m = lo.abs().max(hi.abs()).max(1e-300);
            (-m, m, &DIVERGING)
        }
    }
}

fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

/// `(theta, phi)` in degrees of a unit vector, phi in [0, 360).
fn angles_of(v: &V3) -> (f64, f64) {
    let theta = v[2].clamp(-1.0, 1.0).acos().to_degrees();
    let phi = v[1].atan2(v[0]).to_degrees().rem_euclid(360.0);
    (theta, phi)
}

/// The SVG picture: the map (phi across, theta down), axes in degrees, the arms' directions
/// marked, and a colour legend.
#[must_use]
pub fn svg(map: &SkyMap, arms: [&V3; 2], title: &str) -> String {
    const CELL: f64 = 10.0;
    const LEFT: f64 = 70.0;
    const TOP: f64 = 50.0;
    let w = CELL * map.cols as f64;
    let h = CELL * map.rows as f64;
    let (lo, hi, palette) = scale(map);
    let width = LEFT + w + 140.0;
    let height = TOP + h + 70.0;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width}\" height=\"{height}\" \
         viewBox=\"0 0 {width} {height}\" font-family=\"sans-serif\" font-size=\"12\">"
    );
    let _ = writeln!(
        s,
        "<rect width=\"{width}\" height=\"{height}\" fill=\"white\"/>"
    );
    let _ = writeln!(
        s,
        "<text x=\"{LEFT}\" y=\"22\" font-size=\"14\">{}</text>",
        escape(title)
    );
    let _ = writeln!(
        s,
        "<text x=\"{LEFT}\" y=\"38\">{} over the sky, psi = {:.6}</text>",
        map.quantity.label(),
        map.psi
    );
    let _ = writeln!(s, "<g shape-rendering=\"crispEdges\">");
    for r in 0..map.rows {
        for c in 0..map.cols {
            let t = (map.value(r, c) - lo) / (hi - lo);
            let _ = writeln!(
                s,
                "<rect x=\"{}\" y=\"{}\" width=\"{CELL}\" height=\"{CELL}\" fill=\"{}\"/>",
                LEFT + CELL * c as f64,
                TOP + CELL * r as f64,
                colour(palette, t)
            );
        }
    }
    let _ = writeln!(s, "</g>");
    let _ = writeln!(
        s,
        "<rect x=\"{LEFT}\" y=\"{TOP}\" width=\"{w}\" height=\"{h}\" fill=\"none\" stroke=\"black\"/>"
    );
    // Axes: phi every 60 degrees, theta every 30.
    for k in 0..=6 {
        let deg = 60.0 * f64::from(k);
        let x = LEFT + w * deg / 360.0;
        let _ = writeln!(
            s,
            "<line x1=\"{x}\" y1=\"{}\" x2=\"{x}\" y2=\"{}\" stroke=\"black\"/>\
             <text x=\"{x}\" y=\"{}\" text-anchor=\"middle\">{deg}</text>",
            TOP + h,
            TOP + h + 5.0,
            TOP + h + 18.0
        );
    }
    for k in 0..=6 {
        let deg = 30.0 * f64::from(k);
        let y = TOP + h * deg / 180.0;
        let _ = writeln!(
            s,
            "<line x1=\"{}\" y1=\"{y}\" x2=\"{LEFT}\" y2=\"{y}\" stroke=\"black\"/>\
             <text x=\"{}\" y=\"{}\" text-anchor=\"end\">{deg}</text>",
            LEFT - 5.0,
            LEFT - 8.0,
            y + 4.0
        );
    }
    let _ = writeln!(
        s,
        "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\">phi (degrees), azimuth of the direction \
         to the source</text>",
        LEFT + w / 2.0,
        TOP + h + 40.0
    );
    let _ = writeln!(
        s,
        "<text x=\"18\" y=\"{}\" text-anchor=\"middle\" transform=\"rotate(-90 18 {})\">theta \
         (degrees), from the z axis</text>",
        TOP + h / 2.0,
        TOP + h / 2.0
    );
    // The arms' directions.
    for (arm, name) in arms.iter().zip(["a", "b"]) {
        let (th, ph) = angles_of(arm);
        let (x, y) = (LEFT + w * ph / 360.0, TOP + h * th / 180.0);
        let _ = writeln!(
            s,
            "<circle cx=\"{x:.2}\" cy=\"{y:.2}\" r=\"4\" fill=\"none\" stroke=\"black\" \
             stroke-width=\"1.5\"/><text x=\"{:.2}\" y=\"{:.2}\">arm {name}</text>",
            x + 6.0,
            y - 6.0
        );
    }
    // The legend: a bar of 50 steps, labels at its ends and middle.
    let lx = LEFT + w + 30.0;
    let steps = 50;
    for k in 0..steps {
        let t = 1.0 - (f64::from(k) + 0.5) / f64::from(steps);
        let _ = writeln!(
            s,
            "<rect x=\"{lx}\" y=\"{:.2}\" width=\"20\" height=\"{:.2}\" fill=\"{}\"/>",
            TOP + h * f64::from(k) / f64::from(steps),
            h / f64::from(steps) + 0.5,
            colour(palette, t)
        );
    }
    let _ = writeln!(
        s,
        "<rect x=\"{lx}\" y=\"{TOP}\" width=\"20\" height=\"{h}\" fill=\"none\" stroke=\"black\"/>"
    );
    for (frac, value) in [(0.0, hi), (0.5, (lo + hi) / 2.0), (1.0, lo)] {
        let _ = writeln!(
            s,
            "<text x=\"{}\" y=\"{:.2}\">{value:.4}</text>",
            lx + 26.0,
            TOP + h * frac + 4.0
        );
    }
    let _ = writeln!(
        s,
        "<text x=\"{lx}\" y=\"{}\">{}</text>",
        TOP - 8.0,
        map.quantity.label()
    );
    s.push_str("</svg>\n");
    s
}
