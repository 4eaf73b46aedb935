use super::*;
use crate::tensor::COMPONENTS;
use proptest::prelude::*;

/// A file that uses every table and both kinds of string.
const VALID: &str = r#"# every table, in a typical order
name = 'plane wave with a source'

[parameters]
omega = 2.0
A = 1.0e-3
k = '3/5'
n = 2

[functions]
F = 'exp(-u^2/omega)'

[define]
phase = 'omega*(t - z)'
r = 'sqrt(x^2 + y^2 + z^2)'
wave = "A*cos(phase)"

[perturbation]
xx = 'wave'
yy = '-wave'
xt = 'k*F(t - z)/r'
zz = "F'(t - z)"

[source]
tt = 'n*A/r'

[claims]
field_equations = false
gauge = ["lorenz", "tt"]
pure_gauge = false

[grid]
center = [0.0, 0.1, 0.2, 0.3]
width = 0.5
points = [8, 16, 32]
"#;

/// A minimal valid file, for error tests to extend.
const MINIMAL: &str =
    "[parameters]\nomega = 2.0\nA = 1.0e-3\n\n[perturbation]\nxx = 'A*cos(omega*(t - z))'\n";

fn ok(text: &str) -> Problem {
    match from_str("test.toml", text) {
        Ok(p) => p,
        Err(e) => panic!("expected a valid file, got: {e}\n{:?}", e.help),
    }
}

fn err(text: &str) -> ProblemError {
    from_str("test.toml", text).expect_err("expected an error")
}

/// Line and column (from 1, column in chars) of the `nth` occurrence of `needle`.
fn at(text: &str, needle: &str, nth: usize) -> (usize, usize) {
    let (pos, _) = text
        .match_indices(needle)
        .nth(nth)
        .unwrap_or_else(|| panic!("`{needle}` occurs fewer than {} times", nth + 1));
    error::line_col(text, pos)
}

/// `text` fails with a message containing `message`, at the `nth` occurrence of `needle`.
#[track_caller]
fn check_error(text: &str, message: &str, needle: &str, nth: usize) -> ProblemError {
    let e = err(text);
    assert!(
        e.message.contains(message),
        "message {:?} does not contain {message:?}",
        e.message
    );
    assert_eq!(
        e.line_col(),
        at(text, needle, nth),
        "error {:?} at the wrong place",
        e.message
    );
    e
}

fn help(e: &ProblemError) -> &str {
    e.help.as_deref().unwrap_or("")
}

fn build(p: &mut Problem, text: &str) -> Form {
    let e = crate::parse::parse(text).expect("parses");
    p.store.build(&e, &p.names).expect("builds")
}

fn render(p: &Problem) -> String {
    render_problem(
        p.name.as_deref(),
        &p.parameters,
        &p.functions,
        &p.defines,
        &p.h_text,
        p.source_text.as_ref(),
        p.claims.as_ref(),
    )
}

fn rendered(e: &ProblemError) -> String {
    let mut out = String::new();
    miette::GraphicalReportHandler::new_themed(miette::GraphicalTheme::unicode_nocolor())
        .render_report(&mut out, e)
        .expect("renders");
    out
}

// ----- a valid file --------------------------------------------------------------------

#[test]
fn valid_file_with_every_table() {
    let mut p = ok(VALID);
    assert_eq!(p.name.as_deref(), Some("plane wave with a source"));
    assert_eq!(
        p.parameters,
        vec![
            ("omega".to_string(), 2.0),
            ("A".to_string(), 1.0e-3),
            ("k".to_string(), 0.6),
            ("n".to_string(), 2.0)
        ],
        "file order, not sorted"
    );
    assert_eq!(
        p.functions,
        vec![("F".to_string(), "exp(-u^2/omega)".to_string())]
    );
    let define_names: Vec<&str> = p.defines.iter().map(|d| d.0.as_str()).collect();
    assert_eq!(define_names, ["phase", "r", "wave"]);

    let wave = build(&mut p, "A*cos(omega*(t - z))");
    assert_eq!(p.h[1][1], wave);
    let minus = p.store.neg(wave).expect("neg");
    assert_eq!(p.h[2][2], minus);
    let htx = build(&mut p, "k*F(t - z)/sqrt(x^2 + y^2 + z^2)");
    assert_eq!(p.h[0][1], htx);
    assert_eq!(p.h[1][0], htx);
    let hzz = build(&mut p, "F'(t - z)");
    assert_eq!(p.h[3][3], hzz);
    for (mu, nu) in [(0, 0), (0, 2), (1, 2), (2, 3)] {
        assert!(p.store.is_zero(p.h[mu][nu]), "h_{mu}{nu} omitted, so 0");
        assert!(p.h_text[mu][nu].is_none());
    }
    assert_eq!(p.h_text[0][1].as_deref(), Some("k*F(t - z)/r"));
    assert_eq!(p.h_text[1][0].as_deref(), Some("k*F(t - z)/r"));

    let source = p.source.expect("has a source");
    let ttt = build(&mut p, "n*A/sqrt(x^2 + y^2 + z^2)");
    assert_eq!(source[0][0], ttt);
    assert!(p.store.is_zero(source[1][1]));
    assert_eq!(
        p.source_text.as_ref().expect("source text")[0][0].as_deref(),
        Some("n*A/r")
    );

    assert_eq!(
        p.claims,
        Some(Claims {
            field_equations: Some(false),
            gauge: vec![Gauge::Lorenz, Gauge::Tt],
            pure_gauge: Some(false),
            far_zone_order: None,
            far_zone_radius: None,
        })
    );
    assert_eq!(
        p.grid,
        Some(GridSpec {
            center: Some([0.0, 0.1, 0.2, 0.3]),
            width: Some(0.5),
            points: Some(vec![8, 16, 32]),
        })
    );

    let omega = p.store.symbol_kernel("omega");
    assert_eq!(p.sampling.typical.get(&omega), Some(&2.0));
    assert_eq!(p.sampling.typical.len(), 4);
    let sample = p.sampling.samples.get("F").expect("sample of F");
    assert_eq!(sample.var, p.store.symbol_kernel("u"));
    let names = {
        let mut n = crate::canon::Names::strict();
        n.symbol("u");
        n.symbol("omega");
        n
    };
    let e = crate::parse::parse("exp(-u^2/omega)").expect("parses");
    let f = p.store.build(&e, &names).expect("builds");
    assert_eq!(sample.form, f);
}

