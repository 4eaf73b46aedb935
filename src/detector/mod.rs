//! The antenna pattern of a two-arm interferometer: how strongly a detector with arms along
//! two unit vectors `a`, `b` responds to each polarization of a plane wave from a direction.
//!
//! Model. The detector tensor is `D_ij = (a_i a_j - b_i b_j)/2`; the arms need not be
//! perpendicular. A wave `h^TT = h_+ e+ + h_x ex` strains it by `D_ij h^TT_ij = F_+ h_+ +
//! F_x h_x`, so `F_+ = D_ij e+_ij` and `F_x = D_ij ex_ij` with `e+ = u u - v v`,
//! `ex = u v + v u`.
//!
//! Convention (the one that reproduces the published L-shaped formulas
//! `F_+ = (1/2)(1 + cos^2 theta) cos 2phi cos 2psi - cos theta sin 2phi sin 2psi`,
//! `F_x = (1/2)(1 + cos^2 theta) cos 2phi sin 2psi + cos theta sin 2phi cos 2psi` for arms
//! along x and y; Thorne 1987 eq. (104), from memory): `(theta, phi)` are the polar angles of
//! the direction *from the detector to the source*,
//! `r = (sin theta cos phi, sin theta sin phi, cos theta)`; the wave propagates along
//! `k = -r`; with `e_theta`, `e_phi` the polar-angle basis of `r` (the basis of
//! [`crate::tt::polar_basis`], the one `project` uses), the polarization axes are
//! `u = cos psi e_theta + sin psi e_phi`, `v = sin psi e_theta - cos psi e_phi`, so that
//! `u x v = k`: psi turns `u` from `e_theta` towards `e_phi`. At `psi = 0`, `(u, v)` is the
//! default basis `project` gives along the propagation direction `n = k`, so
//! `D_ij h^TT_ij = F_+ h_plus + F_x h_cross` with `project`'s `h_plus`, `h_cross`.
//!
//! Sky and polarization averages. `F_+^2 + F_x^2 = 2 D_ij D_kl Lambda_ij,kl(r)` (the sum
//! over the two polarization tensors is twice the TT projector), and the isotropic moments
//! `<n_i n_j> = delta_ij/3`, `<n_i n_j n_k n_l> = (delta_ij delta_kl + delta_ik delta_jl +
//! delta_il delta_jk)/15` give `<Lambda_ij,kl> = delta_ik delta_jl/3 - delta_ij delta_kl/6 +
//! (...)/30`, hence for a traceless `D`
//! `<F_+^2 + F_x^2> = (4/5) D_ij D_ij = (2/5)(1 - (a.b)^2) = (2/5) sin^2(opening angle)`,
//! for every psi; 2/5 for perpendicular arms (common practice). Under
//! `psi -> psi + dpsi`, `(F_+, F_x)` turns by `2 dpsi`, so averaged over psi
//! `<F_+^2> = <F_x^2> = (1/5) sin^2(opening angle)` and `<F_+ F_x> = 0`.
//!
//! Key design decision: every statement is proved by the zero test on canonical forms, not
//! assumed: the rotation law in psi, the psi-independence of `F_+^2 + F_x^2`, the identity
//! with the TT projector, and the closed form of the average (computed here from the moments
//! for the given arms, then compared with `(2/5)(1 - (a.b)^2)`). The numbers are computed a
//! second way, in f64, from the vectors themselves ([`numeric`]), and the printed exact forms
//! are evaluated through the independent jet route (`crate::audit::expr`); the sky
//! averages also by a quadrature ([`numeric::quadrature`]). [`audit`] compares them.
//!
//! [`response`] gives the strain of such a detector for a file's perturbation, exact in t, by
//! the TT route and the tidal route, and with finite arms for a plane wave
//! ([`response_audit`] audits it).
//!
//! **Invariants:** nothing here prints or writes files; a statement is reported proved only
//! with a `Zero` verdict of the zero test.

pub mod audit;
pub mod map;
pub mod numeric;
pub mod response;
pub mod response_audit;

