//! `lingrav radiation` and the claims about radiation in `check`, on the worked binaries
//! (scenarios of our own) against closed forms: the circular binary's luminosity
//! (32/5) mu^2 R^4 w^6 and the waveform's (1 + cos^2 i)/2 and cos i factors (checks.md 2c;
//! common practice, e.g. Maggiore 2007 eqs. (3.332)-(3.333), from memory), and the tilted
//! unequal-mass binary's recoil, Fitchett's (1983, MNRAS 203, 1049) amplitude along the
//! lighter star's velocity (`worked/recoil_binary.toml`); the next multipoles, their refusal
//! for a body that is not rigid, and the symmetric sources that do not recoil.

use super::support::{lingrav, worked};

/// Asserts the `(key, status)` of each claim in `check --format json` output.
fn assert_statuses(out: &str, want: &[(&str, &str)]) {
    let j: serde_json::Value = serde_json::from_str(out).unwrap();
    let got: Vec<(&str, &str)> = j["claims"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| (c["key"].as_str().unwrap(), c["status"].as_str().unwrap()))
        .collect();
    assert_eq!(got, want, "{out}");
}

#[test]
fn radiation_of_the_worked_binary() {
    let f = worked("circular_binary.toml");
    let args = [
        "radiation",
        &f,
        "--direction",
        "z",
        "--distance",
        "1000",
        "--format",
        "json",
    ];
    let (out, err, code) = lingrav(&args);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(j["dipole_accelerates"], false);
    assert_eq!(j["audit"]["defect"], false);
    // L = (32/5) mu^2 R^4 w^6 = (32/5) m1^2 m2^2 M / R^5, constant, so its average too.
    let l = j["quantities"]["L"]["expression"].as_str().unwrap();
    assert_eq!(l, "32*m1^2*m2^2*(m1 + m2)/(5*R^5)");
    assert_eq!(j["averages"]["L"]["expression"].as_str().unwrap(), l);
    // Face-on (n = z): h_plus and h_cross have equal amplitude 4 m1 m2/(R r), a quarter
    // period apart.
    let hp = j["quantities"]["h_plus"]["expression"].as_str().unwrap();
    let hx = j["quantities"]["h_cross"]["expression"].as_str().unwrap();
    assert!(
        hp.contains("m1*m2") && hp.contains("cos(") && hp.contains("250"),
        "{hp}"
    );
    assert!(
        hx.contains("m1*m2") && hx.contains("sin(") && hx.contains("250"),
        "{hx}"
    );
    for k in ["Q_xx", "L", "dJ_z/dt", "h_plus", "h_cross"] {
        assert_eq!(
            j["quantities"][k]["audit"]["result"], "consistent",
            "{k}: {}",
            j["quantities"][k]
        );
    }
}

#[test]
fn an_accelerated_source_is_flagged_and_a_file_without_bodies_refused() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("push.toml");
    std::fs::write(
        &p,
        "[parameters]\nm = 1.0\ng = 0.1\n[[body]]\nmass = 'm'\nposition = ['g*t^2/2', '0', '0']\n",
    )
    .unwrap();
    let (out, err, code) = lingrav(&["radiation", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("FLAG: the mass dipole accelerates"), "{out}");
    assert!(out.contains("x: g*m"), "{out}");
    let (_, err, code) = lingrav(&["radiation", &worked("vibrating_rod.toml")]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("describes no bodies"), "{err}");
}

#[test]
fn check_decides_claims_about_luminosity_and_waveform() {
    let (out, err, code) = lingrav(&["check", &worked("circular_binary.toml"), "--format", "json"]);
    assert_eq!(code, 0, "{out}{err}");
    assert_statuses(
        &out,
        &[
            ("luminosity", "holds"),
            ("luminosity_average", "holds"),
            ("waveform", "holds"),
        ],
    );
    // The wrong hand-derived waveform: h_plus proved, h_cross fails with a certified witness.
    let (out, _, code) = lingrav(&["check", &worked("binary_wrong_waveform.toml")]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("fails      waveform"), "{out}");
    assert!(
        out.contains("claimed h_cross - quadrupole h_cross"),
        "{out}"
    );
    assert!(
        out.contains("1 witness(es) certified again independently"),
        "{out}"
    );
    assert!(!out.contains("claimed h_plus - quadrupole h_plus"), "{out}");
}

