//! The transverse-traceless (TT) part of a perturbation along a direction, its two
//! polarizations, and the response of a ring of free test masses.
//!
//! Model. For a unit direction `n` let `P_ij = delta_ij - n_i n_j`. The TT projector
//! `Lambda_ij,kl = P_ik P_jl - (1/2) P_ij P_kl` acts on the spatial part of `h`:
//! `h^TT_ij = Lambda_ij,kl h_kl = (P h P)_ij - (1/2) P_ij tr(P h)`. On symmetric tensors it is
//! a projector of rank 2, the two polarizations. With an orthonormal pair `(u, v)` transverse
//! to `n`, `(u, v, n)` right-handed,
//! `h^TT = h_+ (u u - v v) + h_x (u v + v u)`, so `h_+ = (1/2) h^TT_ij (u_i u_j - v_i v_j)` and
//! `h_x = (1/2) h^TT_ij (u_i v_j + v_i u_j)`.
//!
//! A direction is a unit vector (exact numbers, parameters or any expression), two polar
//! angles, or `radial` (`n = x/r`). The default polarization basis is the polar-angle basis
//! `u = e_theta`, `v = e_phi` of `n`, computed without angles from the vector itself:
//! with `rho = sqrt(n_x^2 + n_y^2)`, `u = (n_z n_x/rho, n_z n_y/rho, -rho)`,
//! `v = (-n_y/rho, n_x/rho, 0)`; on the z axis (`rho` exactly 0) phi is taken as 0, so
//! `u = (n_z, 0, 0)`, `v = (0, 1, 0)`, and for `n = z` `h_+ = h^TT_xx`, `h_x = h^TT_xy`.
//!
//! Key design decision: everything symbolic is exact. `n`, `P`, `Lambda`, the basis and the
//! polarizations are canonical forms, so "transverse", "traceless", "unit length" and
//! "perpendicular" are proofs, not tolerances. Floating point appears only in the
//! clearly labelled numerical summaries ([`not_tt_fraction`]) and in [`ring`].
//!
//! **Invariants:** a [`Direction`] holds a vector proved to have unit length and a basis
//! proved orthonormal with it (or built to be, by construction); nothing here prints.

pub mod audit;
pub mod input;
pub mod ring;
pub mod sphere;

pub use input::{Arg, ArgError, Piece};

use crate::canon::{CResult, CanonError, Coeff, Form, KernelId, Names, Point, Q, Store};
use crate::interval::{CInterval, Interval};
use crate::zero::{Sampling, SplitMix64, Verdict, decide};

/// A 3-vector of forms.
pub type Vec3 = [Form; 3];
/// A 3x3 array of forms.
pub type Mat3 = [[Form; 3]; 3];

/// How a direction was given.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum DirectionKind {
    /// A vector `nx,ny,nz`.
    Vector,
    /// Polar angles `theta=..,phi=..`.
    Angles,
    /// `radial`: `n = (x, y, z)/r`.
    Radial,
}

/// A unit direction with its polarization basis.
#[derive(Clone, Debug)]
pub struct Direction {
    /// How it was given.
    pub kind: DirectionKind,
    /// The unit vector `n`.
    pub n: Vec3,
    /// The first basis vector.
    pub u: Vec3,
    /// The second basis vector, `v = n x u`.
    pub v: Vec3,
    /// True if the given vector was divided by its length.
    pub normalized: bool,
    /// How `n` was checked or made, in words.
    pub n_note: String,
    /// How the basis was made, in words.
    pub basis_note: String,
}

fn half() -> Coeff {
    Coeff::rational(Q::new(1.into(), 2.into()))
}

/// `a . b`.
pub fn dot(store: &mut Store, a: &Vec3, b: &Vec3) -> CResult<Form> {
    let mut acc = store.zero();
    for i in 0..3 {
        let p = store.mul(a[i], b[i])?;
        acc = store.add(acc, p)?;
    }
    Ok(acc)
}

/// `a x b`.
pub fn cross(store: &mut Store, a: &Vec3, b: &Vec3) -> CResult<Vec3> {
    let mut out = [store.zero(); 3];
    for (i, slot) in out.iter_mut().enumerate() {
        let (j, k) = ((i + 1) % 3, (i + 2) % 3);
        let p = store.mul(a[j], b[k])?;
        let q = store.mul(a[k], b[j])?;
        *slot = store.sub(p, q)?;
    }
    Ok(out)
}

