//! The strain of a two-arm detector for a perturbation, exact in t, by two independent routes
//! and, for a plane wave, with the light travel time along arms of finite length.
//!
//! Model. The detector sits at `x0` with unit arms `a`, `b` and `D = (a a - b b)/2`.
//!
//! 1. *TT route* (long-wavelength limit): `s(t) = D_ij h^TT_ij(t, x0)`, with `h^TT` the TT
//!    projection of the file's `h` along the propagation direction `n` ([`crate::tt`]).
//! 2. *Tidal route* (gauge invariant): geodesic deviation `d^2 xi^i/dt^2 = -R^i_0j0 xi^j`
//!    (MTW sign) for a test mass at `x0 + L a` relative to one at `x0` gives the fractional
//!    change of the arm's length `d^2 (dL_a / L)/dt^2 = -a^i a^j R_0i0j`, so the Michelson
//!    signal `dL_a/L - dL_b/L` has `d^2 s/dt^2 = -(a a - b b)^ij R_0i0j = -2 D^ij R_0i0j`
//!    at `x0`. (For a TT wave `R_0i0j = -(1/2) d_t^2 h_ij`, so this is `D_ij d_t^2 h_ij`, route
//!    1 again; common practice.) `s` is its double antiderivative in t, defined up to
//!    `c0 + c1 t`; the antiderivative is exact (sin, cos, exp of linear phases, powers of t,
//!    and `F^(n)` of `s t + b` integrating to `F^(n-1)`, [`crate::gauge::plane`]).
//!
//!    The routes agree when `d^2/dt^2` of route 1 equals `-2 D^ij R_0i0j`, decided by the
//!    zero test: a proof, a certified witness, or undecided. Route 1 depends on the gauge
//!    and on `n` and is only the long-wavelength response to a wave along `n`; route 2 does
//!    not depend on either. So they agree for a vacuum plane wave along `n` in any gauge
//!    and disagree (certified) for, say, a static tidal field.
//! 3. *Finite arms* for a plane wave `h(t - n.x)`: a photon leaving `x0` at `t - 2L` along
//!    `a`, reflected at `x0 + L a` at `t - L` and back at `x0` at `t`, in TT gauge (`h^TT`
//!    along `n`, in which free mirrors keep their coordinates; `ds^2 = 0` gives
//!    `dt = (1 + (1/2) h^TT_aa) dl`), is delayed by
//!    `dT_a = (1/2) int_0^L H_a(u0 - 2L + l (1 - n.a)) dl +
//!    (1/2) int_0^L H_a(u0 - L (1 + n.a) + l (1 + n.a)) dl` with `H_a(u) = a_i a_j h^TT_ij` as a function of `u = t - n.x` and
//!    `u0 = t - n.x0`; with `G' = H_a` this is
//!    `dT_a = [G(u0 - L(1 + n.a)) - G(u0 - 2L)]/(2 (1 - n.a)) + [G(u0) - G(u0 - L(1 + n.a))]/
//!    (2 (1 + n.a))` (the one-way form `[G(..) - G(..)]/(2 (1 - n.a))` is the standard
//!    single-arm response, e.g. Estabrook & Wahlquist 1975 for Doppler tracking, from memory;
//!    derived here as stated). The strain is `s_L(t) = (dT_a - dT_b)/(2L)`; an arm along the
//!    wave (`1 -+ n.a = 0`, proved) uses the limit `(L/2) H_a` of that leg. As `L -> 0`,
//!    `s_L -> D_ij h^TT_ij(t, x0)`: proved here with a symbolic `L` by the zero test, as
//!    `(dT_a - dT_b)|_(L=0) = 0` and `d(dT_a - dT_b)/dL|_(L=0) = 2 D_ij h^TT_ij(t, x0)`.
//!
//! Key design decision: the agreement is a statement about second derivatives, decided by
//! the zero test, so it never rests on the integrator (which only makes the strain
//! printable); every antiderivative is verified by differentiating it back.
//!
//! **Invariant:** nothing printed; "agree" only with a `Zero` verdict.

