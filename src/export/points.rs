//! Where to evaluate: a CSV file of `t,x,y,z` rows, or a regular grid.
//!
//! The points file: one point per line, four comma-separated numbers `t,x,y,z`; an optional
//! header line `t,x,y,z`; blank lines and lines starting with `#` are skipped. Every error
//! names the file, line and column of the offending field.
//!
//! The grid: the box of the grid check (same centre, width, points per side and defaults):
//! `points` values per coordinate, `center[c] + (k - (points - 1)/2)*spacing` with
//! `spacing = width/(points - 1)`, `k = 0 .. points - 1` (both ends included; a single point
//! is the centre). By default a
//! spatial grid at the centre's `t` (`points^3` rows); with `spacetime`, `t` varies too
//! (`points^4` rows). Rows are in C order over (t,) x, y, z: z varies fastest, so a
//! `(points, points, points)` reshape of a column gives `[i_x][i_y][i_z]`.

use crate::expr::Span;
use crate::problem::{GridSpec, ProblemError};

/// The most points one export may have.
pub const MAX_POINTS: usize = 20_000_000;

/// A regular grid.
#[derive(Clone, Debug, PartialEq)]
pub struct Grid {
    /// The centre `(t, x, y, z)`.
    pub center: [f64; 4],
    /// The extent in each coordinate.
    pub width: f64,
    /// Values per coordinate.
    pub points: usize,
    /// True if t varies too.
    pub spacetime: bool,
}

/// Defaults of a grid when neither the file's `[grid]` table nor the command line says: those
/// of the grid check (its box is away from the origin, where point sources sit).
pub const DEFAULT_CENTER: [f64; 4] = [0.3, 0.4, 0.5, 0.6];
/// See [`DEFAULT_CENTER`].
pub const DEFAULT_WIDTH: f64 = 0.2;
/// See [`DEFAULT_CENTER`]: the grid check's coarsest default resolution.
pub const DEFAULT_POINTS: usize = 8;

impl Grid {
    /// A grid from a file's `[grid]` table (its first resolution) and overrides.
    ///
    /// # Errors
    ///
    /// A non-finite centre, a width that is not positive and finite, zero points, or more than
    /// [`MAX_POINTS`] points in all.
    pub fn new(
        table: Option<&GridSpec>,
        center: Option<[f64; 4]>,
        width: Option<f64>,
        points: Option<usize>,
        spacetime: bool,
    ) -> Result<Grid, String> {
        let center = center
            .or(table.and_then(|g| g.center))
            .unwrap_or(DEFAULT_CENTER);
        let width = width
            .or(table.and_then(|g| g.width))
            .unwrap_or(DEFAULT_WIDTH);
        let points = points
            .or(table.and_then(|g| g.points.as_ref().and_then(|p| p.first().copied())))
            .unwrap_or(DEFAULT_POINTS);
        if center.iter().any(|c| !c.is_finite()) {
            return Err("the grid's centre must be four finite numbers".into());
        }
        if !(width.is_finite() && width > 0.0) {
            return Err(format!(
                "the grid's width must be positive and finite, not {width}"
            ));
        }
        if points == 0 {
            return Err("the grid needs at least one point per coordinate".into());
        }
        let dims = if spacetime { 4 } else { 3 };
        let total = (0..dims).try_fold(1usize, |acc, _| acc.checked_mul(points));
        match total {
            Some(n) if n <= MAX_POINTS => {}
            _ => {
                return Err(format!(
                    "{points}^{dims} points is too many for one export (at most {MAX_POINTS})"
                ));
            }
        }
        Ok(Grid {
            center,
            width,
            points,
            spacetime,
        })
    }

    /// The values of coordinate `c` (0 = t).
    #[must_use]
    pub fn axis(&self, c: usize) -> Vec<f64> {
        if c == 0 && !self.spacetime {
            return vec![self.center[0]];
        }
        let n = self.points;
        if n == 1 {
            return vec![self.center[c]];
        }
        let spacing = self.width / (n as f64 - 1.0);
        (0..n)
            .map(|k| self.center[c] + (k as f64 - (n as f64 - 1.0) / 2.0) * spacing)
            .collect()
    }

