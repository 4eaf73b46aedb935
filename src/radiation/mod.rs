//! What a source of point masses radiates at quadrupole order, exactly: the mass quadrupole,
//! its trace-free part, the far-zone field and its polarizations along a direction, the
//! luminosity, the angular-momentum flux, and their averages over time.
//!
//! Conventions (G = c = 1; common practice, e.g. Misner, Thorne & Wheeler 1973, ch. 36, from
//! memory): moments about the coordinate origin, `I_ij = sum_A m_A x_A^i x_A^j`,
//! `Q_ij = I_ij - (1/3) delta_ij I_kk`;
//! the far-zone field `h^TT_ij(t, r n) = (2/r) Lambda_ij,kl(n) d^2 Q_kl/dt^2 (t - r)` with
//! `Lambda` the TT projector of [`crate::tt::lambda`]; `h_plus`, `h_cross` in the
//! polarization basis `(u, v)` of the direction, as `project` documents; the luminosity
//! `L = (1/5) (d^3 Q_ij/dt^3)(d^3 Q_ij/dt^3)`; the source's angular momentum changes at
//! `dJ_i/dt = -(2/5) eps_ijk (d^2 Q_ja/dt^2)(d^3 Q_ka/dt^3)` (the waves carry away
//! `-dJ_i/dt`). The second derivative of the mass dipole `sum_A m_A x_A` must vanish for the
//! quadrupole formula to describe an isolated source (momentum conserved); [`Radiation`]
//! reports it.
//!
//! Time averages ([`time_average`]): the average over all time of a form that is a finite sum
//! of `c_k exp(i w_k t)` with `c_k` and real `w_k` independent of t is the sum of the `c_k`
//! with `w_k = 0`; the canonical form is such a sum exactly when every numerator term's only
//! dependence on t is an exponential `exp(i w t + ...)` and the denominator does not depend
//! on t. For a periodic motion this is the average over a period. A frequency `w_k` that is
//! not identically 0 but contains parameters is taken as nonzero (said in the result).
//!
//! The next order (mass octupole, current quadrupole, the linear momentum they carry with the
//! quadrupole, their far-zone field) is [`multipole`].
//!
//! **The clock.** Bodies are functions of the time, or, for an eccentric binary, of its
//! eccentric anomaly `E` ([`crate::problem::KeplerOrbit`]); a [`Clock`] says which, and every
//! time derivative goes through it: `d/dt = (dE/dt) d/dE`, exact in `E`. For an eccentric
//! orbit every instantaneous quantity is then a function of `E`, the far-zone field is the
//! source's at the retarded anomaly (the `E` of the retarded time `t - r`, by Kepler's
//! equation: no closed form shifts it, so it is written in `E` and the distance enters as
//! `1/r` only), and averages over a period are [`kepler::orbit_average`].
//!
//! **Invariants:** exact forms only (no floating point); never prints.

pub mod anomaly;
pub mod claims;
pub mod kepler;
pub mod multipole;
pub mod si;

use crate::canon::{CResult, Coeff, Form, KernelId, Q, Store};
use crate::problem::Body;
use crate::tt::{Mat3, Vec3};

/// What the bodies are functions of, and how it runs with time.
#[derive(Clone, Copy, Debug)]
pub struct Clock {
    /// The variable: the time coordinate, or an eccentric binary's anomaly.
    pub var: KernelId,
    /// The variable as a form.
    pub var_form: Form,
    /// For the anomaly: `dE/dt` and the eccentricity. `None` when the variable is the time.
    pub orbit: Option<(Form, Form)>,
}

impl Clock {
    /// The time coordinate named `t_name` as the clock.
    pub fn time(store: &mut Store, t_name: &str) -> Clock {
        Clock {
            var: store.symbol_kernel(t_name),
            var_form: store.symbol(t_name),
            orbit: None,
        }
    }

