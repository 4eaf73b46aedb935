//! The quantities that can be exported or emitted, each as named columns of exact forms.
//!
//! Column names and orders are fixed here, once, for every output format and language:
//! symmetric tensors in the order tt tx ty tz xx xy xz yy yz zz (`h_tt, ..., h_zz`), first
//! derivatives derivative-major (`d_t_h_tt, ..., d_t_h_zz, d_x_h_tt, ..., d_z_h_zz`), the 20
//! independent Riemann components in the order of [`crate::tensor::riemann_independent`].

use crate::adm::{self, SPATIAL, SPATIAL_COMPONENTS};
use crate::canon::{CResult, CanonError, Coeff, Form, Q, Store};
use crate::tensor::COMPONENTS;
use crate::tensor::{COORDS, Linearized, Sym4, index_name};
use crate::tt::{Arg, ArgError, Direction};

/// Something that can be computed at a point.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Quantity {
    /// `h_{mu nu}`.
    H,
    /// The trace-reversed `hbar_{mu nu}`.
    Hbar,
    /// Every first derivative `d_rho h_{mu nu}`.
    Dh,
    /// The 20 independent Riemann components.
    Riemann,
    /// The linearized Ricci tensor.
    Ricci,
    /// The linearized Einstein tensor.
    Einstein,
    /// Lapse, shift, spatial metric, extrinsic curvature.
    Adm,
    /// Hamiltonian and momentum constraint residuals.
    Constraints,
    /// The Weyl scalar Psi4 (real and imaginary parts).
    Psi4,
    /// The plus polarization along a direction.
    Hplus,
    /// The cross polarization along a direction.
    Hcross,
}

impl Quantity {
    /// Every quantity, in the order of [`Quantity::NAMES`].
    pub const ALL: [Quantity; 11] = [
        Quantity::H,
        Quantity::Hbar,
        Quantity::Dh,
        Quantity::Riemann,
        Quantity::Ricci,
        Quantity::Einstein,
        Quantity::Adm,
        Quantity::Constraints,
        Quantity::Psi4,
        Quantity::Hplus,
        Quantity::Hcross,
    ];

    /// The names accepted on the command line.
    pub const NAMES: [&'static str; 11] = [
        "h",
        "hbar",
        "dh",
        "riemann",
        "ricci",
        "einstein",
        "adm",
        "constraints",
        "psi4",
        "hplus",
        "hcross",
    ];