use super::{Detector, contract};
use crate::canon::{CResult, Form, KernelId, Store};
use crate::gauge::plane::{PlaneError, PlaneWave, find_wave};
use crate::tensor::{Linearized, Sym4};
use crate::tt::{Direction, Mat3, Vec3, dot, polarizations, project_perturbation};
use crate::zero::{Sampling, Verdict, decide};
use rustc_hash::FxHashMap;

/// Where the detector is and what it is.
#[derive(Clone, Debug)]
pub struct Setup {
    /// The arms and `D`.
    pub detector: Detector,
    /// The corner `x0`, exact constants.
    pub at: Vec3,
    /// The propagation direction and its polarization basis.
    pub direction: Direction,
}

/// The TT route.
#[derive(Clone, Debug)]
pub struct TtRoute {
    /// `D_ij h^TT_ij(t, x0)`.
    pub strain: Form,
    /// `h_plus(t, x0)` in the direction's basis.
    pub plus: Form,
    /// `h_cross(t, x0)`.
    pub cross: Form,
    /// `F_plus = D_ij (u u - v v)_ij` for the direction's basis.
    pub f_plus: Form,
    /// `F_cross = D_ij (u v + v u)_ij`.
    pub f_cross: Form,
    /// The TT part (all x), for the finite-arm route.
    pub tt: Mat3,
}

/// The tidal route.
#[derive(Clone, Debug)]
pub struct TidalRoute {
    /// `E_ij = R_0i0j(t, x0)`, row by row (i, j in x, y, z).
    pub electric: Mat3,
    /// `d^2 s/dt^2 = -2 D_ij R_0i0j(t, x0)`.
    pub second: Form,
    /// A double antiderivative in t (the strain up to `c0 + c1 t`), or why none was found.
    pub strain: Result<Form, String>,
}

/// The finite-arm response of a plane wave.
#[derive(Clone, Debug)]
pub struct FiniteArm {
    /// The arm length as given.
    pub length: Form,
    /// `s_L(t) = (dT_a - dT_b)/(2L)` at the given length.
    pub strain: Form,
    /// The round-trip delays `dT_a`, `dT_b` at the given length.
    pub delays: [Form; 2],
    /// The name of the symbolic length of the limit proof.
    pub symbol: String,
    /// `(dT_a - dT_b)(L = 0) = 0`.
    pub limit_value: Verdict,
    /// `d(dT_a - dT_b)/dL (L = 0) = 2 D_ij h^TT_ij(t, x0)`.
    pub limit_slope: Verdict,
}

/// Everything `response` computes exactly.
#[derive(Clone, Debug)]
pub struct Response {
    /// Route 1.
    pub tt: TtRoute,
    /// Route 2.
    pub tidal: TidalRoute,
    /// The zero test on `d^2/dt^2 (route 1) + 2 D_ij R_0i0j(t, x0)`.
    pub agreement: Verdict,
    /// `(c0, c1)` with route 1 `= ` route 2 `+ c0 + c1 t`, once they agree and route 2 is
    /// integrated.
    pub constants: Option<(Form, Form)>,
}

/// The kernels of t, x, y, z.
fn coords(store: &mut Store) -> [KernelId; 4] {
    crate::tensor::COORDS.map(|c| store.symbol_kernel(c))
}

/// `f` at the spatial point `at`.
///
/// # Errors
///
/// An algebra limit.
pub fn at_point(store: &mut Store, f: Form, at: &Vec3) -> CResult<Form> {
    let c = coords(store);
    let mut subs = FxHashMap::default();
    for i in 0..3 {
        subs.insert(c[i + 1], at[i]);
    }
    store.substitute(f, &subs)
}

/// `f` with t replaced by `by`.
fn shift_t(store: &mut Store, f: Form, by: Form) -> CResult<Form> {
    let c = coords(store);
    let mut subs = FxHashMap::default();
    subs.insert(c[0], by);
    store.substitute(f, &subs)
}