    /// The clock of `p`'s bodies: its eccentric orbit's anomaly, else its time coordinate.
    pub fn of(p: &mut crate::problem::Problem) -> Clock {
        match &p.orbit {
            Some(o) => Clock {
                var: p.store.symbol_kernel(&o.anomaly),
                var_form: p.store.symbol(&o.anomaly),
                orbit: Some((o.rate, o.eccentricity)),
            },
            None => Clock::time(&mut p.store, &p.coordinates[0]),
        }
    }

    /// True when the variable is the time itself.
    #[must_use]
    pub fn is_time(&self) -> bool {
        self.orbit.is_none()
    }

    /// `df/dt`.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn d_dt(&self, store: &mut Store, f: Form) -> CResult<Form> {
        let d = store.diff(f, self.var)?;
        match self.orbit {
            None => Ok(d),
            Some((rate, _)) => store.mul(d, rate),
        }
    }

    /// The average of `f` over time: [`time_average`] in t, [`kepler::orbit_average`] over one
    /// period of an eccentric orbit.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn average(&self, store: &mut Store, f: Form) -> CResult<Average> {
        match self.orbit {
            None => time_average(store, f, self.var),
            Some((_, e)) => kepler::orbit_average(store, f, (self.var, self.var_form), e),
        }
    }
}

/// The quadrupole radiation of a set of point masses.
pub struct Radiation {
    /// The variable the bodies are functions of (the time coordinate, or the clock's anomaly).
    pub t: KernelId,
    /// The clock.
    pub clock: Clock,
    /// `I_ij = sum m x_i x_j`.
    pub quadrupole: Mat3,
    /// `Q_ij = I_ij - delta_ij I_kk / 3`.
    pub trace_free: Mat3,
    /// `d^2/dt^2 sum m x_i`: zero for an isolated source.
    pub dipole_acceleration: Vec3,
    /// `d^k Q / dt^k` for k = 0, 1, ... as computed so far (in the bodies' own frame).
    derivatives: Vec<Mat3>,
    /// The rotation from the bodies' frame into space, when they were given in an orbit's
    /// own frame ([`Radiation::of_problem`]).
    frame: Option<Mat3>,
}

/// The field along one direction at one distance.
#[derive(Clone, Debug)]
pub struct Wave {
    /// `h^TT_ij`.
    pub tt: Mat3,
    /// `h_plus`.
    pub plus: Form,
    /// `h_cross`.
    pub cross: Form,
}

/// The result of [`time_average`].
#[derive(Clone, Debug)]
pub enum Average {
    /// The average, exactly.
    Exact(Form),
    /// Why the form is not a sum of `c exp(i w t)` (no average given).
    NotPeriodic(String),
}

fn third() -> Coeff {
    Coeff::rational(Q::new((-1).into(), 3.into()))
}

