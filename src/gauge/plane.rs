//! Plane waves: finding the phase, integrating along it, and the gauge vector to TT gauge.
//!
//! Model. A plane wave depends on the coordinates only through one phase
//! `phi = k_mu x^mu` (`k` constant): `h_{mu nu} = H_{mu nu}(phi)`, equivalently
//! `d_rho h_{mu nu} k_sigma = d_sigma h_{mu nu} k_rho` for all `rho, sigma`. A gauge vector
//! of the same form, `xi_mu = X_mu(phi)`, changes `h` by `-(k_mu X'_nu + k_nu X'_mu)`, so the
//! conditions `h'_{t mu} = 0` are four linear equations for `X'`, solved exactly:
//! `X'_t = H_tt / (2 k_t)`, `X'_i = (H_ti - k_i X'_t) / k_t`. For a Lorenz-gauge wave with
//! null `k` the remaining TT conditions (`h'^i_i = 0`, `d_i h'_ij = 0`) then follow (the
//! standard construction, e.g. Maggiore 2007 vol. 1 sec. 1.2 or Carroll 2004 sec. 7.4, cited
//! from memory); they are not assumed but checked on `h'` by the caller.
//!
//! Key design decision: `X = integral of X' along the phase` is computed by a small exact
//! integrator for the functions the engine can write down in closed form. It reads the
//! integrand through the structural view of its canonical form ([`Store::view`]), never
//! through its printed text: over a constant denominator, the terms are taken a kernel
//! monomial and an exponential pair at a time (the exponentials `e^(P ± iQ)` that print as
//! `e^P cos Q` and `e^P sin Q`), and each such group must be constant, or a constant times
//! one factor that depends on the coordinates: an exponential whose exponent depends on them
//! only through `P` or only through `Q` (sin, cos, exp, sinh, cosh), or a derivative
//! `F^(n)`, `n >= 1`, of an arbitrary function, at an argument `s phi + b` (constant
//! `s != 0`, `b`), or a nonnegative power of a coordinate that is itself `s phi + b` (the
//! phase `t` when `detector::response` integrates in time). Every antiderivative is verified by differentiating it back exactly; an
//! integrand outside this class is reported, never guessed.

use crate::canon::{
    CResult, CanonError, Coeff, ExpSplit, Form, Kernel, KernelId, OwnedTerm, Store,
};
use crate::tensor::{COORDS, ETA, Sym4};
use crate::tt::input::coordinates_in;
use crate::zero::{Sampling, Verdict, decide};

/// Why the plane-wave construction does not apply or could not be completed.
#[derive(Clone, Debug, PartialEq)]
pub enum PlaneError {
    /// The perturbation is not a plane wave of the supported kind: the reason.
    NotApplicable(String),
    /// Neither proved nor refuted: the reason.
    Undecided(String),
}

impl std::fmt::Display for PlaneError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            PlaneError::NotApplicable(s) | PlaneError::Undecided(s) => f.write_str(s),
        }
    }
}

impl From<CanonError> for PlaneError {
    fn from(e: CanonError) -> Self {
        PlaneError::Undecided(format!("the algebra stopped: {e}"))
    }
}

/// A plane wave's phase.
#[derive(Clone, Debug)]
pub struct PlaneWave {
    /// `k_mu`, index down, free of the coordinates; the phase is `k_mu x^mu`.
    pub k: [Form; 4],
    /// `k_mu x^mu`.
    pub phase: Form,
    /// Whether `k` is null: the verdict on `eta^{mu nu} k_mu k_nu`.
    pub null: Verdict,
    /// True if `k` was read off the perturbation, false if given.
    pub detected: bool,
    coords: [KernelId; 4],
    /// The index used to differentiate along the phase (`k` is proved nonzero there).
    along: usize,
}

fn is_constant(store: &mut Store, f: Form) -> bool {
    coordinates_in(store, f).is_empty()
}

/// The component name `h_tx`, for messages.
fn hname(mu: usize, nu: usize) -> String {
    format!("h_{}{}", COORDS[mu], COORDS[nu])
}

/// An algebra limit that has been reached, as an undecided result.
fn out_of_time(store: &Store) -> Option<PlaneError> {
    let (t, ms) = store.limits.deadline?;
    (std::time::Instant::now() > t).then(|| PlaneError::from(CanonError::Timeout(ms)))
}

