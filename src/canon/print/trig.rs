//! Display only: oscillating terms as products of sines and cosines of a few angles.
//!
//! The canonical form keeps `sin(th)*cos(ph)` as `(sin(ph + th) - sin(ph - th))/2`, which
//! is exact but not how a physicist reads it. Here the imaginary parts `Q_k` of the
//! exponentials of a polynomial are written as integer combinations `Q_k = sum_j n_kj G_j`
//! of a few angles `G_j`, chosen among the `Q_k` themselves and their half sums and half
//! differences (fewest terms first, the `Q_k` before derived ones), each scaled to the
//! greatest common divisor of its coordinates (so `2*th` stays a double angle when only
//! even multiples occur). Then `e^(i Q_k) = prod_j (cos G_j + i sin G_j)^(n_kj)` (a negative
//! `n` takes `cos G_j - i sin G_j`), expanded. Within each group of terms sharing the other
//! factors, and for each angle, the monomials whose degree in `(cos G_j, sin G_j)` has the
//! same parity are brought to the highest such degree by factors `(cos^2 + sin^2)^k`: a
//! homogeneous polynomial in `(cos G, sin G)` is determined by its values on the circle, so
//! this picks the one natural product form (`sin(th)^2*cos(ph)^2`, not `1/4 - cos(2*th)/4
//! + ...`).
//!
//! Every step is an identity for any complex angle (`e^(iG) = cos G + i sin G`,
//! `cos^2 G + sin^2 G = 1`), so the printed text reads back to the same canonical form. The
//! product form is used only when all its coefficients are real and its text is no longer
//! than the sum of sines and cosines of combined angles it replaces.

use super::super::{Coeff, Form, KernelId, MonoId, Poly, Q, Rat};
use super::{Pretty, Store, to_text};
use num_integer::Integer;
use num_traits::{One, Signed, Zero};
use std::collections::BTreeMap;

/// A real angle as a sparse rational vector over the monomials of its numerator.
type Angle = BTreeMap<MonoId, Q>;

/// At most this many distinct angles are written in a few generators.
const MAX_ANGLES: usize = 64;
/// Half sums and differences are candidate generators only for pairs among this many of
/// the angles with the fewest terms (the generators of many combined angles are usually
/// among the simplest of them, or their half sums).
const MAX_PAIRED: usize = 12;
/// At most this multiple of one angle, and this total degree, per term.
const MAX_MULTIPLE: u32 = 8;
const MAX_DEGREE: u32 = 12;
/// At most this many product monomials per group.
const MAX_MONOMIALS: usize = 400;
/// Sums of more terms than this print as they are: rewriting them costs more than their
/// (truncated) display is worth.
pub(in crate::canon) const MAX_TERMS: usize = 200;
/// The same for a summary (`Store::to_display_summary`), which shows only the start of the
/// text: rewriting a sum costs more than linearly in its terms, and most of it is cut away.
pub(in crate::canon) const SUMMARY_TERMS: usize = 48;

fn scaled(a: &Angle, k: &Q) -> Angle {
    a.iter().map(|(m, c)| (*m, c * k)).collect()
}

fn combined(a: &Angle, b: &Angle, sign: i32) -> Angle {
    let mut out = a.clone();
    for (m, c) in b {
        let e = out.entry(*m).or_insert_with(Q::zero);
        if sign > 0 {
            *e += c;
        } else {
            *e -= c;
        }
    }
    out.retain(|_, c| !c.is_zero());
    out
}

/// `a` divided by the positive rational gcd of its coefficients (coprime integers), with the
/// coefficient of its first monomial positive; `None` for the zero angle.
fn primitive(a: &Angle) -> Option<Angle> {
    let g = content(a.values())?;
    let first = a.values().next()?;
    let g = if first.is_negative() { -g } else { g };
    Some(scaled(a, &g.recip()))
}

/// The positive rational gcd of rationals (gcd of numerators over lcm of denominators);
/// `None` if all are zero.
pub(super) fn content<'a>(qs: impl Iterator<Item = &'a Q>) -> Option<Q> {
    let mut num = num_bigint::BigInt::zero();
    let mut den = num_bigint::BigInt::one();
    let mut any = false;
    for q in qs {
        if q.is_zero() {
            continue;
        }
        any = true;
        num = num.gcd(q.numer());
        den = den.lcm(q.denom());
    }
    any.then(|| Q::new(num, den))
}

