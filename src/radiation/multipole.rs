//! The multipoles after the mass quadrupole, exactly: the mass octupole, the current
//! quadrupole, the far-zone field they add, and the linear momentum the waves carry away
//! (the recoil) from their interference with the mass quadrupole.
//!
//! Conventions (G = c = 1; moments about the coordinate origin; the normalisation of
//! Thorne 1980, Rev. Mod. Phys. 52, 299, eqs. (5.32a,b), from memory):
//! - mass octupole `Q_ijk = STF(I_ijk)`, `I_ijk = sum_A m_A x_A^i x_A^j x_A^k`; for a symmetric
//!   `I`, `STF(I)_ijk = I_ijk - (delta_ij I_kaa + delta_ik I_jaa + delta_jk I_iaa)/5`;
//! - current quadrupole `S_ij = STF(J_ij)`, `J_ij = sum_A m_A x_A^i (x_A x v_A)^j`,
//!   `STF(J)_ij = (J_ij + J_ji)/2 - delta_ij J_aa/3` (`J_aa = sum m x.(x x v) = 0`). This is
//!   Thorne's `S_ij` (his `S_{A_l} = STF int eps_{a_l p q} x_{A_{l-1} p} rho v_q`) and, from
//!   memory, Kidder 1995's (Phys. Rev. D 52, 821) `J^ij` for point masses.
//! - far-zone field to the next order in the velocity, at retarded time `t - r`:
//!   `h^TT_ij = (1/r) Lambda_ij,kl(n) [2 ddQ_kl + (2/3) n_a dddQ_kla +
//!   (4/3) (eps_akm n_a ddS_lm + eps_alm n_a ddS_km)]`. Derived here from
//!   `hbar^ij = (4/r) int T^ij(t - r + n.x) d^3x` to first order in `n.x`, with
//!   `int T^ij x^k = (1/6) dddI_ijk + (1/3)(eps_kia dJ_ja/dt + eps_kja dJ_ia/dt)` (from
//!   `d_mu T^mu nu = 0`); the trace parts of `I_ijk` and the antisymmetric part of `J_ij`
//!   drop out under the TT projection. It agrees with Thorne's eq. (4.8) (from memory).
//! - linear momentum carried away by the waves (Thorne 1980 eq. (4.20'), from memory):
//!   `dP_i/dt = (2/63) d^4Q_iab d^3Q_ab + (16/45) eps_ipq d^3Q_pa d^3S_qa`,
//!   `(r^2/(32 pi)) oint n_i dh^TT_ab/dt dh^TT_ab/dt dOmega` of the field above (only the
//!   quadrupole-octupole and quadrupole-current cross terms survive the angular integral:
//!   every other product is even in n). The source recoils at `-dP/dt`. The coefficients and
//!   the sign are checked against that integral by quadrature (unit tests here and
//!   `tests/sympy/radiation_check.py`, which builds the field from the moments of the momentum
//!   density instead) and against Fitchett 1983 (MNRAS 203, 1049) for circular binaries.
//!
//! Rigid bodies (`[[body]]` with `moments`): a body of mass m centred at `c(t)` whose mass
//! elements sit at `c + R(t) y0` (`R` the rotation of [`super::rigid_second_moment`]). Its
//! moments about the origin follow from those about its centre: the first vanishes (c is its
//! centre of mass), the second is `Sigma = R D0 R^T` with `D0 = diag(tr/2 - I_a)`, and the
//! third is **assumed to vanish**: the body is taken reflection-symmetric in its three
//! principal planes ([`RIGID_ASSUMPTION`], printed by the command). Then
//! `I_ijk += c_i Sigma_jk + c_j Sigma_ik + c_k Sigma_ij` and
//! `J_ij += eps_jab (c_i K_ab + c_a K_ib + dc_b/dt Sigma_ia)` with
//! `K_ab = int rho y_a dy_b/dt = (R D0 dR^T/dt)_ab` (whose antisymmetric part is the spin).
//! Principal moments that change with time describe no rigid motion: [`refusal`] says so and
//! the next order is not computed.
//!
//! Key design decision: the moments are built from the bodies as exact forms and every
//! derived quantity is a polynomial in their derivatives, so a printed recoil is an identity,
//! not a fit; the independent routes (the audit's definitions from the bodies' texts, the
//! quadrature of the field) never see these formulas' code.
//!
//! **Invariants:** exact forms only; never prints; nothing of a rigid body is dropped
//! silently (its third moments are the stated assumption).

