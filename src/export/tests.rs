//! Psi4 against the polarizations, quantity lists, and evaluation at points.

use super::quantity::{Quantity, blocks, parse_list, psi4};
use super::write::Table;
use super::*;
use crate::canon::{Names, Store};
use crate::tensor::Linearized;
use crate::tt::{Arg, Direction, parse_direction, project_perturbation};

fn form(store: &mut Store, s: &str) -> Form {
    let e = crate::parse::parse(s).unwrap();
    store.build(&e, &Names::free()).unwrap()
}

fn direction(store: &mut Store, text: &str) -> Direction {
    parse_direction(
        store,
        &Names::free(),
        &Sampling::default(),
        Arg::new("--direction", text),
        false,
    )
    .unwrap()
}

fn tensor(store: &mut Store, comps: &[(usize, usize, &str)]) -> [[Form; 4]; 4] {
    let mut h = [[store.zero(); 4]; 4];
    for &(i, j, s) in comps {
        let f = form(store, s);
        h[i][j] = f;
        h[j][i] = f;
    }
    h
}

#[test]
fn psi4_of_the_reference_wave() {
    // Checks sheet, sec. 6: h_+ = A cos w(t - z), h_x = B sin w(t - z) along z, tetrad
    // n = (d_t - d_z)/sqrt2, m = (d_x + i d_y)/sqrt2: Psi4 = -(h_+'' - i h_x'')
    // = w^2 (A cos wu - i B sin wu); A = 1e-3, B = 2e-3, w = 3, t - z = 0.4 gives
    // 0.003261219790290061 - 0.016776703547410076 i.
    let mut st = Store::new();
    let h = tensor(
        &mut st,
        &[
            (1, 1, "A*cos(w*(t - z))"),
            (2, 2, "-A*cos(w*(t - z))"),
            (1, 2, "B*sin(w*(t - z))"),
        ],
    );
    let dir = direction(&mut st, "0,0,1");
    let mut lin = Linearized::new(&mut st, h);
    let (re, im) = psi4(&mut st, &mut lin, &dir).unwrap();
    let want_re = form(&mut st, "w^2*A*cos(w*(t - z))");
    let want_im = form(&mut st, "-w^2*B*sin(w*(t - z))");
    let d = st.sub(re, want_re).unwrap();
    assert!(st.is_zero(d), "Re Psi4 = {}", st.to_text(re));
    let d = st.sub(im, want_im).unwrap();
    assert!(st.is_zero(d), "Im Psi4 = {}", st.to_text(im));
    let mut pt = Point::default();
    for (n, v) in [("A", 1e-3), ("B", 2e-3), ("w", 3.0), ("t", 0.9), ("z", 0.5)] {
        let k = st.symbol_kernel(n);
        pt.values
            .insert(k, crate::interval::CInterval::point(v, 0.0).unwrap());
    }
    let (r, _) = st.eval_f64(re, &pt).unwrap();
    let (i, _) = st.eval_f64(im, &pt).unwrap();
    assert!((r / 0.003261219790290061 - 1.0).abs() < 1e-12, "{r}");
    assert!((i / -0.016776703547410076 - 1.0).abs() < 1e-12, "{i}");
}

#[test]
fn psi4_is_minus_the_second_time_derivative_of_the_polarizations() {
    // Any TT plane wave along an oblique n with arbitrary profiles F, G of t - n.x:
    // Psi4 = -(d_t^2 h_plus - i d_t^2 h_cross), h_plus and h_cross from the TT projection in
    // the direction's own basis, u = (4/5, 0, -3/5), v = (0, 1, 0).
    let mut st = Store::new();
    let f = "F(t - (3*x + 4*z)/5)";
    let g = "G(t - (3*x + 4*z)/5)";
    let h = tensor(
        &mut st,
        &[
            (1, 1, &format!("16/25*{f}")),
            (1, 3, &format!("-12/25*{f}")),
            (3, 3, &format!("9/25*{f}")),
            (2, 2, &format!("-{f}")),
            (1, 2, &format!("4/5*{g}")),
            (2, 3, &format!("-3/5*{g}")),
        ],
    );
    let dir = direction(&mut st, "3/5,0,4/5");
    let p = project_perturbation(&mut st, &h, &dir).unwrap();
    let ff = form(&mut st, f);
    let d = st.sub(p.plus, ff).unwrap();
    assert!(st.is_zero(d), "h_plus = {}", st.to_text(p.plus));
    let mut lin = Linearized::new(&mut st, h);
    let (re, im) = psi4(&mut st, &mut lin, &dir).unwrap();
    let t = st.symbol_kernel("t");
    let dp = st.diff(p.plus, t).unwrap();
    let ddp = st.diff(dp, t).unwrap();
    let dc = st.diff(p.cross, t).unwrap();
    let ddc = st.diff(dc, t).unwrap();
    let a = st.add(re, ddp).unwrap();
    assert!(st.is_zero(a), "Re Psi4 + h_plus'' = {}", st.to_text(a));
    let b = st.sub(im, ddc).unwrap();
    assert!(st.is_zero(b), "Im Psi4 - h_cross'' = {}", st.to_text(b));
    assert!(!st.is_zero(re) && !st.is_zero(im));
}