    /// The grid's points, in row order.
    #[must_use]
    pub fn coords(&self) -> Vec<[f64; 4]> {
        let axes: Vec<Vec<f64>> = (0..4).map(|c| self.axis(c)).collect();
        let mut out = Vec::with_capacity(axes.iter().map(Vec::len).product());
        for &t in &axes[0] {
            for &x in &axes[1] {
                for &y in &axes[2] {
                    for &z in &axes[3] {
                        out.push([t, x, y, z]);
                    }
                }
            }
        }
        out
    }

    /// The grid indices `(i_t, i_x, i_y, i_z)` of row `row` (`i_t` = 0 without `spacetime`).
    #[must_use]
    pub fn index(&self, row: usize) -> [usize; 4] {
        let n = self.points;
        let z = row % n;
        let y = (row / n) % n;
        let x = (row / (n * n)) % n;
        let t = if self.spacetime { row / (n * n * n) } else { 0 };
        [t, x, y, z]
    }
}

/// Where the points came from.
#[derive(Clone, Debug, PartialEq)]
pub enum Origin {
    /// A points file, with the line (from 1) of every row.
    File {
        /// The path as given.
        path: String,
        /// The line of each row.
        lines: Vec<usize>,
    },
    /// A grid.
    Grid(Grid),
}

/// The points of one export.
#[derive(Clone, Debug, PartialEq)]
pub struct PointSet {
    /// `(t, x, y, z)` of every row.
    pub coords: Vec<[f64; 4]>,
    /// Where they came from.
    pub origin: Origin,
    /// The coordinate names, time first.
    pub names: [String; 4],
}

impl PointSet {
    /// The points of a grid.
    #[must_use]
    pub fn grid(g: Grid, names: &[String; 4]) -> PointSet {
        PointSet {
            coords: g.coords(),
            origin: Origin::Grid(g),
            names: names.clone(),
        }
    }

    /// Names row `row` (from 0) for a message: its place in the file or grid, and its
    /// coordinates.
    #[must_use]
    pub fn describe(&self, row: usize) -> String {
        let c = self.coords[row];
        let n = &self.names;
        let at = format!(
            "({}, {}, {}, {}) = ({:?}, {:?}, {:?}, {:?})",
            n[0], n[1], n[2], n[3], c[0], c[1], c[2], c[3]
        );
        match &self.origin {
            Origin::File { path, lines } => {
                format!("point {} ({path}, line {}): {at}", row + 1, lines[row])
            }
            Origin::Grid(g) => {
                let i = g.index(row);
                if g.spacetime {
                    format!(
                        "grid point (i_{}, i_{}, i_{}, i_{}) = ({}, {}, {}, {}), row {}: {at}",
                        n[0],
                        n[1],
                        n[2],
                        n[3],
                        i[0],
                        i[1],
                        i[2],
                        i[3],
                        row + 1
                    )
                } else {
                    format!(
                        "grid point (i_{}, i_{}, i_{}) = ({}, {}, {}), row {}: {at}",
                        n[1],
                        n[2],
                        n[3],
                        i[1],
                        i[2],
                        i[3],
                        row + 1
                    )
                }
            }
        }
    }
}

/// A coordinate name as a header field: a letter or `_`, then letters, digits or `_`.
fn is_name(f: &str) -> bool {
    f.chars()
        .next()
        .is_some_and(|c| c.is_alphabetic() || c == '_')
        && f.chars().all(|c| c.is_alphanumeric() || c == '_')
}

/// How a points file is written, in the coordinates `names`.
fn points_help(names: &[String; 4]) -> String {
    let list = names.join(",");
    format!(
        "a points file has one point per line, four comma-separated numbers {list} (e.g. \
         `0, 0.5, 0, 1.25`); an optional first line `{list}` names the columns; blank lines \
         and lines starting with # are skipped"
    )
}