use super::{Radiation, Wave};
use crate::canon::{CResult, Coeff, Form, KernelId, Q, Store};
use crate::problem::{Body, Rigid};
use crate::tt::{Mat3, Vec3};

/// A 3x3x3 array of forms (symmetric where it holds a moment).
pub type Ten3 = [[[Form; 3]; 3]; 3];

/// What is assumed of a rigid body's mass distribution, said wherever a rigid body enters.
pub const RIGID_ASSUMPTION: &str = "a rigid body is taken reflection-symmetric in its three \
    principal planes, so its own third moments about its centre vanish; its second moment and \
    its spin enter the octupole and the current quadrupole through its centre's position and \
    velocity";

/// The sorted index triples `i <= j <= k`, the ten components of a symmetric rank-3 tensor.
pub const IJK: [(usize, usize, usize); 10] = [
    (0, 0, 0),
    (0, 0, 1),
    (0, 0, 2),
    (0, 1, 1),
    (0, 1, 2),
    (0, 2, 2),
    (1, 1, 1),
    (1, 1, 2),
    (1, 2, 2),
    (2, 2, 2),
];

/// `eps_ijk`.
#[must_use]
pub fn levi_civita(i: usize, j: usize, k: usize) -> i64 {
    if i == j || j == k || i == k {
        0
    } else if (i + 1) % 3 == j {
        1
    } else {
        -1
    }
}

fn rational(n: i64, d: i64) -> Coeff {
    Coeff::rational(Q::new(n.into(), d.into()))
}

/// Why the octupole and the current quadrupole of `bodies` are not computed, if they are not:
/// a rigid body whose principal moments are not proved constant in `t` (no rigid motion
/// describes it, so its spin is not defined by them).
#[must_use]
pub fn refusal(store: &mut Store, bodies: &[Body], t: KernelId) -> Option<String> {
    for b in bodies {
        let Some(r) = &b.rigid else { continue };
        for (m, text) in r.moments.iter().zip(&r.texts.0) {
            let constant = store.diff(*m, t).is_ok_and(|d| store.is_zero(d));
            if !constant {
                return Some(format!(
                    "the principal moment {text} of {} is not proved constant in time; a body \
                     whose moments change is not rigid, and its current quadrupole needs its \
                     internal motion, which the file does not give",
                    b.label
                ));
            }
        }
    }
    None
}

/// The rotation `R` of a rigid body, Rodrigues' formula
/// `R = cos a 1 + sin a [k]_x + (1 - cos a) k k` for the angle a about the unit axis k.
///
/// # Errors
///
/// An algebra limit.
pub fn rigid_rotation(store: &mut Store, r: &Rigid) -> CResult<Mat3> {
    let (c, s) = (store.cos(r.angle)?, store.sin(r.angle)?);
    let one = store.one();
    let one_minus_c = store.sub(one, c)?;
    let k = r.axis;
    let z = store.zero();
    let mut rot = [[z; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            let kk = store.mul(k[i], k[j])?;
            let mut v = store.mul(one_minus_c, kk)?;
            if i == j {
                v = store.add(v, c)?;
            } else {
                // [k]_x: (k x v)_i = eps_ilj k_l v_j.
                let l = 3 - i - j;
                let t = store.mul(s, k[l])?;
                let t = store.scale(t, &Coeff::int(levi_civita(i, l, j)))?;
                v = store.add(v, t)?;
            }
            rot[i][j] = v;
        }
    }
    Ok(rot)
}

/// `D0_a = (I1 + I2 + I3)/2 - I_a`, the second moments `int rho y0_a^2` along the principal
/// axes.
fn principal_second_moments(store: &mut Store, r: &Rigid) -> CResult<[Form; 3]> {
    let trace = store.sum(&r.moments)?;
    let half = store.scale(trace, &rational(1, 2))?;
    let mut out = [half; 3];
    for (slot, &m) in out.iter_mut().zip(&r.moments) {
        *slot = store.sub(half, m)?;
    }
    Ok(out)
}

