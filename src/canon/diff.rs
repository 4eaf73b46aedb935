//! Exact partial derivatives of canonical forms.
//!
//! Design decision: differentiation works on canonical forms, not on the parsed tree, through
//! logarithmic derivatives of kernels: d(c * prod k^n * e^E) = c * m * (sum n * dk/k + dE).
//! Results are cached per (form, variable), so a tensor computation that needs the same
//! derivative twice pays once.

use super::{CResult, Coeff, Form, Kernel, KernelId, MonoId, Rat, Store};

impl Store {
    /// The partial derivative of `f` by the symbol `var` (other symbols are independent).
    pub fn diff(&mut self, f: Form, var: KernelId) -> CResult<Form> {
        if let Some(&d) = self.diff_cache.get(&(f, var)) {
            return Ok(d);
        }
        if !self.form_deps(f).contains(&var) {
            self.diff_cache.insert((f, var), self.zero);
            return Ok(self.zero);
        }
        let r = self.rats[f.0 as usize].clone();
        let dnum = self.diff_poly(&r.num, var)?;
        let d = if r.den.is_empty() {
            dnum
        } else {
            let num = self.intern_rat(Rat {
                num: r.num.clone(),
                den: Vec::new(),
            });
            // d(N/D) = (dN - N * sum_j e_j dF_j / F_j) / D
            let den = self.intern_rat(Rat {
                num: vec![(self.unit, Coeff::one())],
                den: r.den.clone(),
            });
            let mut logd = self.zero;
            for &(fid, e) in &r.den {
                let p = self.factors[fid.0 as usize].clone();
                let dp = self.diff_poly(&p, var)?;
                if dp == self.zero {
                    continue;
                }
                let pf = self.intern_rat(Rat {
                    num: p,
                    den: Vec::new(),
                });
                let q = self.div(dp, pf)?;
                let q = self.scale(q, &Coeff::int(e as i64))?;
                logd = self.add(logd, q)?;
            }
            let t = self.mul(num, logd)?;
            let top = self.sub(dnum, t)?;
            self.mul(top, den)?
        };
        self.diff_cache.insert((f, var), d);
        Ok(d)
    }

    /// Derivative of a numerator polynomial.
    ///
    /// Term by term: d(c m) = c m * dlog(m). When dlog(m) is a polynomial (no denominator,
    /// the usual case: `e/x` for a power of the variable, the derivative of an exponent), each
    /// product term goes straight into one accumulator, so no per-term form is interned;
    /// the rest (root reductions, quotients) is built as forms and summed once at the end
    /// (see `Store::sum`).
    fn diff_poly(&mut self, p: &super::Poly, var: KernelId) -> CResult<Form> {
        // The products in the order made; `merge_terms` sorts them and adds those with one
        // monomial (for a polynomial in symbols every monomial comes once).
        let mut acc: Vec<(MonoId, Coeff)> = Vec::with_capacity(p.len());
        let mut rest = Vec::new();
        for (m, c) in p {
            let dlog = self.dlog_mono(*m, var)?;
            if dlog == self.zero {
                continue;
            }
            let rd = self.rats[dlog.0 as usize].clone();
            if !rd.den.is_empty() {
                let term = self.intern_rat(Rat {
                    num: vec![(*m, c.clone())],
                    den: Vec::new(),
                });
                rest.push(self.mul(term, dlog)?);
                continue;
            }
            for (dm, dc) in &rd.num {
                let (mm, f, extra) = self.mono_mul(*m, *dm)?;
                let cc = c.mul(dc).mul(&f);
                if cc.is_zero() {
                    continue;
                }
                if extra == self.one {
                    acc.push((mm, cc));
                } else {
                    let term = self.intern_rat(Rat {
                        num: vec![(mm, cc)],
                        den: Vec::new(),
                    });
                    rest.push(self.mul(term, extra)?);
                }
            }
            self.check_size(acc.len())?;
        }
        let direct = self.intern_rat(Rat {
            num: Self::merge_terms(acc),
            den: Vec::new(),
        });
        rest.push(direct);
        self.sum(&rest)
    }