fn div3(store: &mut Store, a: &Vec3, d: Form) -> CResult<Vec3> {
    Ok([
        store.div(a[0], d)?,
        store.div(a[1], d)?,
        store.div(a[2], d)?,
    ])
}

/// `P_ij = delta_ij - n_i n_j`.
pub fn transverse_projector(store: &mut Store, n: &Vec3) -> CResult<Mat3> {
    let mut p = [[store.zero(); 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            let nn = store.mul(n[i], n[j])?;
            let d = if i == j { store.one() } else { store.zero() };
            p[i][j] = store.sub(d, nn)?;
        }
    }
    Ok(p)
}

/// The projector's entries `Lambda_ij,kl = P_ik P_jl - (1/2) P_ij P_kl`, indexed `[i][j][k][l]`.
pub fn lambda(store: &mut Store, n: &Vec3) -> CResult<[[Mat3; 3]; 3]> {
    let p = transverse_projector(store, n)?;
    let z = store.zero();
    let mut out = [[[[z; 3]; 3]; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            for k in 0..3 {
                for l in 0..3 {
                    let a = store.mul(p[i][k], p[j][l])?;
                    let b = store.mul(p[i][j], p[k][l])?;
                    let b = store.scale(b, &half())?;
                    out[i][j][k][l] = store.sub(a, b)?;
                }
            }
        }
    }
    Ok(out)
}

fn matmul(store: &mut Store, a: &Mat3, b: &Mat3) -> CResult<Mat3> {
    let mut out = [[store.zero(); 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            let mut acc = store.zero();
            for k in 0..3 {
                let p = store.mul(a[i][k], b[k][j])?;
                acc = store.add(acc, p)?;
            }
            out[i][j] = acc;
        }
    }
    Ok(out)
}

/// `Lambda_ij,kl s_kl = (P s P)_ij - (1/2) P_ij tr(P s)` for a symmetric `s`.
pub fn project(store: &mut Store, n: &Vec3, s: &Mat3) -> CResult<Mat3> {
    let p = transverse_projector(store, n)?;
    let ps = matmul(store, &p, s)?;
    let psp = matmul(store, &ps, &p)?;
    let mut tr = store.zero();
    for (i, row) in ps.iter().enumerate() {
        tr = store.add(tr, row[i])?;
    }
    let half_tr = store.scale(tr, &half())?;
    let mut out = psp;
    for i in 0..3 {
        for j in 0..3 {
            let shift = store.mul(p[i][j], half_tr)?;
            out[i][j] = store.sub(psp[i][j], shift)?;
        }
    }
    // Symmetric by construction; make it so exactly, whatever the input's rounding of ids.
    for i in 0..3 {
        for j in (i + 1)..3 {
            out[j][i] = out[i][j];
        }
    }
    Ok(out)
}

/// The spatial block `h_ij` of a 4x4 perturbation.
#[must_use]
pub fn spatial(h: &[[Form; 4]; 4]) -> Mat3 {
    std::array::from_fn(|i| std::array::from_fn(|j| h[i + 1][j + 1]))
}

/// `(h_+, h_x)` of a TT tensor in the basis `(u, v)`.
pub fn polarizations(store: &mut Store, tt: &Mat3, u: &Vec3, v: &Vec3) -> CResult<(Form, Form)> {
    let mut plus = store.zero();
    let mut cross = store.zero();
    for i in 0..3 {
        for j in 0..3 {
            let uu = store.mul(u[i], u[j])?;
            let vv = store.mul(v[i], v[j])?;
            let ep = store.sub(uu, vv)?;
            let uv = store.mul(u[i], v[j])?;
            let vu = store.mul(v[i], u[j])?;
            let ec = store.add(uv, vu)?;
            let a = store.mul(tt[i][j], ep)?;
            plus = store.add(plus, a)?;
            let b = store.mul(tt[i][j], ec)?;
            cross = store.add(cross, b)?;
        }
    }
    Ok((store.scale(plus, &half())?, store.scale(cross, &half())?))
}

// ----- directions ----------------------------------------------------------------------

/// What `--direction` accepts, for help texts.
pub const DIRECTION_FORMS: &str = "a direction is a unit vector `nx,ny,nz` (e.g. `0,0,1` or \
    `3/5,0,4/5`), an axis (`x`, `-z`, ...), polar angles `theta=..,phi=..` (e.g. \
    `theta=pi/3,phi=pi/4`), or `radial`";