#[test]
fn psi4_and_riemann_vanish_for_pure_gauge() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("worked");
    let mut p = crate::problem::read(&root.join("pure_gauge.toml")).unwrap();
    let dir = direction(&mut p.store, "radial");
    let b = blocks(
        &mut p.store,
        &p.h,
        None,
        &[Quantity::Psi4, Quantity::Riemann],
        Some(&dir),
    )
    .unwrap();
    for c in b.iter().flat_map(|b| &b.columns) {
        assert!(
            p.store.is_zero(c.form),
            "{} = {}",
            c.name,
            p.store.to_text(c.form)
        );
    }
}

#[test]
fn quantity_lists() {
    let mut v = Vec::new();
    parse_list(Arg::new("--quantity", "h, adm,h,psi4"), &mut v).unwrap();
    assert_eq!(v, [Quantity::H, Quantity::Adm, Quantity::Psi4]);
    let e = parse_list(Arg::new("--quantity", "h,hplsu"), &mut v).unwrap_err();
    assert!(
        e.message.contains("unknown quantity `hplsu`"),
        "{}",
        e.message
    );
    assert!(e.help.as_deref().unwrap().contains("did you mean `hplus`?"));
    assert_eq!((e.span.start, e.span.end), (2, 7));
    for q in Quantity::ALL {
        assert_eq!(Quantity::parse(q.name()), Some(q));
    }
}

#[test]
fn columns_have_fixed_names_and_counts() {
    let mut st = Store::new();
    let h = tensor(&mut st, &[(0, 0, "2*m/sqrt(x^2 + y^2 + z^2)")]);
    let dir = direction(&mut st, "0,0,1");
    let b = blocks(&mut st, &h, None, &Quantity::ALL, Some(&dir)).unwrap();
    let counts: Vec<usize> = b.iter().map(|b| b.columns.len()).collect();
    assert_eq!(counts, [10, 10, 40, 20, 10, 10, 16, 4, 2, 1, 1]);
    let names: Vec<&str> = b[0].columns.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(
        names,
        [
            "h_tt", "h_tx", "h_ty", "h_tz", "h_xx", "h_xy", "h_xz", "h_yy", "h_yz", "h_zz"
        ]
    );
    assert_eq!(b[2].columns[11].name, "d_x_h_tx");
    assert_eq!(b[3].columns[0].name, "R_txtx");
    let adm: Vec<&str> = b[6].columns.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(
        &adm[..5],
        ["alpha", "beta_x", "beta_y", "beta_z", "gamma_xx"]
    );
    assert_eq!(adm[15], "K_zz");
    assert_eq!(b[7].columns[0].name, "H");
    let e = blocks(&mut st, &h, None, &[Quantity::Hplus], None).unwrap_err();
    assert!(e.to_string().contains("give --direction"));
}

fn problem(text: &str) -> crate::problem::Problem {
    crate::problem::ProblemFile::parse("t.toml", text)
        .unwrap()
        .build()
        .unwrap()
}

/// An evaluation and the rows it gave its sink.
#[derive(Debug)]
struct Exported {
    table: Table,
    columns: Vec<ColumnReport>,
    audit: ExactAudit,
}

