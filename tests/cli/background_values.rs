//! Outside checks of the numbers about backgrounds, at the library level: each worked file
//! about a background (and spoiled variants of it, made here by replacing one text) is read
//! with `lingrav::problem::from_str`, its exact residual forms are computed by the exact route
//! (`lingrav::tensor::curved`, and `lingrav::check::curved::CurvedParts` for the parts the
//! check reports) and enclosed with certified intervals (`Store::eval_interval`) at the point
//! of checks-backgrounds.md: P = (t, r, th, ph) = (7/2, 3, 1/2, 1/3) with M = 1, or Q = (eta,
//! x, y, z) = (1/2, 1/3, 1/5, 1/7) for FRW and Q_dS = (-1/3, 1/3, 1/5, 1/7) for de Sitter,
//! with H = 1 and k = 2; amplitudes 1 (the values are linear in them). Every enclosure must
//! contain the published value to relative 1e-10 and be narrower than 1e-8 relative; the
//! section of checks-backgrounds.md is named beside each assertion. Values given there as 0
//! are asserted as proved zero (an empty canonical numerator), except one that is 0 only at
//! the point (Kottler, spoiled i: E_tt vanishes at r = 3M).

use lingrav::canon::{Form, Point};
use lingrav::check::curved::CurvedParts;
use lingrav::claim::Part;
use lingrav::interval::{CInterval, Interval};
use lingrav::problem::{Problem, from_str};
use lingrav::tensor::curved::{Background, Perturbation};

type Sym4 = [[Form; 4]; 4];

/// A worked file's text.
fn worked(name: &str) -> String {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("worked")
        .join(name);
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{name}: {e}"))
}

/// `text` with `from` replaced by `to` (which must occur exactly once).
fn spoil(text: &str, from: &str, to: &str) -> String {
    assert_eq!(text.matches(from).count(), 1, "`{from}` once in the file");
    text.replace(from, to)
}

/// An enclosure of the rational num/den: exact when the f64 is, else the two neighbours.
fn rational(num: i32, den: i32) -> CInterval {
    let x = f64::from(num) / f64::from(den);
    let iv = if f64::from(num) == x * f64::from(den) && den.count_ones() == 1 {
        Interval::point(x)
    } else {
        Interval::new(x.next_down(), x.next_up())
    };
    CInterval::from_real(iv.expect("finite"))
}

/// A problem about a background, its background and perturbation, and a point.
struct Case {
    label: String,
    p: Problem,
    bg: Background,
    h: Perturbation,
    pt: Point,
}

impl Case {
    /// Reads `text` and sets the point: each name with its value num/den.
    fn new(label: &str, text: &str, values: &[(&str, i32, i32)]) -> Case {
        let mut p = from_str(label, text).unwrap_or_else(|e| panic!("{label}: {e:?}"));
        let bgd = p.background.clone().expect("a problem about a background");
        let coords = p.coordinates.clone().map(|c| p.store.symbol_kernel(&c));
        let bg = Background::new(&mut p.store, coords, bgd.g, bgd.lambda, bgd.source)
            .unwrap_or_else(|e| panic!("{label}: {e}"));
        let h = Perturbation::new(p.h);
        let mut pt = Point {
            samples: p.sampling.samples.clone(),
            ..Point::default()
        };
        for &(name, num, den) in values {
            let k = p.store.symbol_kernel(name);
            pt.values.insert(k, rational(num, den));
        }
        Case {
            label: label.into(),
            p,
            bg,
            h,
            pt,
        }
    }

    /// The index of coordinate `c`.
    fn ix(&self, c: &str) -> usize {
        self.p
            .coordinates
            .iter()
            .position(|n| n == c)
            .unwrap_or_else(|| panic!("{}: no coordinate {c}", self.label))
    }

    /// The pair of indices of a component `a.b`.
    fn pair(&self, ab: &str) -> (usize, usize) {
        let (a, b) = ab.split_once('.').expect("a.b");
        (self.ix(a), self.ix(b))
    }