/// The first argument of a function in `f` that depends on the coordinates, in printed order
/// ([`Store::printed_arguments`]: history-independent, and no text is parsed).
fn first_phase_argument(store: &mut Store, f: Form) -> Option<Form> {
    store
        .printed_arguments(f)
        .into_iter()
        .find(|&a| !is_constant(store, a))
}

/// Reads the phase off `h` (the argument of its first phase-dependent function), or uses the
/// given `k` (index down); then proves that every component depends on the coordinates only
/// through `k_mu x^mu`.
///
/// # Errors
///
/// Not a plane wave (with the component and a certified witness), or undecided.
pub fn find_wave(
    store: &mut Store,
    sampling: &Sampling,
    h: &Sym4,
    given: Option<[Form; 4]>,
) -> Result<PlaneWave, PlaneError> {
    let coords = COORDS.map(|c| store.symbol_kernel(c));
    let detected = given.is_none();
    let k = match given {
        Some(k) => k,
        None => {
            let mut arg = None;
            for (mu, nu) in crate::tensor::COMPONENTS {
                if is_constant(store, h[mu][nu]) {
                    continue;
                }
                if let Some(e) = out_of_time(store) {
                    return Err(e);
                }
                if let Some(a) = first_phase_argument(store, h[mu][nu]) {
                    arg = Some(a);
                    break;
                }
            }
            let Some(a) = arg else {
                let constant = crate::tensor::COMPONENTS
                    .iter()
                    .all(|&(m, n)| is_constant(store, h[m][n]));
                return Err(PlaneError::NotApplicable(if constant {
                    "h does not depend on the coordinates: there is no wave".into()
                } else {
                    "h depends on the coordinates, but not through sin, cos, exp or an \
                     arbitrary function of a phase; give the wave vector with --wave-vector"
                        .into()
                }));
            };
            let mut k = [store.zero(); 4];
            for mu in 0..4 {
                k[mu] = store.diff(a, coords[mu])?;
                if !is_constant(store, k[mu]) {
                    let text = store.to_text(a);
                    return Err(PlaneError::NotApplicable(format!(
                        "the argument `{text}` is not linear in t, x, y, z, so it is not the \
                         phase of a plane wave"
                    )));
                }
            }
            // Present k with k^t = -k_t looking positive: a wave moving forward in time.
            if !store.to_text(k[0]).starts_with('-') {
                for f in &mut k {
                    *f = store.neg(*f)?;
                }
            }
            k
        }
    };
    for f in &k {
        if !is_constant(store, *f) {
            return Err(PlaneError::NotApplicable(
                "the wave vector must not depend on the coordinates".into(),
            ));
        }
    }
    let Some(along) = (0..4).find(|&m| !store.is_zero(k[m])) else {
        return Err(PlaneError::NotApplicable("the wave vector is zero".into()));
    };
    let mut phase = store.zero();
    for mu in 0..4 {
        let x = store.symbol(COORDS[mu]);
        let t = store.mul(k[mu], x)?;
        phase = store.add(phase, t)?;
    }
    // Every component must depend on the coordinates only through the phase.
    let mut undecided: Option<String> = None;
    for (mu, nu) in crate::tensor::COMPONENTS {
        let f = h[mu][nu];
        let grad: Vec<Form> = coords
            .iter()
            .map(|&c| store.diff(f, c))
            .collect::<CResult<_>>()?;
        for a in 0..4 {
            for b in (a + 1)..4 {
                let p = store.mul(grad[a], k[b])?;
                let q = store.mul(grad[b], k[a])?;
                let r = store.sub(p, q)?;
                if store.is_zero(r) {
                    continue;
                }
                let what = format!(
                    "d_{0} {1} k_{2} - d_{2} {1} k_{0}",
                    COORDS[a],
                    hname(mu, nu),
                    COORDS[b]
                );
                match decide(store, r, sampling) {
                    Verdict::Zero => {}
                    Verdict::Nonzero(w) => {
                        let phase_text = store.to_text(phase);
                        return Err(PlaneError::NotApplicable(format!(
                            "{} does not depend on the coordinates through the phase \
                             {phase_text} alone: {what} is nonzero {w}",
                            hname(mu, nu)
                        )));
                    }
                    Verdict::Undecided(why) => {
                        undecided.get_or_insert(format!(
                            "cannot decide whether {} depends only on the phase: {what}: {why}",
                            hname(mu, nu)
                        ));
                    }
                }
            }
        }
    }
    if let Some(why) = undecided {
        return Err(PlaneError::Undecided(why));
    }
    let mut kk = store.zero();
    for mu in 0..4 {
        let sq = store.mul(k[mu], k[mu])?;
        let t = store.scale(sq, &Coeff::int(ETA[mu]))?;
        kk = store.add(kk, t)?;
    }
    let null = decide(store, kk, sampling);
    Ok(PlaneWave {
        k,
        phase,
        null,
        detected,
        coords,
        along,
    })
}