fn zero_test(store: &mut Store, lhs: Form, rhs: Form, sampling: &Sampling) -> Verdict {
    match store.sub(lhs, rhs) {
        Ok(d) => decide(store, d, sampling),
        Err(e) => crate::zero::undecided_from(&e),
    }
}

fn plane(e: PlaneError) -> String {
    e.to_string()
}

/// Integrates a function of t alone twice in t, exactly.
///
/// # Errors
///
/// An integrand outside the integrator's class (see [`crate::gauge::plane`]), an algebra
/// limit: the reason.
pub fn integrate_twice(store: &mut Store, f: Form, sampling: &Sampling) -> Result<Form, String> {
    let z = store.zero();
    let one = store.one();
    let mut h: Sym4 = [[z; 4]; 4];
    h[0][0] = f;
    let wave = find_wave(store, sampling, &h, Some([one, z, z, z])).map_err(plane)?;
    let first = wave.integrate(store, f, "d^2 s/dt^2").map_err(plane)?;
    wave.integrate(store, first, "ds/dt").map_err(plane)
}

/// Routes 1 and 2 and their agreement.
///
/// # Errors
///
/// An algebra limit.
pub fn respond(
    store: &mut Store,
    h: &Sym4,
    setup: &Setup,
    sampling: &Sampling,
) -> CResult<Response> {
    let d = &setup.detector.d;
    let at = &setup.at;
    // Route 1.
    let proj = project_perturbation(store, h, &setup.direction)?;
    let mut tt0 = proj.tt;
    for row in &mut tt0 {
        for f in row.iter_mut() {
            *f = at_point(store, *f, at)?;
        }
    }
    let strain = contract(store, d, &tt0)?;
    let (plus, cross) = polarizations(store, &tt0, &setup.direction.u, &setup.direction.v)?;
    let (u, v) = (setup.direction.u, setup.direction.v);
    let basis = super::WaveBasis {
        source: setup.direction.n,
        u,
        v,
    };
    let (f_plus, f_cross) = super::pattern(store, d, &basis)?;
    // Route 2.
    let mut lin = Linearized::new(store, *h);
    let mut electric = [[store.zero(); 3]; 3];
    for i in 0..3 {
        for j in i..3 {
            let r = lin.riemann_component(store, [0, i + 1, 0, j + 1])?;
            let r = at_point(store, r, at)?;
            electric[i][j] = r;
            electric[j][i] = r;
        }
    }
    let de = contract(store, d, &electric)?;
    let minus_two = store.int(-2);
    let second = store.mul(minus_two, de)?;
    let tidal_strain = integrate_twice(store, second, sampling);
    // Agreement: d^2/dt^2 of route 1 against route 2's second derivative.
    let t = coords(store)[0];
    let d1 = store.diff(strain, t)?;
    let d2 = store.diff(d1, t)?;
    let agreement = zero_test(store, d2, second, sampling);
    let constants = match (&agreement, &tidal_strain) {
        (Verdict::Zero, Ok(s2)) => {
            let diff = store.sub(strain, *s2)?;
            let zero = store.zero();
            let c0 = shift_t(store, diff, zero)?;
            let dd = store.diff(diff, t)?;
            let c1 = shift_t(store, dd, zero)?;
            Some((c0, c1))
        }
        _ => None,
    };
    Ok(Response {
        tt: TtRoute {
            strain,
            plus,
            cross,
            f_plus,
            f_cross,
            tt: proj.tt,
        },
        tidal: TidalRoute {
            electric,
            second,
            strain: tidal_strain,
        },
        agreement,
        constants,
    })
}

/// Proves that `h` is a function of `t - n.x` alone: the plane wave of the finite-arm route.
///
/// # Errors
///
/// Not such a function (with a certified witness), or undecided: the reason.
pub fn plane_wave_along(
    store: &mut Store,
    h: &Sym4,
    n: &Vec3,
    sampling: &Sampling,
) -> Result<PlaneWave, PlaneError> {
    let one = store.one();
    let k = [one, store.neg(n[0])?, store.neg(n[1])?, store.neg(n[2])?];
    find_wave(store, sampling, h, Some(k))
}

