//! Rendering shared by every command: the output format, headings, component lists, claim
//! reports and verdicts, in text and in JSON. Commands assemble their reports from these, so
//! a verdict, a claim or a list of components reads the same everywhere.

use super::out::Outcome;
use crate::canon::{Form, Store};
use crate::check::{CheckReport, ClaimReport, Component, Status};
use crate::problem::Claims;
use crate::tensor::Sym4;
use crate::tensor::{COMPONENTS, component_name};
use crate::zero::Verdict;
use clap::ValueEnum;
use std::fmt::Write as _;

/// Output format of a command's report.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// Readable text.
    Text,
    /// JSON for scripts.
    Json,
}

/// A JSON document as printed: pretty, with a final newline.
pub fn json(v: &serde_json::Value) -> String {
    format!("{}\n", serde_json::to_string_pretty(v).expect("json"))
}

/// The conventions, as every JSON report states them.
pub fn conventions(coordinates: &[String; 4]) -> serde_json::Value {
    serde_json::json!({
        "signature": "-+++",
        "coordinates": coordinates.join(","),
        "units": "G = c = 1",
        "indices": "h and T down",
        "curvature": "MTW signs",
    })
}

/// `label: name`, or the label alone.
pub fn heading(label: &str, name: Option<&str>) -> String {
    match name {
        Some(n) => format!("{label}: {n}"),
        None => label.to_string(),
    }
}

/// `(a, b, c)` of the printed forms.
pub fn vec_text(store: &mut Store, v: &[Form]) -> String {
    format!("({})", texts(store, v).join(", "))
}

/// `(a, b, c)` in the file's terms ([`Store::to_display_text`]), for text reports.
pub fn vec_display(store: &mut Store, v: &[Form]) -> String {
    let shown: Vec<String> = v.iter().map(|f| store.to_display_text(*f)).collect();
    format!("({})", shown.join(", "))
}

/// The printed forms.
pub fn texts(store: &mut Store, v: &[Form]) -> Vec<String> {
    v.iter().map(|f| store.to_text(*f)).collect()
}

/// The components of `h` (the spatial ones only, if asked) that are not exactly zero, with
/// their forms printed in the file's terms (for text reports), and how many are zero.
pub fn nonzero_components(
    store: &mut Store,
    h: &Sym4,
    spatial_only: bool,
) -> (Vec<(String, String)>, usize) {
    let mut shown = Vec::new();
    let mut zeros = 0;
    for (mu, nu) in COMPONENTS {
        if spatial_only && mu == 0 {
            continue;
        }
        if store.is_zero(h[mu][nu]) {
            zeros += 1;
        } else {
            shown.push((component_name(mu, nu), store.to_display_text(h[mu][nu])));
        }
    }
    (shown, zeros)
}

/// Lists the nonzero components of `h` as `prefix_mn = ...`, then how many are zero.
pub fn list_components(s: &mut String, store: &mut Store, h: &Sym4, prefix: &str, spatial: bool) {
    let (shown, zeros) = nonzero_components(store, h, spatial);
    for (name, t) in shown {
        let _ = writeln!(s, "  {prefix}_{name} = {t}");
    }
    if zeros > 0 {
        let _ = writeln!(s, "  ({zeros} further components are exactly 0)");
    }
}

/// The components of `h` as a JSON object `{"tt": "...", ...}` (zero ones included, as "0").
pub fn components_json(store: &mut Store, h: &Sym4, spatial_only: bool) -> serde_json::Value {
    let mut m = serde_json::Map::new();
    for (mu, nu) in COMPONENTS {
        if !(spatial_only && mu == 0) {
            m.insert(component_name(mu, nu), store.to_text(h[mu][nu]).into());
        }
    }
    serde_json::Value::Object(m)
}

/// The indent of the lines under a claim's status word.
const PAD: &str = "          ";

/// What stands in the way of a claim: its components that are not proved zero (at most
/// `limit`, then how many more), each with its residual and its verdict.
pub fn blocking_components(
    s: &mut String,
    store: &mut Store,
    components: &[Component],
    limit: usize,
) {
    let shown: Vec<&Component> = components
        .iter()
        .filter(|k| !matches!(k.verdict, Verdict::Zero))
        .collect();
    for k in shown.iter().take(limit) {
        let residual = k.residual.text(store).unwrap_or_else(|| "0".into());
        let _ = writeln!(s, "  {PAD}   {} = {residual}", k.name);
        match &k.verdict {
            Verdict::Nonzero(w) => {
                let _ = writeln!(s, "  {PAD}     nonzero {w}");
            }
            Verdict::Undecided(why) => {
                let _ = writeln!(s, "  {PAD}     undecided: {why}");
            }
            Verdict::Zero => {}
        }
    }
    if shown.len() > limit {
        let more = shown.len() - limit;
        let _ = writeln!(s, "  {PAD}   ... and {more} more (see --format json)");
    }
}

/// One claim: its status word, title and method, and (unless it holds, or asserts that
/// components do not vanish and `negated_too` is off) what stands in the way.
pub fn claim_lines(
    s: &mut String,
    store: &mut Store,
    c: &ClaimReport,
    word: &str,
    limit: usize,
    negated_too: bool,
) {
    let title = c.display_heading();
    let _ = writeln!(s, "  {word:<10} {title}");
    let _ = writeln!(s, "  {PAD} {}", c.method);
    if (negated_too || c.asserted != Some(false)) && c.status != Status::Holds {
        blocking_components(s, store, &c.components, limit);
    }
}