use crate::canon::{CResult, Form, Names, Q, Store};
use crate::tt::{
    Arg, ArgError, Mat3, Vec3, axis, cross, dot, lambda, parse_unit_vector, polar_basis,
    polarizations,
};
use crate::zero::{Sampling, Verdict, decide};

/// The convention, in one paragraph, for help texts and reports.
pub const CONVENTION: &str = "(theta, phi) are the polar angles of the direction from the \
    detector to the source, r = (sin theta cos phi, sin theta sin phi, cos theta); the wave \
    propagates along k = -r; u = cos psi e_theta + sin psi e_phi, v = sin psi e_theta - cos psi \
    e_phi with e_theta, e_phi the polar-angle basis of r (u x v = k); e+ = u u - v v, \
    ex = u v + v u; D = (a a - b b)/2, F_plus = D_ij e+_ij, F_cross = D_ij ex_ij \
    (for arms along x and y this gives F_plus = (1/2)(1 + cos^2 theta) cos 2phi cos 2psi - \
    cos theta sin 2phi sin 2psi, the form of Thorne 1987, from memory)";

/// A detector: its unit arms, its tensor and the cosine of its opening angle.
#[derive(Clone, Debug)]
pub struct Detector {
    /// The first arm.
    pub a: Vec3,
    /// The second arm.
    pub b: Vec3,
    /// `D_ij = (a_i a_j - b_i b_j)/2`.
    pub d: Mat3,
    /// `a . b`, the cosine of the opening angle.
    pub cos_opening: Form,
    /// The arms' entries as written (axis names expanded), for the numeric route.
    pub texts: [[String; 3]; 2],
}

/// The wave's geometry for given angles.
#[derive(Clone, Debug)]
pub struct WaveBasis {
    /// `r`, the unit vector towards the source.
    pub source: Vec3,
    /// The first polarization axis.
    pub u: Vec3,
    /// The second polarization axis.
    pub v: Vec3,
}

fn frac(n: i64, d: i64) -> Q {
    Q::new(n.into(), d.into())
}

fn limit(arg: &Arg<'_>, e: crate::canon::CanonError) -> ArgError {
    ArgError::whole(arg.name, arg.text, format!("the algebra stopped: {e}"))
}

/// `D_ij = (a_i a_j - b_i b_j)/2`.
///
/// # Errors
///
/// An algebra limit.
pub fn detector_tensor(store: &mut Store, a: &Vec3, b: &Vec3) -> CResult<Mat3> {
    let half = crate::canon::Coeff::rational(frac(1, 2));
    let mut d = [[store.zero(); 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            let aa = store.mul(a[i], a[j])?;
            let bb = store.mul(b[i], b[j])?;
            let diff = store.sub(aa, bb)?;
            d[i][j] = store.scale(diff, &half)?;
        }
    }
    Ok(d)
}

/// Arbitrary functions have no place in a detector's geometry.
fn no_functions(store: &mut Store, arg: &Arg<'_>, f: Form) -> Result<(), ArgError> {
    if let Some(name) = store.functions_used(f).first() {
        return Err(ArgError::whole(
            arg.name,
            arg.text,
            format!("`{name}` is not a known function"),
        )
        .with_help("use numbers, pi, sqrt, sin, cos, ... and symbols"));
    }
    Ok(())
}

/// The entries of a vector argument as written, with an axis name expanded.
fn entry_texts(arg: &Arg<'_>) -> Result<[String; 3], ArgError> {
    let text = axis(arg.text.trim()).unwrap_or(arg.text);
    let pieces = Arg::new(arg.name, text).split_exact(3, "a vector is given as ax,ay,az")?;
    Ok(std::array::from_fn(|i| pieces[i].text.clone()))
}