/// One kernel monomial of an integrand with its exponential pair: the terms
/// `m e^(P + iQ)` and `m e^(P - iQ)` (or `m e^E` for an exponent that was not split), which
/// print together as `m e^P cos Q` and `m e^P sin Q`.
struct Group {
    terms: Vec<OwnedTerm>,
    /// The kernel powers `m`.
    powers: Vec<(KernelId, i32)>,
    /// The parts of the exponent that depend on the coordinates (`Q`, `P`, or the whole).
    exponent: Vec<Form>,
}

/// The terms of a numerator, grouped as they print.
fn groups(store: &mut Store, terms: Vec<OwnedTerm>) -> Vec<Group> {
    type Key = (Vec<(KernelId, i32)>, Option<ExpSplit>);
    let mut out: Vec<Group> = Vec::new();
    let mut index: Vec<Key> = Vec::new();
    for t in terms {
        let split = t.exp.map(|e| match store.exponent_parts(e) {
            ExpSplit::Parts { re, im, .. } => ExpSplit::Parts {
                re,
                im,
                conjugate: false,
            },
            whole => whole,
        });
        let key = (t.powers.clone(), split);
        match index.iter().position(|k| *k == key) {
            Some(i) => out[i].terms.push(t),
            None => {
                let exponent = match split {
                    None => Vec::new(),
                    Some(ExpSplit::Whole(w)) => vec![w],
                    Some(ExpSplit::Parts { re, im, .. }) => [im, re]
                        .into_iter()
                        .filter(|&x| !store.is_zero(x))
                        .collect(),
                };
                index.push(key);
                out.push(Group {
                    powers: t.powers.clone(),
                    terms: vec![t],
                    exponent,
                });
            }
        }
    }
    out
}

impl PlaneWave {
    /// `df/dphi`, exact: `d_m f / k_m` for an index with `k_m != 0`.
    ///
    /// # Errors
    ///
    /// An algebra limit.
    pub fn along_phase(&self, store: &mut Store, f: Form) -> CResult<Form> {
        let d = store.diff(f, self.coords[self.along])?;
        store.div(d, self.k[self.along])
    }

    /// `s` if `a = s phi + b` with constants `s != 0` and `b`.
    fn slope(&self, store: &mut Store, a: Form) -> Result<Option<Form>, PlaneError> {
        let s = self.along_phase(store, a)?;
        if !is_constant(store, s) || store.is_zero(s) {
            return Ok(None);
        }
        for mu in 0..4 {
            let d = store.diff(a, self.coords[mu])?;
            let sk = store.mul(s, self.k[mu])?;
            let r = store.sub(d, sk)?;
            if !store.is_zero(r) {
                return Ok(None);
            }
        }
        Ok(Some(s))
    }

    /// An antiderivative of `f` along the phase, verified by differentiating it back.
    ///
    /// # Errors
    ///
    /// An integrand outside the supported class (see the module doc), or an algebra limit.
    pub fn integrate(&self, store: &mut Store, f: Form, what: &str) -> Result<Form, PlaneError> {
        if store.is_zero(f) {
            return Ok(f);
        }
        if let Some(e) = out_of_time(store) {
            return Err(e);
        }
        let g = self.integrate_form(store, f, what)?;
        let back = self.along_phase(store, g)?;
        let d = store.sub(back, f)?;
        if !store.is_zero(d) {
            return Err(PlaneError::NotApplicable(format!(
                "the antiderivative of {what} along the phase did not differentiate back to it \
                 exactly"
            )));
        }
        Ok(g)
    }