/// Reads a points file; `path` names it in messages.
///
/// # Errors
///
/// A line without exactly four fields, a field that is not a finite number, a header other
/// than `t,x,y,z`, or a file without points; each at its place in the file.
pub fn read_points(path: &str, text: &str, names: &[String; 4]) -> Result<PointSet, ProblemError> {
    let help = points_help(names);
    let list = names.join(",");
    let err = |message: String, span: Span, label: &'static str| {
        ProblemError::new(path, text, message, span, label).with_help(help.clone())
    };
    let mut coords = Vec::new();
    let mut lines = Vec::new();
    let mut seen_content = false;
    let mut offset = 0usize;
    for (n, raw) in text.split_inclusive('\n').enumerate() {
        let start = offset;
        offset += raw.len();
        let line = raw.trim_end_matches(['\n', '\r']);
        // A byte-order mark at the very start is not content.
        let (line, start) = match (n, line.strip_prefix('\u{feff}')) {
            (0, Some(rest)) => (rest, start + '\u{feff}'.len_utf8()),
            _ => (line, start),
        };
        let trimmed = line.trim();
        if trimmed.is_empty() || trimmed.starts_with('#') {
            continue;
        }
        let first_content = !seen_content;
        seen_content = true;
        // Fields with their spans (trimmed).
        let mut fields: Vec<(&str, Span)> = Vec::new();
        let mut pos = 0usize;
        for piece in line.split(',') {
            let lead = piece.len() - piece.trim_start().len();
            let f = piece.trim();
            let s = start + pos + lead;
            fields.push((f, Span::new(s, s + f.len())));
            pos += piece.len() + 1;
        }
        let line_span = Span::new(
            start + (line.len() - line.trim_start().len()),
            start + line.trim_end().len(),
        );
        if first_content && fields.iter().any(|(f, _)| f.parse::<f64>().is_err()) {
            if fields.len() == 4
                && fields
                    .iter()
                    .zip(names)
                    .all(|((f, _), n)| f.eq_ignore_ascii_case(n))
            {
                continue;
            }
            if fields.len() == 4 && fields.iter().all(|(f, _)| is_name(f)) {
                return Err(err(
                    format!(
                        "the header must be `{list}`, in that order, not `{}`",
                        line.trim()
                    ),
                    line_span,
                    "this header",
                ));
            }
        }
        if fields.len() != 4 {
            return Err(err(
                format!(
                    "expected four numbers {list} on this line, found {} field{}",
                    fields.len(),
                    if fields.len() == 1 { "" } else { "s" }
                ),
                line_span,
                "this line",
            ));
        }
        let mut c = [0.0; 4];
        for (k, (f, span)) in fields.iter().enumerate() {
            let name = &names[k];
            if f.is_empty() {
                return Err(err(
                    format!("the {name} value is missing"),
                    Span::new(span.start, span.start),
                    "expected a number",
                ));
            }
            match f.parse::<f64>() {
                Ok(v) if v.is_finite() => c[k] = v,
                Ok(_) => {
                    return Err(err(
                        format!("the {name} value `{f}` is not a finite number"),
                        *span,
                        "not finite",
                    ));
                }
                Err(_) => {
                    return Err(err(
                        format!("the {name} value `{f}` is not a number"),
                        *span,
                        "not a number",
                    ));
                }
            }
        }
        coords.push(c);
        lines.push(n + 1);
    }
    if coords.is_empty() {
        return Err(ProblemError::new(
            path,
            text,
            "the points file has no points",
            Span::new(0, 0),
            "empty",
        )
        .with_help(help));
    }
    if coords.len() > MAX_POINTS {
        return Err(ProblemError::whole_file(
            path,
            format!(
                "{} points is too many for one export (at most {MAX_POINTS})",
                coords.len()
            ),
        ));
    }
    Ok(PointSet {
        coords,
        origin: Origin::File {
            path: path.to_string(),
            lines,
        },
        names: names.clone(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cartesian() -> [String; 4] {
        crate::tensor::COORDS.map(String::from)
    }

    #[test]
    fn reads_rows_with_header_comments_and_crlf() {
        let p = read_points(
            "p.csv",
            "# points\r\nt,x,y,z\r\n0, 1, 2, 3\r\n\r\n1e-3,-2,0.5,+4\n",
            &cartesian(),
        )
        .unwrap();
        assert_eq!(p.coords, vec![[0.0, 1.0, 2.0, 3.0], [1e-3, -2.0, 0.5, 4.0]]);
        assert_eq!(
            p.origin,
            Origin::File {
                path: "p.csv".into(),
                lines: vec![3, 5]
            }
        );
        assert!(p.describe(1).contains("line 5"));
    }

    fn error(text: &str) -> (String, (usize, usize)) {
        let e = read_points("p.csv", text, &cartesian()).unwrap_err();
        (e.message.clone(), e.line_col())
    }

    #[test]
    fn a_points_file_in_the_problems_coordinates() {
        let names = ["t", "r", "th", "ph"].map(String::from);
        let p = read_points("p.csv", "t,r,th,ph\n0,3,1.5,0.25\n", &names).unwrap();
        assert_eq!(p.coords, vec![[0.0, 3.0, 1.5, 0.25]]);
        assert!(
            p.describe(0)
                .contains("(t, r, th, ph) = (0.0, 3.0, 1.5, 0.25)")
        );
        let e = read_points("p.csv", "t,x,y,z\n0,3,1.5,0.25\n", &names).unwrap_err();
        assert!(
            e.message.contains("header must be `t,r,th,ph`"),
            "{}",
            e.message
        );
        let e = read_points("p.csv", "0,3,,0.25\n", &names).unwrap_err();
        assert!(
            e.message.contains("the th value is missing"),
            "{}",
            e.message
        );
    }

    #[test]
    fn errors_point_at_the_field() {
        let (m, lc) = error("t,x,y,z\n0,1,2,3\n0,1,zz,3\n");
        assert!(m.contains("the y value `zz` is not a number"), "{m}");
        assert_eq!(lc, (3, 5));
        let (m, lc) = error("0,1,2\n");
        assert!(m.contains("found 3 fields"), "{m}");
        assert_eq!(lc, (1, 1));
        let (m, lc) = error("0,1,2,3\n0, 1, nan, 3\n");
        assert!(m.contains("not a finite number"), "{m}");
        assert_eq!(lc, (2, 7));
        let (m, _) = error("t,y,x,z\n0,1,2,3\n");
        assert!(m.contains("header must be `t,x,y,z`"), "{m}");
        let (m, _) = error("# nothing\n\n");
        assert!(m.contains("no points"), "{m}");
        let (m, lc) = error("0,1,,3\n");
        assert!(m.contains("the y value is missing"), "{m}");
        assert_eq!(lc, (1, 5));
    }

    #[test]
    fn grid_layout() {
        let g = Grid::new(None, Some([0.5, 0.0, 1.0, 0.0]), Some(2.0), Some(3), false).unwrap();
        assert_eq!(g.axis(0), vec![0.5]);
        assert_eq!(g.axis(1), vec![-1.0, 0.0, 1.0]);
        assert_eq!(g.axis(2), vec![0.0, 1.0, 2.0]);
        let c = g.coords();
        assert_eq!(c.len(), 27);
        assert_eq!(c[1], [0.5, -1.0, 0.0, 0.0]);
        assert_eq!(g.index(1), [0, 0, 0, 1]);
        assert_eq!(c[5], [0.5, -1.0, 1.0, 1.0]);
        assert_eq!(g.index(5), [0, 0, 1, 2]);
        let g4 = Grid::new(None, Some([0.0; 4]), Some(1.0), Some(2), true).unwrap();
        assert_eq!(g4.coords().len(), 16);
        assert_eq!(g4.coords()[8], [0.5, -0.5, -0.5, -0.5]);
        let d = Grid::new(None, None, None, None, false).unwrap();
        assert_eq!(
            (d.center, d.width, d.points),
            (DEFAULT_CENTER, DEFAULT_WIDTH, DEFAULT_POINTS)
        );
        assert!(Grid::new(None, None, Some(-1.0), None, false).is_err());
        assert!(Grid::new(None, None, None, Some(0), false).is_err());
        assert!(Grid::new(None, None, None, Some(100_000), true).is_err());
        let table = GridSpec {
            center: Some([0.0, 1.0, 0.0, 0.0]),
            width: Some(4.0),
            points: Some(vec![9, 17, 33]),
        };
        let g = Grid::new(Some(&table), None, None, None, false).unwrap();
        assert_eq!((g.points, g.width, g.center[1]), (9, 4.0, 1.0));
        let g = Grid::new(Some(&table), None, Some(1.0), Some(5), false).unwrap();
        assert_eq!((g.points, g.width), (5, 1.0));
    }
}
