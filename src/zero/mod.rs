//! The zero test: is a canonical form identically zero?
//!
//! Three verdicts, never more than the evidence shows:
//! - [`Verdict::Zero`]: the canonical form has no terms. That is a proof, because every step
//!   of canonicalisation is an identity.
//! - [`Verdict::Nonzero`]: at a seeded random point, a certified interval enclosure of the
//!   value excludes zero. That point is the witness; the seed is printed so it can be rerun.
//! - [`Verdict::Undecided`]: the canonical form is not empty but no point certified a nonzero
//!   value (numerically consistent with zero), or a size or time limit was reached.
//!
//! **Invariant:** "zero" is only ever claimed from an empty canonical form; floating point
//! can produce "nonzero" (with a certified enclosure) or "undecided", never "zero".

use crate::canon::{CanonError, Form, FunctionSample, KernelId, Names, OwnedTerm, Point, Store};
use crate::interval::{CInterval, Interval};
use rustc_hash::FxHashMap;
use std::fmt;
use std::rc::Rc;

/// The outcome of a zero test.
#[derive(Clone, Debug, PartialEq)]
pub enum Verdict {
    /// Proved identically zero: the canonical form cancels to 0.
    Zero,
    /// Certified nonzero at the witness point.
    Nonzero(Witness),
    /// Neither proved nor refuted, with the reason.
    Undecided(String),
}

impl Verdict {
    /// A one-word label: `zero`, `nonzero` or `undecided`.
    pub fn label(&self) -> &'static str {
        match self {
            Verdict::Zero => "zero",
            Verdict::Nonzero(_) => "nonzero",
            Verdict::Undecided(_) => "undecided",
        }
    }
}

/// A point at which a value is certified nonzero.
#[derive(Clone, Debug, PartialEq)]
pub struct Witness {
    /// The symbol values, sorted by name.
    pub point: Vec<(String, f64)>,
    /// A certified enclosure of the value there.
    pub value: CInterval,
    /// The seed that produced the point.
    pub seed: u64,
    /// How the point was chosen, when the zero test chose it: the file's parameter values or
    /// not, clear of every pole or not (printed after the value).
    pub chosen: Option<String>,
}

impl fmt::Display for Witness {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let pts: Vec<String> = self
            .point
            .iter()
            .map(|(n, v)| format!("{n} = {v}"))
            .collect();
        if !pts.is_empty() {
            write!(f, "at {}: ", pts.join(", "))?;
        }
        let (re, im) = (self.value.re, self.value.im);
        if im.contains_zero() {
            write!(f, "value {:.6e} (certified in {re})", re.mid())?;
        } else if re.contains_zero() {
            write!(
                f,
                "value {:.6e}*i (imaginary part certified in {im})",
                im.mid()
            )?;
        } else {
            write!(
                f,
                "value {:.6e} {} {:.6e}*i (certified in {re} + i{im})",
                re.mid(),
                if im.mid() < 0.0 { "-" } else { "+" },
                im.mid().abs()
            )?;
        }
        match &self.chosen {
            Some(c) => write!(f, "; {c}"),
            None => Ok(()),
        }
    }
}

/// How the zero test samples points.
#[derive(Clone, Debug)]
pub struct Sampling {
    /// Seed of the random points.
    pub seed: u64,
    /// How many points to try before giving up.
    pub points: usize,
    /// Symbols with a typical value (a file's parameters): the first half of the points
    /// take exactly that value, so that a witness is at the file's own parameters where that
    /// certifies it; the rest sample within a factor of 2 of it, same sign.
    pub typical: FxHashMap<KernelId, f64>,
    /// Samples of arbitrary functions; functions without one get a generic built-in sample.
    pub samples: FxHashMap<Rc<str>, FunctionSample>,
    /// Symbols confined to a range (a problem's \[domain\]): sampled inside it, away from its
    /// ends by a thousandth of its width.
    pub ranges: FxHashMap<KernelId, (f64, f64)>,
}