    fn integrate_form(&self, store: &mut Store, f: Form, what: &str) -> Result<Form, PlaneError> {
        if is_constant(store, f) {
            return Ok(store.mul(f, self.phase)?);
        }
        let unsupported = |detail: String| {
            PlaneError::NotApplicable(format!(
                "cannot integrate {what} along the phase: {detail}; supported are sums of \
                 constants times sin, cos, exp, sinh, cosh or a derivative F'(..) of an \
                 arbitrary function, of an argument linear in the phase"
            ))
        };
        let view = store.view(f);
        let num = view.numerator().owned_terms();
        let den: Vec<(Vec<OwnedTerm>, u32)> = view
            .denominator()
            .map(|(p, e)| (p.owned_terms(), e))
            .collect();
        // The denominator must be constant: f = N / D, integrated as (integral of N) / D.
        let mut d = store.one();
        for (p, e) in den {
            let parts: Vec<Form> = p.iter().map(|t| store.term_form(t)).collect();
            let x = store.sum(&parts)?;
            let x = store.powi(x, i64::from(e))?;
            d = store.mul(d, x)?;
        }
        if !is_constant(store, d) {
            let text = store.to_text(f);
            return Err(unsupported(format!(
                "`{text}` divides by an expression of the coordinates"
            )));
        }
        let mut total = store.zero();
        for g in groups(store, num) {
            let forms: Vec<Form> = g.terms.iter().map(|t| store.term_form(t)).collect();
            let gf = store.sum(&forms)?;
            let part = self.integrate_group(store, &g, gf, &forms, &unsupported)?;
            total = store.add(total, part)?;
        }
        Ok(store.div(total, d)?)
    }

