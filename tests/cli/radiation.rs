//! `lingrav radiation` and the claims about radiation in `check`, on the worked binary
//! (a scenario of our own) against the circular-binary closed forms (checks.md 2c: the
//! luminosity (32/5) mu^2 R^4 w^6 and the waveform's (1 + cos^2 i)/2 and cos i factors; common
//! practice, e.g. Maggiore 2007 eqs. (3.332)-(3.333), from memory).

use super::support::{lingrav, worked};

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
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    let keys: Vec<(&str, &str)> = j["claims"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| (c["key"].as_str().unwrap(), c["status"].as_str().unwrap()))
        .collect();
    assert_eq!(
        keys,
        [
            ("luminosity", "holds"),
            ("luminosity_average", "holds"),
            ("waveform", "holds")
        ]
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
        (
            "[binary]\nm1 = 1\nm2 = 2\nsemimajor_axis = 10\neccentricity = 0.3\n",
            "only circular orbits",
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