    /// E = dG + Lambda h - 8 pi dT with the file's dT.
    fn field(&mut self) -> Sym4 {
        let dt = self.p.source;
        self.field_with(dt)
    }

    /// E with the source perturbation `dt` (`None`: dT = 0).
    fn field_with(&mut self, dt: Option<Sym4>) -> Sym4 {
        let label = &self.label;
        self.h
            .field_residual(&mut self.p.store, &mut self.bg, dt.as_ref())
            .unwrap_or_else(|e| panic!("{label}: {e}"))
    }

    /// dG alone (without Lambda h).
    fn dg(&mut self) -> Sym4 {
        self.h
            .delta_einstein(&mut self.p.store, &mut self.bg)
            .expect("dG")
    }

    /// The covariant Lorenz divergence L_nu.
    fn lorenz(&mut self) -> [Form; 4] {
        self.h.lorenz(&mut self.p.store, &self.bg).expect("L")
    }

    /// The linearized Riemann tensor, all indices down, at the index set of `abcd`
    /// (coordinate names joined by dots).
    fn riemann(&mut self, abcd: &str) -> Form {
        let idx: Vec<usize> = abcd.split('.').map(|c| self.ix(c)).collect();
        let all = self.h.riemann(&mut self.p.store, &mut self.bg).expect("dR");
        all.iter()
            .find(|(i, _)| i.as_slice() == idx)
            .map(|(_, f)| *f)
            .unwrap_or_else(|| panic!("{abcd} is not an independent index set"))
    }

    /// The part of the check, through the check's own `CurvedParts` (a fresh one: the parts
    /// are memoised there, not here).
    fn part(&mut self, part: Part) -> Form {
        let bgd = self.p.background.clone().expect("background");
        let coords = self
            .p
            .coordinates
            .clone()
            .map(|c| self.p.store.symbol_kernel(&c));
        let st = &mut self.p.store;
        let bg = Background::new(st, coords, bgd.g, bgd.lambda, bgd.source).expect("bg");
        let mut parts = CurvedParts::new(bg, self.p.h, self.p.source, bgd.gauge_vector);
        parts.form(st, part).expect("part")
    }

    /// Asserts that the enclosure of `f` at the point contains `want` to relative 1e-10 and
    /// is narrower than 1e-8 relative.
    fn value(&mut self, f: Form, want: f64, what: &str) {
        let label = &self.label;
        let z = self
            .p
            .store
            .eval_interval(f, &self.pt)
            .unwrap_or_else(|| panic!("{label}: {what} not evaluable"));
        let tol = 1e-10 * want.abs();
        assert!(
            z.re.lo() <= want + tol && want - tol <= z.re.hi(),
            "{label}: {what} = [{}, {}], published {want}",
            z.re.lo(),
            z.re.hi()
        );
        // Informative: far narrower than the value (expanded forms that cancel heavily, as
        // Kottler's with Lambda = 1/30 as an interval, give enclosures about 1e-10 wide).
        assert!(
            z.re.width() <= 1e-8 * want.abs(),
            "{label}: {what}: enclosure too wide: {}",
            z.re.width()
        );
        assert!(
            z.im.lo() <= tol && -tol <= z.im.hi(),
            "{label}: {what}: imaginary part {}",
            z.im
        );
    }

    /// Asserts that `f` is proved zero.
    fn zero(&mut self, f: Form, what: &str) {
        let label = &self.label;
        let st = &mut self.p.store;
        assert!(
            st.is_zero(f),
            "{label}: {what} = {} is not 0",
            st.to_text(f)
        );
    }