    /// The integral of one group `gf` (its terms `forms`): constant, or a constant times one
    /// factor that depends on the coordinates.
    fn integrate_group(
        &self,
        store: &mut Store,
        g: &Group,
        gf: Form,
        forms: &[Form],
        unsupported: &dyn Fn(String) -> PlaneError,
    ) -> Result<Form, PlaneError> {
        if is_constant(store, gf) {
            return Ok(store.mul(gf, self.phase)?);
        }
        // The factors that depend on the coordinates: kernel powers, then exponent parts.
        let mut kernels: Vec<(KernelId, i32)> = Vec::new();
        for &(k, e) in &g.powers {
            let f = kernel_form(store, k);
            if !is_constant(store, f) {
                kernels.push((k, e));
            }
        }
        let mut exponent: Vec<Form> = Vec::new();
        for &x in &g.exponent {
            if !is_constant(store, x) {
                exponent.push(x);
            }
        }
        if kernels.iter().any(|&(_, e)| e < 0) {
            let text = store.to_text(gf);
            return Err(unsupported(format!(
                "`{text}` divides by an expression of the coordinates"
            )));
        }
        if kernels.len() + exponent.len() > 1 {
            let text = store.to_text(gf);
            return Err(unsupported(format!(
                "`{text}` is a product of two factors that both depend on the coordinates"
            )));
        }
        if let Some(&a) = exponent.first() {
            // sin, cos, exp, sinh, cosh: each exponential e^E integrates to e^E / (dE/dphi).
            if self.slope(store, a)?.is_none() {
                let text = store.to_text(gf);
                return Err(unsupported(format!(
                    "the argument of `{text}` is not a constant multiple of the phase plus a \
                     constant"
                )));
            }
            let mut parts = Vec::with_capacity(forms.len());
            for (t, &tf) in g.terms.iter().zip(forms) {
                let e = t.exp.unwrap_or_else(|| store.zero());
                let s = self.along_phase(store, e)?;
                parts.push(store.div(tf, s)?);
            }
            return Ok(store.sum(&parts)?);
        }
        let (k, e) = kernels[0];
        let kernel = store.kernel(k).clone();
        let text = store.to_text(gf);
        let (arg, name) = match kernel {
            Kernel::Sym(n) => {
                // A power of a coordinate that is itself `s phi + b` (a phase along one
                // axis, e.g. `t`): (s phi + b)^e integrates to (s phi + b)^(e + 1)/((e + 1) s).
                let kf = kernel_form(store, k);
                let Some(s) = self.slope(store, kf)? else {
                    return Err(unsupported(format!(
                        "the coordinate `{n}` appears outside the argument of a function"
                    )));
                };
                let ke = store.powi(kf, i64::from(e))?;
                let c = store.div(gf, ke)?;
                let up = store.mul(ke, kf)?;
                let g = store.mul(c, up)?;
                let e1 = store.int(i64::from(e) + 1);
                let es = store.mul(e1, s)?;
                return Ok(store.div(g, es)?);
            }
            _ if e != 1 => {
                return Err(unsupported(format!(
                    "`{text}` is not of the supported form"
                )));
            }
            Kernel::Root { radicand, q: 2 } => (radicand, None),
            Kernel::Root { .. } | Kernel::Pi => {
                return Err(unsupported(format!(
                    "`{text}` is not of the supported form"
                )));
            }
            Kernel::Log(a) | Kernel::Atan(a) => (a, None),
            Kernel::Func { name, order, arg } => (arg, Some((name, order))),
        };
        let Some(s) = self.slope(store, arg)? else {
            return Err(unsupported(format!(
                "the argument of `{text}` is not a constant multiple of the phase plus a constant"
            )));
        };
        let anti = match name {
            None => {
                let n = if matches!(store.kernel(k), Kernel::Log(_)) {
                    "log"
                } else if matches!(store.kernel(k), Kernel::Atan(_)) {
                    "atan"
                } else {
                    "sqrt"
                };
                return Err(unsupported(format!(
                    "`{n}` has no supported antiderivative"
                )));
            }
            Some((n, 0)) => {
                return Err(unsupported(format!(
                    "the arbitrary function `{n}` itself has no antiderivative the engine can \
                     write; write the wave as a derivative, e.g. {n}'(..)"
                )));
            }
            Some((n, p)) => store.func(&n, p - 1, arg),
        };
        // gf = c * F^(p)(arg) with c constant: c * F^(p-1)(arg) / s.
        let kf = kernel_form(store, k);
        let c = store.div(gf, kf)?;
        let g = store.mul(c, anti)?;
        Ok(store.div(g, s)?)
    }
}

/// The form of a kernel.
fn kernel_form(store: &mut Store, k: KernelId) -> Form {
    let t = OwnedTerm {
        coeff: Coeff::one(),
        powers: vec![(k, 1)],
        exp: None,
    };
    store.term_form(&t)
}