/// Coordinates of `a` in the independent `basis` (rational), `None` if `a` is not in its span.
fn coordinates(basis: &[Angle], a: &Angle) -> Option<Vec<Q>> {
    // Gaussian elimination on the augmented rows (one per monomial).
    let monos: Vec<MonoId> = {
        let mut v: Vec<MonoId> = basis.iter().flat_map(|b| b.keys().copied()).collect();
        v.extend(a.keys().copied());
        v.sort();
        v.dedup();
        v
    };
    let n = basis.len();
    let mut rows: Vec<Vec<Q>> = monos
        .iter()
        .map(|m| {
            let mut r: Vec<Q> = basis
                .iter()
                .map(|b| b.get(m).cloned().unwrap_or_else(Q::zero))
                .collect();
            r.push(a.get(m).cloned().unwrap_or_else(Q::zero));
            r
        })
        .collect();
    let mut pivots = Vec::new();
    let mut row = 0;
    for col in 0..n {
        let Some(p) = (row..rows.len()).find(|&r| !rows[r][col].is_zero()) else {
            continue;
        };
        rows.swap(row, p);
        let inv = rows[row][col].recip();
        for v in &mut rows[row] {
            *v *= &inv;
        }
        for r in 0..rows.len() {
            if r != row && !rows[r][col].is_zero() {
                let f = rows[r][col].clone();
                for c in 0..=n {
                    let d = &rows[row][c] * &f;
                    rows[r][c] -= d;
                }
            }
        }
        pivots.push(col);
        row += 1;
    }
    // Consistent: no row reads 0 = nonzero.
    if rows[row..].iter().any(|r| !r[n].is_zero()) {
        return None;
    }
    let mut x = vec![Q::zero(); n];
    for (r, &col) in pivots.iter().enumerate() {
        x[col] = rows[r][n].clone();
    }
    Some(x)
}

/// Whether `v` is independent of `basis`.
fn independent(basis: &[Angle], v: &Angle) -> bool {
    coordinates(basis, v).is_none()
}

/// `(c_j, s_j)` exponent vectors of the product monomials, and their coefficients.
type Expansion = BTreeMap<Vec<u32>, Coeff>;

fn binomial(n: u32, k: u32) -> num_bigint::BigInt {
    let mut r = num_bigint::BigInt::one();
    for i in 0..k {
        r = r * (n - i) / (i + 1);
    }
    r
}

/// `prod_j (cos G_j +- i sin G_j)^|n_j|` expanded (zero coefficients kept).
fn expansion(n: &[i32]) -> Expansion {
    let m = n.len();
    let mut acc: Expansion = BTreeMap::new();
    acc.insert(vec![0; 2 * m], Coeff::one());
    for (j, &nj) in n.iter().enumerate() {
        if nj == 0 {
            continue;
        }
        let k = nj.unsigned_abs();
        let unit = if nj > 0 { Coeff::i() } else { Coeff::i().neg() };
        let mut next: Expansion = BTreeMap::new();
        for (e, v) in &acc {
            let mut ipow = Coeff::one();
            for b in 0..=k {
                let coef = v
                    .mul(&Coeff::rational(Q::from_integer(binomial(k, b))))
                    .mul(&ipow);
                let mut e2 = e.clone();
                e2[2 * j] += k - b;
                e2[2 * j + 1] += b;
                let slot = next.entry(e2).or_insert_with(Coeff::zero);
                *slot = slot.add(&coef);
                ipow = ipow.mul(&unit);
            }
        }
        acc = next;
    }
    acc
}