#[test]
fn names_table_builds_more_expressions() {
    let mut p = ok(VALID);
    // Coordinates, parameters, functions and defines are all known...
    let f = build(&mut p, "d_t(wave) + F(r) + omega*x");
    assert!(!p.store.is_zero(f));
    // ... and unknown names are errors.
    let e = crate::parse::parse("wavee").expect("parses");
    let be = p.store.build(&e, &p.names).expect_err("undeclared");
    assert!(be.help.unwrap_or_default().contains("did you mean `wave`"));
}

#[test]
fn optional_tables_may_be_absent() {
    let p = ok(MINIMAL);
    assert!(p.name.is_none());
    assert!(p.source.is_none() && p.source_text.is_none());
    assert!(p.claims.is_none());
    assert!(p.grid.is_none());
    assert!(p.functions.is_empty() && p.defines.is_empty());
}

#[test]
fn empty_claims_and_grid_tables() {
    let p = ok(&format!("{MINIMAL}[claims]\n[grid]\n[source]\n"));
    assert_eq!(p.claims, Some(Claims::default()));
    assert_eq!(p.grid, Some(GridSpec::default()));
    let s = p.source.expect("empty source table is a source of zeros");
    assert!(COMPONENTS.iter().all(|&(a, b)| p.store.is_zero(s[a][b])));
}

#[test]
fn single_gauge_string_and_inline_tables() {
    let p =
        ok("perturbation = { xx = 'cos(t - z)', yy = '-cos(t - z)' }\nclaims = { gauge = 'tt' }\n");
    assert_eq!(p.claims.expect("claims").gauge, vec![Gauge::Tt]);
    assert!(p.h_text[2][2].is_some());
}

#[test]
fn parameter_values() {
    let p = ok(
        "[parameters]\na = 3\nb = -1.5e2\nc = '3/5'\nd = '-pi/4'\ne = 0x10\nf = '1.5e-3'\n\
         [perturbation]\n",
    );
    let v: Vec<f64> = p.parameters.iter().map(|x| x.1).collect();
    assert_eq!(v[..3], [3.0, -150.0, 0.6]);
    assert!(
        (v[3] + std::f64::consts::FRAC_PI_4).abs() < 1e-15,
        "{}",
        v[3]
    );
    assert_eq!(v[4..], [16.0, 1.5e-3]);
}

#[test]
fn a_parameter_may_be_named_u() {
    // `u` is only the variable of function samples; elsewhere it is an ordinary name.
    let p = ok("[parameters]\nu = 0.5\n[functions]\nF = 'sin(u)'\n[perturbation]\nxx = 'u*F(t)'\n");
    assert_eq!(p.parameters[0].0, "u");
}

// ----- structural errors ---------------------------------------------------------------

#[test]
fn component_given_twice() {
    let text = "[perturbation]\ntx = 't'\nxx = 'x'\nxt = 'x'\n";
    let e = check_error(
        text,
        "component h_tx given twice: as `tx` and as `xt`",
        "xt",
        0,
    );
    assert_eq!(e.line_col(), (4, 1));
    assert_eq!(e.related().len(), 1);
    assert_eq!(e.related()[0].0.start, text.find("tx").expect("tx"));
    // The same in the source.
    let text = "[perturbation]\n[source]\nzy = '1'\nyz = '2'\n";
    check_error(
        text,
        "component T_yz given twice: as `zy` and as `yz`",
        "yz",
        0,
    );
}

