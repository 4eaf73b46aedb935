//! Argument parsing and dispatch. Each command is a file in `cmd/`; what they share is here:
//! `limits` (the limit options, loading a problem under them, the memory watchdog), `plan`
//! (arguments read against a problem, output files opened before any work), `report` (text
//! and JSON of verdicts, claims and components), `audit` (how the independent audit is
//! shown), `out` (outcomes, exit codes and the one mapping of a limit to "undecided"),
//! `render` (error reports that cannot panic), `quantities` (export and emit), `progress`.

mod audit;
mod cmd;
mod limits;
mod out;
mod plan;
mod progress;
mod quantities;
mod render;
mod report;

use cmd::{
    antenna, binary, check, compare, diff, emit, export, gauge, grid, project, radiation, response,
    ring, show, simplify, zero,
};

use clap::{ArgMatches, CommandFactory, FromArgMatches, Parser, Subcommand};
use std::process::ExitCode;

const AFTER_HELP: &str = "\
Conventions: signature (-,+,+,+), coordinates (t,x,y,z) unless a file lists others (about a
background), G = c = 1, indices of h and T down, MTW curvature signs.
Exit codes: 0 holds / zero, 1 fails / nonzero, 2 bad input or I/O error, 3 undecided
(including a limit reached: --time-limit, --max-terms, --max-memory).";

/// Exact and numerical checks of linearized-gravity metric perturbations.
#[derive(Parser, Debug)]
#[command(name = "lingrav", version, about, after_help = AFTER_HELP, propagate_version = true)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Decide whether an expression (or the difference of two) is identically zero.
    #[command(after_help = "\
Examples:
  lingrav zero 'sin(x)^2 + cos(x)^2 - 1'
  lingrav zero 'd_t_t(F(t - z)) - d_z_z(F(t - z))'
  lingrav zero 'cos(3*a)' '4*cos(a)^3 - 3*cos(a)'