/// Exports `quantities` of the problem at the points (CSV text), default settings.
fn export(
    p: &mut crate::problem::Problem,
    quantities: &[Quantity],
    dir: Option<&str>,
    points: &str,
    settings: &Settings,
) -> Result<Exported, ExportError> {
    let dir = dir.map(|d| direction(&mut p.store, d));
    let b = blocks(
        &mut p.store,
        &p.h,
        p.source.as_ref(),
        quantities,
        dir.as_ref(),
    )
    .unwrap();
    let frame = dir.as_ref().map(|d| {
        let mut t =
            |x: &[Form; 3]| -> [String; 3] { std::array::from_fn(|i| p.store.to_text(x[i])) };
        [t(&d.n), t(&d.u), t(&d.v)]
    });
    let params = p.parameters.clone();
    let numeric = Numeric::new(p, quantities, frame, &params).unwrap();
    let pts =
        points::read_points("p.csv", points, &crate::tensor::COORDS.map(String::from)).unwrap();
    let sampling = p.sampling.clone();
    let mut values = Vec::new();
    let ev = evaluate(
        &mut p.store,
        &numeric,
        &b,
        &pts,
        &params,
        &sampling,
        settings,
        &mut |r: &[f64]| {
            values.extend_from_slice(r);
            Ok(())
        },
    )?;
    assert_eq!(values.len(), ev.rows * ev.names.len());
    Ok(Exported {
        table: Table {
            columns: ev.names,
            values,
        },
        columns: ev.columns,
        audit: ev.audit,
    })
}

#[test]
fn evaluation_names_the_point_of_a_singularity() {
    let mut p =
        problem("[parameters]\nm = 0.5\n[perturbation]\ntt = '2*m/sqrt(x^2 + y^2 + z^2)'\n");
    let e = export(
        &mut p,
        &[Quantity::H],
        None,
        "t,x,y,z\n0,1,0,0\n0,0,0,0\n",
        &Settings::default(),
    )
    .unwrap_err();
    let ExportError::Point(e) = e else {
        panic!("{e}")
    };
    assert_eq!((e.row, e.column.as_str()), (1, "h_tt"));
    assert!(e.point.contains("line 3"), "{}", e.point);
    let ev = export(
        &mut p,
        &[Quantity::H],
        None,
        "0,1,0,0\n0,0,2,0\n",
        &Settings::default(),
    )
    .unwrap();
    assert_eq!(ev.table.columns.len(), 14);
    // 2 m / r with m = 0.5: 1 and 0.5, within the certified bounds.
    assert!((ev.table.row(0)[4] - 1.0).abs() <= ev.columns[0].bound);
    assert!((ev.table.row(1)[4] - 0.5).abs() <= ev.columns[0].bound);
    assert!(ev.columns[0].bound <= 1e-15, "{:?}", ev.columns);
    assert_eq!(ev.audit.rows, 2);
}

/// Issue 9: the expanded form exp((2ty - t^2 - y^2)/(2 s^2)) loses every digit at t = 1e8;
/// the user's own structure keeps them. Reference: mpmath at 50 digits (mp.dps = 50),
/// exp(-(t - y)^2/(2 s^2)) with t = 100000000.099999994039535522 (the f64 of 100000000.1),
/// y = 1e8, s = the f64 of 0.03: 0.0038659226997713171433...
#[test]
fn issue9_a_gaussian_pulse_far_from_the_origin_is_exported_right() {
    let mut p = problem("[parameters]\ns = 0.03\n[perturbation]\nxx = 'exp(-(t - y)^2/(2*s^2))'\n");
    let ev = export(
        &mut p,
        &[Quantity::H],
        None,
        "100000000.1,0,100000000,0\n",
        &Settings::default(),
    )
    .unwrap();
    let v = ev.table.row(0)[8];
    assert!((v / 0.003_865_922_699_771_317 - 1.0).abs() < 1e-12, "{v}");
    assert!(ev.columns[4].bound <= 1e-12 * v, "{:?}", ev.columns[4]);
}

/// Cancellation that f64 intervals cannot resolve is resolved at higher precision:
/// (1 + 1e-20 x)^2 - 1 - 2e-20 x = 1e-40 x^2 exactly.
#[test]
fn issue9_precision_is_raised_where_f64_intervals_cancel() {
    let mut p = problem("[perturbation]\nxx = '(1 + x/10^20)^2 - 1 - 2*x/10^20'\n");
    let ev = export(
        &mut p,
        &[Quantity::H],
        None,
        "0,3,0,0\n",
        &Settings::default(),
    )
    .unwrap();
    let v = ev.table.row(0)[8];
    assert!((v / 9e-40 - 1.0).abs() < 1e-12, "{v}");
    // Beyond the double-double tier too (10^-40 relative): multiprecision balls.
    assert!(ev.columns[4].precision_bits >= 128, "{:?}", ev.columns[4]);
}

