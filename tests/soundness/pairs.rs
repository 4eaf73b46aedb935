//! The pair generator: random expressions in lingrav's input language, rewritten by true
//! identities (class `Identity`) or perturbed by a small nonzero amount (class `Near`).
//!
//! Design decision: a pair is a random *context* around one or two *holes*; an identity
//! template `L = R` with random arguments fills the holes, `L` on one side and `R` on the
//! other. Every template is an identity of principal branches for all complex values where
//! both sides are defined (lingrav samples negative values, where logs and roots are complex),
//! so `sqrt(4*a) = 2*sqrt(a)` is in and `sqrt(a*b) = sqrt(a)*sqrt(b)` is not. A near pair
//! takes the rewritten side and adds a tiny term, scales it by 1 + 10^-40, or uses a
//! deliberately wrong template (a dropped phase). Whatever the generator claims is confirmed
//! by mpmath (tests/mpmath/truth.py) before a verdict is judged against it.

use lingrav::zero::SplitMix64;

/// What a pair is by construction.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Class {
    /// A and B are equal where defined: lingrav must never certify A - B nonzero.
    Identity,
    /// A - B is small but not identically zero: lingrav must never prove it zero.
    Near,
}

impl Class {
    pub fn label(self) -> &'static str {
        match self {
            Class::Identity => "identity",
            Class::Near => "near",
        }
    }
}

/// One generated pair.
#[derive(Clone, Debug)]
pub struct Pair {
    pub class: Class,
    pub a: String,
    pub b: String,
    /// The template (and perturbation) it came from.
    pub rule: String,
}

pub struct Gen {
    rng: SplitMix64,
}

/// Symbols of generated expressions (never `u`, the samples' variable, nor `i` or `e`).
const SYMS: [&str; 4] = ["x", "y", "z", "t"];

/// Extreme rationals, written the ways a user would: beyond the f64 range, subnormal, or a
/// relative change far below one ulp.
const EXTREMES: [&str; 10] = [
    "3e300",
    "7e-310",
    "10^400",
    "10^(-400)",
    "2^1100",
    "(1 + 10^(-40))",
    "1e-30",
    "(123456789012345678901234567890/7)",
    "(-5e-320)",
    "(10^200)^2",
];

/// Small terms for near pairs, each nonzero for every generic point.
const TINY: [&str; 6] = [
    "1e-30*x",
    "1e-12*sin(pi/7)*exp(1/(1 + x^2))",
    "1e-25*F(x - y)",
    "1e-20*sin(pi*2/9)*y",
    "1e-15*cos(pi*2/11)*exp(x/(1 + y^2))",
    "10^(-40)*sqrt(5)*cos(t)",
];

impl Gen {
    pub fn new(seed: u64) -> Gen {
        Gen {
            rng: SplitMix64::new(seed),
        }
    }