#[test]
fn bad_binaries_and_waveform_claims_name_their_place() {
    let dir = tempfile::tempdir().unwrap();
    for (text, message, at) in [
        // A Kepler orbit is bound: 0 <= e < 1 (a number at its value, a parameter at its
        // value in [parameters]).
        (
            "[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\neccentricity = 1.0\n",
            "0 <= e < 1",
            ":5:16",
        ),
        (
            "[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\neccentricity = -0.1\n",
            "0 <= e < 1",
            ":5:16",
        ),
        (
            "[parameters]\ne0 = 1.5\n[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\n\
             eccentricity = 'e0'\n",
            "has the value 1.5",
            ":2:6",
        ),
        // An expression of parameters must be real and strictly inside (0, 1) near the
        // parameters' values, use parameters only, and not be identically 0.
        (
            "[parameters]\ne0 = 1.2\n[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\n\
             eccentricity = 'e0^2'\n",
            "is about 1.440000e0 at the file's parameter values, not certified",
            ":7:16",
        ),
        (
            "[parameters]\nb = 2.0\n[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 1\n\
             eccentricity = 'sqrt(1 - b^2)'\n",
            "is not a real number at the file's parameter values",
            ":7:16",
        ),
        (
            "[parameters]\nb = 0.5\n[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 1\n\
             eccentricity = '2*b - 1'\n",
            "the eccentricity 2*b - 1 is about",
            ":7:16",
        ),
        (
            "[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 1\neccentricity = '1/2 - 1/2'\n",
            "the eccentricity 1/2 - 1/2 is 0: a circular orbit",
            ":5:16",
        ),
        (
            "[parameters]\nb = 0.5\n[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 1\n\
             eccentricity = 'b*cos(t)'\n",
            "uses `t`, which is not a parameter",
            ":7:16",
        ),
        (
            "[parameters]\nb = 0.5\n[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 1\n\
             eccentricity = 'b*(1 + sin(E))/2'\n",
            "uses `E`, which is not a parameter",
            ":7:16",
        ),
        // The anomaly's name must be free: by default E, else the name written.
        (
            "[parameters]\nE = 1.0\n[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\n\
             eccentricity = 0.3\n",
            "named `E` by default, but `E` is already a parameter",
            ":3:2",
        ),
        (
            "[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\neccentricity = 0.3\n\
             anomaly = 't'\n",
            "the anomaly `t` is already a coordinate",
            ":6:11",
        ),
        (
            "[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\neccentricity = 0.3\n\
             anomaly = '2x'\n",
            "is not a name",
            ":6:11",
        ),
        (
            "[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\nanomaly = 'EA'\n",
            "this orbit is circular",
            ":5:11",
        ),
        (
            "[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\neccentricity = 0.3\n\
             [[body]]\nmass = 1\nposition = ['t', '0', '0']\n",
            "cannot describe one source",
            ":1:2",
        ),
        (
            "[binary]\nm1 = 1\nm2 = 2\n",
            "exactly one of semimajor_axis and period",
            ":1:2",
        ),
        (
            "[binary]\nm1 = 1\nm2 = 2\nperiod = 3\n[claims.waveform]\ndirection = 'z'\n",
            "needs direction, distance, h_plus and h_cross",
            ":5:9",
        ),
        (
            "[[body]]\nmass = 1\nposition = ['t', '0']\n",
            "three expressions",
            ":3:12",
        ),
        (
            "[[body]]\nmass = 1\nmoments = [1, 2, 3]\naxis = ['1', '1', '0']\n",
            "is not a unit vector",
            ":4:9",
        ),
    ] {
        let p = dir.path().join("bad.toml");
        std::fs::write(&p, text).unwrap();
        let (out, err, code) = lingrav(&["check", p.to_str().unwrap()]);
        assert_eq!(code, 2, "{text}: {out}{err}");
        let flat = super::support::one_line(&err);
        assert!(flat.contains(message), "{text}: {flat}");
        assert!(err.contains(&format!("bad.toml{at}")), "{text}: {err}");
    }
}