    /// Asserts that every component of `m` is proved zero except those in `except`.
    fn zero_except(&mut self, m: &Sym4, except: &[&str], what: &str) {
        let skip: Vec<(usize, usize)> = except.iter().map(|ab| self.pair(ab)).collect();
        for a in 0..4 {
            for b in a..4 {
                if !skip.contains(&(a, b)) && !skip.contains(&(b, a)) {
                    let name =
                        format!("{what}_{}.{}", self.p.coordinates[a], self.p.coordinates[b]);
                    self.zero(m[a][b], &name);
                }
            }
        }
    }

    /// The component `a.b` of `m`.
    fn at(&self, m: &Sym4, ab: &str) -> Form {
        let (a, b) = self.pair(ab);
        m[a][b]
    }

    /// The background's equations Gbar + Lambda gbar - 8 pi Tbar are proved zero.
    fn background_solves(&mut self) {
        let e = self.bg.equations(&mut self.p.store).expect("background");
        self.zero_except(&e, &[], "Gbar");
    }
}

/// P = (t, r, th, ph) = (7/2, 3, 1/2, 1/3), M = 1 (checks-backgrounds.md, section 0).
const P: [(&str, i32, i32); 5] = [
    ("t", 7, 2),
    ("r", 3, 1),
    ("th", 1, 2),
    ("ph", 1, 3),
    ("M", 1, 1),
];