    fn below(&mut self, n: u64) -> u64 {
        self.rng.next_u64() % n
    }
    fn chance(&mut self, p: f64) -> bool {
        self.rng.next_f64() < p
    }
    fn pick<'a>(&mut self, xs: &[&'a str]) -> &'a str {
        xs[self.below(xs.len() as u64) as usize]
    }
    fn sym(&mut self) -> &'static str {
        self.pick(&SYMS)
    }
    /// Two different symbols (so that `s - r` is not identically 0).
    fn two_syms(&mut self) -> (&'static str, &'static str) {
        let i = self.below(4) as usize;
        let j = (i + 1 + self.below(3) as usize) % 4;
        (SYMS[i], SYMS[j])
    }

    /// A small rational: `3`, `(5/7)`, `(-2)`.
    fn small(&mut self) -> String {
        let p = 1 + self.below(9);
        let q = 1 + self.below(8);
        let neg = self.chance(0.25);
        match (q, neg) {
            (1, false) => p.to_string(),
            (1, true) => format!("(-{p})"),
            (_, false) => format!("({p}/{q})"),
            (_, true) => format!("(-{p}/{q})"),
        }
    }
    /// A positive small rational.
    fn pos(&mut self) -> String {
        let p = 1 + self.below(9);
        let q = 1 + self.below(5);
        if q == 1 {
            p.to_string()
        } else {
            format!("({p}/{q})")
        }
    }
    /// pi times a rational with any denominator.
    fn pi_multiple(&mut self) -> String {
        let q = 1 + self.below(30);
        let p = 1 + self.below(2 * q);
        let s = if self.chance(0.2) { "-" } else { "" };
        format!("({s}pi*{p}/{q})")
    }
    /// A nonzero constant: rational, pi multiple, root, value of a function at a pi
    /// multiple, or an extreme rational.
    fn constant(&mut self) -> String {
        match self.below(8) {
            0 | 1 => self.small(),
            2 => self.pi_multiple(),
            3 => format!("sqrt({})", 2 + self.below(40)),
            4 => {
                // sin and cos of a pi multiple whose value is certainly nonzero.
                let q = 5 + self.below(20);
                let p = 1 + self.below(q - 1);
                let f = self.pick(&["sin", "cos"]);
                let p = if f == "cos" && 2 * p == q { p + 1 } else { p };
                format!("{f}(pi*{p}/{q})")
            }
            5 => format!("exp({})", self.small()),
            _ => self.pick(&EXTREMES).to_string(),
        }
    }
    /// A constant of moderate size (extremes stay in the outer factor and in templates, so
    /// that no part of an expression dwarfs the rest beyond what 50 digits resolve).
    fn mild_constant(&mut self) -> String {
        match self.below(3) {
            0 => self.small(),
            1 => self.pi_multiple(),
            _ => format!("sqrt({})", 2 + self.below(40)),
        }
    }
    /// A positive constant (for logs and roots of scaled arguments).
    fn pos_constant(&mut self) -> String {
        match self.below(5) {
            0 | 1 => self.pos(),
            2 => format!("(pi*{}/{})", 1 + self.below(9), 1 + self.below(30)),
            3 => format!("sqrt({})", 2 + self.below(40)),
            _ => self
                .pick(&["3e300", "7e-310", "10^400", "10^(-400)", "2^1100"])
                .to_string(),
        }
    }

    /// An argument: a linear combination, a rational function, or a shifted symbol.
    fn argument(&mut self) -> String {
        let (s, r) = self.two_syms();
        match self.below(9) {
            0 => s.to_string(),
            1 => format!("{}*{s}", self.small()),
            2 => format!("{s} - {r}"),
            3 => format!("{}*{s} + {}*{r}", self.small(), self.small()),
            4 => format!("1/({s} + {})", 1 + self.below(3)),
            5 => format!("({s}^2 + {r})/(1 + {r}^2)"),
            6 => format!("{s}/(1 + {s}^2)"),
            7 => format!("{s} + {}", self.pi_multiple()),
            _ => format!("({s} - {r})/({r}^2 + 2)"),
        }
    }

    /// A term: a function of an argument, a power, an arbitrary function, or a product.
    pub fn term(&mut self, depth: u32) -> String {
        let a = if depth > 0 && self.chance(0.25) {
            self.term(depth - 1)
        } else {
            self.argument()
        };
        match self.below(18) {
            0 => format!("sin({a})"),
            1 => format!("cos({a})"),
            2 => format!("tan({a})"),
            3 => format!("exp({a})"),
            4 => format!("log({a})"),
            5 => format!("sqrt({a})"),
            6 => format!("sinh({a})"),
            7 => format!("cosh({a})"),
            8 => format!("tanh({a})"),
            9 => format!("({a})^{}", 2 + self.below(3)),
            10 => format!("({a})^(-{})", 1 + self.below(2)),
            11 => {
                let q = self.pick(&["2", "3", "4", "6"]);
                let p = self.pick(&["1", "-1", "3", "5"]);
                format!("({a})^({p}/{q})")
            }
            12 => format!("F({a})"),
            13 => format!("F'({a})"),
            14 => format!("G({a})"),
            15 => format!("atan({a})"),
            16 => format!("abs({})", self.real_term()),
            _ => format!("{}*({a})", self.mild_constant()),
        }
    }

    /// A term lingrav shows real (`Store::is_real_shown`), the only kind `abs` and `atan2`
    /// accept: real functions of an argument, and a root of a sum of a square and a positive
    /// constant.
    fn real_term(&mut self) -> String {
        let a = self.argument();
        match self.below(9) {
            0 => format!("sin({a})"),
            1 => format!("cos({a})"),
            2 => format!("exp({a})"),
            3 => format!("atan({a})"),
            4 => format!("F({a})"),
            5 => format!("({a})^3"),
            6 => format!("sqrt({}^2 + {})", self.sym(), self.pos()),
            7 => format!("abs({a})"),
            _ => a,
        }
    }

    /// A term that is positive at every real point: a square plus a positive constant.
    fn positive_term(&mut self) -> String {
        let s = self.sym();
        match self.below(3) {
            0 => format!("({s}^2 + {})", self.pos()),
            1 => format!("(exp({}) + {})", self.argument(), self.pos()),
            _ => format!("sqrt({s}^2 + {})", self.pos()),
        }
    }

    /// An identity template with fresh random arguments: (L, R, W, name) with L = R true and
    /// W a wrong right-hand side (used by near pairs).
    fn identity(&mut self) -> (String, String, String, String) {
        let a = if self.chance(0.5) {
            self.argument()
        } else {
            self.term(1)
        };
        let b = if self.chance(0.5) {
            self.argument()
        } else {
            self.term(0)
        };
        // Real arguments for the templates of abs and atan2.
        let (ra, rb) = (self.real_term(), self.real_term());
        let (l, r, w, name): (String, String, String, &str) = match self.below(42) {
            0 => (
                format!("sin({a} + {b})"),
                format!("(sin({a})*cos({b}) + cos({a})*sin({b}))"),
                format!("(sin({a})*cos({b}) - cos({a})*sin({b}))"),
                "sin(a + b) expanded",
            ),
            1 => (
                format!("cos({a} + {b})"),
                format!("(cos({a})*cos({b}) - sin({a})*sin({b}))"),
                format!("(cos({a})*cos({b}) + sin({a})*sin({b}))"),
                "cos(a + b) expanded",
            ),
            2 => (
                format!("cos(2*({a}))"),
                format!("(1 - 2*sin({a})^2)"),
                format!("(1 - sin({a})^2)"),
                "cos(2a) = 1 - 2 sin(a)^2",
            ),
            3 => (
                format!("sin(2*({a}))"),
                format!("(2*sin({a})*cos({a}))"),
                format!("(sin({a})*cos({a}))"),
                "sin(2a) = 2 sin(a) cos(a)",
            ),
            4 => (
                format!("exp({a} + {b})"),
                format!("(exp({a})*exp({b}))"),
                format!("(exp({a}) + exp({b}))"),
                "exp(a + b) = exp(a) exp(b)",
            ),
            5 => (
                format!("tan({a})"),
                format!("(sin({a})/cos({a}))"),
                format!("(cos({a})/sin({a}))"),
                "tan = sin/cos",
            ),
            6 => (
                format!("(cosh({a})^2 - sinh({a})^2)"),
                "1".into(),
                format!("(1 + sinh({a})^2)"),
                "cosh^2 - sinh^2 = 1",
            ),
            7 => {
                let k = 1 + self.below(6);
                let m = self.pick(&["1", "2", "3", "5", "7"]);
                (
                    format!("sqrt({}*({a}))", k * k * m.parse::<u64>().unwrap()),
                    format!("({k}*sqrt({m}*({a})))"),
                    format!("({}*sqrt({m}*({a})))", k + 1),
                    "sqrt(k^2 m a) = k sqrt(m a)",
                )
            }
            8 => {
                let c = self.pos_constant();
                (
                    format!("log({c}*({a}))"),
                    format!("(log({c}) + log({a}))"),
                    format!("(log({c}) - log({a}))"),
                    "log(c a) = log(c) + log(a), c > 0",
                )
            }
            9 => (
                format!("({a} + {b})^2"),
                format!("(({a})^2 + 2*({a})*({b}) + ({b})^2)"),
                format!("(({a})^2 + ({a})*({b}) + ({b})^2)"),
                "(a + b)^2 expanded",
            ),
            10 => (
                format!("(({a})/({b}))"),
                format!("(({a})*({b})^(-1))"),
                format!("(({a})*({b})^(-2))"),
                "a/b = a b^-1",
            ),
            11 => {
                let c = self.constant();
                let f = self.pick(&["F", "F'", "G", "F''"]);
                (
                    format!("({f}({a})*{c}/{c})"),
                    format!("{f}({a})"),
                    format!("{f}(({a})*{c}/{c} + 1/3)"),
                    "F(a) c / c = F(a)",
                )
            }
            12 | 13 => {
                let p = self.pi_multiple();
                (
                    format!("sin({p} + {a})"),
                    format!("(sin({p})*cos({a}) + cos({p})*sin({a}))"),
                    format!("sin({a})"),
                    "sin(pi p/q + a) expanded, any q (wrong: phase dropped)",
                )
            }
            14 => {
                let p = self.pi_multiple();
                (
                    format!("cos({a} - {p})"),
                    format!("(cos({a})*cos({p}) + sin({a})*sin({p}))"),
                    format!("(cos({a})*cos({p}))"),
                    "cos(a - pi p/q) expanded, any q (wrong: half dropped)",
                )
            }
            15 => (
                format!("(sin({a})^2 + cos({a})^2)"),
                "1".into(),
                format!("(1 + 10^(-40)*sin({a}))"),
                "sin^2 + cos^2 = 1",
            ),
            16 => (
                format!("cos(pi/2 - ({a}))"),
                format!("sin({a})"),
                format!("sin({a} + pi/9)"),
                "cos(pi/2 - a) = sin(a) (wrong: pi/9 phase)",
            ),
            17 => (
                format!("tanh({a})"),
                format!("((exp(2*({a})) - 1)/(exp(2*({a})) + 1))"),
                format!("((exp(2*({a})) - 1)/(exp(2*({a})) + 2))"),
                "tanh a = (e^2a - 1)/(e^2a + 1)",
            ),
            18 => (
                format!("(cosh({a}) + sinh({a}))"),
                format!("exp({a})"),
                format!("exp(-({a}))"),
                "cosh + sinh = exp",
            ),
            19 => (
                format!("exp(log({a}))"),
                format!("({a})"),
                format!("(({a}) + 1e-30)"),
                "exp(log(a)) = a",
            ),
            20 => (
                format!("sqrt({a})^2"),
                format!("({a})"),
                format!("(-({a}))"),
                "sqrt(a)^2 = a",
            ),
            21 => (
                format!("({a})^(3/2)"),
                format!("(({a})*sqrt({a}))"),
                format!("(({a})^2*sqrt({a}))"),
                "a^(3/2) = a sqrt(a)",
            ),
            22 => (
                format!("(({a})^(1/2)*({a})^(1/3))"),
                format!("({a})^(5/6)"),
                format!("({a})^(1/6)"),
                "a^(1/2) a^(1/3) = a^(5/6)",
            ),
            23 => {
                let (l, r) = *self.pick_pair(&[
                    ("cos(pi/5)", "((1 + sqrt(5))/4)"),
                    ("sin(pi/10)", "((sqrt(5) - 1)/4)"),
                    ("cos(pi/8)", "(sqrt(2 + sqrt(2))/2)"),
                    ("tan(pi/8)", "(sqrt(2) - 1)"),
                    ("sin(pi/6)", "(1/2)"),
                    ("cos(pi*2/5)", "((sqrt(5) - 1)/4)"),
                    ("sin(pi/5)", "(sqrt(10 - 2*sqrt(5))/4)"),
                    ("sqrt(8)", "(2*sqrt(2))"),
                    ("sqrt(45)", "(3*sqrt(5))"),
                ]);
                (
                    format!("({l}*({a}))"),
                    format!("({r}*({a}))"),
                    format!("(({r} + 10^(-40))*({a}))"),
                    "exact value of a constant",
                )
            }
            24 => {
                let (l, r) = *self.pick_pair(&[
                    ("3e300*7e-310", "21e-10"),
                    ("(10^200)^2/10^399", "10"),
                    ("10^400*10^(-400)", "1"),
                    ("2^1100/2^1099", "2"),
                    ("(1 + 10^(-40))^2", "(1 + 2*10^(-40) + 10^(-80))"),
                    ("7e-310/7*10^310", "1"),
                    (
                        "(123456789012345678901234567890/7)*7*10^(-29)",
                        "(123456789012345678901234567890*10^(-29))",
                    ),
                ]);
                (
                    format!("({l}*({a}))"),
                    format!("({r}*({a}))"),
                    format!("({r}*(1 + 10^(-40))*({a}))"),
                    "arithmetic of extreme rationals",
                )
            }
            25 => {
                let (s, r) = (self.sym(), self.sym());
                let f = self.pick(&["F", "G"]);
                if s == r {
                    (
                        format!("d_{s}({f}(3*{s}))"),
                        format!("(3*{f}'(3*{s}))"),
                        format!("({f}'(3*{s}))"),
                        "chain rule d_s F(3 s) = 3 F'(3 s)",
                    )
                } else {
                    (
                        format!("d_{r}({f}({s} - {r}))"),
                        format!("(-{f}'({s} - {r}))"),
                        format!("({f}'({s} - {r}))"),
                        "chain rule d_r F(s - r) = -F'(s - r)",
                    )
                }
            }
            26 => (
                format!("sinh(2*({a}))"),
                format!("(2*sinh({a})*cosh({a}))"),
                format!("(2*sinh({a})*cosh({a}) + 1e-30)"),
                "sinh(2a) = 2 sinh(a) cosh(a)",
            ),
            27 => (
                format!("exp({a})^3"),
                format!("exp(3*({a}))"),
                format!("exp(2*({a}))"),
                "exp(a)^3 = exp(3a)",
            ),
            30 => (
                format!("abs({ra})^2"),
                format!("({ra})^2"),
                format!("(({ra})^2*(1 + 10^(-40)))"),
                "abs(a)^2 = a^2 (a real)",
            ),
            31 => (
                format!("abs(({ra})*({rb}))"),
                format!("(abs({ra})*abs({rb}))"),
                format!("(abs({ra})*abs({rb} + 1e-30))"),
                "abs(a b) = abs(a) abs(b) (a, b real)",
            ),
            32 => (
                format!("abs(abs({ra}))"),
                format!("abs({ra})"),
                format!("abs(abs({ra}) + 1e-30)"),
                "abs(abs(a)) = abs(a) (a real)",
            ),
            33 => {
                let p = self.positive_term();
                (
                    format!("abs({p})"),
                    format!("({p})"),
                    format!("(-({p}))"),
                    "abs(p) = p (p > 0)",
                )
            }
            34 => (
                format!("atan(-({ra}))"),
                format!("(-atan({ra}))"),
                format!("(1e-30 - atan({ra}))"),
                "atan(-a) = -atan(a)",
            ),
            35 => {
                let (s, f) = (self.sym(), self.pick(&["F", "G"]));
                (
                    format!("d_{s}(atan({f}({s})))"),
                    format!("({f}'({s})/(1 + {f}({s})^2))"),
                    format!("({f}'({s})/(1 + {f}({s})))"),
                    "d atan(F(s)) = F'(s)/(1 + F(s)^2)",
                )
            }
            36 => {
                let p = self.positive_term();
                (
                    format!("(atan({p}) + atan(1/({p})))"),
                    "(pi/2)".into(),
                    "(pi/2*(1 + 10^(-40)))".into(),
                    "atan(p) + atan(1/p) = pi/2 (p > 0)",
                )
            }
            37 => {
                let p = self.positive_term();
                (
                    format!("atan2({ra}, {p})"),
                    format!("atan(({ra})/({p}))"),
                    format!("(atan(({ra})/({p})) + 1e-30)"),
                    "atan2(a, p) = atan(a/p) (p > 0)",
                )
            }
            38 => (
                format!("atan2({ra}, {rb})"),
                format!("(-atan2(-({ra}), {rb}))"),
                format!("atan2(-({ra}), {rb})"),
                "atan2(a, b) = -atan2(-a, b) (off the cut)",
            ),
            39 => {
                let (s, r) = self.two_syms();
                (
                    format!("d_{r}(atan2({s}, {r}))"),
                    format!("(-{s}/({r}^2 + {s}^2))"),
                    format!("({s}/({r}^2 + {s}^2))"),
                    "d_x atan2(y, x) = -y/(x^2 + y^2)",
                )
            }
            40 => {
                let k = self.pos();
                (
                    format!("atan2({k}*({ra}), {k}*({rb}))"),
                    format!("atan2({ra}, {rb})"),
                    format!("atan2({k}*({ra}), {rb} + 1e-30)"),
                    "atan2(k a, k b) = atan2(a, b) (k > 0)",
                )
            }
            41 => (
                format!("tan(atan({a}))"),
                format!("({a})"),
                format!("(({a})*(1 + 10^(-40)))"),
                "tan(atan(a)) = a",
            ),
            28 => (
                format!("exp(({a})*log(2))"),
                format!("2^({a})"),
                format!("3^({a})"),
                "exp(a log 2) = 2^a",
            ),
            _ => (
                format!("sin(pi - ({a}))"),
                format!("sin({a})"),
                format!("sin(pi*8/9 - ({a}))"),
                "sin(pi - a) = sin(a)",
            ),
        };
        (l, r, w, name.to_string())
    }

    fn pick_pair<'a>(&mut self, xs: &'a [(&'a str, &'a str)]) -> &'a (&'a str, &'a str) {
        &xs[self.below(xs.len() as u64) as usize]
    }

    /// A context around the hole `H`: C[H] with H appearing once, under a constant factor.
    fn context(&mut self, depth: u32) -> String {
        let mut c = "H".to_string();
        for _ in 0..depth {
            c = match self.below(7) {
                0 => format!("({c} + {})", self.term(1)),
                1 => format!("({} - {c})", self.term(0)),
                2 => format!("({}*{c})", self.term(0)),
                3 => format!("({c}/({}))", self.argument_nonzero()),
                4 => format!("({c})^2"),
                5 => format!("exp({c})"),
                _ => format!("sin({c})"),
            };
        }
        c
    }

    /// A denominator that does not vanish at real points.
    fn argument_nonzero(&mut self) -> String {
        let s = self.sym();
        format!("{s}^2 + {}", self.pos())
    }

    /// The next pair of the given class.
    pub fn pair(&mut self, class: Class) -> Pair {
        let (l, r, w, name) = self.identity();
        let depth = self.below(3) as u32;
        let ctx = self.context(depth);
        // Sometimes a second, independent identity in the same pair.
        let (l2, r2, name) = if self.chance(0.3) {
            let (l2, r2, _, n2) = self.identity();
            let k2 = self.small();
            (
                format!(" + {k2}*{l2}"),
                format!(" + {k2}*{r2}"),
                format!("{name} & {n2}"),
            )
        } else {
            (String::new(), String::new(), name)
        };
        // The outer factor k scales everything, so a near pair's perturbation keeps its size
        // relative to the whole expression even when k is 10^400 or 7e-310.
        let k = self.constant();
        let fill = |hole: &str, second: &str| format!("{k}*({}{second})", ctx.replace('H', hole));
        let a = fill(&l, &l2);
        let b_true = fill(&r, &r2);
        match class {
            Class::Identity => Pair {
                class,
                a,
                b: b_true,
                rule: name,
            },
            Class::Near => match self.below(4) {
                0 => {
                    let tiny = self.pick(&TINY);
                    Pair {
                        class,
                        a,
                        b: fill(&format!("({r} + {tiny})"), &r2),
                        rule: format!("{name}; plus {tiny} inside"),
                    }
                }
                1 => Pair {
                    class,
                    b: format!("(1 + 10^(-40))*({b_true})"),
                    a,
                    rule: format!("{name}; times 1 + 10^-40"),
                },
                2 => {
                    let tiny = self.pick(&TINY);
                    Pair {
                        class,
                        b: format!("{b_true} + {k}*{tiny}"),
                        a,
                        rule: format!("{name}; plus k*{tiny}"),
                    }
                }
                _ => Pair {
                    class,
                    a,
                    b: fill(&w, &r2),
                    rule: format!("{name}; wrong right-hand side"),
                },
            },
        }
    }
}