/// Reads the two arms: unit vectors (proved), not parallel (proved).
///
/// # Errors
///
/// A malformed vector, one not of unit length, or parallel arms (on `b`).
pub fn read_detector(
    store: &mut Store,
    sampling: &Sampling,
    arm_a: Arg<'_>,
    arm_b: Arg<'_>,
) -> Result<Detector, ArgError> {
    let names = Names::free();
    let help = "an arm is a unit vector, e.g. 1,0,0 or 1/2,sqrt(3)/2,0";
    let a = parse_unit_vector(store, &names, sampling, arm_a, "a", help)?;
    let b = parse_unit_vector(store, &names, sampling, arm_b, "b", help)?;
    for (arg, v) in [(&arm_a, &a), (&arm_b, &b)] {
        for f in v {
            no_functions(store, arg, *f)?;
        }
    }
    let c = cross(store, &a, &b).map_err(|e| limit(&arm_b, e))?;
    let c2 = dot(store, &c, &c).map_err(|e| limit(&arm_b, e))?;
    let parallel = match decide(store, c2, sampling) {
        Verdict::Nonzero(_) => None,
        Verdict::Zero => Some("the arms are parallel: a x b = 0".to_string()),
        Verdict::Undecided(why) => Some(format!(
            "cannot prove that the arms are not parallel: |a x b|^2 = {} ({why})",
            store.to_text(c2)
        )),
    };
    if let Some(message) = parallel {
        return Err(ArgError::whole(arm_b.name, arm_b.text, message)
            .with_help("the two arms must point along different lines, e.g. 1,0,0 and 0,1,0"));
    }
    let d = detector_tensor(store, &a, &b).map_err(|e| limit(&arm_b, e))?;
    let cos_opening = dot(store, &a, &b).map_err(|e| limit(&arm_b, e))?;
    Ok(Detector {
        a,
        b,
        d,
        cos_opening,
        texts: [entry_texts(&arm_a)?, entry_texts(&arm_b)?],
    })
}

/// Reads an angle: one constant expression (numbers, pi, symbols such as `th`).
///
/// # Errors
///
/// A parse error or an unknown function, pointing into the argument.
pub fn read_angle(store: &mut Store, arg: Arg<'_>) -> Result<Form, ArgError> {
    let pieces = arg.split_exact(1, "an angle is one expression, e.g. pi/3, 0.3 or th")?;
    let f = arg.build(store, &Names::free(), &pieces[0])?;
    no_functions(store, &arg, f)?;
    Ok(f)
}

/// The direction to the source and the polarization axes for `(theta, phi, psi)`.
///
/// # Errors
///
/// An algebra limit.
pub fn wave_basis(store: &mut Store, theta: Form, phi: Form, psi: Form) -> CResult<WaveBasis> {
    let (source, e_theta, e_phi) = polar_basis(store, theta, phi)?;
    let (s, c) = (store.sin(psi)?, store.cos(psi)?);
    let mut u = [store.zero(); 3];
    let mut v = [store.zero(); 3];
    for i in 0..3 {
        let ct = store.mul(c, e_theta[i])?;
        let sp = store.mul(s, e_phi[i])?;
        u[i] = store.add(ct, sp)?;
        let st = store.mul(s, e_theta[i])?;
        let cp = store.mul(c, e_phi[i])?;
        v[i] = store.sub(st, cp)?;
    }
    Ok(WaveBasis { source, u, v })
}

/// `(F_+, F_x) = (D_ij e+_ij, D_ij ex_ij)`: twice the polarizations of `D` in the basis.
///
/// # Errors
///
/// An algebra limit.
pub fn pattern(store: &mut Store, d: &Mat3, basis: &WaveBasis) -> CResult<(Form, Form)> {
    let (p, c) = polarizations(store, d, &basis.u, &basis.v)?;
    let two = store.int(2);
    Ok((store.mul(two, p)?, store.mul(two, c)?))
}

/// `D_ij s_ij`, the strain of the detector for a spatial tensor `s` (its response to
/// `h^TT`).
///
/// # Errors
///
/// An algebra limit.
pub fn contract(store: &mut Store, d: &Mat3, s: &Mat3) -> CResult<Form> {
    let mut terms = Vec::with_capacity(9);
    for i in 0..3 {
        for j in 0..3 {
            terms.push(store.mul(d[i][j], s[i][j])?);
        }
    }
    store.sum(&terms)
}