/// The unit vector `ax,ay,az` of an axis name: `x`, `+y`, `-z`, ...
#[must_use]
pub fn axis(text: &str) -> Option<&'static str> {
    Some(match text {
        "x" | "+x" => "1,0,0",
        "-x" => "-1,0,0",
        "y" | "+y" => "0,1,0",
        "-y" => "0,-1,0",
        "z" | "+z" => "0,0,1",
        "-z" => "0,0,-1",
        _ => return None,
    })
}

fn limit(arg: &Arg<'_>, e: CanonError) -> ArgError {
    ArgError::whole(arg.name, arg.text, format!("the algebra stopped: {e}"))
}

/// The polar-angle basis `(e_theta, e_phi)` of the direction `m / norm`, without angles.
fn angle_basis_of_vector(
    store: &mut Store,
    m: &Vec3,
    norm: Form,
) -> CResult<(Vec3, Vec3, &'static str)> {
    let mx2 = store.mul(m[0], m[0])?;
    let my2 = store.mul(m[1], m[1])?;
    let rho2 = store.add(mx2, my2)?;
    let zero = store.zero();
    let one = store.one();
    if store.is_zero(rho2) {
        // On the z axis: theta = 0 or pi, phi = 0.
        let nz = store.div(m[2], norm)?;
        return Ok((
            [nz, zero, zero],
            [zero, one, zero],
            "n is on the z axis, where phi is taken as 0: u = (n_z, 0, 0), v = (0, 1, 0)",
        ));
    }
    let rho = store.root(rho2, 2)?;
    let rho_norm = store.mul(rho, norm)?;
    let zx = store.mul(m[2], m[0])?;
    let zy = store.mul(m[2], m[1])?;
    let u = [store.div(zx, rho_norm)?, store.div(zy, rho_norm)?, {
        let r = store.div(rho, norm)?;
        store.neg(r)?
    }];
    let v = [
        {
            let q = store.div(m[1], rho)?;
            store.neg(q)?
        },
        store.div(m[0], rho)?,
        zero,
    ];
    Ok((
        u,
        v,
        "u = e_theta, v = e_phi of n's polar angles: with rho = sqrt(n_x^2 + n_y^2), \
         u = (n_z n_x/rho, n_z n_y/rho, -rho), v = (-n_y/rho, n_x/rho, 0)",
    ))
}

fn normalize_help(what: &str) -> String {
    format!("pass --normalize to use {what}/|{what}|, or give a unit vector such as 3/5,0,4/5")
}

/// Proves `|m|^2 = 1`, or says why not.
fn require_unit(
    store: &mut Store,
    sampling: &Sampling,
    arg: &Arg<'_>,
    m: &Vec3,
    what: &str,
    help: &str,
) -> Result<(), ArgError> {
    let nn = dot(store, m, m).map_err(|e| limit(arg, e))?;
    let one = store.one();
    let d = store.sub(nn, one).map_err(|e| limit(arg, e))?;
    if store.is_zero(d) {
        return Ok(());
    }
    let len2 = store.to_text(nn);
    Err(match decide(store, d, sampling) {
        Verdict::Nonzero(_) | Verdict::Zero => arg
            .error(
                format!("not a unit vector: |{what}|^2 = {len2}"),
                crate::expr::Span::new(0, arg.text.len()),
                "this vector",
            )
            .with_help(help),
        Verdict::Undecided(why) => arg
            .error(
                format!("cannot prove that |{what}| = 1: |{what}|^2 = {len2} ({why})"),
                crate::expr::Span::new(0, arg.text.len()),
                "this vector",
            )
            .with_help(help),
    })
}

/// Builds three entries of a vector argument.
fn vector_arg(
    store: &mut Store,
    names: &Names,
    arg: &Arg<'_>,
) -> Result<(Vec3, Vec<Piece>), ArgError> {
    let pieces = arg.split_exact(3, DIRECTION_FORMS)?;
    let mut m = [store.zero(); 3];
    for (slot, p) in m.iter_mut().zip(&pieces) {
        *slot = arg.build(store, names, p)?;
    }
    Ok((m, pieces))
}