impl Radiation {
    /// The moments of `bodies`, functions of the time coordinate named `t`.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn new(store: &mut Store, bodies: &[Body], t_name: &str) -> CResult<Radiation> {
        let clock = Clock::time(store, t_name);
        Radiation::with_clock(store, bodies, clock)
    }

    /// The moments of `bodies`, functions of the clock's variable.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn with_clock(store: &mut Store, bodies: &[Body], clock: Clock) -> CResult<Radiation> {
        let z = store.zero();
        let mut quadrupole = [[z; 3]; 3];
        for i in 0..3 {
            for j in i..3 {
                let mut terms = Vec::with_capacity(bodies.len());
                for b in bodies {
                    let xx = store.mul(b.position[i], b.position[j])?;
                    terms.push(store.mul(b.mass, xx)?);
                }
                let s = store.sum(&terms)?;
                quadrupole[i][j] = s;
                quadrupole[j][i] = s;
            }
        }
        for b in bodies {
            let Some(r) = &b.rigid else { continue };
            let m = rigid_second_moment(store, r)?;
            for i in 0..3 {
                for j in 0..3 {
                    quadrupole[i][j] = store.add(quadrupole[i][j], m[i][j])?;
                }
            }
        }
        let trace = store.sum(&[quadrupole[0][0], quadrupole[1][1], quadrupole[2][2]])?;
        let mut trace_free = quadrupole;
        for (i, row) in trace_free.iter_mut().enumerate() {
            row[i] = store.linear(&[(&Coeff::one(), quadrupole[i][i]), (&third(), trace)])?;
        }
        let mut dipole_acceleration = [z; 3];
        for (i, slot) in dipole_acceleration.iter_mut().enumerate() {
            let mut terms = Vec::with_capacity(bodies.len());
            for b in bodies {
                terms.push(store.mul(b.mass, b.position[i])?);
            }
            let d = store.sum(&terms)?;
            let d1 = clock.d_dt(store, d)?;
            *slot = clock.d_dt(store, d1)?;
        }
        Ok(Radiation {
            t: clock.var,
            clock,
            quadrupole,
            trace_free,
            dipole_acceleration,
            derivatives: vec![trace_free],
            frame: None,
        })
    }

    /// The radiation of a problem's bodies with their clock. An eccentric binary with
    /// orientation angles is computed in its orbit's own frame and turned into space by its
    /// rotation `R`: `Q = R Q' R^T`, the luminosity is invariant, fluxes turn as vectors and
    /// the field along `n` is the orbit frame's along `R^T n` (exact identities, and the
    /// forms stay as small as for an orbit in the x-y plane).
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn of_problem(
        store: &mut Store,
        bodies: &[Body],
        orbit: Option<&crate::problem::KeplerOrbit>,
        clock: Clock,
    ) -> CResult<Radiation> {
        let Some((plane, r)) = orbit.and_then(|o| o.frame.as_ref()) else {
            return Radiation::with_clock(store, bodies, clock);
        };
        let mut rad = Radiation::with_clock(store, plane, clock)?;
        rad.quadrupole = turn_matrix(store, r, &rad.quadrupole)?;
        rad.trace_free = turn_matrix(store, r, &rad.trace_free)?;
        rad.dipole_acceleration = turn_vector(store, r, &rad.dipole_acceleration, false)?;
        rad.frame = Some(*r);
        Ok(rad)
    }

    /// `d^k Q_ij / dt^k` (memoised).
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn derivative(&mut self, store: &mut Store, k: usize) -> CResult<Mat3> {
        while self.derivatives.len() <= k {
            let last = self.derivatives.last().expect("Q itself");
            let next = symmetric_derivative(store, last, &self.clock)?;
            self.derivatives.push(next);
        }
        Ok(self.derivatives[k])
    }

    /// `L = (1/5) dddQ_ij dddQ_ij`.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn luminosity(&mut self, store: &mut Store) -> CResult<Form> {
        let q3 = self.derivative(store, 3)?;
        let mut terms = Vec::with_capacity(9);
        for row in &q3 {
            for &x in row {
                terms.push(store.mul(x, x)?);
            }
        }
        let s = store.sum(&terms)?;
        store.scale(s, &Coeff::rational(Q::new(1.into(), 5.into())))
    }

    /// `dJ_i/dt = -(2/5) eps_ijk ddQ_ja dddQ_ka`, the rate at which the waves carry angular
    /// momentum away.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn angular_momentum_flux(&mut self, store: &mut Store) -> CResult<Vec3> {
        let q2 = self.derivative(store, 2)?;
        let q3 = self.derivative(store, 3)?;
        let z = store.zero();
        let mut out = [z; 3];
        for (i, slot) in out.iter_mut().enumerate() {
            let s = eps_contraction(store, i, &q2, &q3)?;
            *slot = store.scale(s, &Coeff::rational(Q::new((-2).into(), 5.into())))?;
        }
        match &self.frame {
            Some(r) => turn_vector(store, r, &out, false),
            None => Ok(out),
        }
    }

    /// The far-zone field along the unit direction `n` with polarization basis `(u, v)` at
    /// distance `r`: `h^TT = (2/r) Lambda(n) ddQ(t - r)`.
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
        let q2 = self.derivative(store, 2)?;
        let mut source = q2;
        for i in 0..3 {
            for j in i..3 {
                let s = store.scale(q2[i][j], &Coeff::int(2))?;
                source[i][j] = s;
                source[j][i] = s;
            }
        }
        framed_wave(
            store,
            &self.clock,
            self.frame.as_ref(),
            (n, u, v),
            r,
            &source,
        )
    }

    /// The average of `f` over time (see [`Clock::average`]).
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn average(&self, store: &mut Store, f: Form) -> CResult<Average> {
        self.clock.average(store, f)
    }
}