/// The gauge vector `xi_mu` (index down) that removes `h_{t mu}` from a plane wave; for a
/// Lorenz-gauge wave with null `k` the result is in TT gauge (to be verified by the caller).
///
/// # Errors
///
/// `k_t = 0`, an integrand outside the supported class, or an algebra limit.
pub fn tt_gauge_vector(
    store: &mut Store,
    wave: &PlaneWave,
    h: &Sym4,
) -> Result<[Form; 4], PlaneError> {
    let kt = wave.k[0];
    if store.is_zero(kt) {
        return Err(PlaneError::NotApplicable(
            "k_t = 0: the phase does not depend on time, so this is not a travelling wave".into(),
        ));
    }
    let mut integral = [store.zero(); 4];
    for (mu, slot) in integral.iter_mut().enumerate() {
        *slot = wave.integrate(store, h[0][mu], &hname(0, mu))?;
    }
    let two_kt = store.scale(kt, &Coeff::int(2))?;
    let xi_t = store.div(integral[0], two_kt)?;
    let mut xi = [xi_t, xi_t, xi_t, xi_t];
    for i in 1..4 {
        let p = store.mul(wave.k[i], xi_t)?;
        let r = store.sub(integral[i], p)?;
        xi[i] = store.div(r, kt)?;
    }
    Ok(xi)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::canon::Names;

    fn names() -> Names {
        let mut n = Names::strict();
        for c in ["t", "x", "y", "z", "w", "a", "b"] {
            n.symbol(c);
        }
        n.function("F");
        n
    }

    fn build_text(st: &mut Store, text: &str) -> Form {
        let e = crate::parse::parse(text).unwrap();
        st.build(&e, &names()).unwrap()
    }

    fn wave_of(st: &mut Store, comps: &[(usize, usize, &str)]) -> Sym4 {
        let mut h = [[st.zero(); 4]; 4];
        for &(m, n, t) in comps {
            let f = build_text(st, t);
            h[m][n] = f;
            h[n][m] = f;
        }
        h
    }

    #[test]
    fn finds_the_phase_and_its_null_wave_vector() {
        let mut st = Store::new();
        let h = wave_of(
            &mut st,
            &[(1, 1, "a*cos(w*(t - z))"), (2, 2, "-a*cos(w*(t - z))")],
        );
        let w = find_wave(&mut st, &Sampling::default(), &h, None).unwrap();
        let texts: Vec<String> = w.k.iter().map(|f| st.to_text(*f)).collect();
        assert_eq!(texts, ["-w", "0", "0", "w"]);
        assert_eq!(w.null, Verdict::Zero);
    }

    #[test]
    fn refuses_what_is_not_a_plane_wave() {
        let mut st = Store::new();
        let h = wave_of(&mut st, &[(1, 1, "cos(t - z)"), (2, 2, "x*cos(t - z)")]);
        let e = find_wave(&mut st, &Sampling::default(), &h, None).unwrap_err();
        assert!(
            matches!(e, PlaneError::NotApplicable(ref s) if s.contains("h_yy")),
            "{e}"
        );
        let h = wave_of(&mut st, &[(1, 1, "cos(t^2 - z)")]);
        let e = find_wave(&mut st, &Sampling::default(), &h, None).unwrap_err();
        assert!(e.to_string().contains("not linear"), "{e}");
        let h = wave_of(&mut st, &[(1, 1, "a")]);
        let e = find_wave(&mut st, &Sampling::default(), &h, None).unwrap_err();
        assert!(e.to_string().contains("no wave"), "{e}");
    }

    #[test]
    fn integrates_along_the_phase_and_verifies() {
        let mut st = Store::new();
        let h = wave_of(&mut st, &[(1, 1, "cos(w*(t - z))")]);
        let w = find_wave(&mut st, &Sampling::default(), &h, None).unwrap();
        for text in [
            "3*a*cos(w*(t - z)) - b*sin(2*w*(t - z))/5",
            "exp(w*(z - t) + 1)",
            "F''(t - z)",
            "a + sinh(w*(t - z))",
        ] {
            let f = build_text(&mut st, text);
            let g = w.integrate(&mut st, f, text).unwrap();
            let back = w.along_phase(&mut st, g).unwrap();
            let d = st.sub(back, f).unwrap();
            assert!(st.is_zero(d), "{text}");
        }
        for (text, why) in [
            ("F(t - z)", "itself"),
            ("tan(t - z)", "tan"),
            ("(t - z)*cos(t - z)", "product"),
        ] {
            let f = build_text(&mut st, text);
            match w.integrate(&mut st, f, text) {
                Err(PlaneError::NotApplicable(s)) => assert!(s.contains(why), "{text}: {s}"),
                other => panic!("{text}: {other:?}"),
            }
        }
    }

    /// Issue 11 (item 3): the phase is read off the structure in printed order, not in the
    /// store's internal order, so it does not depend on what the store built before.
    #[test]
    fn issue11_the_phase_does_not_depend_on_the_store_history() {
        let text = "cos(w*(t - z)) + cos(2*w*(t - z))";
        let mut fresh = Store::new();
        let h = wave_of(&mut fresh, &[(1, 1, text)]);
        let w = find_wave(&mut fresh, &Sampling::default(), &h, None).unwrap();
        let k1: Vec<String> = w.k.iter().map(|f| fresh.to_text(*f)).collect();
        let mut used = Store::new();
        build_text(&mut used, "sin(2*w*(z - t)) + F''(w*(t - z))");
        let h = wave_of(&mut used, &[(1, 1, text)]);
        let w = find_wave(&mut used, &Sampling::default(), &h, None).unwrap();
        let k2: Vec<String> = w.k.iter().map(|f| used.to_text(*f)).collect();
        assert_eq!(k1, k2);
    }
}