/// Divides `m` by its length, refusing the zero vector.
fn normalize(store: &mut Store, arg: &Arg<'_>, m: &Vec3) -> Result<(Vec3, Form), ArgError> {
    let nn = dot(store, m, m).map_err(|e| limit(arg, e))?;
    if store.is_zero(nn) {
        return Err(ArgError::whole(
            arg.name,
            arg.text,
            "the zero vector has no direction",
        ));
    }
    let len = store.root(nn, 2).map_err(|e| limit(arg, e))?;
    let n = div3(store, m, len).map_err(|e| limit(arg, e))?;
    Ok((n, len))
}

/// Reads a direction: a unit vector, an axis, `theta=..,phi=..` or `radial`, with the default
/// basis.
/// Expressions use `names` (a problem's names: its parameters and defines are allowed).
///
/// # Errors
///
/// A malformed argument, an expression error, or a vector that is not proved to have unit
/// length (unless `normalize`), each pointing into the argument.
pub fn parse_direction(
    store: &mut Store,
    names: &Names,
    sampling: &Sampling,
    arg: Arg<'_>,
    normalize_it: bool,
) -> Result<Direction, ArgError> {
    let text = arg.text.trim();
    if text == "radial" {
        let m = ["x", "y", "z"].map(|c| store.symbol(c));
        let (n, r) = normalize(store, &arg, &m)?;
        let (u, v, _) = angle_basis_of_vector(store, &m, r).map_err(|e| limit(&arg, e))?;
        return Ok(Direction {
            kind: DirectionKind::Radial,
            n,
            u,
            v,
            normalized: false,
            n_note: "radial: n = (x, y, z)/r, r = sqrt(x^2 + y^2 + z^2), defined away from r = 0"
                .into(),
            basis_note: "u = e_theta, v = e_phi of the spherical coordinates: with \
                         rho = sqrt(x^2 + y^2), u = (x z, y z, -rho^2)/(rho r), \
                         v = (-y, x, 0)/rho; undefined on the z axis"
                .into(),
        });
    }
    if text.contains('=') {
        return angles(store, names, arg);
    }
    if let Some(v) = axis(text) {
        let mut d = parse_direction(store, names, sampling, Arg::new(arg.name, v), false)?;
        d.n_note = format!("the {text} axis");
        return Ok(d);
    }
    if text
        .chars()
        .all(|c| c.is_ascii_alphabetic() || c == '_' || c.is_whitespace())
    {
        return Err(arg
            .error(
                format!("unknown direction `{text}`"),
                crate::expr::Span::new(0, arg.text.len()),
                "not a direction",
            )
            .with_help(DIRECTION_FORMS));
    }
    let (m, _) = vector_arg(store, names, &arg)?;
    let (n, note, normalized) = if normalize_it {
        let (n, len) = normalize(store, &arg, &m)?;
        let one = store.one();
        let already = store
            .sub(len, one)
            .map(|d| store.is_zero(d))
            .unwrap_or(false);
        if already {
            (n, "unit length (proved)".to_string(), false)
        } else {
            let l = store.to_text(len);
            (n, format!("divided by its length {l} (--normalize)"), true)
        }
    } else {
        require_unit(store, sampling, &arg, &m, "n", &normalize_help("n"))?;
        (m, "unit length (proved)".to_string(), false)
    };
    let one = store.one();
    let (u, v, basis_note) = angle_basis_of_vector(store, &n, one).map_err(|e| limit(&arg, e))?;
    Ok(Direction {
        kind: DirectionKind::Vector,
        n,
        u,
        v,
        normalized,
        n_note: note,
        basis_note: basis_note.into(),
    })
}

/// The unit vector of polar angles `(theta, phi)` and its polar-angle basis:
/// `n = (sin theta cos phi, sin theta sin phi, cos theta)`,
/// `e_theta = (cos theta cos phi, cos theta sin phi, -sin theta)`,
/// `e_phi = (-sin phi, cos phi, 0)`, returned as `(n, e_theta, e_phi)`.
///
/// # Errors
///
/// An algebra limit.
pub fn polar_basis(store: &mut Store, th: Form, ph: Form) -> CResult<(Vec3, Vec3, Vec3)> {
    let (st, ct) = (store.sin(th)?, store.cos(th)?);
    let (sp, cp) = (store.sin(ph)?, store.cos(ph)?);
    let n = [store.mul(st, cp)?, store.mul(st, sp)?, ct];
    let u = [store.mul(ct, cp)?, store.mul(ct, sp)?, store.neg(st)?];
    let v = [store.neg(sp)?, cp, store.zero()];
    Ok((n, u, v))
}