#[test]
fn invalid_component_keys() {
    let e = check_error(
        "[perturbation]\nxx = 'x'\nxw = 'x'\n",
        "`xw` is not a component of h",
        "xw",
        0,
    );
    assert!(help(&e).contains("tt, tx, ty, tz, xx, xy, xz, yy, yz, zz"));
    check_error(
        "[perturbation]\nttt = '1'\n",
        "`ttt` is not a component",
        "ttt",
        0,
    );
    check_error(
        "[perturbation]\nt = '1'\n",
        "`t` is not a component",
        "t =",
        0,
    );
    let e = check_error(
        "[source]\nXY = '1'\n[perturbation]\n",
        "`XY` is not a component of T",
        "XY",
        0,
    );
    assert!(help(&e).contains("lowercase"));
    // A dotted key names two coordinates; `xx.yy` names four letters.
    check_error(
        "[perturbation]\nxx.yy = '1'\n",
        "`xx.yy` is not a component",
        "xx",
        0,
    );
}

// ----- coordinates and backgrounds (issue 12) ------------------------------------------

const SPHERICAL: &str = "coordinates = ['t', 'r', 'th', 'ph']\n[parameters]\nM = 1.0\n\
[background]\nt.t = '-(1 - 2*M/r)'\nr.r = '1/(1 - 2*M/r)'\nth.th = 'r^2'\n\
ph.ph = 'r^2*sin(th)^2'\n";

#[test]
fn spherical_coordinates_with_dotted_keys_in_either_order() {
    let p = ok(&format!(
        "{SPHERICAL}[perturbation]\nph.t = '-2*J*sin(th)^2/r'\n[define]\nJ = 'M/10'\n"
    ));
    assert_eq!(p.coordinates, ["t", "r", "th", "ph"].map(String::from));
    let bg = p.background.as_ref().expect("a background");
    assert!(!p.store.is_zero(bg.g[3][3]));
    assert!(!p.store.is_zero(p.h[0][3]) && p.h[0][3] == p.h[3][0]);
    assert!(p.store.is_zero(bg.lambda));
    assert!(!p.is_flat_cartesian());
}

#[test]
fn coordinate_errors_point_into_the_file() {
    let e = check_error(
        &format!("{SPHERICAL}[perturbation]\nt.ph = '1'\nph.t = '2'\n"),
        "given twice",
        "ph.t",
        0,
    );
    assert!(e.message.contains("`t.ph`"), "{}", e.message);
    check_error(
        &format!("{SPHERICAL}[perturbation]\nt.x = '1'\n"),
        "`t.x` is not a component of h",
        "t.x",
        0,
    );
    // Joined keys only when every coordinate is one letter.
    check_error(
        &format!("{SPHERICAL}[perturbation]\ntr = '1'\n"),
        "`tr` is not a component",
        "tr =",
        0,
    );
    check_error(
        "coordinates = ['t', 'r', 'r', 'z']\n[perturbation]\n",
        "coordinate `r` is listed twice",
        "'r'",
        1,
    );
    check_error(
        "coordinates = ['t', 'r', 'sin', 'z']\n[perturbation]\n",
        "built-in function",
        "'sin'",
        0,
    );
    check_error(
        "coordinates = ['t', 'r']\n[perturbation]\n",
        "four names",
        "['t'",
        0,
    );
    // Other coordinates need a background, and the help says what to write.
    let e = check_error(
        "coordinates = ['t', 'r', 'th', 'ph']\n[perturbation]\nt.t = '1'\n",
        "need a [background] table",
        "coordinates",
        0,
    );
    assert!(help(&e).contains("th.th = 'r^2'"), "{}", help(&e));
    // A parameter may not take a coordinate's name.
    check_error(
        &format!("{SPHERICAL}[perturbation]\n").replace("M = 1.0", "M = 1.0\nth = 2.0"),
        "`th` is a coordinate",
        "th = 2.0",
        0,
    );
}

#[test]
fn cartesian_files_may_name_their_coordinates_and_use_joined_keys() {
    let p = ok("coordinates = ['t', 'x', 'y', 'z']\n[perturbation]\ntx = 'x*y'\nz.z = 't'\n");
    assert!(p.is_flat_cartesian());
    assert!(!p.store.is_zero(p.h[0][1]) && !p.store.is_zero(p.h[3][3]));
}

#[test]
fn lambda_domain_and_gauge_vector() {
    let text = format!(
        "cosmological_constant = 0.5\n{SPHERICAL}[perturbation]\nt.t = '1'\n\
         [domain]\nr = [3, 40]\nth = [0.1, 3.0]\n[gauge_vector]\nr = 'M*cos(th)'\n"
    );
    let mut p = ok(&text);
    let bg = p.background.as_ref().unwrap();
    assert_eq!(bg.lambda_text.as_deref(), Some("0.5"));
    assert!(!p.store.is_zero(bg.lambda));
    assert!(
        bg.gauge_vector
            .as_ref()
            .is_some_and(|xi| !p.store.is_zero(xi[1]))
    );
    assert_eq!(p.domain.unwrap()[1], Some((3.0, 40.0)));
    let r = p.store.symbol_kernel("r");
    assert_eq!(p.sampling.ranges.get(&r), Some(&(3.0, 40.0)));
    check_error(
        &text.replace("r = [3, 40]", "r = [40, 3]"),
        "the range of `r` is empty",
        "[40, 3]",
        0,
    );
    check_error(
        &text.replace("r = [3, 40]", "x = [3, 40]"),
        "`x` is not a coordinate",
        "x = [3",
        0,
    );
    check_error(
        &text.replace("r = 'M*cos(th)'", "q = '1'"),
        "`q` is not a coordinate",
        "q = '1'",
        0,
    );
}