Unknown names are free symbols; unknown names applied to an argument are arbitrary
functions of one argument (F'(u), F''(u) are their derivatives); d_x(...) differentiates.
Verdicts: zero (proved: the canonical form cancels), nonzero (certified at a printed
witness point), undecided (with the reason). Exit 0, 1, 3 respectively; 2 for bad input.
Every verdict is audited by an independent route (your texts evaluated with certified
interval Taylor jets, never the canonical form), said on the second line: a proof must
contain 0 at 3 seeded points (--seed; --audit-points prints them), a witness must be
certified again at its point (f64 intervals, then 128-, 256-, 512-bit balls), else the
verdict is undecided. A proof contradicted there is reported nonzero as an INTERNAL DEFECT.")]
    Zero(zero::ZeroArgs),
    /// Print the canonical form of an expression in readable real form.
    #[command(after_help = "\
Examples:
  lingrav simplify '2*sin(x)*cos(x)'            # prints sin(2*x)
  lingrav simplify --latex '1/sqrt(x^2 + y^2 + z^2)^3'
  lingrav simplify --format json 'cosh(x)^2 - sinh(x)^2'

The second line says how the printed form was audited: it and the input are evaluated by an
independent route (certified interval Taylor jets of the texts) at 3 seeded points (--seed,
--audit-points) and must agree; a disagreement is an INTERNAL DEFECT (exit 1).")]
    Simplify(simplify::SimplifyArgs),
    /// Differentiate an expression by one or more variables and print the simplified result.
    #[command(after_help = "\
Examples:
  lingrav diff 'F(t - r)/r' t t            # second time derivative
  lingrav diff 'sqrt(x^2 + y^2 + z^2)' x   # prints x*sqrt(x^2 + y^2 + z^2)/(x^2 + y^2 + z^2)
  lingrav diff --format json 'F(t - r)/r' t

The second line says how the printed derivative was audited: it must agree with the jet
derivative of the input (certified interval Taylor jets of the text, never the canonical
form) at 3 seeded points (--seed, --audit-points); a disagreement is an INTERNAL DEFECT
(exit 1).")]
    Diff(diff::DiffArgs),
    /// Check a perturbation's claims: field equations, gauge conditions, pure gauge.
    #[command(after_help = "\
Example:
  lingrav check worked/oblique_wave.toml
  lingrav check --format json worked/oblique_wave.toml

One line per claim: holds (proved exactly), fails (with the failing components, their
simplified residuals and a certified witness point) or undecided (with the reason).
Without a [claims] table every property is reported. Exit 0 every claim holds, 1 one
fails, 3 one is undecided and none fails, 2 bad input.")]
    Check(check::CheckArgs),
    /// Test the claims numerically: finite-difference residuals and their convergence order.
    #[command(after_help = "\
Examples:
  lingrav grid worked/oblique_wave.toml
  lingrav grid worked/static_mass.toml --order 6 --points 10,20,40 --svg static_mass.svg
  lingrav grid --format json --center 0,1,1,1 --width 0.5 worked/vibrating_rod.toml

h (and T) are sampled on a 4-d box at each resolution ([grid] center, width, points, or the
flags; defaults centre (0.3, 0.4, 0.5, 0.6), side 0.2, points 8,16,32 or more for high
orders). Derivatives are central finite differences of the chosen order, never symbolic.
For each claim: the largest |component| over the coarsest grid's interior at each resolution,
the observed order p = log(r1/r2)/log(h1/h2), and the estimated round-off floor (from running
error bounds of the samples times the stencils' amplification).
Verdict (numerical evidence), on the finest pair of resolutions: the components vanish if
the residual is within the floor (a defect below the floor cannot be seen, and the report
says so) or falls at p >= order - 1/2; they do not vanish if it stalls (|p| < 1/2) above 10
times the floor; anything else is inconclusive, with the reason. A claim `= false` holds
when they do not vanish. A non-finite sample stops the run naming its point, unless
--mask-nonfinite. Exit 0 every claim holds, 1 one fails, 3 one is inconclusive and none
fails, 2 bad input.")]
    Grid(grid::GridArgs),
    /// Print a derived quantity (Einstein, Ricci, Riemann, ...) component by component.
    #[command(after_help = "\
Examples:
  lingrav show worked/vibrating_rod.toml einstein
  lingrav show --latex worked/static_mass.toml riemann
  lingrav show --format json worked/vibrating_rod.toml ricci")]
    Show(show::ShowArgs),
    /// The TT part of a perturbation along a direction, its plus and cross polarizations.
    #[command(after_help = "\
Examples:
  lingrav project worked/lorenz_wave.toml --direction 0,0,1
  lingrav project worked/oblique_wave.toml --direction 3/5,0,4/5 --format json
  lingrav project worked/lorenz_oblique.toml --direction 2/3,2/3,1/3 --basis 1/3,-2/3,2/3
  lingrav project worked/lorenz_wave.toml --direction theta=0,phi=0 --output tt.toml

Directions: a unit vector nx,ny,nz (exact: 3/5,0,4/5 or 1/sqrt(3),1/sqrt(3),1/sqrt(3); another
length is refused unless --normalize), polar angles theta=..,phi=.. (constant expressions, the
file's parameters allowed), or radial (n = x/r, for the field of a localized source).
Default basis: u = e_theta, v = e_phi of n's polar angles, phi = 0 on the z axis (so along z,
h_plus = h^TT_xx and h_cross = h^TT_xy); --basis ax,ay,az sets u, and v = n x u.
\"not TT\" is |h - h^TT| / |h| (Frobenius norms of the components): exact when 0 or 1, else
numerical evidence at sample points. --output writes the TT part with the claims proved for it
(field_equations, gauge tt). Every exact statement (unit length, the TT part as printed, an
exact share, the claims of --output) is audited by an independent evaluation of the texts at
seeded points (--audit-points prints them). Exit 0 (with --output: both proved), 1 one fails
or an INTERNAL DEFECT (the audit contradicts the exact route), 3 undecided, 2 bad input.")]
    Project(project::ProjectArgs),
    /// Apply a gauge transformation, or construct the one that brings a plane wave to TT gauge.
    #[command(after_help = "\
Examples:
  lingrav gauge worked/lorenz_wave.toml --vector 'b*sin(w*(t - z))/(2*w), 0, 0, -b*sin(w*(t - z))/(2*w)'
  lingrav gauge worked/lorenz_wave.toml --to-tt --format json
  lingrav gauge worked/lorenz_oblique.toml --to-tt --output oblique_tt.toml

h -> h - d_mu xi_nu - d_nu xi_mu, xi index down; prints h' and whether the Lorenz gauge is
preserved (box xi_nu = 0). --to-tt builds xi for a Lorenz-gauge plane wave (phase read off
the perturbation, or --wave-vector w,kx,ky,kz) and verifies h' exactly: TT gauge, Lorenz
gauge, field equations. Every verdict (k null, the input's Lorenz gauge, box xi, those on h')
is audited by an independent evaluation of the texts of h and xi (xi as printed when
constructed) at seeded points (--audit-points prints them). Exit: --to-tt 0 proved, 1 fails,
3 undecided; --vector 0 once h' is computed (3 if a limit left a verdict on it undecided);
1 for an INTERNAL DEFECT (the audit contradicts
the exact route); 2 bad input (or not a Lorenz-gauge plane wave).")]
    Gauge(gauge::GaugeArgs),
    /// Decide whether two perturbations are the same physics in different gauges.
    #[command(after_help = "\
Examples:
  lingrav compare worked/lorenz_oblique.toml worked/lorenz_oblique_tt.toml
  lingrav compare --format json worked/lorenz_wave.toml worked/oblique_wave.toml

Same physics: identical linearized Riemann tensors (each of the 20 independent components
of R[A] - R[B] tested exactly). Every verdict is audited by an independent evaluation of both
files' texts: a proof at 3 seeded points (--audit-points prints them), a witness again at its
point; a contradicted proof is reported different, with an INTERNAL DEFECT line. Exit 0 same,
1 different (the differing components are listed with a certified witness), 3 undecided,
2 bad input.")]
    Compare(compare::CompareArgs),
    /// How a ring of free test masses transverse to a direction responds to the TT part.
    #[command(after_help = "\
Examples:
  lingrav ring worked/oblique_wave.toml --direction 3/5,0,4/5 --times 0,0.5,1,1.5
  lingrav ring worked/lorenz_wave.toml --direction z --times 0,1 --format json
  lingrav ring worked/lorenz_wave.toml --direction 0,0,1 --radius 2 --times 0,pi/(4*w),pi/(2*w) --svg ring.svg

Masses at L (cos phi u + sin phi v); delta x^i = (1/2) h^TT_ij x^j with h^TT at the ring's
centre (--at, default the origin), evaluated numerically with the file's parameter values
and function samples. The SVG shows each time as a panel: the ring at rest (dashed), the
deformed ring and the masses, displacements exaggerated by a printed factor.")]
    Ring(ring::RingArgs),
    /// Write reference values (h, curvature, ADM data, constraints, Psi4) at your points.
    #[command(after_help = "\
Examples:
  lingrav export worked/linear_wave_testbed.toml --quantity adm,constraints --grid --out adm.csv
  lingrav export worked/oblique_wave.toml -q h,dh --at points.csv --out h.npy
  lingrav export worked/oblique_wave.toml -q psi4,hplus,hcross --direction 3/5,0,4/5 --grid --out w.json

Points: --at FILE, a CSV file with one t,x,y,z per line (optional header t,x,y,z; # comments),
or --grid, the box of the grid check ([grid] table or --center, --width, --points; a spatial
grid at the centre's t, rows in C order with z fastest; --spacetime lets t vary too).
Columns: t,x,y,z, then each quantity's components, e.g. h_tt,h_tx,...,h_zz (order tt tx ty tz
xx xy xz yy yz zz); adm: alpha, beta_x.., gamma_xx.., K_xx.. (MTW/York sign K = -(1/2)(d_t h_ij
- d_i h_tj - d_j h_ti)); constraints: H, M_x, M_y, M_z (zero for a solution); psi4: psi4_re,
psi4_im (tetrad n = (d_t - n.d)/sqrt2, m = (u + i v)/sqrt2; Psi4 = -(h_plus'' - i h_cross'')
for a TT wave along n). .npy: one float64 array, shape (rows, columns), columns as in CSV.
The sidecar PATH.meta.json holds the column names, conventions, parameter values, every
column's exact expression and certified error bound, and the tool version. Files appear
whole (temporary file, then rename; the data first, then the sidecar, which records the
data file's size and CRC-32 checksum (as zlib.crc32)); an existing file is kept unless --force.
--format json prints what was written as JSON (rows, columns, paths, checksum; a limit or an
error as a JSON object too). Exit 0 written, 2 bad input, a point where a value is not
finite, or an I/O error (nothing written), 3 undecided (a limit, or values not certified).")]
    Export(export::ExportArgs),
    /// Emit code (C, Python, Fortran, Rust, LaTeX) that computes the quantities at a point.
    #[command(after_help = "\
Examples:
  lingrav emit worked/linear_wave_testbed.toml --quantity adm --lang c --out adm.c
  lingrav emit worked/oblique_wave.toml -q h,riemann --lang python --out wave.py
  lingrav emit worked/vibrating_rod.toml -q h --lang fortran --samples

C:       void lingrav_<quantity>(double t, double x, double y, double z,
                                 const double *params, double *out);
Fortran: subroutine lingrav_<quantity>(t, x, y, z, params, out) in module lingrav_formulas.
Rust:    pub fn lingrav_<quantity>(t, x, y, z: f64, params: &[f64; P], out: &mut [f64; N]).
Python:  lingrav_<quantity>(t, x, y, z, <parameters with the file's values as defaults>)
         returns an array of shape (N,) + the broadcast shape of the arguments.
params holds the file's parameters in file order; out the columns in the order of export.
Arbitrary functions F are calls to functions you supply, F_d0(u) = F(u), F_d1(u) = F'(u),
..., or, with --samples, the file's samples. The header comment documents everything.
--format json prints a JSON report instead: the quantities, the language, the path written
(or the code itself without --out), its size and checksum.")]
    Emit(emit::EmitArgs),
    /// A Keplerian binary in physical units: luminosity, decay, coalescence, chirp, strain.
    #[command(after_help = "\
Examples:
  lingrav binary --m1 1.4msun --m2 1.3msun --period 5h --eccentricity 0.4 --distance 2kpc
  lingrav binary --m1 30 --m2 25 --semimajor-axis 5000km --evolve --until-frequency 40Hz --svg chirp.svg
  lingrav binary --m1 1.4 --m2 1.4 --period 2h --format json

Numbers carry their units, with or without a space: masses msun (a bare number is msun);
times s, h, d, yr (Julian); lengths m, km, AU, pc, kpc, Mpc, Gpc; frequencies Hz, mHz, kHz.
Give exactly one of --period and --semimajor-axis; 0 <= e < 1. SI units throughout; masses
enter as G m with the IAU 2015 nominal G M_sun = 1.3271244e20 m^3/s^2 (G, CODATA 6.67430e-11,
only for the luminosity in watts), c exact.
Formulas: the orbit-averaged quadrupole luminosity with the Peters & Mathews (1963) f(e);
da/dt, de/dt of Peters (1964); dP/dt = (3/2)(P/a) da/dt; the time to coalescence is Peters'
exact integral for eccentric orbits (the circular closed form a^4/(4 beta) is printed beside
it); f_gw = 2 f_orb (the dominant harmonic); h0 = 4 (G Mc)^(5/3) (pi f_gw)^(2/3) / (c^4 d).
--evolve integrates da/dt, de/dt until f_gw reaches --until-frequency or a = 6 G M / c^2:
a table of t, a, e, f_gw and the accumulated GW phase (--svg draws it).
The audit line: every number again by a second route (the fluxes by averaging the quadrupole
formula over the Kepler ellipse, the coalescence time by a second integrator, the rest by an
equivalent formula); a relative disagreement above 1e-8 is an INTERNAL DEFECT (exit 1).
Exit 0 computed, 1 INTERNAL DEFECT, 2 bad input (e >= 1, a nonpositive mass, an unknown
unit, both or neither of --period and --semimajor-axis, a number beyond double precision).")]
    Binary(binary::BinaryArgs),
    /// The antenna pattern F_plus, F_cross of a two-arm detector, and its sky averages.
    #[command(after_help = "\
Examples:
  lingrav antenna --theta pi/3 --phi pi/6 --psi pi/5
  lingrav antenna --arm-b '1/2,sqrt(3)/2,0' --format json
  lingrav antenna --theta th --phi 0 --psi 0 --svg sky.svg
  lingrav antenna --arm-b 'cos(g),sin(g),0' --psi 0 --theta 0 --phi 0

Detector tensor D = (a a - b b)/2 for unit arms a, b at any angle (not parallel);
F_plus = D_ij e+_ij, F_cross = D_ij ex_ij, so the strain is F_plus h_plus + F_cross h_cross.
Convention: (theta, phi) are the polar angles of the direction FROM THE
DETECTOR TO THE SOURCE, r = (sin theta cos phi, sin theta sin phi, cos theta); the wave
propagates along k = -r; u = cos psi e_theta + sin psi e_phi, v = sin psi e_theta - cos psi e_phi
(psi turns u from e_theta towards e_phi; u x v = k); e+ = u u - v v, ex = u v + v u. At psi = 0,
(u, v) is project's default basis along the propagation direction k.
Angles are numbers or expressions; symbols (the defaults theta, phi, psi) give the pattern as a
formula. Proved by the zero test (never assumed): the rotation law of (F_plus, F_cross) in psi,
that F_plus^2 + F_cross^2 is independent of psi, its identity with 2 D:Lambda(r):D, and the sky
average <F_plus^2 + F_cross^2> = (2/5) sin^2(opening angle) (2/5 at 90 degrees).
Audit: the printed exact forms are evaluated by an independent route (certified interval jets)
against the f64 contraction of the vectors and a quadrature over the sky and psi; every cell
of --svg likewise. A disagreement is an INTERNAL DEFECT (exit 1). --svg draws phi across,
theta down, 5-degree cells, the arms marked, a colour legend (--map rms|plus|cross); the file
appears whole or not at all. Exit 0 proved and audited, 1 internal defect, 3 undecided, 2 bad
input (a non-unit or parallel arm, an unreadable angle).")]
    Antenna(antenna::AntennaArgs),
    /// What a file's bodies radiate: moments, luminosity, waveform, recoil.
    #[command(after_help = "\
Examples:
  lingrav radiation worked/circular_binary.toml
  lingrav radiation worked/circular_binary.toml --direction theta=pi/3,phi=0 --distance 1e6
  lingrav radiation worked/recoil_binary.toml --direction z --format json
  lingrav radiation worked/eccentric_binary.toml --direction z --distance R
  lingrav radiation worked/circular_binary.toml --direction z --distance 1e15 --mass-unit 1.4msun --at 0.01s

The source is the file's [[body]] tables (mass, position as functions of t; a rigid body adds
principal moments, an axis and an angle) or its [binary] (circular: in t; eccentric: in its
eccentric anomaly E, n t = E - e sin E, every quantity a function of E, averages over one
orbit; see the README).
G = c = 1; moments about the origin: Q_ij = sum m (x_i x_j - delta_ij |x|^2/3);
h^TT = (2/r) Lambda(n) d^2Q/dt^2 (t - r); L = (1/5) dddQ_ij dddQ_ij;
dJ_i/dt = -(2/5) eps_ijk ddQ_ja dddQ_ka. Next order: the mass octupole Q_ijk = STF sum m x_i
x_j x_k, the current quadrupole S_ij = STF sum m x_i (x cross v)_j (Thorne 1980's S_ij), the
linear momentum the waves carry dP_i/dt = (2/63) d^4Q_iab d^3Q_ab + (16/45) eps_ipq d^3Q_pa
d^3S_qa (the source recoils at -dP/dt), and with --direction their field h_plus_next,
h_cross_next (not included in h_plus, h_cross). A rigid body is assumed reflection-symmetric
in its principal planes (said in the output); one whose moments change is refused at the
next order, with the reason. Time averages are exact for sums of exp(i w t) (periodic
motion), else said to be unavailable. A mass dipole that accelerates is flagged.

JSON: quantities.{Q_ij, L, dJ_i/dt, Q_ijk, S_ij, dP_i/dt, h_plus, h_cross, h_plus_next,
h_cross_next} (i, j, k in x, y, z; symmetric tensors by their sorted indices), each with its
expression and audit; averages.{L, dJ_i/dt, dP_i/dt}; next_order_refused (null or the
reason); assumptions (what was assumed of rigid bodies); dipole_accelerates, direction,
distance, conventions, audit.

SI numbers (--mass-unit: one geometric unit of mass, in msun; lengths are then in G M/c^2,
times in G M/c^3): the parameters take the file's values (--set NAME=VALUE overrides), and
the distance (m), the frequencies of Q_ij (Hz) or an eccentric orbit's period (s), the
averaged luminosity (W, L c^5/G), angular-momentum flux (N m, dJ/dt M c^2) and momentum
flux (N, c^4/G) are printed; --at T adds the instantaneous values at the source's time T and
the strain it sends (received one distance later). JSON: si.{numbers, averages, at} with
unit suffixes (distance_m, luminosity_w, angular_momentum_flux_z_n_m, momentum_flux_x_n,
orbital_period_s, frequency_1_hz, h_plus), si.audit. Each SI number is the enclosure of the
exact form times the factor, checked against a floating-point evaluation of the printed
text: a disagreement is an INTERNAL DEFECT (exit 1), an enclosure wider than 1e-9 relative
is not printed (exit 3).

Every printed form is audited against its definition evaluated from the bodies' texts by an
independent route (certified jets); a disagreement is an INTERNAL DEFECT (exit 1).")]
    Radiation(radiation::RadiationArgs),
    /// The strain a two-arm detector records for a file's perturbation, by two routes.
    #[command(after_help = "\
Examples:
  lingrav response worked/lorenz_wave.toml --direction z
  lingrav response worked/detector_gauge_wave.toml --direction 2/3,2/3,1/3 --arm-length 1/2
  lingrav response worked/oblique_wave.toml --direction 3/5,0,4/5 --arm-b '1/2,sqrt(3)/2,0' --format json

Detector: unit arms a, b (--arm-a, --arm-b, as in antenna), D = (a a - b b)/2, corner x0
(--at, default the origin). The strain s(t) is exact in t, by two routes:
 1. TT route (long-wavelength limit): s = D_ij h^TT_ij(t, x0), h^TT the TT projection of h
    along the propagation direction --direction (as in project); s = F_plus h_plus +
    F_cross h_cross in the direction's basis.
 2. tidal route (gauge invariant): geodesic deviation (MTW sign) gives
    d^2 s/dt^2 = -(a a - b b)^ij R_0i0j = -2 D_ij R_0i0j at x0, integrated twice in t exactly
    where the engine can (sin, cos, exp of linear phases, powers of t, F^(n)(t - c) to
    F^(n-1)); s is defined up to c0 + c1 t, and c0, c1 are printed from route 1.
The routes agree when d^2/dt^2 of route 1 equals -2 D_ij R_0i0j, decided by the zero test:
agree (proved), disagree (certified witness: h is not a vacuum plane wave along n, e.g. a
static tidal field) or undecided (the reason).
--arm-length L: for a plane wave h(t - n.x) along --direction (proved; else exit 2), the
light-travel-time response of a Michelson: photon leaves x0 at t - 2L, returns at t; per leg
(1/2) int h^TT_aa dl, integrated exactly with G' = a_i a_j h^TT_ij:
dT_a = [G(u0 - L(1 + n.a)) - G(u0 - 2L)]/(2(1 - n.a)) + [G(u0) - G(u0 - L(1 + n.a))]/(2(1 + n.a)),
u0 = t - n.x0; s_L = (dT_a - dT_b)/(2L). The limit s_L -> s as L -> 0 is proved with a
symbolic L. Write an arbitrary-function wave as a derivative (F'(t - z)) so G exists.
Audit: the printed forms are evaluated by the independent jet route at 3 seeded times and
parameter values against D:Lambda(n):h, -2 D:R_0i0j from the jets of the file's texts, and a
quadrature of the photon delay; a disagreement is an INTERNAL DEFECT (exit 1).
JSON keys: detector {a, b, at, tensor}, direction {kind, n, u, v}, tt_route {strain,
h_plus, h_cross, F_plus, F_cross}, tidal_route {second_derivative, strain, not_integrated,
constants {c0, c1}, source}, agreement {result: agree|disagree|undecided, verdict, ...},
finite_arm {arm_length, strain, delay_a, delay_b, symbol, limit_value, limit_slope, source}
or null, audit {defect, method, comparisons, not_audited, seed}.
Exit 0 agree (and the limit proved), 1 disagree or INTERNAL DEFECT, 3 undecided, 2 bad input
(a background file, a non-unit or parallel arm, a direction that does not parse,
--arm-length for a field that is not a plane wave along --direction).")]
    Response(response::ResponseArgs),
}

/// Runs the command line and returns the exit code.
pub fn run() -> ExitCode {
    let parsed = Cli::command()
        .try_get_matches()
        .and_then(|m| Ok((Cli::from_arg_matches(&m)?, m)));
    let (cli, matches) = match parsed {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    if let Some((_, sub)) = matches.subcommand() {
        out::report_as(report_format(sub));
    }
    let result = match cli.command {
        Command::Zero(a) => zero::run(a),
        Command::Simplify(a) => simplify::run(a),
        Command::Diff(a) => diff::run(a),
        Command::Check(a) => check::run(a),
        Command::Grid(a) => grid::run(a),
        Command::Show(a) => show::run(a),
        Command::Project(a) => project::run(a),
        Command::Gauge(a) => gauge::run(a),
        Command::Compare(a) => compare::run(a),
        Command::Ring(a) => ring::run(a),
        Command::Export(a) => export::run(a),
        Command::Emit(a) => emit::run(a),
        Command::Binary(a) => binary::run(a),
        Command::Antenna(a) => antenna::run(a),
        Command::Radiation(a) => radiation::run(a),
        Command::Response(a) => response::run(a),
    };
    out::finish(result)
}

/// The format a command's report was asked in (`--format`, in every command).
fn report_format(sub: &ArgMatches) -> report::Format {
    sub.try_get_one::<report::Format>("format")
        .ok()
        .flatten()
        .copied()
        .unwrap_or(report::Format::Text)
}