fn at_p(extra: &[(&'static str, i32, i32)]) -> Vec<(&'static str, i32, i32)> {
    P.iter().chain(extra).copied().collect()
}

#[test]
fn flat_space_point_mass_1a() {
    let text = worked("spherical_point_mass.toml");
    let pt = at_p(&[("m", 1, 1)]);
    // h_iso: E = 0, L = 0, six independent dR_abcd nonzero.
    let mut c = Case::new("1a h_iso", &text, &pt);
    c.background_solves();
    let e = c.field();
    c.zero_except(&e, &[], "E");
    for l in c.lorenz() {
        c.zero(l, "L");
    }
    let f = c.riemann("t.r.t.r");
    c.value(f, -0.0740740740741, "1a dR_trtr = -2M/r^3");
    let f = c.riemann("t.th.t.th");
    c.value(f, 0.333333333333, "1a dR_tthtth = M/r");
    let f = c.riemann("t.ph.t.ph");
    c.value(f, 0.0766162823553, "1a dR_tphtph = M sin^2 th / r");
    let all = c.h.riemann(&mut c.p.store, &mut c.bg).unwrap();
    let nonzero = all.iter().filter(|(_, f)| !c.p.store.is_zero(*f)).count();
    assert_eq!(nonzero, 6, "1a: 6 independent nonzero components");

    // h_S = diag(2M/r, 2M/r, 0, 0): the same dR, L_r = 2M/r^2.
    let hs = spoil(
        &spoil(&text, "th.th = '2*m*r'\n", ""),
        "ph.ph = '2*m*r*sin(th)^2'\n",
        "",
    );
    let mut c = Case::new("1a h_S", &hs, &pt);
    let e = c.field();
    c.zero_except(&e, &[], "E");
    let l = c.lorenz();
    c.value(l[1], 0.222222222222, "1a h_S: L_r");
    for i in [0, 2, 3] {
        c.zero(l[i], "1a h_S: L_t, L_th, L_ph");
    }
    let f = c.riemann("t.r.t.r");
    c.value(f, -0.0740740740741, "1a h_S: dR_trtr");
    let f = c.riemann("t.th.t.th");
    c.value(f, 0.333333333333, "1a h_S: dR_tthtth");

    // Spoiled: h_tt = 2M/r^2.
    let bad = spoil(&text, "t.t = '2*m/r'", "t.t = '2*m/r^2'");
    let mut c = Case::new("1a spoiled", &bad, &pt);
    let e = c.field();
    c.zero_except(&e, &["r.r", "th.th", "ph.ph"], "E");
    let f = c.at(&e, "r.r");
    c.value(f, -0.0246913580247, "1a spoiled: E_rr = -2M(r-2)/r^4");
    let f = c.at(&e, "th.th");
    c.value(f, -0.111111111111, "1a spoiled: E_thth = M(r-4)/r^2");
    let f = c.at(&e, "ph.ph");
    c.value(f, -0.0255387607851, "1a spoiled: E_phph");
    let l = c.lorenz();
    c.value(l[1], 0.0370370370370, "1a spoiled: L_r");
}

#[test]
fn teukolsky_wave_1b() {
    let text = worked("teukolsky_l2_wave.toml");
    let pt = at_p(&[]);
    // F(x) = exp(-x^2), the file's sample, at x = t - r = 1/2.
    let mut c = Case::new("1b", &text, &pt);
    let e = c.field();
    c.zero_except(&e, &[], "E");
    let h = c.p.h;
    c.value(c.at(&h, "r.r"), -0.188996699980, "1b h_rr");
    c.value(c.at(&h, "r.th"), 1.16504579893, "1b h_rth");
    c.value(c.at(&h, "th.th"), 2.43170889831, "1b h_thth");
    c.value(c.at(&h, "ph.ph"), -0.167959424369, "1b h_phph");
    let f = c.riemann("t.r.t.r");
    c.value(f, -0.321294389967, "1b dR_trtr");
    let f = c.riemann("t.r.t.th");
    c.value(f, 6.04367508197, "1b dR_trtth");
    let f = c.riemann("t.r.r.th");
    c.value(f, -6.28032500988, "1b dR_trrth");
    let tr = c.part(Part::Trace);
    c.zero(tr, "1b trace");

    // The file of the spoiled coefficient (21 F'/r^4 -> 20 F'/r^4 in C).
    let bad = worked("teukolsky_wrong_coefficient.toml");
    let mut c = Case::new("1b spoiled", &bad, &pt);
    let e = c.field();
    let nonzero = ["t.t", "t.th", "r.r", "r.th", "th.th", "ph.ph"];
    c.zero_except(&e, &nonzero, "E");
    let published = [
        0.00209996333311,
        0.00606794686945,
        -0.00209996333311,
        -0.0141585426954,
        -0.0248620086226,
        0.00571450401766,
    ];
    for (ab, want) in nonzero.iter().zip(published) {
        let f = c.at(&e, ab);
        c.value(f, want, &format!("1b spoiled: E_{ab}"));
    }
    let tr = c.part(Part::Trace);
    c.zero(tr, "1b spoiled: trace");
    let l = c.lorenz();
    c.value(l[2], 0.0121358937389, "1b spoiled: L_th");
    for i in [0, 1, 3] {
        c.zero(l[i], "1b spoiled: L_t, L_r, L_ph");
    }
    // The check's own part gives the same number.
    let (mu, nu) = c.pair("r.th");
    let f = c.part(Part::CurvedFieldEquation {
        mu,
        nu,
        lambda: false,
        sourced: false,
    });
    c.value(f, -0.0141585426954, "1b spoiled: E_rth through CurvedParts");
}

#[test]
fn plummer_sign_anchor_1c() {
    let text = worked("plummer_sign_anchor.toml");
    let mut c = Case::new("1c", &text, &at_p(&[("b", 1, 1)]));
    let h = c.p.h;
    c.value(c.at(&h, "t.t"), 0.632455532034, "1c h_tt");
    let dg = c.dg();
    c.value(c.at(&dg, "t.t"), 0.0189736659610, "1c dG_tt = 8 pi rho");
    c.zero_except(&dg, &["t.t"], "dG");
    let dt = c.p.source.expect("dT");
    c.value(c.at(&dt, "t.t"), 0.000754938181567, "1c dT_tt = rho");
    let e = c.field();
    c.zero_except(&e, &[], "E");
}

#[test]
fn schwarzschild_2a_to_2e() {
    // 2a mass perturbation: E = 0, L_r = 2 dM / (r (r - 2M)).
    let text = worked("schwarzschild_mass_perturbation.toml");
    let mut c = Case::new("2a", &text, &at_p(&[("dM", 1, 1)]));
    c.background_solves();
    let e = c.field();
    c.zero_except(&e, &[], "E");
    let l = c.lorenz();
    c.value(l[1], 0.666666666667, "2a L_r");
    for i in [0, 2, 3] {
        c.zero(l[i], "2a L_t, L_th, L_ph");
    }
    let tr = c.part(Part::Trace);
    c.zero(tr, "2a trace");

    // 2b slow rotation: E = 0, L = 0, trace 0.
    let text = worked("schwarzschild_slow_rotation.toml");
    let mut c = Case::new("2b", &text, &at_p(&[("J", 1, 1)]));
    let e = c.field();
    c.zero_except(&e, &[], "E");
    for l in c.lorenz() {
        c.zero(l, "2b L");
    }

    // 2c pure gauge, F = sin(t)/r (the file's G(t)/r with the sample G = sin).
    let text = worked("schwarzschild_pure_gauge.toml");
    let mut c = Case::new("2c", &text, &at_p(&[]));
    let e = c.field();
    c.zero_except(&e, &[], "E");
    let h = c.p.h;
    let published = [
        ("t.t", 0.0228030550833),
        ("t.r", -0.821818058732),
        ("r.r", 0.410454991499),
        ("r.th", 0.168174437868),
        ("th.th", -0.615682487248),
        ("ph.ph", -0.141513909853),
    ];
    for (ab, want) in published {
        let f = c.at(&h, ab);
        c.value(f, want, &format!("2c h_{ab}"));
    }
    let l = c.lorenz();
    c.value(l[0], -0.182626235274, "2c L_t");
    c.value(l[1], -0.832311510539, "2c L_r");
    c.value(l[2], 0.0373720973041, "2c L_th");
    c.zero(l[3], "2c L_ph");
    for a in 0..4 {
        for b in a..4 {
            let f = c.part(Part::GaugeResidual(a, b));
            c.zero(f, "2c h - D xi - D xi");
        }
    }

    // 2d static odd parity l = 2: both solutions, E = 0, L = 0 (amplitude q = 1).
    for (file, want) in [
        ("schwarzschild_odd_l2_static.toml", -5.44620618150),
        ("schwarzschild_odd_l2_decaying.toml", -0.126590869221),
    ] {
        let mut c = Case::new(&format!("2d {file}"), &worked(file), &at_p(&[("q", 1, 1)]));
        let h = c.p.h;
        c.value(c.at(&h, "t.ph"), want, "2d h_tph");
        let e = c.field();
        c.zero_except(&e, &[], "E");
        for l in c.lorenz() {
            c.zero(l, "2d L");
        }
    }

    // 2e spoiled slow rotation: only E_tph = 4J(r - 2M) sin^2 th / r^5; still L = 0.
    let text = worked("schwarzschild_wrong_slow_rotation.toml");
    let mut c = Case::new("2e", &text, &at_p(&[("J", 1, 1)]));
    let e = c.field();
    c.zero_except(&e, &["t.ph"], "E");
    let f = c.at(&e, "t.ph");
    c.value(f, 0.00378352011631, "2e E_tph");
    for l in c.lorenz() {
        c.zero(l, "2e L");
    }
}

#[test]
fn kottler_3a() {
    let text = worked("kottler_mass_perturbation.toml");
    let pt = at_p(&[("Lam", 1, 30), ("dM", 1, 1)]);
    let mut c = Case::new("3a", &text, &pt);
    c.background_solves();
    let g = c.bg.g;
    c.value(c.at(&g, "r.r"), 30.0 / 7.0, "3a 1/f(P) = 30/7");
    let e = c.field();
    c.zero_except(&e, &[], "E");
    let l = c.lorenz();
    c.value(l[1], 0.952380952381, "3a L_r = 2 dM / (r^2 f)");
    // Spoiled ii (a tool that forgets Lambda h): dG alone = -Lambda h.
    let dg = c.dg();
    c.value(c.at(&dg, "t.t"), -0.0222222222222, "3a spoiled ii: dG_tt");
    c.value(c.at(&dg, "r.r"), -0.408163265306, "3a spoiled ii: dG_rr");

    // Spoiled i: Schwarzschild's h_rr on the Kottler background.
    let bad = spoil(
        &text,
        "r.r = '2*dM/(r*f^2)'",
        "r.r = '2*dM/(r*(1 - 2*M/r)^2)'",
    );
    let mut c = Case::new("3a spoiled i", &bad, &pt);
    let e = c.field();
    c.zero_except(&e, &["t.t", "r.r", "th.th", "ph.ph"], "E");
    // The published E_tt = 0 is a value at P, not an identity: E_tt = f d_r(r f^2 h_rr)/r^2
    // and d_r (f / (1 - 2M/r)) = (Lambda r / 3)(6M/r - 2) / (1 - 2M/r)^2 vanishes at r = 3M,
    // which is P's radius. So E_tt is not proved zero, encloses 0 at P, and not at r = 4.
    let ett = c.at(&e, "t.t");
    assert!(
        !c.p.store.is_zero(ett),
        "3a spoiled i: E_tt is not identically 0"
    );
    let z = c.p.store.eval_interval(ett, &c.pt).expect("E_tt at P");
    // (The expanded form cancels heavily: the enclosure is about 2e-10 wide.)
    assert!(
        z.re.contains(0.0) && z.re.width() < 1e-9,
        "3a spoiled i: E_tt(P) = {}",
        z.re
    );
    let mut at4 = c.pt.clone();
    let r = c.p.store.symbol_kernel("r");
    at4.values.insert(r, rational(4, 1));
    let z = c.p.store.eval_interval(ett, &at4).expect("E_tt at r = 4");
    assert!(z.re.excludes_zero(), "3a spoiled i: E_tt(r = 4) = {}", z.re);
    c.value(c.at(&e, "r.r"), 0.485714285714, "3a spoiled i: E_rr");
    c.value(c.at(&e, "th.th"), -1.45714285714, "3a spoiled i: E_thth");
    c.value(c.at(&e, "ph.ph"), -0.334922605725, "3a spoiled i: E_phph");
    let l = c.lorenz();
    c.value(l[1], 0.223809523810, "3a spoiled i: L_r");
}

#[test]
fn de_sitter_tensor_mode_3b() {
    let text = worked("de_sitter_tensor_mode.toml");
    let pt = [
        ("eta", -1, 3),
        ("x", 1, 3),
        ("y", 1, 5),
        ("z", 1, 7),
        ("H", 1, 1),
        ("k", 2, 1),
        ("amp", 1, 1),
    ];
    let mut c = Case::new("3b", &text, &pt);
    c.background_solves();
    let h = c.p.h;
    c.value(c.at(&h, "x.x"), 10.3460593348, "3b h_xx");
    let e = c.field();
    c.zero_except(&e, &[], "E");
    for l in c.lorenz() {
        c.zero(l, "3b L");
    }

    // Spoiled: h_k = cos(k eta); E_xx = k sin(k eta) cos(k z) / eta = -E_yy, still TT.
    let bad = spoil(
        &text,
        "hk = 'amp*(cos(k*eta) + k*eta*sin(k*eta))'",
        "hk = 'amp*cos(k*eta)'",
    );
    let mut c = Case::new("3b spoiled", &bad, &pt);
    let e = c.field();
    c.zero_except(&e, &["x.x", "y.y"], "E");
    c.value(c.at(&e, "x.x"), 3.55980870357, "3b spoiled: E_xx");
    c.value(c.at(&e, "y.y"), -3.55980870357, "3b spoiled: E_yy");
    for l in c.lorenz() {
        c.zero(l, "3b spoiled: L");
    }
    let tr = c.part(Part::Trace);
    c.zero(tr, "3b spoiled: trace");
}

/// Q = (eta, x, y, z) = (1/2, 1/3, 1/5, 1/7), k = 2.
const Q: [(&str, i32, i32); 6] = [
    ("eta", 1, 2),
    ("x", 1, 3),
    ("y", 1, 5),
    ("z", 1, 7),
    ("k", 2, 1),
    ("amp", 1, 1),
];

#[test]
fn frw_dust_4a() {
    let text = worked("frw_dust_tensor_mode.toml");
    let mut c = Case::new("4a", &text, &Q);
    c.background_solves();
    let tbar = c.bg.source.expect("Tbar");
    c.value(c.at(&tbar, "eta.eta"), 1.90985931710, "4a Tbar_etaeta");
    let h = c.p.h;
    c.value(c.at(&h, "x.x"), 0.0541799016953, "4a h_xx");
    let e = c.field();
    c.zero_except(&e, &[], "E");

    // Spoiled: the radiation mode sin(x)/x on the dust background, dT = 0.
    let bad = spoil(
        &text,
        "hxx = 'amp*a^2*3*(sin(xk) - xk*cos(xk))/xk^3*cos(k*z)'",
        "hxx = 'amp*a^2*sin(xk)/xk*cos(k*z)'",
    );
    let mut c = Case::new("4a spoiled", &bad, &Q);
    let e = c.field();
    c.zero_except(&e, &["x.x", "y.y"], "E");
    c.value(c.at(&e, "x.x"), -1.15583790283, "4a spoiled: E_xx");
    c.value(c.at(&e, "y.y"), 1.15583790283, "4a spoiled: E_yy");
}

#[test]
fn frw_radiation_4b() {
    let text = worked("frw_radiation_tensor_mode.toml");
    let mut c = Case::new("4b", &text, &Q);
    c.background_solves();
    let tbar = c.bg.source.expect("Tbar");
    c.value(c.at(&tbar, "eta.eta"), 0.477464829276, "4b Tbar_etaeta");
    c.value(c.at(&tbar, "x.x"), 0.159154943092, "4b Tbar_xx");
    let h = c.p.h;
    c.value(c.at(&h, "x.x"), 0.201839560018, "4b h_xx");
    let dt = c.p.source.expect("dT");
    c.value(c.at(&dt, "x.x"), 0.128495054754, "4b dT_xx = p h_xx");
    let e = c.field();
    c.zero_except(&e, &[], "E");
    for l in c.lorenz() {
        c.zero(l, "4b L");
    }
    // The source perturbation conserved with the background (the check's part).
    for n in 0..4 {
        let f = c.part(Part::Conservation(n));
        c.zero(f, "4b conservation");
    }
    // The wrong source dT = 0: the residual is dG = 8 pi p h.
    let e = c.field_with(None);
    c.value(c.at(&e, "x.x"), 3.22943296029, "4b dT = 0: dG_xx");
    c.value(c.at(&e, "y.y"), -3.22943296029, "4b dT = 0: dG_yy");

    // Spoiled: the dust mode 3 j1(x)/x, with dT = p h.
    let bad = spoil(
        &text,
        "hxx = 'amp*a^2*sin(k*eta)/(k*eta)*cos(k*z)'",
        "hxx = 'amp*a^2*3*(sin(k*eta) - k*eta*cos(k*eta))/(k*eta)^3*cos(k*z)'",
    );
    let mut c = Case::new("4b spoiled", &bad, &Q);
    let e = c.field();
    c.zero_except(&e, &["x.x", "y.y"], "E");
    c.value(c.at(&e, "x.x"), 0.714242244626, "4b spoiled: E_xx");
    c.value(c.at(&e, "y.y"), -0.714242244626, "4b spoiled: E_yy");
}