/// `R v` (or `R^T v` with `transpose`).
///
/// # Errors
///
/// An algebra limit.
pub(crate) fn turn_vector(store: &mut Store, r: &Mat3, v: &Vec3, transpose: bool) -> CResult<Vec3> {
    let mut out = *v;
    for (i, slot) in out.iter_mut().enumerate() {
        let mut terms = Vec::with_capacity(3);
        for (k, &x) in v.iter().enumerate() {
            let rik = if transpose { r[k][i] } else { r[i][k] };
            terms.push(store.mul(rik, x)?);
        }
        *slot = store.sum(&terms)?;
    }
    Ok(out)
}

/// `R M R^T`.
///
/// # Errors
///
/// An algebra limit.
pub(crate) fn turn_matrix(store: &mut Store, r: &Mat3, m: &Mat3) -> CResult<Mat3> {
    let mut rm = *m;
    for i in 0..3 {
        for j in 0..3 {
            let mut terms = Vec::with_capacity(3);
            for k in 0..3 {
                terms.push(store.mul(r[i][k], m[k][j])?);
            }
            rm[i][j] = store.sum(&terms)?;
        }
    }
    let mut out = *m;
    for i in 0..3 {
        for j in i..3 {
            let mut terms = Vec::with_capacity(3);
            for k in 0..3 {
                terms.push(store.mul(rm[i][k], r[j][k])?);
            }
            let s = store.sum(&terms)?;
            out[i][j] = s;
            out[j][i] = s;
        }
    }
    Ok(out)
}

/// [`retarded_wave`] of a source given in a frame turned into space by `frame`: computed along
/// the turned-back direction and basis (`R^T n`, `R^T u`, `R^T v`; the polarizations are
/// scalars), `h^TT` turned into space.
///
/// # Errors
///
/// An algebra limit.
pub(crate) fn framed_wave(
    store: &mut Store,
    clock: &Clock,
    frame: Option<&Mat3>,
    (n, u, v): (&Vec3, &Vec3, &Vec3),
    r: Form,
    s: &Mat3,
) -> CResult<Wave> {
    let Some(rot) = frame else {
        return retarded_wave(store, clock, (n, u, v), r, s);
    };
    let n = turn_vector(store, rot, n, true)?;
    let u = turn_vector(store, rot, u, true)?;
    let v = turn_vector(store, rot, v, true)?;
    let mut w = retarded_wave(store, clock, (&n, &u, &v), r, s)?;
    w.tt = turn_matrix(store, rot, &w.tt)?;
    Ok(w)
}

/// The time derivative of a symmetric matrix of forms.
///
/// # Errors
///
/// An algebra limit.
pub(crate) fn symmetric_derivative(store: &mut Store, m: &Mat3, clock: &Clock) -> CResult<Mat3> {
    let mut next = *m;
    for i in 0..3 {
        for j in i..3 {
            let d = clock.d_dt(store, m[i][j])?;
            next[i][j] = d;
            next[j][i] = d;
        }
    }
    Ok(next)
}