/// The STF part of a symmetric rank-3 tensor.
fn stf3(store: &mut Store, a: &Ten3) -> CResult<Ten3> {
    let mut trace = [store.zero(); 3];
    for (k, slot) in trace.iter_mut().enumerate() {
        *slot = store.sum(&[a[0][0][k], a[1][1][k], a[2][2][k]])?;
    }
    let fifth = rational(-1, 5);
    let mut out = *a;
    for &(i, j, k) in &IJK {
        let mut terms: Vec<(&Coeff, Form)> = Vec::with_capacity(4);
        let one = Coeff::one();
        terms.push((&one, a[i][j][k]));
        if i == j {
            terms.push((&fifth, trace[k]));
        }
        if i == k {
            terms.push((&fifth, trace[j]));
        }
        if j == k {
            terms.push((&fifth, trace[i]));
        }
        let v = store.linear(&terms)?;
        set_symmetric(&mut out, (i, j, k), v);
    }
    Ok(out)
}

/// Writes `v` into every permutation of `(i, j, k)`.
fn set_symmetric(t: &mut Ten3, (i, j, k): (usize, usize, usize), v: Form) {
    for (a, b, c) in [
        (i, j, k),
        (i, k, j),
        (j, i, k),
        (j, k, i),
        (k, i, j),
        (k, j, i),
    ] {
        t[a][b][c] = v;
    }
}

/// The mass octupole and the current quadrupole of a set of bodies, with their time
/// derivatives (memoised), and what they radiate at the next order.
pub struct NextOrder {
    clock: super::Clock,
    /// The rotation from the bodies' frame into space (see [`Radiation::of_problem`]).
    frame: Option<Mat3>,
    /// `Q_ijk = STF sum m x_i x_j x_k` (symmetric, trace-free).
    pub octupole: Ten3,
    /// `S_ij = STF sum m x_i (x x v)_j` (symmetric, trace-free).
    pub current: Mat3,
    /// Whether a rigid body contributes (so [`RIGID_ASSUMPTION`] applies).
    pub rigid: bool,
    octupole_derivatives: Vec<Ten3>,
    current_derivatives: Vec<Mat3>,
}