    /// The name used on the command line and in file headers.
    #[must_use]
    pub fn name(self) -> &'static str {
        let i = Quantity::ALL.iter().position(|q| *q == self).unwrap_or(0);
        Quantity::NAMES[i]
    }

    /// The quantity with this name (exact, lowercase).
    #[must_use]
    pub fn parse(name: &str) -> Option<Quantity> {
        Quantity::NAMES
            .iter()
            .position(|n| *n == name)
            .map(|i| Quantity::ALL[i])
    }

    /// True for the quantities defined relative to a direction (`--direction`).
    #[must_use]
    pub fn needs_direction(self) -> bool {
        matches!(self, Quantity::Psi4 | Quantity::Hplus | Quantity::Hcross)
    }

    /// True for the quantities defined about any background, in any coordinates (the others
    /// are defined about Minkowski in Cartesian coordinates only).
    #[must_use]
    pub fn about_background(self) -> bool {
        matches!(
            self,
            Quantity::H
                | Quantity::Hbar
                | Quantity::Dh
                | Quantity::Riemann
                | Quantity::Ricci
                | Quantity::Einstein
        )
    }

    /// What the columns are about a background ([`Quantity::about_background`]), in one
    /// paragraph; `None` for the quantities defined only about flat space.
    #[must_use]
    pub fn definition_about_background(self) -> Option<&'static str> {
        Some(match self {
            Quantity::H => "the perturbation h_{mu nu} (g = gbar + h), both indices down",
            Quantity::Hbar => {
                "the trace-reversed perturbation hbar_{mu nu} = h_{mu nu} - (1/2) gbar_{mu nu} \
                 h, h = gbar^{mu nu} h_{mu nu}"
            }
            Quantity::Dh => {
                "first partial derivatives d_rho h_{mu nu} by the file's coordinates: column \
                 d_<rho>_h_<mu nu>, derivative-major"
            }
            Quantity::Riemann => {
                "the 20 algebraically independent components of dR_abcd = d/deps R_abcd[gbar \
                 + eps h] at eps = 0, all indices down, MTW sign (R^a_bcd = d_c Gamma^a_bd - \
                 ...); pairs (ab, cd) with ab <= cd in the order 01 02 03 12 13 23 of the \
                 coordinates, leaving out (03, 12)"
            }
            Quantity::Ricci => {
                "the first-order change of the Ricci tensor, dR_{mu nu} = d/deps R_{mu \
                 nu}[gbar + eps h] at eps = 0 (R_bd = R^a_bad)"
            }
            Quantity::Einstein => {
                "the first-order change of the Einstein tensor, dG_{mu nu} = d/deps G_{mu \
                 nu}[gbar + eps h] at eps = 0; the field equations are dG_{mu nu} + Lambda \
                 h_{mu nu} = 8 pi dT_{mu nu}"
            }
            _ => return None,
        })
    }

    /// What the columns are, with the conventions, in one paragraph.
    #[must_use]
    pub fn definition(self) -> &'static str {
        match self {
            Quantity::H => "the perturbation h_{mu nu} (g = eta + h), both indices down",
            Quantity::Hbar => {
                "the trace-reversed perturbation hbar_{mu nu} = h_{mu nu} - (1/2) eta_{mu nu} \
                 h, h = eta^{mu nu} h_{mu nu}"
            }
            Quantity::Dh => {
                "first derivatives d_rho h_{mu nu}: column d_<rho>_h_<mu nu>, derivative-major \
                 (all ten components of d_t h, then d_x h, d_y h, d_z h)"
            }
            Quantity::Riemann => {
                "the 20 algebraically independent components R_abcd of the linearized Riemann \
                 tensor, MTW sign: R_abcd = (1/2)(d_b d_c h_ad + d_a d_d h_bc - d_a d_c h_bd - \
                 d_b d_d h_ac); pairs (ab, cd) with ab <= cd in the order tx ty tz xy xz yz, \
                 leaving out R_tzxy = -R_txyz - R_tyzx"
            }
            Quantity::Ricci => {
                "the linearized Ricci tensor R_{mu nu} = eta^{rho sigma} R_{rho mu sigma nu}"
            }
            Quantity::Einstein => {
                "the linearized Einstein tensor G_{mu nu} = R_{mu nu} - (1/2) eta_{mu nu} R; the \
                 field equations are G_{mu nu} = 8 pi T_{mu nu}"
            }
            Quantity::Adm => adm::ADM_DEFINITION,
            Quantity::Constraints => adm::CONSTRAINT_DEFINITION,
            Quantity::Psi4 => PSI4_DEFINITION,
            Quantity::Hplus | Quantity::Hcross => {
                "TT polarizations along the direction n: h^TT_ij = Lambda_ij,kl h_kl with \
                 Lambda_ij,kl = P_ik P_jl - (1/2) P_ij P_kl, P = delta - n n; h_plus = (1/2) \
                 h^TT_ij (u_i u_j - v_i v_j), h_cross = (1/2) h^TT_ij (u_i v_j + v_i u_j), with \
                 the polarization basis (u, v) of the direction, (u, v, n) right-handed"
            }
        }
    }
}

/// The Weyl scalar's definition and tetrad, in words.
pub const PSI4_DEFINITION: &str = "Psi4 = C_abcd n^a mbar^b n^c mbar^d with the null tetrad \
    l = (d_t + n^i d_i)/sqrt(2), n = (d_t - n^i d_i)/sqrt(2), m = (u + i v)/sqrt(2) (l.n = -1, \
    m.mbar = 1), where n^i is the unit propagation direction (--direction; `radial` for \
    outgoing spherical waves) and (u, v) its polarization basis, (u, v, n) right-handed \
    (for radial: u = e_theta, v = e_phi). Since n and mbar are null and orthogonal the trace \
    terms of the Weyl tensor drop out, so Psi4 = R_abcd n^a mbar^b n^c mbar^d with the \
    linearized Riemann tensor (MTW sign), with or without a source. Columns: psi4_re, \
    psi4_im. For a TT wave travelling along n, Psi4 = -(d_t^2 h_plus - i d_t^2 h_cross) \
    (the convention of numerical relativity with signature -+++, e.g. Alcubierre 2008, \
    Introduction to 3+1 Numerical Relativity, ch. 8 -- from memory; the relation is proved \
    by lingrav's tests)";

/// One output column: its name and its exact expression.
#[derive(Clone, Debug)]
pub struct Column {
    /// The column's name, e.g. `h_tx`, `K_yy`, `psi4_re`.
    pub name: String,
    /// The same as LaTeX, e.g. `h_{tx}`.
    pub latex: String,
    /// The exact expression.
    pub form: Form,
}