/// `eps_ijk A_ja B_ka` (summed over j, k, a) for the component i.
///
/// # Errors
///
/// An algebra limit.
pub(crate) fn eps_contraction(store: &mut Store, i: usize, a: &Mat3, b: &Mat3) -> CResult<Form> {
    let (j, k) = ((i + 1) % 3, (i + 2) % 3);
    let mut terms = Vec::with_capacity(6);
    for c in 0..3 {
        terms.push(store.mul(a[j][c], b[k][c])?);
        let m = store.mul(a[k][c], b[j][c])?;
        terms.push(store.neg(m)?);
    }
    store.sum(&terms)
}

/// The far-zone wave `h^TT = Lambda(n) s(t - r) / r` of a symmetric source `s(t)`, with its
/// polarizations in the basis `(u, v)`. With an eccentric orbit's clock `s` is a function of
/// the anomaly and stays one: the wave is the source's at the retarded anomaly, `s(E) / r`.
///
/// # Errors
///
/// An algebra limit.
pub(crate) fn retarded_wave(
    store: &mut Store,
    clock: &Clock,
    (n, u, v): (&Vec3, &Vec3, &Vec3),
    r: Form,
    s: &Mat3,
) -> CResult<Wave> {
    let mut subs = rustc_hash::FxHashMap::default();
    if clock.is_time() {
        let retarded = store.sub(clock.var_form, r)?;
        subs.insert(clock.var, retarded);
    }
    let mut shifted = *s;
    for i in 0..3 {
        for j in i..3 {
            let f = store.substitute(s[i][j], &subs)?;
            let f = store.div(f, r)?;
            shifted[i][j] = f;
            shifted[j][i] = f;
        }
    }
    let tt = crate::tt::project(store, n, &shifted)?;
    let (plus, cross) = crate::tt::polarizations(store, &tt, u, v)?;
    Ok(Wave { tt, plus, cross })
}

/// The second moment `int rho x_i x_j` of a rigid body about its centre:
/// `(1/2)(I1 + I2 + I3) delta_ij - (R D R^T)_ij` with `D = diag(I1, I2, I3)` (principal axes
/// along x, y, z at angle 0) and `R` the rotation by the angle about the unit axis k
/// (Rodrigues: `R = cos a 1 + sin a [k]_x + (1 - cos a) k k`).
///
/// # Errors
///
/// An algebra limit.
pub fn rigid_second_moment(store: &mut Store, r: &crate::problem::Rigid) -> CResult<Mat3> {
    let rot = multipole::rigid_rotation(store, r)?;
    let z = store.zero();
    let trace = store.sum(&r.moments)?;
    let half_trace = store.scale(trace, &Coeff::rational(Q::new(1.into(), 2.into())))?;
    let mut out = [[z; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            let mut terms = Vec::with_capacity(3);
            for a in 0..3 {
                let p = store.mul(rot[i][a], rot[j][a])?;
                terms.push(store.mul(p, r.moments[a])?);
            }
            let rdr = store.sum(&terms)?;
            let base = if i == j { half_trace } else { z };
            out[i][j] = store.sub(base, rdr)?;
        }
    }
    Ok(out)
}

/// The text of [`rigid_second_moment`] from a rigid body's moment texts `m` and the texts
/// `rot(i, j)` of its rotation matrix elements, `[i][j]`, for the audit (written again from
/// the formula, not printed from forms).
#[must_use]
pub fn rigid_second_moment_texts(
    m: &[String; 3],
    rot: impl Fn(usize, usize) -> String,
) -> [[String; 3]; 3] {
    std::array::from_fn(|i| {
        std::array::from_fn(|j| {
            let terms: Vec<String> = (0..3)
                .map(|c| format!("{}*{}*({})", rot(i, c), rot(j, c), m[c]))
                .collect();
            let base = if i == j {
                format!("(({}) + ({}) + ({}))/2", m[0], m[1], m[2])
            } else {
                "0".into()
            };
            format!("({base} - ({}))", terms.join(" + "))
        })
    })
}