#[test]
fn unknown_top_level_keys_and_tables() {
    let text = format!("{MINIMAL}parameter = 1\n");
    let text = text.replacen("[parameters]\n", "parameter = 1\n[parameters]\n", 1);
    let e = check_error(&text, "unknown top-level key `parameter`", "parameter", 0);
    assert!(
        help(&e).contains("did you mean `parameters`?"),
        "{}",
        help(&e)
    );
    let e = check_error(
        &format!("{MINIMAL}[claim]\ngauge = ['tt']\n"),
        "unknown table [claim]",
        "claim",
        0,
    );
    assert!(help(&e).contains("did you mean `claims`?"));
    assert!(help(&e).contains("`perturbation`"));
    let e = check_error(
        &format!("{MINIMAL}[zzz]\n"),
        "unknown table [zzz]",
        "zzz",
        0,
    );
    assert!(!help(&e).contains("did you mean"));
}

#[test]
fn unknown_keys_in_claims_and_grid() {
    let e = check_error(
        &format!("{MINIMAL}[claims]\nfield_equation = true\n"),
        "unknown key `field_equation` in [claims]",
        "field_equation",
        0,
    );
    assert!(help(&e).contains("did you mean `field_equations`?"));
    let e = check_error(
        &format!("{MINIMAL}[grid]\nwidth = 1.0\ncentre = [0, 0, 0, 0]\n"),
        "unknown key `centre` in [grid]",
        "centre",
        0,
    );
    assert!(help(&e).contains("did you mean `center`?"));
}

#[test]
fn unknown_gauge() {
    let text = format!("{MINIMAL}[claims]\ngauge = ['tt', 'lorentz']\n");
    let e = check_error(&text, "unknown gauge `lorentz`", "'lorentz'", 0);
    assert!(help(&e).contains("did you mean `lorenz`?"));
    assert!(help(&e).contains("`synchronous`"));
    check_error(
        &format!("{MINIMAL}[claims]\ngauge = ['tt', 'tt']\n"),
        "gauge `tt` listed twice",
        "'tt'",
        1,
    );
    check_error(
        &format!("{MINIMAL}[claims]\ngauge = [1]\n"),
        "a gauge must be a string",
        "1]",
        0,
    );
}

#[test]
fn wrong_types() {
    let e = check_error(
        &format!("{MINIMAL}[claims]\nfield_equations = \"yes\"\n"),
        "`field_equations` must be true or false, not a string",
        "\"yes\"",
        0,
    );
    assert_eq!(e.label, "wrong type");
    check_error(
        &format!("{MINIMAL}[claims]\npure_gauge = 1\n"),
        "not an integer",
        "1\n",
        0,
    );
    check_error(
        &format!("name = 3\n{MINIMAL}"),
        "`name` must be a string",
        "3",
        0,
    );
    check_error(
        &format!("parameters = 3\n{}", &MINIMAL[24..]),
        "`parameters` must be a table",
        "3",
        0,
    );
    check_error(
        "[perturbation]\nxx = 1\n",
        "component h_xx must be a string, not an integer",
        "1",
        0,
    );
    check_error(
        "[define]\nq = [1]\n[perturbation]\n",
        "definition of `q` must be a string",
        "[1]",
        0,
    );
    check_error(
        "[parameters]\nq = true\n[perturbation]\n",
        "parameter `q` must be a number",
        "true",
        0,
    );
    check_error(
        "[parameters]\nq = nan\n[perturbation]\n",
        "parameter `q` must be finite",
        "nan",
        0,
    );
    check_error(
        "[parameters]\nq = -inf\n[perturbation]\n",
        "must be finite",
        "-inf",
        0,
    );
    check_error(
        "[parameters]\nq = 'omega'\n[perturbation]\n",
        "parameter `q` must be a constant, but its value uses `omega`",
        "omega",
        0,
    );
    check_error(
        "[parameters]\nq = 'log(-1)'\n[perturbation]\n",
        "finite real number",
        "'log",
        0,
    );
    check_error(
        "[parameters]\nq = '1/(2-2)'\n[perturbation]\n",
        "identically zero",
        "(2-2)",
        0,
    );
    check_error(
        "[parameters]\nq = '3/'\n[perturbation]\n",
        "expected an operand",
        "/'",
        0,
    );
}