/// Reads a vector `ax,ay,az` (constant expressions) or an axis name (`x`, `-z`, ...) that
/// must be proved to have unit length; `what` names it in messages, `help` is the help line
/// of a vector that is not.
///
/// # Errors
///
/// A malformed argument, an expression error (a coordinate in an entry), or a vector not
/// proved to have unit length, each pointing into the argument.
pub fn parse_unit_vector(
    store: &mut Store,
    names: &Names,
    sampling: &Sampling,
    arg: Arg<'_>,
    what: &str,
    help: &str,
) -> Result<Vec3, ArgError> {
    let text = axis(arg.text.trim()).unwrap_or(arg.text);
    let arg = Arg::new(arg.name, text);
    let pieces = arg.split_exact(
        3,
        "a vector is given as ax,ay,az, or an axis such as x or -z",
    )?;
    let mut m = [store.zero(); 3];
    for (slot, p) in m.iter_mut().zip(&pieces) {
        *slot = arg.build_constant(store, names, p)?;
    }
    require_unit(store, sampling, &arg, &m, what, help)?;
    Ok(m)
}

fn angles(store: &mut Store, names: &Names, arg: Arg<'_>) -> Result<Direction, ArgError> {
    let pieces = arg.split()?;
    let mut theta: Option<Form> = None;
    let mut phi: Option<Form> = None;
    for p in &pieces {
        let Some((key, value)) = p.text.split_once('=') else {
            return Err(arg
                .error("expected `name=value`", p.span(), "here")
                .with_help("angles are given as theta=..,phi=.., e.g. theta=pi/2,phi=0"));
        };
        let key_t = key.trim();
        let lead = value.len() - value.trim_start().len();
        let vpiece = Piece {
            text: value.trim().to_string(),
            offset: p.offset + key.len() + 1 + lead,
        };
        let key_span = crate::expr::Span::new(p.offset, p.offset + key.len());
        let slot = match key_t {
            "theta" => &mut theta,
            "phi" => &mut phi,
            other => {
                return Err(arg
                    .error(format!("unknown angle `{other}`"), key_span, "not an angle")
                    .with_help("the angles are theta (from the z axis) and phi (around it)"));
            }
        };
        if slot.is_some() {
            return Err(arg.error(format!("`{key_t}` is given twice"), key_span, "again here"));
        }
        if vpiece.text.is_empty() {
            return Err(arg.error(
                format!("`{key_t}` has no value"),
                crate::expr::Span::new(p.offset, p.offset + p.text.len()),
                "here",
            ));
        }
        *slot = Some(arg.build_constant(store, names, &vpiece)?);
    }
    let (Some(th), Some(ph)) = (theta, phi) else {
        let missing = if theta.is_none() { "theta" } else { "phi" };
        return Err(
            ArgError::whole(arg.name, arg.text, format!("`{missing}` is missing"))
                .with_help("give both angles, e.g. theta=pi/3,phi=pi/4"),
        );
    };
    let (n, u, v) = polar_basis(store, th, ph).map_err(|e| limit(&arg, e))?;
    Ok(Direction {
        kind: DirectionKind::Angles,
        n,
        u,
        v,
        normalized: false,
        n_note: "n = (sin theta cos phi, sin theta sin phi, cos theta)".into(),
        basis_note: "u = e_theta = (cos theta cos phi, cos theta sin phi, -sin theta), \
                     v = e_phi = (-sin phi, cos phi, 0)"
            .into(),
    })
}