/// Brings each angle's monomials of one parity to the highest degree of that parity by
/// factors `(cos^2 + sin^2)^k` (see the module documentation).
fn homogenized(e: Expansion, m: usize) -> Expansion {
    let mut cur = e;
    for j in 0..m {
        let deg = |v: &Vec<u32>| v[2 * j] + v[2 * j + 1];
        let mut top = [None::<u32>; 2];
        for v in cur.keys() {
            let d = deg(v);
            let t = &mut top[(d % 2) as usize];
            *t = Some(t.map_or(d, |x: u32| x.max(d)));
        }
        let mut next: Expansion = BTreeMap::new();
        for (v, c) in cur {
            let d = deg(&v);
            let k = (top[(d % 2) as usize].unwrap_or(d) - d) / 2;
            for b in 0..=k {
                let mut v2 = v.clone();
                v2[2 * j] += 2 * (k - b);
                v2[2 * j + 1] += 2 * b;
                let coef = c.mul(&Coeff::rational(Q::from_integer(binomial(k, b))));
                let slot = next.entry(v2).or_insert_with(Coeff::zero);
                *slot = slot.add(&coef);
            }
        }
        next.retain(|_, c| !c.is_zero());
        cur = next;
    }
    cur
}

impl Store {
    /// The angle of an imaginary exponent part `q`, if it is a polynomial with rational
    /// coefficients.
    fn angle_of(&self, q: Form) -> Option<Angle> {
        let r = &self.rats[q.0 as usize];
        if !r.den.is_empty() {
            return None;
        }
        r.num
            .iter()
            .map(|(m, c)| Some((*m, c.as_rational()?)))
            .collect()
    }

    fn angle_form(&mut self, a: &Angle) -> Form {
        let mut num: Poly = a
            .iter()
            .map(|(m, c)| (*m, Coeff::rational(c.clone())))
            .collect();
        num.sort_by_key(|t| t.0);
        self.intern_rat(Rat {
            num,
            den: Vec::new(),
        })
    }

    /// `p` times `scale` with its oscillating terms as products of sines and cosines (see
    /// the module documentation); `None` where that does not apply or would not be shorter
    /// than `plain`, the usual printing. A few choices of angles are tried (the given angles
    /// before derived ones or after; each angle scaled to its coordinates' gcd or primitive)
    /// and the shortest text is kept.
    pub(super) fn pretty_trig_products(
        &mut self,
        p: &Poly,
        scale: &Coeff,
        plain: &Pretty,
    ) -> Option<Pretty> {
        if p.len() > self.trig_terms {
            return None;
        }
        // Each term: the other factors (kernel powers, real exponent), its angle, coefficient.
        let mut terms: Vec<(Key, Option<Angle>, Coeff)> = Vec::with_capacity(p.len());
        for (m, c) in p {
            let mono = self.monos[m.0 as usize].clone();
            let (re, angle) = match mono.exp {
                None => (None, None),
                Some(e) => {
                    let (re, im) = self.split_re_im(e)?;
                    let re = (re != self.zero).then_some(re);
                    if im == self.zero {
                        (re, None)
                    } else {
                        (re, Some(self.angle_of(im)?))
                    }
                }
            };
            terms.push(((mono.pows.clone(), re), angle, c.mul(scale)));
        }
        // Distinct angles up to sign, and each term's angle as (index, sign).
        let mut angles: Vec<Angle> = Vec::new();
        let mut placed: Vec<Option<(usize, i32)>> = Vec::with_capacity(terms.len());
        for (_, a, _) in &terms {
            let Some(a) = a else {
                placed.push(None);
                continue;
            };
            if let Some(i) = angles.iter().position(|x| x == a) {
                placed.push(Some((i, 1)));
                continue;
            }
            let neg = scaled(a, &-Q::one());
            if let Some(i) = angles.iter().position(|x| *x == neg) {
                placed.push(Some((i, -1)));
                continue;
            }
            placed.push(Some((angles.len(), 1)));
            angles.push(a.clone());
        }
        if angles.is_empty() || angles.len() > MAX_ANGLES {
            return None;
        }
        // Candidates: the angles, then half sums and differences, primitive and distinct.
        let half = Q::new(1.into(), 2.into());
        let mut cands: Vec<(usize, u8, Angle)> = Vec::new();
        let push = |a: Angle, prio: u8, cands: &mut Vec<(usize, u8, Angle)>| {
            if let Some(a) = primitive(&a)
                && !cands.iter().any(|c| c.2 == a)
            {
                cands.push((a.len(), prio, a));
            }
        };
        for a in &angles {
            push(a.clone(), 0, &mut cands);
        }
        // The angles with the fewest terms, in order of appearance among equals.
        let mut simplest: Vec<&Angle> = angles.iter().collect();
        simplest.sort_by_key(|a| a.len());
        simplest.truncate(MAX_PAIRED);
        for i in 0..simplest.len() {
            for j in i + 1..simplest.len() {
                for sign in [1, -1] {
                    push(
                        scaled(&combined(simplest[i], simplest[j], sign), &half),
                        1,
                        &mut cands,
                    );
                }
            }
        }
        let mut keyed: Vec<(usize, u8, String, Angle)> = Vec::with_capacity(cands.len());
        for (len, prio, a) in cands {
            let f = self.angle_form(&a);
            keyed.push((len, prio, self.to_text(f), a));
        }
        // The rank of the angles: the candidates span the same space (they are made from
        // the angles), so a basis is complete once it has this many.
        let mut spanning: Vec<Angle> = Vec::new();
        for a in &angles {
            if independent(&spanning, a) {
                spanning.push(a.clone());
            }
        }
        let rank = spanning.len();
        let limit = to_text(plain).len();
        let mut best: Option<(usize, Pretty)> = None;
        for derived_first in [false, true] {
            keyed.sort_by(|x, y| {
                (x.0, x.1 ^ u8::from(derived_first), &x.2).cmp(&(
                    y.0,
                    y.1 ^ u8::from(derived_first),
                    &y.2,
                ))
            });
            let mut basis: Vec<Angle> = Vec::new();
            for (.., a) in &keyed {
                if basis.len() == rank {
                    break;
                }
                if independent(&basis, a) {
                    basis.push(a.clone());
                }
            }
            let Some(coords) = angles
                .iter()
                .map(|a| coordinates(&basis, a))
                .collect::<Option<Vec<Vec<Q>>>>()
            else {
                continue;
            };
            for by_gcd in [true, false] {
                let Some((gens, n)) = generators(&basis, &coords, by_gcd) else {
                    continue;
                };
                if n.iter()
                    .all(|row| row.iter().map(|k| k.unsigned_abs()).sum::<u32>() <= 1)
                {
                    // Every angle is one of the angles: nothing to write as a product.
                    continue;
                }
                let Some(t) = self.expanded_products(&terms, &placed, gens, n) else {
                    continue;
                };
                let len = to_text(&t).len();
                if len <= limit && best.as_ref().is_none_or(|b| len < b.0) {
                    best = Some((len, t));
                }
            }
        }
        best.map(|b| b.1)
    }