/// A value that is 0 at the point but not structurally: sin(pi x) at x = 1 cannot get a
/// relative bound; with no other magnitude in its column it is refused, and accepted with an
/// explicit zero tolerance.
#[test]
fn issue9_values_indistinguishable_from_zero_need_a_zero_tolerance() {
    let mut p = problem("[perturbation]\nxx = 'sin(pi*x)'\n");
    let e = export(
        &mut p,
        &[Quantity::H],
        None,
        "0,1,0,0\n",
        &Settings::default(),
    )
    .unwrap_err();
    let ExportError::Uncertified {
        total, failures, ..
    } = &e
    else {
        panic!("{e}")
    };
    assert_eq!((*total, failures[0].column.as_str()), (1, "h_xx"));
    let s = Settings {
        zero_tolerance: Some(1e-30),
        ..Settings::default()
    };
    let ev = export(&mut p, &[Quantity::H], None, "0,1,0,0\n", &s).unwrap();
    assert!(ev.table.row(0)[8].abs() <= 1e-30);
    assert_eq!(ev.columns[4].near_zero_rows, 1);
    // Beside a value of order 1 in the same column, the default zero tolerance accepts it.
    let ev = export(
        &mut p,
        &[Quantity::H],
        None,
        "0,1,0,0\n0,0.5,0,0\n",
        &Settings::default(),
    )
    .unwrap();
    assert!((ev.table.row(1)[8] - 1.0).abs() <= ev.columns[4].bound);
    assert!(ev.columns[4].bound <= 1e-15);
}

/// Two constants with the same f64 enclosure stay two constants in the program: at higher
/// precision x (1 + 10^-30) - x (1 + 2 10^-30) = -10^-30 x, not 0.
#[test]
fn issue9_constants_with_one_f64_enclosure_stay_apart() {
    let mut p = problem("[perturbation]\nxx = 'x*(1 + 1e-30) - x*(1 + 2e-30)'\n");
    let ev = export(
        &mut p,
        &[Quantity::H],
        None,
        "0,3,0,0\n",
        &Settings::default(),
    )
    .unwrap();
    let v = ev.table.row(0)[8];
    assert!((v / -3e-30 - 1.0).abs() < 1e-12, "{v}");
    // Beyond f64 intervals: the double-double tier (106 bits) resolves 10^-30.
    assert!(ev.columns[4].precision_bits >= 106, "{:?}", ev.columns[4]);
}

/// Issue 10: a phase that vanishes exactly at the point (x = t as doubles) gives the exact 0
/// in f64 intervals (exact 0 stays exact through mul, div, sin), so the value is certified
/// without raising the precision; beside it, rows evaluated in blocks of the interval
/// program agree with the definition.
#[test]
fn issue10_an_exactly_vanishing_phase_needs_no_multiprecision() {
    let mut p = problem("[parameters]\nd = 3.0\n[perturbation]\nxx = 'sin(2*pi*(x - t)/d)'\n");
    let mut rows = String::from("0.25,0.25,0,0\n");
    // x - t from 0.05 to 1.04: the phase stays inside (0, pi), away from other zeros.
    for k in 0..100 {
        rows.push_str(&format!("0.25,{},0,0\n", 0.3 + f64::from(k) * 0.01));
    }
    let ev = export(&mut p, &[Quantity::H], None, &rows, &Settings::default()).unwrap();
    assert_eq!(ev.table.row(0)[8], 0.0);
    assert_eq!(ev.columns[4].near_zero_rows, 0);
    assert_eq!(ev.columns[4].precision_bits, 53, "{:?}", ev.columns[4]);
    for r in 1..ev.table.rows() {
        let x = ev.table.row(r)[1];
        let want = (2.0 * std::f64::consts::PI * (x - 0.25) / 3.0).sin();
        assert!((ev.table.row(r)[8] - want).abs() <= 1e-14, "row {r}");
    }
}