#[test]
fn grid_errors() {
    let g = |body: &str| format!("{MINIMAL}[grid]\n{body}\n");
    check_error(
        &g("points = [8, 16]"),
        "at least 3 resolutions, not 2",
        "[8, 16]",
        0,
    );
    check_error(
        &g("points = [8, 6, 32]"),
        "resolutions must increase, but 6 follows 8",
        "6",
        0,
    );
    check_error(&g("points = [8, 8, 32]"), "must increase", "8", 1);
    check_error(&g("points = [3, 8, 16]"), "at least 5 points", "3,", 0);
    check_error(&g("points = [-8, 8, 16]"), "at least 5 points", "-8", 0);
    check_error(&g("points = [8.0, 9, 16]"), "must be an integer", "8.0", 0);
    check_error(&g("points = 8"), "`points` must be a list", "8", 0);
    check_error(&g("width = -1"), "`width` must be positive", "-1", 0);
    check_error(&g("width = 0.0"), "`width` must be positive", "0.0", 0);
    check_error(&g("center = [0, 0, 0]"), "four numbers", "[0, 0, 0]", 0);
    check_error(
        &g("center = [0, 0, 'a', 0]"),
        "the y coordinate of `center` must be a number",
        "'a'",
        0,
    );
}

#[test]
fn toml_syntax_errors_use_the_toml_span() {
    let text = "[perturbation]\nxx = 'unterminated\n";
    let e = err(text);
    assert!(e.message.starts_with("invalid TOML:"), "{}", e.message);
    assert_eq!(e.line_col().0, 2);
    let e = check_error(
        "[perturbation]\nxx = '1'\nxx = '2'\n",
        "invalid TOML: duplicate key",
        "xx",
        1,
    );
    assert_eq!(e.label, "here");
    check_error("a = 1\na = 2\n", "duplicate key", "a", 1);
}

#[test]
fn missing_perturbation() {
    let e = check_error("[parameters]\nA = 1\n", "no [perturbation] table", "[", 0);
    assert!(help(&e).contains("omitted components are 0"));
}

#[test]
fn io_error() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("missing.toml");
    let e = read(&path).expect_err("no such file");
    assert!(e.message.starts_with("cannot read `"), "{}", e.message);
    assert!(e.message.contains("missing.toml"));
    assert_eq!(e.span, Span::new(0, 0));
    assert_eq!(e.line_col(), (1, 1));
    let out = rendered(&e);
    assert!(out.contains("cannot read"), "{out}");

    let good = dir.path().join("good.toml");
    std::fs::write(&good, VALID).expect("write");
    let p = read(&good).expect("reads");
    assert_eq!(p.path, good.display().to_string());
    assert_eq!(p.text, VALID);
}

// ----- name errors ---------------------------------------------------------------------

#[test]
fn name_declared_twice() {
    let text = "[parameters]\nA = 1\n[define]\nA = 'x'\n[perturbation]\n";
    let e = check_error(
        text,
        "`A` is declared twice: as a parameter and as a define",
        "A",
        1,
    );
    assert_eq!(e.related()[0].0.start, text.find('A').expect("A"));
    // Reported at the later place in the file, whatever the table order.
    let text = "[functions]\nG = 'u'\n[parameters]\nG = 2\n[perturbation]\n";
    check_error(
        text,
        "`G` is declared twice: as a function and as a parameter",
        "G",
        1,
    );
}

#[test]
fn reserved_names() {
    check_error(
        "[parameters]\nx = 1\n[perturbation]\n",
        "`x` is a coordinate",
        "x",
        0,
    );
    check_error(
        "[define]\npi = '3'\n[perturbation]\n",
        "`pi` is a built-in constant",
        "pi",
        0,
    );
    let e = check_error(
        "[functions]\nsin = 'u'\n[perturbation]\n",
        "`sin` is a built-in function",
        "sin",
        0,
    );
    assert!(help(&e).contains("tanh"));
    check_error(
        "[define]\nd_f = 't'\n[perturbation]\n",
        "starts with `d_`",
        "d_f",
        0,
    );
    check_error(
        "[parameters]\n\"a b\" = 1\n[perturbation]\n",
        "`a b` is not a valid name",
        "\"a b\"",
        0,
    );
    check_error(
        "[parameters]\n2a = 1\n[perturbation]\n",
        "`2a` is not a valid name",
        "2a",
        0,
    );
}

// ----- expression errors ---------------------------------------------------------------

#[test]
fn undeclared_name_with_suggestion() {
    let text = MINIMAL.replace("A*cos(omega", "A*cos(omga");
    let e = check_error(&text, "undeclared name `omga`", "omga", 0);
    assert_eq!(e.line_col(), (6, 13));
    assert!(help(&e).contains("did you mean `omega`?"), "{}", help(&e));
    assert_eq!(e.span.len(), 4);
    let out = rendered(&e);
    assert!(out.contains("test.toml:6:13"), "{out}");
    assert!(out.contains("did you mean `omega`?"), "{out}");
}

#[test]
fn the_imaginary_unit_is_not_a_name() {
    let text = "[perturbation]\nxx = 'exp(i*(t - z))'\n";
    let e = check_error(text, "undeclared name `i`", "i*", 0);
    assert!(help(&e).contains("no imaginary unit"), "{}", help(&e));
    assert!(help(&e).contains("cos and sin"), "{}", help(&e));
}