/// `<Lambda_ij,kl>` over the sphere of directions, from the isotropic moments
/// `<n_i n_j> = delta_ij/3` and `<n_i n_j n_k n_l> = (dd + dd + dd)/15` applied to
/// `Lambda_ij,kl = P_ik P_jl - P_ij P_kl/2`, `P = delta - n n`.
#[must_use]
pub fn mean_lambda(i: usize, j: usize, k: usize, l: usize) -> Q {
    let d = |x: usize, y: usize| i64::from(x == y);
    let m2 = |x: usize, y: usize| frac(d(x, y), 3);
    let m4 = frac(
        d(i, j) * d(k, l) + d(i, k) * d(j, l) + d(i, l) * d(j, k),
        15,
    );
    // <P_ab P_cd> = d_ab d_cd - d_ab <n_c n_d> - d_cd <n_a n_b> + <n_a n_b n_c n_d>.
    let pp = |a: usize, b: usize, c: usize, e: usize| {
        frac(d(a, b) * d(c, e), 1) - frac(d(a, b), 1) * m2(c, e) - frac(d(c, e), 1) * m2(a, b)
            + m4.clone()
    };
    pp(i, k, j, l) - pp(i, j, k, l) * frac(1, 2)
}

/// One statement proved (or not) by the zero test.
#[derive(Clone, Debug)]
pub struct Proof {
    /// A short key (JSON).
    pub key: &'static str,
    /// The statement, in words.
    pub statement: String,
    /// The zero test's verdict on the difference of its two sides.
    pub verdict: Verdict,
}

/// The averages over the sky and psi, exact.
#[derive(Clone, Debug)]
pub struct Averages {
    /// `<F_+^2 + F_x^2>`, the closed form `(2/5)(1 - (a.b)^2)`.
    pub sum: Form,
    /// `<F_+^2> = <F_x^2>`, half of it.
    pub each: Form,
    /// The same average computed from the moments for these arms.
    pub by_moments: Form,
}

/// Everything `antenna` computes exactly.
#[derive(Clone, Debug)]
pub struct Antenna {
    /// `F_+` at the given angles.
    pub plus: Form,
    /// `F_x` at the given angles.
    pub cross: Form,
    /// `F_+` for symbolic angles named by `general_names`.
    pub general_plus: Form,
    /// `F_x` for symbolic angles.
    pub general_cross: Form,
    /// The names of the symbolic angles theta, phi, psi of the general forms.
    pub general_names: [String; 3],
    /// The proved statements.
    pub proofs: Vec<Proof>,
    /// The averages.
    pub averages: Averages,
}

/// Names for the symbolic angles that the arms do not use.
#[must_use]
pub fn fresh_angle_names(store: &mut Store, det: &Detector) -> [String; 3] {
    let mut taken: Vec<String> = Vec::new();
    for f in det.a.iter().chain(&det.b) {
        taken.extend(store.free_symbols(*f).iter().map(|s| s.to_string()));
    }
    ["theta", "phi", "psi"].map(|n| {
        let mut n = n.to_string();
        while taken.contains(&n) {
            n.push('_');
        }
        n
    })
}