    /// The terms with every angle written through the generators `gens` (`n[i]`: the
    /// coordinates of angle `i`; `placed[t]`: the index and sign of term `t`'s angle);
    /// `None` if a coefficient is not real or the expansion is too large.
    fn expanded_products(
        &mut self,
        terms: &[(Key, Option<Angle>, Coeff)],
        placed: &[Option<(usize, i32)>],
        mut gens: Vec<Angle>,
        mut n: Vec<Vec<i32>>,
    ) -> Option<Pretty> {
        let m = gens.len();
        // Each angle's sign: its printed first coefficient positive.
        let mut gen_forms = Vec::with_capacity(m);
        for (j, g) in gens.iter_mut().enumerate() {
            let f = self.angle_form(g);
            let p = self.pretty(f);
            let first = match &p {
                Pretty::Sum(ts) => ts.first().map(super::leading_num),
                t => Some(super::leading_num(t)),
            };
            if first.is_some_and(|c| c.looks_negative()) {
                *g = scaled(g, &-Q::one());
                for row in &mut n {
                    row[j] = -row[j];
                }
                gen_forms.push(self.angle_form(g));
            } else {
                gen_forms.push(f);
            }
        }
        // Expand per group of other factors.
        let mut groups: Vec<(Key, Expansion)> = Vec::new();
        // The expansion of prod_j (cos G_j + i sin G_j)^(n_j) for each row met (many terms
        // share an angle).
        let mut expansions: rustc_hash::FxHashMap<Vec<i32>, Expansion> = Default::default();
        for ((key, _, c), at) in terms.iter().zip(placed) {
            let row: Vec<i32> = match *at {
                None => vec![0; m],
                Some((i, s)) => n[i].iter().map(|k| k * s).collect(),
            };
            let slot = match groups.iter().position(|g| g.0 == *key) {
                Some(i) => &mut groups[i].1,
                None => {
                    groups.push((key.clone(), BTreeMap::new()));
                    &mut groups.last_mut()?.1
                }
            };
            let unit = expansions
                .entry(row)
                .or_insert_with_key(|row| expansion(row));
            for (e, v) in unit.iter() {
                let t = slot.entry(e.clone()).or_insert_with(Coeff::zero);
                *t = t.add(&v.mul(c));
            }
            if slot.len() > MAX_MONOMIALS {
                return None;
            }
        }
        let groups: Vec<(Key, Expansion)> = groups
            .into_iter()
            .map(|(k, e)| (k, homogenized(e, m)))
            .collect();
        // Powers of a sine or cosine that every term has are written once, in front.
        let mut common: Option<Vec<u32>> = None;
        for (_, e) in &groups {
            for (v, c) in e {
                if c.is_zero() {
                    continue;
                }
                if !c.is_real() {
                    return None;
                }
                common = Some(match common {
                    None => v.clone(),
                    Some(w) => w.iter().zip(v).map(|(a, b)| (*a).min(*b)).collect(),
                });
            }
        }
        let common = common.unwrap_or_else(|| vec![0; 2 * m]);
        let gen_pretty: Vec<Pretty> = gen_forms.iter().map(|&f| self.pretty(f)).collect();
        let trig_factors = |v: &[u32], nums: &mut Vec<Pretty>| {
            for j in 0..m {
                for (name, k) in [("cos", v[2 * j]), ("sin", v[2 * j + 1])] {
                    if k == 0 {
                        continue;
                    }
                    let call =
                        Pretty::Call(name.into(), Box::new(gen_pretty[j].clone()), gen_forms[j]);
                    nums.push(if k == 1 {
                        call
                    } else {
                        Pretty::Pow(Box::new(call), k)
                    });
                }
            }
        };
        let mut out = Vec::new();
        for ((pows, re), e) in groups {
            for (v, c) in e {
                if c.is_zero() {
                    continue;
                }
                let (mut nums, dens) = self.kernel_factors(&pows);
                if let Some(re) = re {
                    nums.push(Pretty::Call("exp".into(), Box::new(self.pretty(re)), re));
                }
                let rest: Vec<u32> = v.iter().zip(&common).map(|(a, b)| a - b).collect();
                trig_factors(&rest, &mut nums);
                out.push(Pretty::Prod(c, nums, dens));
            }
        }
        let sum = super::finish_terms(out);
        if common.iter().all(|&k| k == 0) {
            return Some(sum);
        }
        let mut front = Vec::new();
        trig_factors(&common, &mut front);
        Some(match sum {
            Pretty::Prod(c, mut nums, dens) => {
                nums.extend(front);
                nums.sort_by_key(super::factor_order);
                Pretty::Prod(c, nums, dens)
            }
            Pretty::Num(c) => Pretty::Prod(c, front, Vec::new()),
            other => {
                front.push(other);
                Pretty::Prod(Coeff::one(), front, Vec::new())
            }
        })
    }
}