#[test]
fn unknown_function() {
    let text = "[functions]\nF = 'u'\n[perturbation]\nxx = 'G(t)'\n";
    let e = check_error(text, "unknown function `G`", "G(", 0);
    // One-letter names are all one edit apart, so no "did you mean" guess is offered.
    assert!(!help(&e).contains("did you mean"), "{}", help(&e));
    assert!(help(&e).contains("[functions]"), "{}", help(&e));
}

#[test]
fn basic_string_without_escapes_maps_exactly() {
    let text = "[perturbation]\nxx = \"cos(omgea*t)\"\n";
    let e = check_error(text, "undeclared name `omgea`", "omgea", 0);
    assert!(!help(&e).contains("literal string"));
}

#[test]
fn escaped_string_falls_back_to_the_whole_string() {
    let text = "[perturbation]\nxx = \"cos(omgea*t)\\t\"\n";
    let e = check_error(text, "undeclared name `omgea`", "\"cos", 0);
    assert_eq!(e.span.len(), "\"cos(omgea*t)\\t\"".len());
    assert!(help(&e).contains("literal string"), "{}", help(&e));
    // A multi-line string, literal or basic, also has no byte-for-byte mapping.
    let text = "[perturbation]\nxx = '''\ncos(omgea*t)'''\n";
    let e = check_error(text, "undeclared name `omgea`", "'''", 0);
    assert!(help(&e).contains("literal string"));
    // ... and an escape even after the error moves the error to the whole string.
    let text = "[perturbation]\nxx = \"1 +\\u0020\"\n";
    check_error(text, "", "\"1", 0);
}

#[test]
fn parse_error_inside_a_string() {
    let text = "[perturbation]\nyy = 'x'\nxx = 'A*(t'\n";
    let e = err(text);
    assert!(e.message.contains("("), "{}", e.message);
    // The error is inside the string on line 3, past `xx = '`.
    let (line, col) = e.line_col();
    assert_eq!(line, 3);
    assert!(col > 6, "{col}");
    let text = "[perturbation]\nxx = 'x + * y'\n";
    let e = check_error(text, "", "* y", 0);
    assert_eq!(e.line_col(), (2, 11));
    let text = "[perturbation]\nxx = ''\n";
    check_error(text, "empty expression", "'\n", 0);
}

#[test]
fn define_order() {
    let text = "[define]\na = 'b + 1'\nb = 't'\n[perturbation]\n";
    let e = check_error(
        text,
        "`b` is used in the definition of `a` but defined later",
        "b +",
        0,
    );
    assert!(help(&e).contains("move `b` above `a`"));
    assert_eq!(e.related()[0].0.start, text.find("b =").expect("b ="));
    let text = "[define]\na = 'a*t'\n[perturbation]\n";
    check_error(text, "`a` is used in its own definition", "a*t", 0);
    // Earlier defines are fine.
    ok("[define]\nb = 't'\na = 'b + 1'\n[perturbation]\nxx = 'a'\n");
}

#[test]
fn function_samples_use_only_u_and_parameters() {
    let base = "[parameters]\nA = 2\n[define]\nr = 'x'\n[functions]\n";
    let e = check_error(
        &format!("{base}F = 'exp(-x^2)'\n[perturbation]\n"),
        "a function sample may not use the coordinate `x`",
        "x^2",
        0,
    );
    assert!(help(&e).contains("function of `u` alone"));
    check_error(
        &format!("{base}F = 'r*u'\n[perturbation]\n"),
        "may not use the define `r`",
        "r*u",
        0,
    );
    check_error(
        &format!("{base}F = 'u'\nG = 'F(u)'\n[perturbation]\n"),
        "may not use the arbitrary function `F`",
        "F(u)",
        0,
    );
    check_error(
        &format!("{base}F = 'd_t(u)'\n[perturbation]\n"),
        "the coordinate `t`",
        "t(u)",
        0,
    );
    check_error(
        &format!("{base}F = 'B*u'\n[perturbation]\n"),
        "undeclared name `B`",
        "B*u",
        0,
    );
    ok(&format!(
        "{base}F = 'A*sin(pi*u)'\n[perturbation]\nxx = 'F(r)'\n"
    ));
}

#[test]
fn undeclared_name_in_source() {
    let text = format!("{MINIMAL}[source]\ntt = 'rho'\n");
    check_error(&text, "undeclared name `rho`", "rho", 0);
}

// ----- rendering -----------------------------------------------------------------------

fn same_content(a: &Problem, b: &Problem) {
    assert_eq!(a.name, b.name);
    assert_eq!(a.parameters, b.parameters);
    assert_eq!(a.functions, b.functions);
    assert_eq!(a.defines, b.defines);
    assert_eq!(a.h_text, b.h_text);
    assert_eq!(a.source_text, b.source_text);
    assert_eq!(a.claims, b.claims);
}