/// The columns of one quantity.
#[derive(Clone, Debug)]
pub struct Block {
    /// The quantity.
    pub quantity: Quantity,
    /// Its columns, in their fixed order.
    pub columns: Vec<Column>,
}

/// Why the columns could not be made.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum QuantityError {
    /// A quantity relative to a direction was asked for without one.
    #[error("`{0}` is defined relative to a direction: give --direction")]
    MissingDirection(&'static str),
    /// A quantity defined only about flat space in Cartesian coordinates.
    #[error(
        "`{0}` is defined about flat space in Cartesian coordinates only; about a background \
         the quantities are h, hbar, dh, riemann, ricci, einstein"
    )]
    FlatOnly(&'static str),
    /// The algebra stopped.
    #[error("the algebra stopped: {0}")]
    Algebra(#[from] CanonError),
}

const DIRECTION_HELP: &str = "--direction takes the unit propagation direction `nx,ny,nz` \
    (e.g. `0,0,1`), polar angles `theta=..,phi=..`, or `radial` for waves going out from the \
    origin";

/// The help line for [`QuantityError::MissingDirection`].
#[must_use]
pub fn direction_help() -> &'static str {
    DIRECTION_HELP
}

/// Reads a comma-separated list of quantity names, in order, without repeats.
///
/// # Errors
///
/// An empty list or entry, or an unknown name (with a suggestion), pointing into the argument.
pub fn parse_list(arg: Arg<'_>, out: &mut Vec<Quantity>) -> Result<(), ArgError> {
    for piece in arg.split()? {
        let name = piece.text.to_lowercase();
        let name = match name.as_str() {
            "h_plus" | "h+" => "hplus".to_string(),
            "h_cross" | "hx" | "hcross" => "hcross".to_string(),
            _ => name,
        };
        match Quantity::parse(&name) {
            Some(q) => {
                if !out.contains(&q) {
                    out.push(q);
                }
            }
            None => {
                let mut help = format!("the quantities are {}", Quantity::NAMES.join(", "));
                if let Some(s) = suggest(&name) {
                    help = format!("did you mean `{s}`? {help}");
                }
                return Err(arg
                    .error(
                        format!("unknown quantity `{}`", piece.text),
                        piece.span(),
                        "not a quantity",
                    )
                    .with_help(help));
            }
        }
    }
    Ok(())
}

fn suggest(name: &str) -> Option<&'static str> {
    if name.chars().count() > 40 {
        return None;
    }
    Quantity::NAMES
        .iter()
        .map(|n| (crate::problem::edit_distance(name, n), *n))
        .filter(|(d, n)| *d <= (n.len().max(name.len()) + 1) / 3)
        .min()
        .map(|(_, n)| n)
}

fn sym_columns(prefix: &str, latex_prefix: &str, m: &Sym4) -> Vec<Column> {
    COMPONENTS
        .iter()
        .map(|&(i, j)| {
            let idx = index_name(&[i, j]);
            Column {
                name: format!("{prefix}_{idx}"),
                latex: format!("{latex_prefix}_{{{idx}}}"),
                form: m[i][j],
            }
        })
        .collect()
}

