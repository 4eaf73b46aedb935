//! The code generator: shared subexpressions, identifiers, line lengths, and the DAG's own
//! value against the engine's certified one.

use super::*;
use crate::export::quantity::{Quantity, blocks};

fn problem(text: &str) -> crate::problem::Problem {
    crate::problem::from_str("test.toml", text).unwrap()
}

fn texts(p: &crate::problem::Problem) -> user::Texts<'_> {
    user::Texts {
        h: &p.h_text,
        source: p.source_text.as_ref(),
        user: crate::tape::UserExprs {
            defines: p.defines.clone(),
            functions: p.functions.clone(),
        },
        frame: None,
    }
}

fn generate(text: &str, qs: &[Quantity], lang: Lang, inline: bool) -> String {
    let mut p = problem(text);
    let b = blocks(&mut p.store, &p.h, p.source.as_ref(), qs, None).unwrap();
    let mut store = std::mem::take(&mut p.store);
    let src = Source {
        file: "test.toml",
        name: p.name.as_deref(),
        parameters: &p.parameters,
        functions: &p.functions,
        direction: None,
        about: None,
        texts: texts(&p),
    };
    emit(&mut store, &src, &b, lang, inline).unwrap()
}

const WAVE: &str = "[parameters]\nA = 1.0e-3\nw = 3.0\n[perturbation]\nxx = 'A*cos(w*(t - z))'\nyy = '-A*cos(w*(t - z))'\n";

#[test]
fn shared_subexpressions_become_temporaries() {
    let c = generate(WAVE, &[Quantity::H], Lang::C, false);
    // cos(w*(t - z)) (or the product with A) is computed once and used by h_xx and h_yy.
    let temps: Vec<&str> = c
        .lines()
        .filter(|l| l.trim_start().starts_with("const double lg_"))
        .collect();
    assert_eq!(temps.len(), 1, "{c}");
    assert!(
        c.contains("out[4] = lg_1;") || c.contains("out[4] = A*lg_1;"),
        "{c}"
    );
    assert!(c.contains("const double A = params[0];"), "{c}");
    assert!(c.contains(
        "void lingrav_h(double t, double x, double y, double z, const double *params, double *out)"
    ));
    assert!(c.contains("out[0] = 0.0;"));
}

#[test]
fn identifiers_avoid_keywords_and_each_other() {
    let text =
        "[parameters]\nlambda = 2.0\nT = 1.0\nout = 3.0\n[perturbation]\nxx = 'lambda*T*out*t'\n";
    let py = generate(text, &[Quantity::H], Lang::Python, false);
    assert!(
        py.contains("def lingrav_h(t, x, y, z, lambda_=2.0, T=1.0, out_=3.0):"),
        "{py}"
    );
    let f = generate(text, &[Quantity::H], Lang::Fortran, false);
    assert!(f.contains("T_ = params(2)"), "{f}");
    assert!(f.contains("out_ = params(3)"), "{f}");
    let r = generate(text, &[Quantity::H], Lang::Rust, false);
    assert!(r.contains("let lambda = params[0];"), "{r}");
}

#[test]
fn user_functions_are_calls_or_inlined_samples() {
    let text =
        "[functions]\nF = 'exp(-u^2)'\n[perturbation]\nxx = \"F''(t - z)\"\nyy = \"-F''(t - z)\"\n";
    let c = generate(text, &[Quantity::H], Lang::C, false);
    assert!(c.contains("double F_d2(double u);"), "{c}");
    assert!(c.contains("F_d2(t - z)"), "{c}");
    let c = generate(text, &[Quantity::H], Lang::C, true);
    assert!(!c.contains("F_d2"), "{c}");
    assert!(c.contains("exp("), "{c}");
    let py = generate(text, &[Quantity::H], Lang::Python, false);
    assert!(py.contains("def lingrav_h(t, x, y, z, *, F_d2):"), "{py}");
}

#[test]
fn fortran_lines_stay_short() {
    let terms: Vec<String> = (1..=14)
        .map(|k| format!("a*x^{k}*sin(x + {k}*y)/(1 + z^2)"))
        .collect();
    let text = format!(
        "[parameters]\na = 1.0\n[perturbation]\ntt = '{}'\n",
        terms.join(" + ")
    );
    let f = generate(&text, &[Quantity::H, Quantity::Dh], Lang::Fortran, false);
    for l in f.lines() {
        assert!(l.len() <= 132, "{} chars: {l}", l.len());
        assert!(
            !l.trim_end().ends_with("*&") && !l.trim_start().starts_with("& *"),
            "{l}"
        );
    }
    assert!(f.contains(" &\n"), "long statements are continued");
}

/// The generated arithmetic (from the user's texts) against the exact route: the
/// canonical form of every column, enclosed by interval evaluation, must contain the DAG's
/// f64 value up to its rounding.
#[test]
fn the_dag_value_agrees_with_the_exact_route() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("worked");
    for name in [
        "oblique_wave.toml",
        "vibrating_rod.toml",
        "uniform_ball.toml",
        "pure_gauge.toml",
    ] {
        let mut p = crate::problem::read(&root.join(name)).unwrap();
        // The rod's curvature takes seconds of algebra in a debug build: its h and ADM data
        // exercise the samples just as well.
        let qs: &[Quantity] = if name == "vibrating_rod.toml" {
            &[Quantity::H, Quantity::Adm]
        } else {
            &[
                Quantity::H,
                Quantity::Riemann,
                Quantity::Adm,
                Quantity::Einstein,
            ]
        };
        let b = blocks(&mut p.store, &p.h, p.source.as_ref(), qs, None).unwrap();
        let target = user::EmitTarget::new(
            crate::tensor::COORDS
                .iter()
                .map(|c| c.to_string())
                .chain(p.parameters.iter().map(|q| q.0.clone()))
                .collect(),
            p.functions.iter().map(|f| f.0.clone()).collect(),
            true,
        );
        let (d, roots) = user::roots(target, &texts(&p), qs).unwrap();
        let c = [0.3, 0.7, -0.4, 1.1];
        let mut vars = c.to_vec();
        vars.extend(p.parameters.iter().map(|q| q.1));
        let pt = crate::tt::numeric_point(&mut p.store, &p.parameters, &p.sampling, c);
        let ids: Vec<Id> = roots.into_iter().flatten().collect();
        let cols: Vec<_> = b.iter().flat_map(|b| &b.columns).collect();
        assert_eq!(ids.len(), cols.len());
        for (col, id) in cols.into_iter().zip(ids) {
            let v = d.eval(id, &vars, &mut FxHashMap::default()).unwrap();
            let z = p.store.eval_interval(col.form, &pt).unwrap_or_else(|| {
                assert!(p.store.is_zero(col.form));
                crate::interval::CInterval::ZERO
            });
            let scale = z.re.mid().abs().max(v.abs()).max(1e-300);
            let tol = 1e-12 * scale + 1e3 * z.re.rad() + 1e-15;
            assert!(
                (v - z.re.mid()).abs() <= tol,
                "{name} {}: {v} vs {}",
                col.name,
                z.re.mid()
            );
        }
    }
}

#[test]
fn latex_has_aligned_blocks() {
    let t = generate(WAVE, &[Quantity::H, Quantity::Adm], Lang::Latex, false);
    assert_eq!(t.matches("\\begin{aligned}").count(), 2);
    assert!(t.contains("h_{xx} &= A \\cos"), "{t}");
    assert!(t.contains("K_{xx} &="), "{t}");
}