/// One line per asserted claim of a verification (of a derived perturbation), with what
/// stands in the way of those that do not hold.
pub fn verification_lines(s: &mut String, store: &mut Store, r: &CheckReport) {
    for c in r.claims.iter().filter(|c| c.asserted.is_some()) {
        claim_lines(s, store, c, c.status.label(), 6, true);
    }
}

/// The asserted claims of a verification as JSON: key, status, method.
pub fn verification_json(r: &CheckReport) -> Vec<serde_json::Value> {
    r.claims
        .iter()
        .filter(|c| c.asserted.is_some())
        .map(
            |c| serde_json::json!({ "key": c.key, "status": c.status.label(), "method": c.method }),
        )
        .collect()
}

/// A verdict as JSON: `verdict`, and the method, the witness or the reason.
pub fn verdict_json(v: &Verdict) -> serde_json::Value {
    match v {
        Verdict::Zero => serde_json::json!({ "verdict": "zero", "method": "exact" }),
        Verdict::Nonzero(w) => serde_json::json!({
            "verdict": "nonzero",
            "method": "certified witness",
            "witness": {
                "point": point_json(&w.point),
                "value": [w.value.re.mid(), w.value.im.mid()],
                "seed": w.seed,
            }
        }),
        Verdict::Undecided(why) => serde_json::json!({ "verdict": "undecided", "reason": why }),
    }
}

/// A point as a JSON object of coordinates.
pub fn point_json(point: &[(String, f64)]) -> serde_json::Value {
    serde_json::Value::Object(
        point
            .iter()
            .map(|(n, v)| (n.clone(), serde_json::json!(v)))
            .collect(),
    )
}

/// A claim with every component as JSON.
pub fn claim_json(store: &mut Store, c: &ClaimReport) -> serde_json::Value {
    serde_json::json!({
        "key": c.key,
        "title": c.title,
        "far_zone_order": c.far_zone,
        "asserted": c.asserted,
        "status": c.status.label(),
        "method": c.method,
        "components": c.components.iter().map(|k| {
            let mut v = verdict_json(&k.verdict);
            v["name"] = k.name.clone().into();
            v["audit"] = k.audit.label().into();
            if let Some((text, latex)) = k.residual.whole(store) {
                v["residual"] = text.into();
                if let Some(l) = latex { v["residual_latex"] = l.into(); }
            }
            v
        }).collect::<Vec<_>>(),
    })
}

/// The limit that left a verdict of `report` undecided, worded as any limit reached (see
/// [`super::out::limit_among`]).
pub fn limit_in_report(report: &CheckReport) -> Option<String> {
    let undecided = report
        .claims
        .iter()
        .filter(|c| c.status == Status::Undecided);
    let reasons = report.components().filter_map(|k| match &k.verdict {
        Verdict::Undecided(why) => Some(why.as_str()),
        _ => None,
    });
    super::out::limit_among(undecided.map(|c| c.method.as_str()).chain(reasons))
}

/// The gauges a checked perturbation h' is proved to be in (their names), and the lines
/// `gauges h' is in (exact): ...` and `verdicts on h': <audit>` that `gauge` prints.
pub fn gauges_of(report: &CheckReport) -> (Vec<&str>, String) {
    let holding: Vec<&str> = report
        .claims
        .iter()
        .filter(|c| c.key.starts_with("gauge.") && c.status == Status::Holds)
        .map(|c| c.key.trim_start_matches("gauge."))
        .collect();
    let names = if holding.is_empty() {
        format!("none of {}", crate::problem::Gauge::NAMES.join(", "))
    } else {
        holding.join(", ")
    };
    let components: Vec<crate::check::Component> = report.components().cloned().collect();
    let lines = format!(
        "gauges h' is in (exact): {names}\n  verdicts on h': {}\n",
        crate::check::audit_text(&components)
    );
    (holding, lines)
}

/// The claims of `asked` that `report` (the check of a derived perturbation) decided, as
/// they go into the file written for it: field equations and gauges only where proved; pure
/// gauge keeps the value asked where it holds and is written negated where it fails.
pub fn proved_claims(report: &CheckReport, asked: &Claims) -> Claims {
    let status = |key: &str| report.status_of(key);
    Claims {
        field_equations: report.proved("field_equations"),
        gauge: asked
            .gauge
            .iter()
            .copied()
            .filter(|g| status(&format!("gauge.{}", g.name())) == Some(Status::Holds))
            .collect(),
        pure_gauge: asked
            .pure_gauge
            .and_then(|want| match status("pure_gauge") {
                Some(Status::Holds) => Some(want),
                Some(Status::Fails) => Some(!want),
                _ => None,
            }),
        // The derived perturbation is checked exactly, never at a far-zone order.
        far_zone_order: None,
        far_zone_radius: None,
    }
}

/// The outcome of a result that must be a TT-gauge solution (the TT part of `project
/// --output`, the result of `gauge --to-tt`): holds when TT gauge and the field equations
/// are proved, fails when either fails, else undecided.
pub fn tt_solution(report: &CheckReport) -> Outcome {
    match (
        report.status_of("gauge.tt"),
        report.status_of("field_equations"),
    ) {
        (Some(Status::Holds), Some(Status::Holds)) => Outcome::Holds,
        (Some(Status::Fails), _) | (_, Some(Status::Fails)) => Outcome::Fails,
        _ => Outcome::Undecided,
    }
}