/// The other factors of a term: kernel powers and the real part of its exponent.
type Key = (Vec<(KernelId, i32)>, Option<Form>);

/// The generators along `basis` (each scaled to the gcd of the coordinates along it, or kept
/// primitive) and the integer coordinates of the angles in them; `None` if a coordinate is
/// not an integer or too large.
fn generators(
    basis: &[Angle],
    coords: &[Vec<Q>],
    by_gcd: bool,
) -> Option<(Vec<Angle>, Vec<Vec<i32>>)> {
    let m = basis.len();
    let mut gens = Vec::with_capacity(m);
    let mut n: Vec<Vec<i32>> = vec![vec![0; m]; coords.len()];
    for j in 0..m {
        let g = if by_gcd {
            content(coords.iter().map(|c| &c[j]))?
        } else {
            Q::one()
        };
        gens.push(scaled(&basis[j], &g));
        for (i, c) in coords.iter().enumerate() {
            let q = &c[j] / &g;
            if !q.is_integer() {
                return None;
            }
            let k = i32::try_from(q.to_integer()).ok()?;
            if k.unsigned_abs() > MAX_MULTIPLE {
                return None;
            }
            n[i][j] = k;
        }
    }
    if n.iter()
        .any(|row| row.iter().map(|k| k.unsigned_abs()).sum::<u32>() > MAX_DEGREE)
    {
        return None;
    }
    Some((gens, n))
}