/// Replaces the basis with `u` given by the user (`--basis ax,ay,az`) and `v = n x u`.
///
/// # Errors
///
/// A malformed vector, one not proved perpendicular to `n`, or not proved unit length
/// (unless `normalize`).
pub fn set_basis(
    store: &mut Store,
    names: &Names,
    sampling: &Sampling,
    dir: &mut Direction,
    arg: Arg<'_>,
    normalize_it: bool,
) -> Result<(), ArgError> {
    let pieces = arg.split_exact(
        3,
        "the basis vector is given as ax,ay,az, perpendicular to n",
    )?;
    let mut a = [store.zero(); 3];
    for (slot, p) in a.iter_mut().zip(&pieces) {
        *slot = arg.build(store, names, p)?;
    }
    let an = dot(store, &a, &dir.n).map_err(|e| limit(&arg, e))?;
    if !store.is_zero(an) {
        let t = store.to_text(an);
        let why = match decide(store, an, sampling) {
            Verdict::Undecided(why) => {
                format!("cannot prove that it is perpendicular to n: a.n = {t} ({why})")
            }
            _ => format!("not perpendicular to n: a.n = {t}"),
        };
        return Err(arg
            .error(
                why,
                crate::expr::Span::new(0, arg.text.len()),
                "this vector",
            )
            .with_help("the first basis vector must be transverse to the direction"));
    }
    let u = if normalize_it {
        normalize(store, &arg, &a)?.0
    } else {
        require_unit(store, sampling, &arg, &a, "a", &normalize_help("a"))?;
        a
    };
    let v = cross(store, &dir.n, &u).map_err(|e| limit(&arg, e))?;
    dir.u = u;
    dir.v = v;
    dir.basis_note = if normalize_it {
        "u = a/|a| from --basis, v = n x u".into()
    } else {
        "u from --basis, v = n x u".into()
    };
    Ok(())
}

// ----- the projection of a perturbation ------------------------------------------------

/// The TT part of a perturbation along a direction.
#[derive(Clone, Debug)]
pub struct Projection {
    /// `h^TT_ij`.
    pub tt: Mat3,
    /// `h_+` in the direction's basis.
    pub plus: Form,
    /// `h_x` in the direction's basis.
    pub cross: Form,
}

/// Projects the spatial part of `h` along `dir` and takes the polarizations.
///
/// # Errors
///
/// An algebra limit.
pub fn project_perturbation(
    store: &mut Store,
    h: &[[Form; 4]; 4],
    dir: &Direction,
) -> CResult<Projection> {
    let tt = project(store, &dir.n, &spatial(h))?;
    let (plus, cross) = polarizations(store, &tt, &dir.u, &dir.v)?;
    Ok(Projection { tt, plus, cross })
}

/// The TT tensor as a 4x4 perturbation (time components zero).
#[must_use]
pub fn as_perturbation(store: &Store, tt: &Mat3) -> [[Form; 4]; 4] {
    let mut h = [[store.zero(); 4]; 4];
    for i in 0..3 {
        for j in 0..3 {
            h[i + 1][j + 1] = tt[i][j];
        }
    }
    h
}

/// A share of the input that is not TT.
#[derive(Clone, Debug, PartialEq)]
pub enum Share {
    /// Proved exactly: 0 (the input is TT along n) or 1 (nothing of it is).
    Exact(u8),
    /// An RMS ratio over sample points, numerical evidence.
    Numerical(f64),
    /// Not available, with the reason.
    Unavailable(String),
}

/// The fraction of the input that is not TT, in two senses.
#[derive(Clone, Debug, PartialEq)]
pub struct NotTt {
    /// `|h - h^TT| / |h|` over all sixteen components (h^TT with zero time components).
    pub all: Share,
    /// `|h_ij - h^TT_ij| / |h_ij|` over the spatial block.
    pub spatial: Share,
    /// How many sample points were evaluated.
    pub points: usize,
    /// The seed of the sample points.
    pub seed: u64,
}

/// Seed of the sample points of [`not_tt_fraction`].
pub const FRACTION_SEED: u64 = 0x77_f4ac_7105;
const FRACTION_POINTS: usize = 8;

/// What [`not_tt_fraction`] computes, in words.
pub const FRACTION_DEFINITION: &str = "|h - h^TT| / |h|, Frobenius norms of the components \
    in these coordinates (h^TT with zero time components), RMS over sample points at the \
    file's parameter values";

/// A point for numerical evaluation: the parameters at their file values, the function
/// samples, and the given coordinate values.
pub fn numeric_point(
    store: &mut Store,
    parameters: &[(String, f64)],
    sampling: &Sampling,
    coords: [f64; 4],
) -> Point {
    let names = crate::tensor::COORDS.map(String::from);
    numeric_point_in(store, &names, parameters, sampling, coords)
}