#[test]
fn render_round_trip() {
    let p = ok(VALID);
    let text = render(&p);
    let q = ok(&text);
    same_content(&p, &q);
    assert!(q.grid.is_none(), "render_problem writes no grid");
    // Literal strings where possible; the prime forces a basic string.
    assert!(text.contains("xx = 'wave'"), "{text}");
    assert!(text.contains("zz = \"F'(t - z)\""), "{text}");
    assert!(
        text.contains("tx = 'k*F(t - z)/r'"),
        "components are written as tx, not xt"
    );
    // With the grid appended.
    let grid = p.grid.clone().expect("grid");
    let q = ok(&format!("{text}\n{}", render_grid(&grid)));
    assert_eq!(q.grid, Some(grid));
    // Rendering is stable.
    assert_eq!(render(&q), text);
}

#[test]
fn render_round_trip_of_awkward_values() {
    let params = vec![
        ("a".to_string(), 0.1 + 0.2),
        ("b".to_string(), 1e-300),
        ("c".to_string(), -2.5e21),
        ("d".to_string(), 123_456_789.123_456_79),
        ("e".to_string(), -0.0),
    ];
    let mut h: [[Option<String>; 4]; 4] = Default::default();
    h[0][0] = Some("a\n + b".to_string());
    h[3][1] = Some("\"quoted\" \\ 'single' \u{7}".to_string());
    h[2][3] = Some("c*d*e".to_string());
    let text = render_problem(
        Some("it's a \"test\"\twith\u{1}controls"),
        &params,
        &[],
        &[("q".to_string(), "a*b".to_string())],
        &h,
        None,
        Some(&Claims::default()),
    );
    // The texts in h are not valid expressions, so read only the structure.
    let f = ProblemFile::parse("r.toml", &text).expect("valid TOML");
    assert_eq!(
        f.name.as_deref(),
        Some("it's a \"test\"\twith\u{1}controls")
    );
    let values: Vec<u64> = f.parameters.iter().map(|p| p.value.to_bits()).collect();
    let expected: Vec<u64> = params.iter().map(|p| p.1.to_bits()).collect();
    assert_eq!(values, expected, "floats read back bit for bit");
    let texts: Vec<(usize, usize, &str)> = f
        .perturbation
        .iter()
        .map(|c| (c.mu, c.nu, c.expr.text.as_str()))
        .collect();
    assert_eq!(
        texts,
        [
            (0, 0, "a\n + b"),
            (1, 3, "\"quoted\" \\ 'single' \u{7}"),
            (2, 3, "c*d*e")
        ]
    );
    assert_eq!(f.claims, Some(Claims::default()));
    assert!(f.source.is_none());
}

#[test]
fn rendered_diagnostic_has_file_line_and_label() {
    let text = "[perturbation]\ntx = 't'\nxt = 'x'\n";
    let out = rendered(&err(text));
    assert!(out.contains("test.toml:3:1"), "{out}");
    assert!(out.contains("given again here"), "{out}");
    assert!(out.contains("first given here"), "{out}");
}

// ----- no panics -----------------------------------------------------------------------

/// Any outcome is fine; an error must point at valid places of the text and render.
fn no_panic(text: &str) {
    if let Err(e) = from_str("fuzz.toml", text) {
        assert!(e.span.end <= text.len() && e.span.start <= e.span.end);
        assert!(text.is_char_boundary(e.span.start) && text.is_char_boundary(e.span.end));
        let _ = e.line_col();
        let _ = rendered(&e);
    }
}

fn toml_fragment() -> impl Strategy<Value = String> {
    prop::sample::select(vec![
        "[",
        "]",
        "[[",
        "=",
        " ",
        "\n",
        "'",
        "\"",
        "'''",
        ",",
        "{",
        "}",
        ".",
        "#",
        "\\",
        "xx",
        "tx",
        "xt",
        "tt",
        "zz",
        "A",
        "u",
        "F",
        "F'",
        "(",
        ")",
        "t",
        "x",
        "-",
        "*",
        "^",
        "2",
        "1.5e3",
        "nan",
        "true",
        "parameters",
        "functions",
        "define",
        "perturbation",
        "source",
        "claims",
        "grid",
        "gauge",
        "points",
        "center",
        "width",
        "field_equations",
        "lorenz",
        "d_x",
        "sqrt",
        "é",
        "\u{0}",
    ])
    .prop_map(str::to_string)
}

proptest! {
    #[test]
    fn no_panic_on_arbitrary_text(text in "\\PC{0,200}") {
        no_panic(&text);
    }

    #[test]
    fn no_panic_on_toml_like_text(parts in prop::collection::vec(toml_fragment(), 0..80)) {
        no_panic(&parts.concat());
    }

    #[test]
    fn no_panic_on_mutations_of_a_valid_file(
        edits in prop::collection::vec((any::<prop::sample::Index>(), 0u8..3, any::<u8>()), 1..6)
    ) {
        let mut bytes = VALID.as_bytes().to_vec();
        for (at, kind, byte) in edits {
            let i = at.index(bytes.len() + 1);
            match kind {
                0 if i < bytes.len() => bytes[i] = byte,
                1 => bytes.insert(i, byte),
                _ if i < bytes.len() => { bytes.remove(i); }
                _ => {}
            }
        }
        no_panic(&String::from_utf8_lossy(&bytes));
    }
}