/// One arm's round-trip delay `dT` for the arm `arm` of length `len` (see the module doc).
fn delay(
    store: &mut Store,
    wave: &PlaneWave,
    tt: &Mat3,
    arm: &Vec3,
    (n, at): (&Vec3, &Vec3),
    len: Form,
    sampling: &Sampling,
) -> Result<Form, PlaneError> {
    let mut aa = [[store.zero(); 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            aa[i][j] = store.mul(arm[i], arm[j])?;
        }
    }
    let h_a = contract(store, &aa, tt)?;
    let g = wave.integrate(store, h_a, "a_i a_j h^TT_ij")?;
    let t = store.symbol("t");
    let na = dot(store, n, arm)?;
    let one = store.one();
    let half = store.rational(crate::canon::Q::new(1.into(), 2.into()));
    // H_a at phase u0 - c, at the corner.
    let h_at = |store: &mut Store, f: Form, c: Form| -> CResult<Form> {
        let tc = store.sub(t, c)?;
        let f = shift_t(store, f, tc)?;
        at_point(store, f, at)
    };
    // The leg with slope `k` = 1 -+ n.a, from phase u0 - start to u0 - start + k L.
    let leg = |store: &mut Store, k: Form, start: Form| -> Result<Form, PlaneError> {
        match decide(store, k, sampling) {
            Verdict::Zero => {
                // The photon rides the wave: H is constant along the leg.
                let v = h_at(store, h_a, start)?;
                let lv = store.mul(len, v)?;
                Ok(store.mul(half, lv)?)
            }
            Verdict::Nonzero(_) => {
                let kl = store.mul(k, len)?;
                let end = store.sub(start, kl)?;
                let g1 = h_at(store, g, end)?;
                let g0 = h_at(store, g, start)?;
                let dg = store.sub(g1, g0)?;
                let two_k = store.add(k, k)?;
                Ok(store.div(dg, two_k)?)
            }
            Verdict::Undecided(why) => Err(PlaneError::Undecided(format!(
                "cannot decide whether the arm lies along the wave (1 -+ n.a = 0): {why}"
            ))),
        }
    };
    let two_l = store.add(len, len)?;
    let out_k = store.sub(one, na)?;
    let back_k = store.add(one, na)?;
    let out = leg(store, out_k, two_l)?;
    let back_start = store.mul(back_k, len)?;
    let back = leg(store, back_k, back_start)?;
    Ok(store.add(out, back)?)
}