impl NextOrder {
    /// The moments of `bodies`, functions of the time coordinate named `t_name`. Call
    /// [`refusal`] first: rigid bodies are assumed to have constant principal moments.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn new(store: &mut Store, bodies: &[Body], t_name: &str) -> CResult<NextOrder> {
        let clock = super::Clock::time(store, t_name);
        NextOrder::with_clock(store, bodies, clock)
    }

    /// The moments of `bodies`, functions of the clock's variable (see [`NextOrder::new`]).
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn with_clock(
        store: &mut Store,
        bodies: &[Body],
        clock: super::Clock,
    ) -> CResult<NextOrder> {
        let t = clock.var;
        let z = store.zero();
        let mut cube: Ten3 = [[[z; 3]; 3]; 3];
        let mut j_terms: [[Vec<Form>; 3]; 3] = Default::default();
        for b in bodies {
            let x = b.position;
            let mut v = [z; 3];
            for (slot, &xi) in v.iter_mut().zip(&x) {
                *slot = clock.d_dt(store, xi)?;
            }
            for &(i, j, k) in &IJK {
                let xx = store.mul(x[i], x[j])?;
                let xxx = store.mul(xx, x[k])?;
                let m = store.mul(b.mass, xxx)?;
                let s = store.add(cube[i][j][k], m)?;
                set_symmetric(&mut cube, (i, j, k), s);
            }
            // m x_i (x x v)_j, (x x v)_j = x_a v_b - x_b v_a with (j, a, b) cyclic.
            let mut xv = [z; 3];
            for (j, slot) in xv.iter_mut().enumerate() {
                let (a, c) = ((j + 1) % 3, (j + 2) % 3);
                let p = store.mul(x[a], v[c])?;
                let q = store.mul(x[c], v[a])?;
                *slot = store.sub(p, q)?;
            }
            for i in 0..3 {
                let mx = store.mul(b.mass, x[i])?;
                for j in 0..3 {
                    j_terms[i][j].push(store.mul(mx, xv[j])?);
                }
            }
            if let Some(r) = &b.rigid {
                rigid_terms(store, (&x, &v), r, t, &mut cube, &mut j_terms)?;
            }
        }
        let octupole = stf3(store, &cube)?;
        let mut j = [[z; 3]; 3];
        for i in 0..3 {
            for k in 0..3 {
                j[i][k] = store.sum(&j_terms[i][k])?;
            }
        }
        let trace = store.sum(&[j[0][0], j[1][1], j[2][2]])?;
        let mut current = [[z; 3]; 3];
        for a in 0..3 {
            for b in a..3 {
                let s = store.add(j[a][b], j[b][a])?;
                let mut terms = vec![(rational(1, 2), s)];
                if a == b {
                    terms.push((rational(-1, 3), trace));
                }
                let refs: Vec<(&Coeff, Form)> = terms.iter().map(|(c, f)| (c, *f)).collect();
                let v = store.linear(&refs)?;
                current[a][b] = v;
                current[b][a] = v;
            }
        }
        Ok(NextOrder {
            clock,
            frame: None,
            octupole,
            current,
            rigid: bodies.iter().any(|b| b.rigid.is_some()),
            octupole_derivatives: vec![octupole],
            current_derivatives: vec![current],
        })
    }

    /// The next order of a problem's bodies with their clock, in an eccentric orbit's own
    /// frame when it has orientation angles (see [`Radiation::of_problem`]): the moments are
    /// turned into space, the momentum flux as a vector, the field along `R^T n`.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn of_problem(
        store: &mut Store,
        bodies: &[Body],
        orbit: Option<&crate::problem::KeplerOrbit>,
        clock: super::Clock,
    ) -> CResult<NextOrder> {
        let Some((plane, r)) = orbit.and_then(|o| o.frame.as_ref()) else {
            return NextOrder::with_clock(store, bodies, clock);
        };
        let mut next = NextOrder::with_clock(store, plane, clock)?;
        next.current = super::turn_matrix(store, r, &next.current)?;
        let o = next.octupole;
        for &(i, j, k) in &IJK {
            let mut terms = Vec::new();
            for a in 0..3 {
                for b in 0..3 {
                    let rr = store.mul(r[i][a], r[j][b])?;
                    for c in 0..3 {
                        let rrr = store.mul(rr, r[k][c])?;
                        terms.push(store.mul(rrr, o[a][b][c])?);
                    }
                }
            }
            let v = store.sum(&terms)?;
            set_symmetric(&mut next.octupole, (i, j, k), v);
        }
        next.frame = Some(*r);
        Ok(next)
    }

    /// `d^k Q_ijk / dt^k` (memoised; in the bodies' own frame).
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn octupole_derivative(&mut self, store: &mut Store, k: usize) -> CResult<Ten3> {
        while self.octupole_derivatives.len() <= k {
            let last = *self
                .octupole_derivatives
                .last()
                .expect("the octupole itself");
            let mut next = last;
            for &ijk in &IJK {
                let d = self.clock.d_dt(store, last[ijk.0][ijk.1][ijk.2])?;
                set_symmetric(&mut next, ijk, d);
            }
            self.octupole_derivatives.push(next);
        }
        Ok(self.octupole_derivatives[k])
    }

    /// `d^k S_ij / dt^k` (memoised).
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn current_derivative(&mut self, store: &mut Store, k: usize) -> CResult<Mat3> {
        while self.current_derivatives.len() <= k {
            let last = self.current_derivatives.last().expect("S itself");
            let next = super::symmetric_derivative(store, last, &self.clock)?;
            self.current_derivatives.push(next);
        }
        Ok(self.current_derivatives[k])
    }

    /// `dP_i/dt = (2/63) d^4Q_iab d^3Q_ab + (16/45) eps_ipq d^3Q_pa d^3S_qa`, the rate at
    /// which the waves carry linear momentum away (`rad` holds the quadrupole of the same
    /// bodies).
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn momentum_flux(&mut self, store: &mut Store, rad: &mut Radiation) -> CResult<Vec3> {
        let q3 = rad.derivative(store, 3)?;
        let o4 = self.octupole_derivative(store, 4)?;
        let s3 = self.current_derivative(store, 3)?;
        let z = store.zero();
        let mut out = [z; 3];
        for (i, slot) in out.iter_mut().enumerate() {
            let mut mass = Vec::with_capacity(9);
            for a in 0..3 {
                for b in 0..3 {
                    mass.push(store.mul(o4[i][a][b], q3[a][b])?);
                }
            }
            let mass = store.sum(&mass)?;
            let current = super::eps_contraction(store, i, &q3, &s3)?;
            *slot = store.linear(&[(&rational(2, 63), mass), (&rational(16, 45), current)])?;
        }
        match &self.frame {
            Some(r) => super::turn_vector(store, r, &out, false),
            None => Ok(out),
        }
    }

    /// The next-order far-zone field along the unit direction `n` with polarization basis
    /// `(u, v)` at distance `r`: `h^TT = (1/r) Lambda(n) [(2/3) n_a dddQ_ija +
    /// (4/3)(eps_aim n_a ddS_jm + eps_ajm n_a ddS_im)](t - r)`, to be added to the
    /// quadrupole field of [`Radiation::field`].
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn field(
        &mut self,
        store: &mut Store,
        (n, u, v): (&Vec3, &Vec3, &Vec3),
        r: Form,
    ) -> CResult<Wave> {
        // In the bodies' own frame: the direction and basis turned back into it.
        let (n, u, v) = match &self.frame {
            Some(rot) => (
                super::turn_vector(store, rot, n, true)?,
                super::turn_vector(store, rot, u, true)?,
                super::turn_vector(store, rot, v, true)?,
            ),
            None => (*n, *u, *v),
        };
        let o3 = self.octupole_derivative(store, 3)?;
        let s2 = self.current_derivative(store, 2)?;
        // c_ij = eps_aim n_a ddS_jm.
        let z = store.zero();
        let mut c = [[z; 3]; 3];
        for (i, row) in c.iter_mut().enumerate() {
            for (j, slot) in row.iter_mut().enumerate() {
                let mut terms = Vec::with_capacity(2);
                for a in 0..3 {
                    if a == i {
                        continue;
                    }
                    let m = 3 - a - i;
                    let p = store.mul(n[a], s2[j][m])?;
                    terms.push(store.scale(p, &Coeff::int(levi_civita(a, i, m)))?);
                }
                *slot = store.sum(&terms)?;
            }
        }
        let mut h = [[z; 3]; 3];
        for i in 0..3 {
            for j in i..3 {
                let mut oct = Vec::with_capacity(3);
                for a in 0..3 {
                    oct.push(store.mul(n[a], o3[i][j][a])?);
                }
                let oct = store.sum(&oct)?;
                let cur = store.add(c[i][j], c[j][i])?;
                let s = store.linear(&[(&rational(2, 3), oct), (&rational(4, 3), cur)])?;
                h[i][j] = s;
                h[j][i] = s;
            }
        }
        let mut w = super::retarded_wave(store, &self.clock, (&n, &u, &v), r, &h)?;
        if let Some(rot) = &self.frame {
            w.tt = super::turn_matrix(store, rot, &w.tt)?;
        }
        Ok(w)
    }
}