/// Issue 14, item 1: results print in the file's own terms, and what they print reads back.
/// For every worked file: each component of h and of the linearized Einstein tensor (and,
/// for bodies, the trace-free quadrupole and the luminosity; in flat Cartesian coordinates,
/// the TT part and polarizations that `project` prints), printed with the file's
/// `[define]` names, parses with the file's names to exactly the canonical form (the same
/// interned form, or a difference proved 0).
#[test]
fn display_text_reads_back_on_every_worked_file() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("worked");
    let files = worked_names().into_iter().map(|name| dir.join(name));
    let mut checked = 0;
    let mut named = 0;
    for path in files {
        let text = std::fs::read_to_string(&path).unwrap();
        let label = path.display().to_string();
        let mut p = ProblemFile::parse(&label, &text).unwrap().build().unwrap();
        let mut forms: Vec<Form> = crate::tensor::COMPONENTS
            .iter()
            .map(|&(m, n)| p.h[m][n])
            .collect();
        // The flat Einstein tensor of h (about a background too: a large test form).
        let mut lin = crate::tensor::Linearized::new(&mut p.store, p.h);
        let g = lin.einstein(&mut p.store).unwrap();
        forms.extend(crate::tensor::COMPONENTS.iter().map(|&(m, n)| g[m][n]));
        if p.is_flat_cartesian() {
            // What `project` prints: the TT part and the polarizations along an oblique
            // direction.
            let dir = crate::tt::parse_direction(
                &mut p.store,
                &p.names,
                &p.sampling,
                crate::tt::Arg::new("--direction", "3/5,0,4/5"),
                false,
            )
            .unwrap();
            let proj = crate::tt::project_perturbation(&mut p.store, &p.h, &dir).unwrap();
            forms.extend(proj.tt.iter().flatten().copied());
            forms.extend([proj.plus, proj.cross]);
        }
        if !p.bodies.is_empty() {
            // What `radiation` prints: the trace-free quadrupole and the luminosity.
            let clock = crate::radiation::Clock::of(&mut p);
            let mut rad = crate::radiation::Radiation::of_problem(
                &mut p.store,
                &p.bodies,
                p.orbit.as_ref(),
                clock,
            )
            .unwrap();
            forms.extend(rad.trace_free.iter().flatten().copied());
            forms.push(rad.luminosity(&mut p.store).unwrap());
            if let Some(o) = &p.orbit {
                p.names.symbol(&o.anomaly);
            }
        }
        for f in forms {
            let shown = p.store.to_display_text(f);
            let plain = p.store.to_text(f);
            if shown != plain {
                named += 1;
            }
            let e = crate::parse::parse(&shown)
                .unwrap_or_else(|e| panic!("{label}: `{shown}` does not parse: {e:?}"));
            let back = p.store.build(&e, &p.names).unwrap();
            if back != f {
                let d = p.store.sub(back, f).unwrap();
                let v = crate::zero::decide(&mut p.store, d, &p.sampling);
                assert!(
                    matches!(v, crate::zero::Verdict::Zero),
                    "{label}: `{shown}` reads back to a different form than `{plain}`: {v:?}"
                );
            }
            checked += 1;
        }
    }
    eprintln!("{checked} forms read back, {named} of them printed with a file's names");
    assert!(checked > 400, "only {checked} forms checked");
    assert!(named > 40, "only {named} forms printed with a file's names");
}

#[test]
fn a_circular_binary_is_expanded_as_before_and_eccentricity_0_is_circular() {
    // Issue 13: the circular expansion is unchanged text for text, with or without
    // `eccentricity = 0`; a nonzero eccentricity writes the bodies in the anomaly.
    let base = "[parameters]\nm = 1.0\nR = 10.0\n[binary]\nm1 = 'm'\nm2 = 'm'\n\
                semimajor_axis = 'R'\n";
    for extra in ["", "eccentricity = 0\n", "eccentricity = '0.0'\n"] {
        let p = ok(&format!("{base}{extra}"));
        assert!(p.orbit.is_none(), "{extra}");
        assert_eq!(
            p.bodies[0].position_text,
            [
                "(m)/(m + m)*(R)*cos(sqrt((m + m)/(R)^3)*t)".to_string(),
                "(m)/(m + m)*(R)*sin(sqrt((m + m)/(R)^3)*t)".to_string(),
                "(m)/(m + m)*0".to_string(),
            ],
            "{extra}"
        );
    }
    let p = ok(&format!("{base}eccentricity = 0.5\n"));
    let o = p.orbit.as_ref().expect("an eccentric orbit");
    assert_eq!(o.anomaly, "E");
    assert_eq!(
        p.bodies[0].position_text[0],
        "(m)/(m + m)*((R)*(cos(E) - (0.5)))"
    );
    // An eccentricity parameter is sampled inside (0, 1) by the zero test and the audit.
    let p = ok(
        "[parameters]\nm = 1.0\nR = 10.0\ne0 = 0.9\n[binary]\nm1 = 'm'\nm2 = 'm'\n\
                semimajor_axis = 'R'\neccentricity = 'e0'\n",
    );
    assert_eq!(p.parameter_ranges, vec![("e0".to_string(), (0.0, 1.0))]);
}