#[test]
fn radiation_draws_the_waveform_and_the_pattern() {
    // h_plus seen from iota = pi/3 at distance 1000 has amplitude (4/1000)(m1 m2/R)(1 +
    // cos^2 iota)/2 = 7.3125e-5 for m1 = 1.3, m2 = 0.9, R = 40 (checks.md 2c); h_cross
    // (4/1000)(m1 m2/R) cos iota = 5.85e-5. Over more than a period the drawn ranges reach
    // them to the sampling's resolution.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("w.svg");
    let f = worked("circular_binary.toml");
    let args = [
        "radiation",
        &f,
        "--direction",
        "theta=pi/3,phi=0",
        "--distance",
        "1000",
        "--time-range",
        "0,2500",
        "--svg",
        out.to_str().unwrap(),
    ];
    let (o, err, code) = lingrav(&args);
    assert_eq!(code, 0, "{err}");
    assert!(o.contains("wrote"), "{o}");
    let svg = std::fs::read_to_string(&out).unwrap();
    assert_eq!(svg.matches("<polyline").count(), 3);
    let labels: Vec<f64> = svg
        .split("font-size=\"10\">")
        .skip(1)
        .filter_map(|s| s.split('<').next()?.parse().ok())
        .collect();
    let near = |want: f64| labels.iter().any(|v| (v.abs() / want - 1.0).abs() < 1e-3);
    assert!(near(7.3125e-5) && near(5.85e-5), "{labels:?}");
    assert!(
        svg.contains("&lt;dP/dOmega&gt;"),
        "the pattern is the time average"
    );
    // --svg needs the time range, the direction and the distance.
    let (_, err, code) = lingrav(&["radiation", &f, "--svg", out.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
}

#[test]
fn a_time_average_is_proved_and_checked_over_one_period() {
    // Two equal masses on an orbit with a second harmonic: <L> = 16238 m^2 w^6 / 243 (the
    // exact route's average; the independent route takes the mean of (1/5) dddQ dddQ written
    // from the bodies' texts over one period). A wrong claim fails with a witness.
    let dir = tempfile::tempdir().unwrap();
    let body = "[parameters]\nm = 1.0\nw = 0.3\n[[body]]\nmass = 'm'\n\
                position = ['cos(w*t) + cos(2*w*t)/3', 'sin(w*t)', '0']\n[[body]]\nmass = 'm'\n\
                position = ['-cos(w*t) - cos(2*w*t)/3', '-sin(w*t)', '0']\n[claims]\n";
    for (claim, code, word) in [
        ("16238*m^2*w^6/243", 0, "holds"),
        ("16238*m^2*w^6/240", 1, "fails"),
    ] {
        let p = dir.path().join("two.toml");
        std::fs::write(&p, format!("{body}luminosity_average = '{claim}'\n")).unwrap();
        let (out, err, got) = lingrav(&["check", p.to_str().unwrap()]);
        assert_eq!(got, code, "{claim}: {out}{err}");
        assert!(
            out.contains(&format!("{word}      time-averaged luminosity")),
            "{out}"
        );
        assert!(out.contains("audited numerically"), "{out}");
        assert!(out.contains("one period (32 points)"), "{out}");
        assert!(!out.contains("INTERNAL DEFECT"), "{out}");
    }
}

#[test]
fn an_eccentric_binary_is_checked_in_its_eccentric_anomaly() {
    // The worked eccentric binary (a scenario of our own): Peters & Mathews' (1963) orbit
    // average (checks.md 1a, 1b) proved and checked by a quadrature over one orbit, the
    // face-on waveform derived by hand proved at the retarded anomaly.
    let f = worked("eccentric_binary.toml");
    let (out, err, code) = lingrav(&["check", &f, "--format", "json"]);
    assert_eq!(code, 0, "{out}{err}");
    assert_statuses(
        &out,
        &[("luminosity_average", "holds"), ("waveform", "holds")],
    );
    assert!(out.contains("at the retarded anomaly E"), "{out}");
    let (out, _, _) = lingrav(&["check", &f]);
    assert!(out.contains("over one orbit"), "{out}");
    // f(e) with the wrong power of (1 - e^2) fails with a certified witness; so does a
    // waveform with the wrong sign of h_cross.
    let text = std::fs::read_to_string(&f).unwrap();
    let dir = tempfile::tempdir().unwrap();
    for (from, to, claim) in [
        ("/(4/5)^7", "/(4/5)^6", "time-averaged luminosity"),
        ("h_cross = '-(16/5)", "h_cross = '(16/5)", "waveform"),
    ] {
        assert!(text.contains(from), "{from}");
        let p = dir.path().join("wrong.toml");
        std::fs::write(&p, text.replace(from, to)).unwrap();
        let (out, err, code) = lingrav(&["check", p.to_str().unwrap()]);
        assert_eq!(code, 1, "{out}{err}");
        assert!(out.contains(&format!("fails      {claim}")), "{out}");
        assert!(!out.contains("INTERNAL DEFECT"), "{out}");
    }
    // `radiation` prints the clock and the exact average, in text and JSON, and refuses a
    // picture against time.
    let (out, err, code) = lingrav(&["radiation", &f, "--direction", "z", "--distance", "R"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("n t = E - e sin E"), "{out}");
    assert!(
        out.contains("time average <L> = 1072475*m1^2*m2^2*(m1 + m2)/(16384*a^5)"),
        "{out}"
    );
    assert!(out.contains(": consistent"), "{out}");
    let (out, err, code) = lingrav(&["radiation", &f, "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(j["orbit"]["anomaly"], "E");
    assert_eq!(j["orbit"]["eccentricity"], "3/5");
    assert_eq!(j["audit"]["defect"], false);
    // The picture against time: Kepler's equation solved for the retarded anomaly at each
    // time, over exactly two orbital periods P = 2 pi sqrt(a^3/M) (Kepler's third law).
    let svg = dir.path().join("w.svg");
    let (_, err, code) = lingrav(&[
        "radiation",
        &f,
        "--direction",
        "theta=pi/3,phi=0",
        "--distance",
        "R",
        "--time-range",
        "0,4*pi*sqrt(a^3/(m1 + m2))",
        "--svg",
        svg.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&svg).unwrap();
    assert_well_formed(&text);
    // The checker itself rejects what is not well formed.
    for bad in [
        "<svg><g></svg>",
        "<svg a=\"1></svg>",
        "<svg>a & b</svg>",
        "<svg>",
    ] {
        assert!(
            std::panic::catch_unwind(|| assert_well_formed(bad)).is_err(),
            "{bad}"
        );
    }
    let curves = polylines(&text);
    assert_eq!(curves.len(), 3, "h_plus, h_cross and the pattern");
    assert!(
        text.contains("&lt;dP/dOmega&gt;"),
        "the pattern is orbit-averaged"
    );
    for c in &curves[..2] {
        // 241 samples over two periods: sample k and k + 120 are one period apart.
        assert_eq!(c.len(), 241);
        let one_period = (0..121)
            .map(|k| (c[k].1 - c[k + 120].1).abs())
            .fold(0.0, f64::max);
        assert!(one_period <= 0.05, "not periodic with P: {one_period}");
        // Not trivially so: the curve moves, and (unlike a circular orbit's, whose waves come
        // at twice the orbital frequency) it does not repeat after half a period.
        let (lo, hi) = c
            .iter()
            .fold((f64::MAX, f64::MIN), |(l, h), p| (l.min(p.1), h.max(p.1)));
        assert!(hi - lo > 50.0, "{lo} {hi}");
        let half = (0..181)
            .map(|k| (c[k].1 - c[k + 60].1).abs())
            .fold(0.0, f64::max);
        assert!(half > 5.0, "{half}");
    }
}

/// Checks that `text` is well-formed XML as far as an SVG of ours goes: every tag closed in
/// order (or self-closing), attributes quoted, only the five predefined entities.
fn assert_well_formed(text: &str) {
    let mut stack: Vec<String> = Vec::new();
    let mut rest = text;
    while let Some(open) = rest.find('<') {
        let between = &rest[..open];
        for (i, _) in between.match_indices('&') {
            let ent = &between[i..];
            assert!(
                ["&lt;", "&gt;", "&amp;", "&quot;", "&apos;"]
                    .iter()
                    .any(|e| ent.starts_with(e)),
                "a bare & in text: {ent:.20}"
            );
        }
        let close = rest[open..].find('>').expect("an unclosed tag") + open;
        let tag = &rest[open + 1..close];
        rest = &rest[close + 1..];
        if tag.starts_with('?') || tag.starts_with('!') {
            continue;
        }
        assert_eq!(
            tag.matches('"').count() % 2,
            0,
            "unbalanced quotes in <{tag}>"
        );
        if let Some(name) = tag.strip_prefix('/') {
            assert_eq!(
                stack.pop().as_deref(),
                Some(name.trim()),
                "mismatched </{name}>"
            );
        } else if !tag.ends_with('/') {
            let name = tag.split_whitespace().next().unwrap().to_string();
            stack.push(name);
        }
    }
    assert!(stack.is_empty(), "unclosed: {stack:?}");
    assert!(text.trim_start().starts_with("<svg") || text.trim_start().starts_with("<?xml"));
}

/// The points of every polyline of an SVG.
fn polylines(text: &str) -> Vec<Vec<(f64, f64)>> {
    text.lines()
        .filter(|l| l.starts_with("<polyline"))
        .map(|l| {
            let pts = l
                .split("points=\"")
                .nth(1)
                .unwrap()
                .split('"')
                .next()
                .unwrap();
            pts.split_whitespace()
                .map(|p| {
                    let (x, y) = p.split_once(',').unwrap();
                    (x.parse().unwrap(), y.parse().unwrap())
                })
                .collect()
        })
        .collect()
}

#[test]
fn a_tilted_eccentric_orbit_with_symbolic_angles_and_eccentricity() {
    // Peters & Mathews' <L> (1963) for a symbolic eccentricity on an orbit tilted by symbolic
    // angles (the average does not depend on the orientation), with the anomaly renamed.
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("tilted.toml");
    std::fs::write(
        &p,
        "[parameters]\nm1 = 1.3\nm2 = 0.7\na = 30.0\ne0 = 0.617134\niota = 0.4\n\
         Om = 1.1\nw = 0.3\n[binary]\nm1 = 'm1'\nm2 = 'm2'\nsemimajor_axis = 'a'\n\
         eccentricity = 'e0'\nanomaly = 'psi'\ninclination = 'iota'\nnode = 'Om'\n\
         phase = 'w'\n[claims]\nluminosity_average = '(32/5)*(m1*m2)^2*(m1 + m2)/a^5*\
         (1 + 73/24*e0^2 + 37/96*e0^4)/(1 - e0^2)^(7/2)'\n",
    )
    .unwrap();
    let (out, err, code) = lingrav(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("holds      time-averaged luminosity"), "{out}");
    assert!(out.contains("points in psi"), "{out}");
}

#[test]
fn radiation_prints_the_next_multipoles_and_the_recoil() {
    // The worked tilted binary (a scenario of our own): every new quantity printed and audited,
    // the recoil periodic with average zero (it turns with the orbit), no refusal, no
    // assumption (no rigid body).
    let f = worked("recoil_binary.toml");
    let (out, err, code) = lingrav(&["radiation", &f, "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(j["audit"]["defect"], false);
    assert_eq!(j["next_order_refused"], serde_json::Value::Null);
    assert_eq!(j["assumptions"].as_array().unwrap().len(), 0);
    let q = j["quantities"].as_object().unwrap();
    let names: Vec<&str> = q.keys().map(String::as_str).collect();
    for k in [
        "Q_xxx", "Q_xxy", "Q_xxz", "Q_xyy", "Q_xyz", "Q_xzz", "Q_yyy", "Q_yyz", "Q_yzz", "Q_zzz",
        "S_xx", "S_xy", "S_xz", "S_yy", "S_yz", "S_zz", "dP_x/dt", "dP_y/dt", "dP_z/dt",
    ] {
        assert!(names.contains(&k), "{k} missing from {names:?}");
        assert_eq!(q[k]["audit"]["result"], "consistent", "{k}: {}", q[k]);
    }
    for k in ["dP_x/dt", "dP_y/dt", "dP_z/dt"] {
        assert_eq!(j["averages"][k]["expression"], "0", "{k}");
        // The recoil of an unequal-mass orbit does not vanish at a given time.
        assert_ne!(q[k]["expression"], "0", "{k}");
    }
    // Without --direction there is no waveform of either order.
    assert!(!names.contains(&"h_plus_next"), "{names:?}");
    let (text, err, code) = lingrav(&["radiation", &f]);
    assert_eq!(code, 0, "{err}");
    for line in [
        "mass octupole Q_ijk = STF sum m x_i x_j x_k",
        "current quadrupole S_ij = STF sum m x_i (x cross v)_j",
        "linear momentum carried away, dP_i/dt = (2/63) d^4Q_iab d^3Q_ab + (16/45) eps_ipq",
        "(the source recoils at -dP/dt)",
        "  dP_x/dt = ",
        "(average 0)",
    ] {
        assert!(text.contains(line), "{line}: {text}");
    }
    assert!(!text.contains("ASSUMED"), "{text}");
}

#[test]
fn the_next_order_waveform_is_printed_along_a_direction() {
    let f = worked("recoil_binary.toml");
    let args = [
        "radiation",
        &f,
        "--direction",
        "theta=pi/3,phi=pi/4",
        "--distance",
        "500",
        "--format",
        "json",
    ];
    let (out, err, code) = lingrav(&args);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    for k in ["h_plus", "h_cross", "h_plus_next", "h_cross_next"] {
        let q = &j["quantities"][k];
        assert_eq!(q["audit"]["result"], "consistent", "{k}: {q}");
        assert_ne!(q["expression"], "0", "{k}");
    }
    let (text, _, _) = lingrav(&args[..6]);
    assert!(
        text.contains("next order (not in h_plus, h_cross above)"),
        "{text}"
    );
}

#[test]
fn equal_masses_and_a_spinning_star_do_not_recoil() {
    // Equal masses: the orbit is symmetric under a half turn about its axis, which reverses
    // any recoil in its plane, so dP = 0 exactly. The spinning star sits at the origin and
    // has no octupole and no current quadrupole; its rigid-body assumption is printed.
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("equal.toml");
    std::fs::write(
        &p,
        "[parameters]\nm = 1.0\nR = 12.0\n[binary]\nm1 = 'm'\nm2 = 'm'\nsemimajor_axis = 'R'\n",
    )
    .unwrap();
    let (out, err, code) = lingrav(&["radiation", p.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    for k in ["dP_x/dt", "dP_y/dt", "dP_z/dt"] {
        assert_eq!(j["quantities"][k]["expression"], "0", "{k}");
    }
    let star = worked("spinning_star.toml");
    let (out, err, code) = lingrav(&["radiation", &star, "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    for k in ["Q_xxx", "S_xy", "dP_z/dt"] {
        assert_eq!(j["quantities"][k]["expression"], "0", "{k}");
    }
    let assumed = j["assumptions"][0].as_str().unwrap();
    assert!(
        assumed.contains("reflection-symmetric in its three principal planes"),
        "{assumed}"
    );
    let (text, _, _) = lingrav(&["radiation", &star]);
    assert!(text.contains("ASSUMED: a rigid body is taken"), "{text}");
}

#[test]
fn a_rigid_body_whose_moments_change_is_refused_at_the_next_order() {
    // Its quadrupole is still printed (it needs only the second moment); the octupole, the
    // current quadrupole and the recoil are not, with the reason; a claim about the recoil
    // is undecided (exit 3), not silently dropped.
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("growing.toml");
    std::fs::write(
        &p,
        "[parameters]\nW = 0.05\n[[body]]\nmass = 1\nposition = ['cos(t)', '0', '0']\n\
         moments = ['1/2 + t/100', '1/3', '1/5']\nangle = 'W*t'\n\
         [claims]\nmomentum_flux = ['0', '0', '0']\n",
    )
    .unwrap();
    let (out, err, code) = lingrav(&["radiation", p.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let why = j["next_order_refused"].as_str().unwrap();
    assert!(
        why.contains("1/2 + t/100") && why.contains("not rigid"),
        "{why}"
    );
    assert!(j["quantities"].get("Q_xx").is_some());
    assert!(j["quantities"].get("dP_x/dt").is_none());
    let (text, _, _) = lingrav(&["radiation", p.to_str().unwrap()]);
    assert!(
        text.contains("mass octupole, current quadrupole and momentum flux: not computed:"),
        "{text}"
    );
    let (out, err, code) = lingrav(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 3, "{out}{err}");
    assert!(out.contains("undecided  momentum flux"), "{out}");
    assert!(out.contains("not rigid"), "{out}");
}

#[test]
fn check_decides_claims_about_the_momentum_flux() {
    let (out, err, code) = lingrav(&["check", &worked("recoil_binary.toml"), "--format", "json"]);
    assert_eq!(code, 0, "{out}{err}");
    assert_statuses(
        &out,
        &[
            ("momentum_flux", "holds"),
            ("momentum_flux_average", "holds"),
        ],
    );
    // The same file with the recoil's sign flipped in y (the classic slip: the direction of
    // the heavier body's velocity instead of the lighter one's), and a nonzero average: both
    // fail, each with its component named and a certified witness.
    let text = std::fs::read_to_string(worked("recoil_binary.toml")).unwrap();
    let wrong = text
        .replace("'-A*cos(w*t)*cos(incl)'", "'A*cos(w*t)*cos(incl)'")
        .replace(
            "momentum_flux_average = ['0', '0', '0']",
            "momentum_flux_average = ['0', '0', 'A/10']",
        );
    assert_ne!(wrong, text);
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("wrong.toml");
    std::fs::write(&p, wrong).unwrap();
    let (out, err, code) = lingrav(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 1, "{out}{err}");
    assert!(out.contains("fails      momentum flux"), "{out}");
    assert!(
        out.contains("fails      time-averaged momentum flux"),
        "{out}"
    );
    assert!(out.contains("claimed dP_y/dt - formula dP_y/dt"), "{out}");
    assert!(!out.contains("claimed dP_x/dt - formula dP_x/dt"), "{out}");
    assert!(
        out.contains("claimed <dP_z/dt> - <formula dP_z/dt>"),
        "{out}"
    );
    assert!(!out.contains("INTERNAL DEFECT"), "{out}");
}

#[test]
fn the_recoil_of_a_head_on_plunge_has_no_time_average() {
    // Unequal masses falling along x (the worked plunge with m2 != m1): the recoil is along x,
    // and with no periodic motion a claimed average is undecided with the reason.
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("plunge.toml");
    std::fs::write(
        &p,
        "[parameters]\nm1 = 1.0\nm2 = 0.5\n[functions]\nX = '10 - u^2/40'\n\
         [[body]]\nmass = 'm1'\nposition = ['m2*X(t)/(m1 + m2)', '0', '0']\n\
         [[body]]\nmass = 'm2'\nposition = ['-m1*X(t)/(m1 + m2)', '0', '0']\n\
         [claims]\nmomentum_flux_average = ['0', '0', '0']\n",
    )
    .unwrap();
    let (out, err, code) = lingrav(&["radiation", p.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_ne!(j["quantities"]["dP_x/dt"]["expression"], "0");
    assert_eq!(j["quantities"]["dP_y/dt"]["expression"], "0");
    assert_eq!(j["quantities"]["dP_z/dt"]["expression"], "0");
    assert_eq!(
        j["averages"]["dP_x/dt"]["expression"],
        serde_json::Value::Null
    );
    let (out, err, code) = lingrav(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 3, "{out}{err}");
    assert!(out.contains("no time average of dP_x/dt"), "{out}");
}

/// `--mass-unit`: the worked circular binary's luminosity in watts is the closed form
/// (32/5) m1^2 m2^2 M/R^5 (checks.md 2c) times c^5/G (common practice), its quadrupole
/// frequency 2 w/(2 pi) in Hz with w = sqrt(M/R^3) in units of G M/c^3 (Kepler's third law),
/// and the distance in metres; every SI number is audited.
#[test]
fn radiation_in_si_units() {
    let f = worked("circular_binary.toml");
    let args = [
        "radiation",
        &f,
        "--direction",
        "theta=pi/3,phi=0",
        "--distance",
        "1000",
        "--mass-unit",
        "2msun",
        "--set",
        "R=50",
        "--at",
        "3e-3 s",
        "--format",
        "json",
    ];
    let (out, err, code) = lingrav(&args);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let si = &j["si"];
    let (c, g, gm_sun) = (299_792_458.0_f64, 6.674_30e-11_f64, 1.327_124_4e20_f64);
    let gm = 2.0 * gm_sun;
    let (m1, m2, r) = (1.3_f64, 0.9_f64, 50.0_f64);
    let m = m1 + m2;
    let lum = 32.0 / 5.0 * m1 * m1 * m2 * m2 * m / r.powi(5) * c.powi(5) / g;
    let rel = |got: &serde_json::Value, want: f64| (got.as_f64().unwrap() / want - 1.0).abs();
    assert!(rel(&si["averages"]["luminosity_w"], lum) < 1e-12, "{si}");
    assert!(rel(&si["at"]["luminosity_w"], lum) < 1e-12, "{si}");
    let w = (m / r.powi(3)).sqrt();
    let f_gw = 2.0 * w / (2.0 * std::f64::consts::PI * (gm / c.powi(3)));
    assert!(rel(&si["numbers"]["frequency_1_hz"], f_gw) < 1e-12, "{si}");
    assert!(rel(&si["numbers"]["distance_m"], 1000.0 * gm / (c * c)) < 1e-12);
    assert_eq!(si["set"], serde_json::json!(["R"]));
    assert_eq!(si["values"]["R"], 50.0);
    assert_eq!(si["audit"]["defect"], false);
    assert!(si["audit"]["numbers"].as_u64().unwrap() >= 20);
    // The strain at 60 degrees: h_plus^2/A_plus^2 + h_cross^2/A_cross^2 = 1 with
    // A_plus = (4 mu M/(R d)) (1 + cos^2 i)/2, A_cross = (4 mu M/(R d)) cos i (checks.md 2c).
    let amp = 4.0 * (m1 * m2 / m) * m / (r * 1000.0);
    let (ap, ax) = (amp * (1.0 + 0.25) / 2.0, amp * 0.5);
    let hp = si["at"]["h_plus"].as_f64().unwrap();
    let hx = si["at"]["h_cross"].as_f64().unwrap();
    assert!(
        ((hp / ap).powi(2) + (hx / ax).powi(2) - 1.0).abs() < 1e-9,
        "{hp} {hx}"
    );
    // Text: the same numbers with their units, and the audit line.
    let (text, err, code) = lingrav(&args[..args.len() - 2]);
    assert_eq!(code, 0, "{err}");
    assert!(text.contains(" W\n") && text.contains(" Hz\n") && text.contains(" N m\n"));
    assert!(
        text.contains("SI numbers, with one mass unit = 2msun"),
        "{text}"
    );
    assert!(
        text.contains("SI numbers, the interval enclosure"),
        "{text}"
    );
    assert!(text.contains("consistent"), "{text}");
}

/// An eccentric binary in SI: the orbital period 2 pi/n in seconds, the instantaneous
/// numbers at a time found by solving Kepler's equation, and an eccentricity parameter set out
/// of range on the command line is bad input.
#[test]
fn eccentric_radiation_in_si_units() {
    let f = worked("eccentric_binary.toml");
    let args = [
        "radiation",
        &f,
        "--mass-unit",
        "1msun",
        "--at",
        "2h",
        "--format",
        "json",
    ];
    let (out, err, code) = lingrav(&args);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let si = &j["si"];
    let (c, gm_sun) = (299_792_458.0_f64, 1.327_124_4e20_f64);
    // Kepler's third law, a = 40, M = 2 (common practice).
    let p = 2.0 * std::f64::consts::PI * (40.0_f64.powi(3) / 2.0).sqrt() * gm_sun / c.powi(3);
    let got = si["numbers"]["orbital_period_s"].as_f64().unwrap();
    assert!((got / p - 1.0).abs() < 1e-12, "{got} {p}");
    assert!(si["at"]["luminosity_w"].as_f64().unwrap() > 0.0);
    assert_eq!(si["audit"]["defect"], false);
}

/// A time so late that the orbital phase w t is beyond double precision: the oscillating
/// numbers are said to be not certified (exit 3), never printed as if they were; the constant
/// luminosity still is.
#[test]
fn radiation_si_numbers_that_cannot_be_certified() {
    let f = worked("circular_binary.toml");
    let args = [
        "radiation",
        &f,
        "--direction",
        "z",
        "--distance",
        "1e6",
        "--mass-unit",
        "1msun",
        "--at",
        "1e9yr",
    ];
    let (out, err, code) = lingrav(&args);
    assert_eq!(code, 3, "{out}{err}");
    // The last h_plus line is the SI one (the first is the exact form).
    let h = out
        .lines()
        .rfind(|l| l.trim_start().starts_with("h_plus "))
        .unwrap();
    assert!(h.contains("not certified: the enclosure"), "{h}");
    assert!(out.contains("not certified (exit 3)"), "{out}");
    let l = out
        .lines()
        .rfind(|l| l.trim_start().starts_with("L "))
        .unwrap();
    assert!(l.ends_with(" W"), "{l}");
}

#[test]
fn radiation_si_bad_input() {
    let f = worked("circular_binary.toml");
    for (extra, needle) in [
        (
            vec!["--direction", "z", "--mass-unit", "1msun"],
            "an SI strain needs a distance",
        ),
        (vec!["--mass-unit", "1.4kg"], "unknown unit `kg`"),
        (vec!["--mass-unit", "-1msun"], "must be positive"),
        (
            vec!["--mass-unit", "1", "--set", "w=3"],
            "is not a parameter",
        ),
        (
            vec!["--mass-unit", "1", "--set", "R=abc"],
            "not a finite number",
        ),
        (
            vec!["--mass-unit", "1", "--at", "3 parsecs"],
            "unknown unit",
        ),
        (vec!["--at", "1s"], "--mass-unit"),
    ] {
        let mut args = vec!["radiation", f.as_str()];
        args.extend(extra.iter().copied());
        let (out, err, code) = lingrav(&args);
        assert_eq!(code, 2, "{args:?}: {out}{err}");
        assert!(err.contains(needle), "{args:?}: {err}");
        assert!(!err.contains("panicked"));
    }
}

/// An eccentricity written as an expression of parameters (here from the axes of the ellipse,
/// e = sqrt(1 - b^2/a^2)): Peters & Mathews' (1963) <L> holds for it, the condition 0 < e < 1
/// is printed with the box of parameter values on which interval arithmetic certified it, and
/// a wrong coefficient fails with a witness inside that box, where 0 < e < 1.
#[test]
fn an_eccentricity_written_as_an_expression_of_parameters() {
    let dir = tempfile::tempdir().unwrap();
    let text = |c37: &str| {
        format!(
            "[parameters]\nm1 = 1.4\nm2 = 0.6\na = 40.0\nb = 32.0\n[define]\n\
             e = 'sqrt(1 - b^2/a^2)'\n[binary]\nm1 = 'm1'\nm2 = 'm2'\nsemimajor_axis = 'a'\n\
             eccentricity = 'sqrt(1 - b^2/a^2)'\n[claims]\nluminosity_average = \
             '(32/5)*(m1*m2)^2*(m1 + m2)/a^5*(1 + 73/24*e^2 + {c37}*e^4)/(1 - e^2)^(7/2)'\n"
        )
    };
    let good = dir.path().join("good.toml");
    std::fs::write(&good, text("37/96")).unwrap();
    let g = good.to_str().unwrap();
    let (out, err, code) = lingrav(&["check", g]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("ASSUMED: 0 < sqrt(1 - b^2/a^2) < 1"), "{out}");
    let (out, err, code) = lingrav(&["radiation", g, "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let cond = j["orbit"]["condition"].as_str().unwrap();
    assert!(cond.contains("a in [") && cond.contains("b in ["), "{cond}");
    // The box: read it back and check e over its corners (b/a < 1 everywhere in it).
    let bounds = |name: &str| -> (f64, f64) {
        let s = cond.split(&format!("{name} in [")).nth(1).unwrap();
        let (lo, rest) = s.split_once(", ").unwrap();
        (
            lo.parse().unwrap(),
            rest.split(']').next().unwrap().parse().unwrap(),
        )
    };
    let ((alo, ahi), (blo, bhi)) = (bounds("a"), bounds("b"));
    assert!(alo <= 40.0 && 40.0 <= ahi && blo <= 32.0 && 32.0 <= bhi);
    assert!(bhi < alo && blo > 0.0, "0 < e < 1 on the whole box");
    let bad = dir.path().join("bad.toml");
    std::fs::write(&bad, text("37/95")).unwrap();
    let (out, err, code) = lingrav(&["check", bad.to_str().unwrap(), "--format", "json"]);
    assert_eq!(code, 1, "{out}{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let point = &j["claims"][0]["components"][0]["witness"]["point"];
    let value = |name: &str| point[name].as_f64().unwrap();
    let (a, b) = (value("a"), value("b"));
    assert!(
        (alo..=ahi).contains(&a) && (blo..=bhi).contains(&b),
        "{a} {b}"
    );
    let e = (1.0 - b * b / (a * a)).sqrt();
    assert!(e > 0.0 && e < 1.0, "{e}");
}