/// The text of the rotation matrix element `R_ij` of a rigid body with the axis texts `k`
/// and the angle text `a` (Rodrigues' formula, as in [`multipole::rigid_rotation`]), in
/// parentheses, for the audit.
#[must_use]
pub fn rotation_text(k: &[String; 3], a: &str, i: usize, j: usize) -> String {
    let mut s = format!("(1 - cos({a}))*({})*({})", k[i], k[j]);
    if i == j {
        s.push_str(&format!(" + cos({a})"));
    } else {
        let l = 3 - i - j;
        let sign = if (i + 1) % 3 == j { "-" } else { "+" };
        s.push_str(&format!(" {sign} sin({a})*({})", k[l]));
    }
    format!("({s})")
}

/// The average of `f` over all time `t` (see the module documentation).
///
/// # Errors
///
/// An algebra limit.
pub fn time_average(store: &mut Store, f: Form, t: KernelId) -> CResult<Average> {
    let view = store.view(f);
    let terms = view.numerator().owned_terms();
    let den: Vec<(Vec<crate::canon::OwnedTerm>, u32)> = view
        .denominator()
        .map(|(p, e)| (p.owned_terms(), e))
        .collect();
    let mut den_form = store.one();
    for (poly, e) in &den {
        let parts: Vec<Form> = poly.iter().map(|t| store.term_form(t)).collect();
        let p = store.sum(&parts)?;
        let d = store.diff(p, t)?;
        if !store.is_zero(d) {
            return Ok(Average::NotPeriodic(
                "a denominator depends on the time".into(),
            ));
        }
        let pe = store.powi(p, i64::from(*e))?;
        den_form = store.mul(den_form, pe)?;
    }
    let mut kept = Vec::new();
    for term in &terms {
        let rest = crate::canon::OwnedTerm {
            exp: None,
            ..term.clone()
        };
        let rest_form = store.term_form(&rest);
        let d = store.diff(rest_form, t)?;
        if !store.is_zero(d) {
            return Ok(Average::NotPeriodic(
                "a term depends on the time other than through exp(i w t)".into(),
            ));
        }
        let Some(e) = term.exp else {
            kept.push(rest_form);
            continue;
        };
        let rate = store.diff(e, t)?;
        if store.is_zero(rate) {
            kept.push(store.term_form(term));
            continue;
        }
        let second = store.diff(rate, t)?;
        if !store.is_zero(second) {
            return Ok(Average::NotPeriodic(
                "an exponent is not linear in the time".into(),
            ));
        }
        match store.exponent_parts(rate) {
            crate::canon::ExpSplit::Parts { re, im, .. }
                if store.is_zero(re) && !store.is_zero(im) => {}
            _ => {
                return Ok(Average::NotPeriodic(
                    "an exponential grows or decays in time".into(),
                ));
            }
        }
    }
    let num = store.sum(&kept)?;
    Ok(Average::Exact(store.div(num, den_form)?))
}

/// The angular frequencies `w` of a form that is a sum of `c exp(i w t)` (each up to its
/// sign, in no particular order, repeats possible), or `None` when it is not of that shape
/// (the shape [`time_average`] accepts). For the SI numbers: the frequencies the quadrupole,
/// and so the waveform, contains.
///
/// # Errors
///
/// An algebra limit.
pub fn frequencies(store: &mut Store, f: Form, t: KernelId) -> CResult<Option<Vec<Form>>> {
    if matches!(time_average(store, f, t)?, Average::NotPeriodic(_)) {
        return Ok(None);
    }
    let view = store.view(f);
    let terms = view.numerator().owned_terms();
    let mut out = Vec::new();
    for term in &terms {
        let Some(e) = term.exp else { continue };
        let rate = store.diff(e, t)?;
        if store.is_zero(rate) {
            continue;
        }
        match store.exponent_parts(rate) {
            crate::canon::ExpSplit::Parts { im, .. } => {
                if !out.contains(&im) {
                    out.push(im);
                }
            }
            crate::canon::ExpSplit::Whole(_) => return Ok(None),
        }
    }
    Ok(Some(out))
}

#[cfg(test)]
pub(super) mod tests;