/// Adds a rigid body's own distribution to the third moment and to `J_ij` (see the module
/// documentation): `c_i Sigma_jk + ...` and `eps_jab (c_i K_ab + c_a K_ib + dc_b/dt Sigma_ia)`.
fn rigid_terms(
    store: &mut Store,
    (c, dc): (&Vec3, &Vec3),
    r: &Rigid,
    t: KernelId,
    cube: &mut Ten3,
    j_terms: &mut [[Vec<Form>; 3]; 3],
) -> CResult<()> {
    let sigma = super::rigid_second_moment(store, r)?;
    for &(i, j, k) in &IJK {
        let terms = [
            store.mul(c[i], sigma[j][k])?,
            store.mul(c[j], sigma[i][k])?,
            store.mul(c[k], sigma[i][j])?,
            cube[i][j][k],
        ];
        let s = store.sum(&terms)?;
        set_symmetric(cube, (i, j, k), s);
    }
    let rot = rigid_rotation(store, r)?;
    let d0 = principal_second_moments(store, r)?;
    let z = store.zero();
    let mut drot = [[z; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            drot[i][j] = store.diff(rot[i][j], t)?;
        }
    }
    // K_ab = sum_p R_ap D0_p dR_bp/dt.
    let mut k = [[z; 3]; 3];
    for a in 0..3 {
        for b in 0..3 {
            let mut terms = Vec::with_capacity(3);
            for p in 0..3 {
                let rd = store.mul(rot[a][p], d0[p])?;
                terms.push(store.mul(rd, drot[b][p])?);
            }
            k[a][b] = store.sum(&terms)?;
        }
    }
    for (i, row) in j_terms.iter_mut().enumerate() {
        for (j, slot) in row.iter_mut().enumerate() {
            // eps_jab X_ab = X_ab - X_ba with (j, a, b) cyclic.
            let (a, b) = ((j + 1) % 3, (j + 2) % 3);
            for (p, q) in [(a, b), (b, a)] {
                let sign = Coeff::int(levi_civita(j, p, q));
                let t1 = store.mul(c[i], k[p][q])?;
                let t2 = store.mul(c[p], k[i][q])?;
                let t3 = store.mul(dc[q], sigma[i][p])?;
                let s = store.sum(&[t1, t2, t3])?;
                slot.push(store.scale(s, &sign)?);
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests;