impl Default for Sampling {
    fn default() -> Self {
        Sampling {
            seed: 0x5eed_1a96_7a7e,
            points: 32,
            typical: FxHashMap::default(),
            samples: FxHashMap::default(),
            ranges: FxHashMap::default(),
        }
    }
}

/// A small deterministic generator (SplitMix64), so that witnesses are reproducible.
#[derive(Clone, Debug)]
pub struct SplitMix64(u64);

impl SplitMix64 {
    /// A generator from a seed.
    pub fn new(seed: u64) -> SplitMix64 {
        SplitMix64(seed)
    }
    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn next_f64(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// A generic sample for the `index`-th arbitrary function without one: smooth, with all
/// derivatives nonzero at generic points, different for each index.
pub fn generic_sample(store: &mut Store, index: usize) -> FunctionSample {
    let j = index as i64;
    let text = format!(
        "exp(-u^2/{}) * (1 + {}*u/7) + sin({}*u/4)/{}",
        4 + j,
        j + 2,
        5 + 2 * j,
        j + 2
    );
    let e = crate::parse::parse(&text).expect("the generic sample parses");
    let f = store
        .build(&e, &Names::free())
        .expect("the generic sample builds");
    FunctionSample {
        var: store.symbol_kernel("u"),
        form: f,
    }
}

/// Decides whether `f` is identically zero.
pub fn decide(store: &mut Store, f: Form, sampling: &Sampling) -> Verdict {
    if store.is_zero(f) {
        return Verdict::Zero;
    }
    let mut syms = store.free_symbols(f);
    let funcs = store.functions_used(f);
    let mut point = Point::default();
    for (i, name) in funcs.iter().enumerate() {
        let s = match sampling.samples.get(name) {
            Some(s) => s.clone(),
            None => generic_sample(store, i),
        };
        // Parameters that appear only inside a sample still need values.
        let var = store.kernel(s.var).clone();
        for p in store.free_symbols(s.form) {
            if !matches!(&var, crate::canon::Kernel::Sym(v) if *v == p) {
                syms.push(p);
            }
        }
        point.samples.insert(name.clone(), s);
    }
    syms.sort();
    syms.dedup();
    let kernels: Vec<(Rc<str>, KernelId)> = syms
        .iter()
        .map(|s| (s.clone(), store.symbol_kernel(s)))
        .collect();
    let mut rng = SplitMix64::new(sampling.seed);
    let mut evaluated = 0usize;
    let mut widest = 0f64;
    // A certified point near a pole (a denominator factor almost cancelling) is kept only
    // until a point clear of every pole certifies too: the witness should be easy to
    // reproduce by hand.
    let mut near_pole: Option<Witness> = None;
    // Whether some name has a value in the file (a parameter), so that "the file's values"
    // means something.
    let file_valued = kernels.iter().any(|(_, k)| {
        !sampling.ranges.contains_key(k) && sampling.typical.get(k).is_some_and(|&t| t != 0.0)
    });
    let has_poles = store.view(f).denominator().next().is_some();
    for attempt in 0..sampling.points {
        let at_file_values = attempt < sampling.points.div_ceil(2);
        let mut coords = Vec::new();
        for (name, k) in &kernels {
            let (v, exact) = match (sampling.ranges.get(k), sampling.typical.get(k)) {
                (Some(&(lo, hi)), _) => {
                    let margin = (hi - lo) * 1e-3;
                    (
                        lo + margin + (hi - lo - 2.0 * margin) * rng.next_f64(),
                        false,
                    )
                }
                (None, Some(&t)) if t != 0.0 && at_file_values => (t, true),
                (None, Some(&t)) if t != 0.0 => (t * (0.5 + 1.5 * rng.next_f64()), false),
                _ => {
                    let mag = 0.25 + 1.75 * rng.next_f64();
                    (if rng.next_u64() & 1 == 1 { -mag } else { mag }, false)
                }
            };
            // A sampled value is rounded to three significant digits, so that the witness
            // reads and types back easily (a file's own value is kept as it is; small typical
            // values, an amplitude of 1e-8, are not flushed to zero); a value rounded out of
            // its range is kept unrounded.
            let rounded: f64 = if exact {
                v
            } else {
                format!("{v:.2e}").parse().unwrap_or(v)
            };
            let inside = sampling
                .ranges
                .get(k)
                .is_none_or(|&(lo, hi)| (lo..=hi).contains(&rounded));
            let v = if inside { rounded } else { v };
            if let Some(p) = Interval::point(v) {
                point.values.insert(*k, CInterval::from_real(p));
            }
            coords.push((name.to_string(), v));
        }
        if let Some(val) = store.eval_interval(f, &point) {
            evaluated += 1;
            if val.excludes_zero() {
                let clear = clear_of_poles(store, f, &point);
                let w = Witness {
                    point: coords,
                    value: val,
                    seed: sampling.seed,
                    chosen: chosen(
                        file_valued.then_some(at_file_values),
                        has_poles.then_some(clear),
                    ),
                };
                if clear {
                    return Verdict::Nonzero(w);
                }
                near_pole.get_or_insert(w);
                continue;
            }
            widest = widest.max(val.re.width()).max(val.im.width());
        }
    }
    if let Some(w) = near_pole {
        return Verdict::Nonzero(w);
    }
    let n = store.num_terms(f);
    let n = if n == 1 {
        "1 term".to_string()
    } else {
        format!("{n} terms")
    };
    if evaluated == 0 {
        Verdict::Undecided(format!(
            "not reduced to zero ({n} left), and none of {} sample points could be evaluated (seed {:#x})",
            sampling.points, sampling.seed
        ))
    } else {
        Verdict::Undecided(format!(
            "not reduced to zero ({n} left), but numerically zero at {evaluated} random points: \
             every certified enclosure contains 0 (widest {widest:.1e}; seed {:#x})",
            sampling.seed
        ))
    }
}

/// Decides whether `a - b` is identically zero.
pub fn decide_equal(
    store: &mut Store,
    a: Form,
    b: Form,
    sampling: &Sampling,
) -> Result<Verdict, CanonError> {
    let d = store.sub(a, b)?;
    Ok(decide(store, d, sampling))
}

/// The sentence saying how a witness point was chosen.
/// `file_values`: `None` when no name has a value in the file.
/// `poles`: `None` without a denominator, else whether the point is clear of every pole.
fn chosen(file_values: Option<bool>, poles: Option<bool>) -> Option<String> {
    let params = file_values.map(|at| {
        if at {
            "parameters at the file's values"
        } else {
            "parameters sampled near the file's values"
        }
    });
    let poles = poles.map(|clear| {
        if clear {
            "clear of every pole"
        } else {
            "near a pole (no point clear of the poles certified)"
        }
    });
    match (params, poles) {
        (Some(a), Some(b)) => Some(format!("{a}, {b}")),
        (Some(a), None) | (None, Some(a)) => Some(a.to_string()),
        (None, None) => None,
    }
}

/// How far from its zero set a denominator factor must be at a reported witness: its value
/// at least this share of the sum of its terms' magnitudes.
const CLEARANCE: f64 = 1e-2;

/// Whether every denominator factor of `f` is clear of its zero set at `pt` (see
/// [`CLEARANCE`]): a factor that cancels to less than 1% of its terms marks a point near a
/// pole (r = 0, x = y, sqrt(x^2 + y^2) + x = 0), where a witness is hard to reproduce by hand.
/// This only chooses among certified points; it proves nothing.
fn clear_of_poles(store: &mut Store, f: Form, pt: &Point) -> bool {
    let factors: Vec<Vec<OwnedTerm>> = store
        .view(f)
        .denominator()
        .map(|(p, _)| p.owned_terms())
        .collect();
    for terms in factors {
        let mut sum = CInterval::ZERO;
        let mut magnitude = 0f64;
        for t in &terms {
            let tf = store.term_form(t);
            let Some(v) = store.eval_interval(tf, pt) else {
                return false;
            };
            let Some(s) = sum.add(v) else {
                return false;
            };
            sum = s;
            magnitude += v.re.mag().hypot(v.im.mag());
        }
        if sum.abs_lower_bound() < CLEARANCE * magnitude {
            return false;
        }
    }
    true
}

/// A limit error as an undecided verdict.
pub fn undecided_from(e: &CanonError) -> Verdict {
    Verdict::Undecided(e.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A witness is reported away from the poles when a certified point there exists: with x
    /// and y confined near the line x = y, most points are within 1% of the pole of
    /// 1/(x - y), and the one reported is not; the criterion itself on chosen points.
    #[test]
    fn a_witness_is_chosen_clear_of_poles() {
        let mut st = Store::new();
        let f = crate::expression(&mut st, "1/(x - y) + x").unwrap();
        let (kx, ky) = (st.symbol_kernel("x"), st.symbol_kernel("y"));
        let at = |x: f64, y: f64| {
            let mut pt = Point::default();
            for (k, v) in [(kx, x), (ky, y)] {
                pt.values
                    .insert(k, CInterval::from_real(Interval::point(v).unwrap()));
            }
            pt
        };
        assert!(!clear_of_poles(&mut st, f, &at(1.0, 1.005)));
        assert!(clear_of_poles(&mut st, f, &at(1.0, 1.05)));
        let mut sampling = Sampling::default();
        sampling.ranges.insert(kx, (1.0, 1.1));
        sampling.ranges.insert(ky, (1.0, 1.1));
        let Verdict::Nonzero(w) = decide(&mut st, f, &sampling) else {
            panic!("1/(x - y) + x is nonzero");
        };
        let (x, y) = (w.point[0].1, w.point[1].1);
        assert!((x - y).abs() >= 1e-2 * (x.abs() + y.abs()), "{:?}", w.point);
        assert!(w.to_string().ends_with("; clear of every pole"), "{w}");
        // Confined to the pole's neighbourhood, a certified point near it is still reported.
        sampling.ranges.insert(ky, (1.0, 1.000_01));
        sampling.ranges.insert(kx, (1.000_02, 1.000_03));
        assert!(matches!(decide(&mut st, f, &sampling), Verdict::Nonzero(_)));
    }

    /// A witness a physicist can type back in: the file's parameter values as they are when
    /// they certify the failure, sampled coordinates at three significant digits.
    #[test]
    fn a_witness_takes_the_files_parameter_values_and_short_coordinates() {
        let mut st = Store::new();
        let f = crate::expression(&mut st, "a*cos(w*(t - z)) + a*w^2").unwrap();
        let mut sampling = Sampling::default();
        sampling.typical.insert(st.symbol_kernel("a"), 1.0e-3);
        sampling.typical.insert(st.symbol_kernel("w"), 2.0);
        let Verdict::Nonzero(w) = decide(&mut st, f, &sampling) else {
            panic!("a nonzero expression gets a witness");
        };
        let value = |n: &str| w.point.iter().find(|(k, _)| k == n).map(|p| p.1);
        assert_eq!(value("a"), Some(1.0e-3), "{:?}", w.point);
        assert_eq!(value("w"), Some(2.0), "{:?}", w.point);
        for c in ["t", "z"] {
            let v = value(c).expect("a coordinate value");
            let short: f64 = format!("{v:.2e}").parse().unwrap();
            assert_eq!(v, short, "{c} = {v} has at most three significant digits");
        }
        // The report says how the point was chosen (no denominator: nothing about poles).
        let text = w.to_string();
        assert!(
            text.ends_with("; parameters at the file's values"),
            "{text}"
        );
    }
}