/// The columns of `quantities` for the perturbation `h` with source `source` (`None`: vacuum)
/// and, for the quantities that need one, the direction `dir`.
///
/// # Errors
///
/// A quantity that needs a direction without one, or an algebra limit.
pub fn blocks(
    store: &mut Store,
    h: &Sym4,
    source: Option<&Sym4>,
    quantities: &[Quantity],
    dir: Option<&Direction>,
) -> Result<Vec<Block>, QuantityError> {
    let mut lin = Linearized::new(store, *h);
    let mut out = Vec::new();
    for &q in quantities {
        let columns = match q {
            Quantity::H => sym_columns("h", "h", h),
            Quantity::Hbar => sym_columns("hbar", "\\bar{h}", &lin.hbar(store)?),
            Quantity::Dh => {
                let d = lin.dh(store)?;
                let mut cols = Vec::new();
                for (rho, drho) in d.iter().enumerate() {
                    for &(i, j) in &COMPONENTS {
                        let idx = index_name(&[i, j]);
                        cols.push(Column {
                            name: format!("d_{}_h_{idx}", COORDS[rho]),
                            latex: format!("\\partial_{{{}}} h_{{{idx}}}", COORDS[rho]),
                            form: drho[i][j],
                        });
                    }
                }
                cols
            }
            Quantity::Riemann => lin
                .riemann(store)?
                .into_iter()
                .map(|(idx, f)| {
                    let n = index_name(&idx);
                    Column {
                        name: format!("R_{n}"),
                        latex: format!("R_{{{n}}}"),
                        form: f,
                    }
                })
                .collect(),
            Quantity::Ricci => sym_columns("R", "R", &lin.ricci(store)?),
            Quantity::Einstein => sym_columns("G", "G", &lin.einstein(store)?),
            Quantity::Adm => {
                let a = adm::adm(store, &mut lin)?;
                let mut cols = vec![Column {
                    name: "alpha".into(),
                    latex: "\\alpha".into(),
                    form: a.alpha,
                }];
                for (i, b) in a.beta.iter().enumerate() {
                    cols.push(Column {
                        name: format!("beta_{}", SPATIAL[i]),
                        latex: format!("\\beta_{{{}}}", SPATIAL[i]),
                        form: *b,
                    });
                }
                for (prefix, latex, m) in [("gamma", "\\gamma", &a.gamma), ("K", "K", &a.k)] {
                    for &(i, j) in &SPATIAL_COMPONENTS {
                        let idx = format!("{}{}", SPATIAL[i], SPATIAL[j]);
                        cols.push(Column {
                            name: format!("{prefix}_{idx}"),
                            latex: format!("{latex}_{{{idx}}}"),
                            form: m[i][j],
                        });
                    }
                }
                cols
            }
            Quantity::Constraints => {
                let c = adm::constraints(store, &mut lin, source)?;
                let mut cols = vec![Column {
                    name: "H".into(),
                    latex: "\\mathcal{H}".into(),
                    form: c.hamiltonian,
                }];
                for (i, m) in c.momentum.iter().enumerate() {
                    cols.push(Column {
                        name: format!("M_{}", SPATIAL[i]),
                        latex: format!("\\mathcal{{M}}_{{{}}}", SPATIAL[i]),
                        form: *m,
                    });
                }
                cols
            }
            Quantity::Psi4 => {
                let dir = dir.ok_or(QuantityError::MissingDirection(q.name()))?;
                let (re, im) = psi4(store, &mut lin, dir)?;
                vec![
                    Column {
                        name: "psi4_re".into(),
                        latex: "\\operatorname{Re}\\Psi_4".into(),
                        form: re,
                    },
                    Column {
                        name: "psi4_im".into(),
                        latex: "\\operatorname{Im}\\Psi_4".into(),
                        form: im,
                    },
                ]
            }
            Quantity::Hplus | Quantity::Hcross => {
                let dir = dir.ok_or(QuantityError::MissingDirection(q.name()))?;
                let p = crate::tt::project_perturbation(store, h, dir)?;
                if q == Quantity::Hplus {
                    vec![Column {
                        name: "h_plus".into(),
                        latex: "h_{+}".into(),
                        form: p.plus,
                    }]
                } else {
                    vec![Column {
                        name: "h_cross".into(),
                        latex: "h_{\\times}".into(),
                        form: p.cross,
                    }]
                }
            }
        };
        out.push(Block {
            quantity: q,
            columns,
        });
    }
    Ok(out)
}

/// The columns of `quantities` for the perturbation `h` about the background `bg`, whose
/// coordinates are written as `frame` says (component `h_t.ph` when a name has more than one
/// letter, else joined as about flat space). Only the quantities
/// [`Quantity::about_background`] are defined here.
///
/// # Errors
///
/// Another quantity, or an algebra limit.
pub fn blocks_about(
    store: &mut Store,
    bg: &mut crate::tensor::curved::Background,
    frame: &crate::tensor::Frame,
    h: &Sym4,
    quantities: &[Quantity],
) -> Result<Vec<Block>, QuantityError> {
    use crate::tensor::curved::Perturbation;
    let mut pert = Perturbation::new(*h);
    let sym = |prefix: &str, latex: &str, m: &Sym4| -> Vec<Column> {
        COMPONENTS
            .iter()
            .map(|&(i, j)| {
                let idx = frame.index(&[i, j]);
                Column {
                    name: format!("{prefix}_{idx}"),
                    latex: format!("{latex}_{{{idx}}}"),
                    form: m[i][j],
                }
            })
            .collect()
    };
    let mut out = Vec::new();
    for &q in quantities {
        let columns = match q {
            Quantity::H => sym("h", "h", h),
            Quantity::Hbar => {
                let tr = pert.trace(store, bg)?;
                let half = Coeff::rational(Q::new((-1).into(), 2.into()));
                let mut hb = *h;
                for &(i, j) in &COMPONENTS {
                    let x = store.mul(bg.g[i][j], tr)?;
                    let v = store.linear(&[(&Coeff::one(), h[i][j]), (&half, x)])?;
                    hb[i][j] = v;
                    hb[j][i] = v;
                }
                sym("hbar", "\\bar{h}", &hb)
            }
            Quantity::Dh => {
                let mut cols = Vec::new();
                for rho in 0..4 {
                    for &(i, j) in &COMPONENTS {
                        let idx = frame.index(&[i, j]);
                        let c = frame.coord(rho);
                        cols.push(Column {
                            name: format!("d_{c}_h_{idx}"),
                            latex: format!("\\partial_{{{c}}} h_{{{idx}}}"),
                            form: store.diff(h[i][j], bg.coords[rho])?,
                        });
                    }
                }
                cols
            }
            Quantity::Riemann => pert
                .riemann(store, bg)?
                .into_iter()
                .map(|(idx, f)| {
                    let n = frame.index(&idx);
                    Column {
                        name: format!("dR_{n}"),
                        latex: format!("\\delta R_{{{n}}}"),
                        form: f,
                    }
                })
                .collect(),
            Quantity::Ricci => sym("dR", "\\delta R", &pert.delta_ricci(store, bg)?),
            Quantity::Einstein => sym("dG", "\\delta G", &pert.delta_einstein(store, bg)?),
            _ => return Err(QuantityError::FlatOnly(q.name())),
        };
        out.push(Block {
            quantity: q,
            columns,
        });
    }
    Ok(out)
}