/// Computes the pattern at the angles, the general pattern, the proofs and the averages.
///
/// # Errors
///
/// An algebra limit.
pub fn analyse(
    store: &mut Store,
    det: &Detector,
    (theta, phi, psi): (Form, Form, Form),
    sampling: &Sampling,
) -> CResult<Antenna> {
    let basis = wave_basis(store, theta, phi, psi)?;
    let (plus, cross) = pattern(store, &det.d, &basis)?;

    let general_names = fresh_angle_names(store, det);
    let [th, ph, ps] = general_names.clone().map(|n| store.symbol(&n));
    let gb = wave_basis(store, th, ph, ps)?;
    let (gp, gc) = pattern(store, &det.d, &gb)?;
    let zero = store.zero();
    let b0 = wave_basis(store, th, ph, zero)?;
    let (p0, c0) = pattern(store, &det.d, &b0)?;

    let mut proofs = Vec::new();
    let mut prove = |store: &mut Store, key, statement: String, lhs: Form, rhs: Form| {
        let verdict = match store.sub(lhs, rhs) {
            Ok(diff) => decide(store, diff, sampling),
            Err(e) => crate::zero::undecided_from(&e),
        };
        proofs.push(Proof {
            key,
            statement,
            verdict,
        });
    };
    // The rotation law: (F_+, F_x)(psi) = R(2 psi) (F_+, F_x)(0).
    let two = store.int(2);
    let two_psi = store.mul(two, ps)?;
    let (s2, c2) = (store.sin(two_psi)?, store.cos(two_psi)?);
    let rot_plus = {
        let a = store.mul(p0, c2)?;
        let b = store.mul(c0, s2)?;
        store.sub(a, b)?
    };
    let rot_cross = {
        let a = store.mul(p0, s2)?;
        let b = store.mul(c0, c2)?;
        store.add(a, b)?
    };
    prove(
        store,
        "rotation_plus",
        "F_plus(psi) = F_plus(0) cos 2psi - F_cross(0) sin 2psi".into(),
        gp,
        rot_plus,
    );
    prove(
        store,
        "rotation_cross",
        "F_cross(psi) = F_plus(0) sin 2psi + F_cross(0) cos 2psi".into(),
        gc,
        rot_cross,
    );
    let sq = |store: &mut Store, p: Form, c: Form| -> CResult<Form> {
        let pp = store.mul(p, p)?;
        let cc = store.mul(c, c)?;
        store.add(pp, cc)
    };
    let total = sq(store, gp, gc)?;
    let total0 = sq(store, p0, c0)?;
    prove(
        store,
        "psi_independent",
        "F_plus^2 + F_cross^2 is independent of psi".into(),
        total,
        total0,
    );
    // F_+^2 + F_x^2 = 2 D_ij D_kl Lambda_ij,kl(r).
    let lam = lambda(store, &gb.source)?;
    let mut terms = Vec::new();
    for i in 0..3 {
        for j in 0..3 {
            for k in 0..3 {
                for l in 0..3 {
                    let dd = store.mul(det.d[i][j], det.d[k][l])?;
                    terms.push(store.mul(dd, lam[i][j][k][l])?);
                }
            }
        }
    }
    let dld = store.sum(&terms)?;
    let two_dld = store.mul(two, dld)?;
    prove(
        store,
        "projector_identity",
        "F_plus^2 + F_cross^2 = 2 D_ij D_kl Lambda_ij,kl(r)".into(),
        total,
        two_dld,
    );
    // The average from the moments, against the closed form.
    let mut terms = Vec::new();
    for i in 0..3 {
        for j in 0..3 {
            for k in 0..3 {
                for l in 0..3 {
                    let m = mean_lambda(i, j, k, l);
                    if m == frac(0, 1) {
                        continue;
                    }
                    let dd = store.mul(det.d[i][j], det.d[k][l])?;
                    let c = store.rational(m * frac(2, 1));
                    terms.push(store.mul(c, dd)?);
                }
            }
        }
    }
    let by_moments = store.sum(&terms)?;
    let cc = store.mul(det.cos_opening, det.cos_opening)?;
    let one = store.one();
    let sin2 = store.sub(one, cc)?;
    let two_fifths = store.rational(frac(2, 5));
    let sum = store.mul(two_fifths, sin2)?;
    prove(
        store,
        "sky_average",
        "<F_plus^2 + F_cross^2> over the sky (2 D_ij D_kl <Lambda_ij,kl>, isotropic moments) \
         = (2/5)(1 - (a.b)^2)"
            .into(),
        by_moments,
        sum,
    );
    let half = store.rational(frac(1, 2));
    let each = store.mul(half, sum)?;
    Ok(Antenna {
        plus,
        cross,
        general_plus: gp,
        general_cross: gc,
        general_names,
        proofs,
        averages: Averages {
            sum,
            each,
            by_moments,
        },
    })
}

#[cfg(test)]
mod tests;