/// The finite-arm route for a plane wave along `n` (see the module doc), with the limit
/// `L -> 0` proved on a symbolic length named `symbol`.
///
/// # Errors
///
/// An integrand outside the integrator's class, an undecided arm direction, an algebra limit.
pub fn finite_arm(
    store: &mut Store,
    wave: &PlaneWave,
    setup: &Setup,
    tt: &Mat3,
    strain0: Form,
    (length, symbol): (Form, &str),
    sampling: &Sampling,
) -> Result<FiniteArm, PlaneError> {
    let det = &setup.detector;
    let geo = (&setup.direction.n, &setup.at);
    let l = store.symbol(symbol);
    let ta = delay(store, wave, tt, &det.a, geo, l, sampling)?;
    let tb = delay(store, wave, tt, &det.b, geo, l, sampling)?;
    let dt = store.sub(ta, tb)?;
    // The limit L -> 0.
    let lk = store.symbol_kernel(symbol);
    let zero = store.zero();
    let mut at0 = FxHashMap::default();
    at0.insert(lk, zero);
    let v0 = store.substitute(dt, &at0)?;
    let limit_value = decide(store, v0, sampling);
    let slope = store.diff(dt, lk)?;
    let slope0 = store.substitute(slope, &at0)?;
    let twice = store.add(strain0, strain0)?;
    let limit_slope = zero_test(store, slope0, twice, sampling);
    // At the given length.
    let mut at_len = FxHashMap::default();
    at_len.insert(lk, length);
    let delays = [
        store.substitute(ta, &at_len)?,
        store.substitute(tb, &at_len)?,
    ];
    let d = store.sub(delays[0], delays[1])?;
    let two_len = store.add(length, length)?;
    let strain = store.div(d, two_len)?;
    Ok(FiniteArm {
        length,
        strain,
        delays,
        symbol: symbol.to_string(),
        limit_value,
        limit_slope,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::canon::Names;

    fn same(st: &mut Store, a: Form, b: Form) -> bool {
        let d = st.sub(a, b).unwrap();
        st.is_zero(d)
    }

    fn build(st: &mut Store, text: &str) -> Form {
        let e = crate::parse::parse(text).unwrap();
        st.build(&e, &Names::free()).unwrap()
    }

    /// Double antiderivatives in t, checked by differentiating twice (the integrator also
    /// verifies each step).
    #[test]
    fn integrates_twice_in_t() {
        let mut st = Store::new();
        let s = Sampling::default();
        let t = st.symbol_kernel("t");
        for (f, want) in [
            ("-w^2*a*cos(w*t)", "a*cos(w*t)"),
            ("F''(t - 3)", "F(t - 3)"),
            ("6*t + 2", "t^3 + t^2"),
            ("exp(2*t)", "exp(2*t)/4"),
        ] {
            let ff = build(&mut st, f);
            let g = integrate_twice(&mut st, ff, &s).unwrap();
            let d = st.diff(g, t).unwrap();
            let dd = st.diff(d, t).unwrap();
            let back = build(&mut st, f);
            assert!(same(&mut st, dd, back), "{f}");
            let w = build(&mut st, want);
            let ok = same(&mut st, g, w);
            assert!(ok, "{f}: {}", st.to_text(g));
        }
        // Outside the class: a reason, not a guess.
        let f = build(&mut st, "t*sin(t)");
        assert!(integrate_twice(&mut st, f, &s).is_err());
    }

    /// checks.md 7d (MTW sign): for h_xx = -h_yy = h_+(t - z), R_0x0x = -(1/2) h_+'', so
    /// -2 D_ij R_0i0j = h_+'' for arms x, y: the tidal route's second derivative is the TT
    /// route's.
    #[test]
    fn the_tidal_sign_matches_geodesic_deviation() {
        let mut st = Store::new();
        let s = Sampling::default();
        let z = st.zero();
        let mut h = [[z; 4]; 4];
        h[1][1] = build(&mut st, "F(t - z)");
        h[2][2] = build(&mut st, "-F(t - z)");
        let mut lin = Linearized::new(&mut st, h);
        let r = lin.riemann_component(&mut st, [0, 1, 0, 1]).unwrap();
        let want = build(&mut st, "-F''(t - z)/2");
        assert!(same(&mut st, r, want));
        let names = Names::free();
        let dir = crate::tt::parse_direction(
            &mut st,
            &names,
            &s,
            crate::tt::Arg::new("--direction", "z"),
            false,
        )
        .unwrap();
        let (x, y) = (
            crate::tt::Arg::new("--arm-a", "x"),
            crate::tt::Arg::new("--arm-b", "y"),
        );
        let detector = super::super::read_detector(&mut st, &s, x, y).unwrap();
        let setup = Setup {
            detector,
            at: [z; 3],
            direction: dir,
        };
        let resp = respond(&mut st, &h, &setup, &s).unwrap();
        assert_eq!(resp.agreement, Verdict::Zero);
        let f = build(&mut st, "F(t)");
        assert!(same(&mut st, resp.tt.strain, f));
        let f2 = build(&mut st, "F''(t)");
        assert!(same(&mut st, resp.tidal.second, f2));
    }
}