type Riemann4 = [[[[Form; 4]; 4]; 4]; 4];

/// Every component R_abcd, from the independent ones and the symmetries.
fn full_riemann(store: &mut Store, lin: &mut Linearized) -> CResult<Riemann4> {
    let z = store.zero();
    let mut r = [[[[z; 4]; 4]; 4]; 4];
    for a in 0..4 {
        for b in (a + 1)..4 {
            for c in 0..4 {
                for d in (c + 1)..4 {
                    let v = lin.riemann_component(store, [a, b, c, d])?;
                    let nv = store.neg(v)?;
                    r[a][b][c][d] = v;
                    r[b][a][c][d] = nv;
                    r[a][b][d][c] = nv;
                    r[b][a][d][c] = v;
                }
            }
        }
    }
    Ok(r)
}

/// `R_abcd A^a B^b C^c D^d`.
fn contract(store: &mut Store, r: &Riemann4, v: [&[Form; 4]; 4]) -> CResult<Form> {
    let mut acc = store.zero();
    for a in 0..4 {
        if store.is_zero(v[0][a]) {
            continue;
        }
        for b in 0..4 {
            if store.is_zero(v[1][b]) {
                continue;
            }
            for c in 0..4 {
                if store.is_zero(v[2][c]) {
                    continue;
                }
                for d in 0..4 {
                    if store.is_zero(v[3][d]) || store.is_zero(r[a][b][c][d]) {
                        continue;
                    }
                    let p = store.mul(v[0][a], v[1][b])?;
                    let p = store.mul(p, v[2][c])?;
                    let p = store.mul(p, v[3][d])?;
                    let p = store.mul(p, r[a][b][c][d])?;
                    acc = store.add(acc, p)?;
                }
            }
        }
    }
    Ok(acc)
}

/// The real and imaginary parts of Psi4 (see [`PSI4_DEFINITION`]) along `dir`:
/// with `N = d_t - n^i d_i`, `Re Psi4 = (R(N,u,N,u) - R(N,v,N,v))/4` and
/// `Im Psi4 = -R(N,u,N,v)/2`, from `n = N/sqrt(2)`, `mbar = (u - i v)/sqrt(2)` and the pair
/// symmetry of R.
///
/// # Errors
///
/// An algebra limit.
pub fn psi4(store: &mut Store, lin: &mut Linearized, dir: &Direction) -> CResult<(Form, Form)> {
    let r = full_riemann(store, lin)?;
    let z = store.zero();
    let nt = [
        store.one(),
        store.neg(dir.n[0])?,
        store.neg(dir.n[1])?,
        store.neg(dir.n[2])?,
    ];
    let u = [z, dir.u[0], dir.u[1], dir.u[2]];
    let v = [z, dir.v[0], dir.v[1], dir.v[2]];
    let nunu = contract(store, &r, [&nt, &u, &nt, &u])?;
    let nvnv = contract(store, &r, [&nt, &v, &nt, &v])?;
    let nunv = contract(store, &r, [&nt, &u, &nt, &v])?;
    let d = store.sub(nunu, nvnv)?;
    let re = store.scale(d, &Coeff::rational(Q::new(1.into(), 4.into())))?;
    let im = store.scale(nunv, &Coeff::rational(Q::new((-1).into(), 2.into())))?;
    Ok((re, im))
}