/// As [`numeric_point`], for the coordinates named `names` (time first).
pub fn numeric_point_in(
    store: &mut Store,
    names: &[String; 4],
    parameters: &[(String, f64)],
    sampling: &Sampling,
    coords: [f64; 4],
) -> Point {
    let mut pt = Point::default();
    for (name, v) in parameters {
        if let Some(i) = Interval::point(*v) {
            let k = store.symbol_kernel(name);
            pt.values.insert(k, CInterval::from_real(i));
        }
    }
    for (c, v) in names.iter().zip(coords) {
        if let Some(i) = Interval::point(v) {
            let k: KernelId = store.symbol_kernel(c);
            pt.values.insert(k, CInterval::from_real(i));
        }
    }
    pt.samples = sampling.samples.clone();
    pt
}

/// The share of `h` that is not TT: exact when the difference or the TT part is exactly
/// zero, else numerical (see [`FRACTION_DEFINITION`]).
pub fn not_tt_fraction(
    store: &mut Store,
    h: &[[Form; 4]; 4],
    tt: &Mat3,
    parameters: &[(String, f64)],
    sampling: &Sampling,
) -> NotTt {
    let tt4 = as_perturbation(store, tt);
    let mut diff = [[store.zero(); 4]; 4];
    for mu in 0..4 {
        for nu in 0..4 {
            match store.sub(h[mu][nu], tt4[mu][nu]) {
                Ok(d) => diff[mu][nu] = d,
                Err(e) => {
                    let why = format!("the algebra stopped: {e}");
                    return NotTt {
                        all: Share::Unavailable(why.clone()),
                        spatial: Share::Unavailable(why),
                        points: 0,
                        seed: FRACTION_SEED,
                    };
                }
            }
        }
    }
    let all_zero = |store: &Store, m: &[[Form; 4]; 4], spatial_only: bool| {
        let lo = usize::from(spatial_only);
        (lo..4).all(|a| (lo..4).all(|b| store.is_zero(m[a][b])))
    };
    let exact = |store: &Store, spatial_only: bool| -> Option<Share> {
        if all_zero(store, h, spatial_only) {
            Some(Share::Unavailable(
                if spatial_only {
                    "the spatial part is zero"
                } else {
                    "the perturbation is zero"
                }
                .into(),
            ))
        } else if all_zero(store, &diff, spatial_only) {
            Some(Share::Exact(0))
        } else if all_zero(store, &tt4, spatial_only) {
            Some(Share::Exact(1))
        } else {
            None
        }
    };
    let all_exact = exact(store, false);
    let spatial_exact = exact(store, true);
    let mut sums = [0f64; 4]; // |diff|^2 all, |h|^2 all, |diff|^2 spatial, |h|^2 spatial
    let mut points = 0usize;
    if all_exact.is_none() || spatial_exact.is_none() {
        let mut rng = SplitMix64::new(FRACTION_SEED);
        for _ in 0..FRACTION_POINTS {
            let c: [f64; 4] = std::array::from_fn(|_| {
                let mag = 0.25 + 1.75 * rng.next_f64();
                if rng.next_u64() & 1 == 1 { -mag } else { mag }
            });
            let pt = numeric_point(store, parameters, sampling, c);
            let mut local = [0f64; 4];
            let mut ok = true;
            'outer: for mu in 0..4 {
                for nu in 0..4 {
                    let (Some(d), Some(x)) = (
                        store.eval_f64(diff[mu][nu], &pt),
                        store.eval_f64(h[mu][nu], &pt),
                    ) else {
                        ok = false;
                        break 'outer;
                    };
                    let (d2, x2) = (d.0 * d.0 + d.1 * d.1, x.0 * x.0 + x.1 * x.1);
                    local[0] += d2;
                    local[1] += x2;
                    if mu > 0 && nu > 0 {
                        local[2] += d2;
                        local[3] += x2;
                    }
                }
            }
            if ok && local.iter().all(|v| v.is_finite()) {
                points += 1;
                for (s, l) in sums.iter_mut().zip(local) {
                    *s += l;
                }
            }
        }
    }
    let numeric = |num: f64, den: f64| -> Share {
        if points == 0 {
            Share::Unavailable("no sample point could be evaluated".into())
        } else if den == 0.0 {
            Share::Unavailable("the input is numerically zero at every sample point".into())
        } else {
            Share::Numerical((num / den).sqrt())
        }
    };
    NotTt {
        all: all_exact.unwrap_or_else(|| numeric(sums[0], sums[1])),
        spatial: spatial_exact.unwrap_or_else(|| numeric(sums[2], sums[3])),
        points,
        seed: FRACTION_SEED,
    }
}

#[cfg(test)]
mod tests;