    /// The logarithmic derivative of a monomial, d(m)/m = sum_k e_k dk/k + dE, cached.
    fn dlog_mono(&mut self, m: MonoId, var: KernelId) -> CResult<Form> {
        if let Some(&d) = self.dlog_mono_cache.get(&(m, var)) {
            return Ok(d);
        }
        let mono = self.monos[m.0 as usize].clone();
        let mut parts = Vec::new();
        for &(k, e) in &mono.pows {
            let dk = self.dlog_kernel(k, var)?;
            if dk != self.zero {
                parts.push((Coeff::int(e as i64), dk));
            }
        }
        if let Some(ex) = mono.exp {
            let de = self.diff(ex, var)?;
            parts.push((Coeff::one(), de));
        }
        let refs: Vec<(&Coeff, Form)> = parts.iter().map(|(c, f)| (c, *f)).collect();
        let d = self.linear(&refs)?;
        self.dlog_mono_cache.insert((m, var), d);
        Ok(d)
    }

    /// The logarithmic derivative d(k)/k of a kernel by `var`.
    fn dlog_kernel(&mut self, k: KernelId, var: KernelId) -> CResult<Form> {
        if let Some(&d) = self.dlog_cache.get(&(k, var)) {
            return Ok(d);
        }
        let d = match self.kernel(k).clone() {
            Kernel::Sym(_) => {
                if k == var {
                    let kf = self.kernel_form(k);
                    self.inv(kf)?
                } else {
                    self.zero
                }
            }
            Kernel::Pi => {
                if k == var {
                    let kf = self.kernel_form(k);
                    self.inv(kf)?
                } else {
                    self.zero
                }
            }
            Kernel::Root { radicand, q } => {
                // d(R^(1/q)) / R^(1/q) = R' / (q R)
                let dr = self.diff(radicand, var)?;
                if dr == self.zero {
                    self.zero
                } else {
                    let t = self.div(dr, radicand)?;
                    self.scale(
                        t,
                        &Coeff::rational(super::Q::new(1.into(), (q as i64).into())),
                    )?
                }
            }
            Kernel::Log(a) => {
                // d(log A) / log A = A' / (A log A)
                let da = self.diff(a, var)?;
                if da == self.zero {
                    self.zero
                } else {
                    let kf = self.kernel_form(k);
                    let den = self.mul(a, kf)?;
                    self.div(da, den)?
                }
            }
            Kernel::Atan(_) if self.atan2_args.contains_key(&k) => {
                // The half angle of atan2(y, x): atan(y/(r + x)) with r = sqrt(x^2 + y^2) has
                // the derivative (x y' - y x') / (2 (x^2 + y^2)) wherever it is defined (the
                // general rule below gives the same value, unsimplified: `Store::atan2_of`).
                let (y, x) = self.atan2_args[&k];
                let (dy, dx) = (self.diff(y, var)?, self.diff(x, var)?);
                let a = self.mul(x, dy)?;
                let b = self.mul(y, dx)?;
                let num = self.sub(a, b)?;
                if num == self.zero {
                    self.zero
                } else {
                    let xx = self.mul(x, x)?;
                    let yy = self.mul(y, y)?;
                    let rr = self.add(xx, yy)?;
                    let kf = self.kernel_form(k);
                    let den = self.mul(rr, kf)?;
                    let den = self.scale(den, &Coeff::int(2))?;
                    self.div(num, den)?
                }
            }
            Kernel::Atan(a) => {
                // d(atan A) / atan A = A' / ((1 + A^2) atan A)
                let da = self.diff(a, var)?;
                if da == self.zero {
                    self.zero
                } else {
                    let a2 = self.mul(a, a)?;
                    let one = self.one;
                    let q = self.add(one, a2)?;
                    let kf = self.kernel_form(k);
                    let den = self.mul(q, kf)?;
                    self.div(da, den)?
                }
            }
            Kernel::Func { name, order, arg } => {
                // d F^(n)(g) = F^(n+1)(g) g'
                let dg = self.diff(arg, var)?;
                if dg == self.zero {
                    self.zero
                } else {
                    let next = self.func(&name, order + 1, arg);
                    let kf = self.kernel_form(k);
                    let t = self.mul(next, dg)?;
                    self.div(t, kf)?
                }
            }
        };
        self.dlog_cache.insert((k, var), d);
        Ok(d)
    }

    /// Derivative by a symbol given by name.
    pub fn diff_by_name(&mut self, f: Form, var: &str) -> CResult<Form> {
        let k = self.symbol_kernel(var);
        self.diff(f, k)
    }
}
