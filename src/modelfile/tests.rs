//! Unit tests of the model-file reader.

use super::terms::resolve_parameters;
use super::*;
use crate::hamiltonian::LadderHamiltonian;
use crate::models::{self, Origin};
use crate::units::Units;

fn msg(text: &str) -> String {
    match parse("t.toml", text) {
        Ok(_) => String::from("parsed"),
        Err(e) => e.to_string(),
    }
}

/// A one-component file whose coefficient is `coef` (a TOML value).
fn with_coefficient(coef: &str) -> String {
    format!("components = 1\n[[term]]\ncoefficient = {coef}\nmatrix = [[1]]\nmonomial = \"kx^2\"\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"ky^2\"\n")
}

#[test]
fn deep_nesting_is_refused_not_a_stack_overflow() {
    // regression: about 20,000 nested parentheses in a model file overflowed the stack
    let deep = format!("\"{}1{}\"", "(".repeat(20_000), ")".repeat(20_000));
    let m = msg(&with_coefficient(&deep));
    assert!(
        m.contains("t.toml:3:15") && m.contains("limit of 10000"),
        "{m}"
    );
    assert!(m.len() < 400, "the message quotes the whole input: {m}");
    // within the length limit, the depth limit speaks
    let deep = format!("\"{}1{}\"", "(".repeat(4_000), ")".repeat(4_000));
    let m = msg(&with_coefficient(&deep));
    assert!(
        m.contains("t.toml:3:15") && m.contains("more than 200 levels deep"),
        "{m}"
    );
    let signs = format!("\"{}1\"", "-".repeat(9_000));
    assert!(msg(&with_coefficient(&signs)).contains("levels deep"));
    let ok = format!("\"{}2{}\"", "(".repeat(150), ")".repeat(150));
    assert_eq!(msg(&with_coefficient(&ok)), "parsed");
    // TOML itself: the toml crate refuses deep arrays (its recursion limit is 80)
    let arrays = format!("{}1{}", "[".repeat(20_000), "]".repeat(20_000));
    let m = msg(&with_coefficient(&arrays));
    assert!(m.starts_with("t.toml:3:"), "{m}");
    let tables = format!("{}1{}", "{a=".repeat(20_000), "}".repeat(20_000));
    assert!(msg(&with_coefficient(&tables)).starts_with("t.toml:3:"));
    let over = format!("\"{}\"", vec!["1"; 6_000].join("+"));
    assert!(msg(&with_coefficient(&over)).contains("more than the limit of 10000"));
    // --set goes through the same parser
    let deep_set = format!("{}1{}", "(".repeat(4_000), ")".repeat(4_000));
    match eval_expression(&deep_set, Units::Lab, &BTreeMap::new(), "--set a") {
        Ok(_) => panic!("accepted"),
        Err(e) => assert!(e.to_string().contains("levels deep")),
    }
}

#[test]
fn long_pauli_string_is_refused_before_it_is_expanded() {
    // regression: a 24-factor string was expanded to 2^24 x 2^24 before its size was checked
    let text = "components = 2\n[[term]]\ncoefficient = 1\nmatrix = \"xxxxxxxxxxxxxxxxxxxxxxxx\"\nmonomial = \"1\"\n";
    let m = msg(text);
    assert!(m.contains("more than 6 factors"), "{m}");
    let m = msg("components = 2\n[[term]]\ncoefficient = 1\nmatrix = \"Q\"\nmonomial = \"1\"\n");
    assert!(m.contains("unknown Pauli factor 'Q'"), "{m}");
}

#[test]
fn long_names_are_refused() {
    // regression: a component name of 65,536 characters panicked the table
    let long = "A".repeat(65_536);
    let text = format!("components = 1\ncomponent_names = [\"{long}\"]\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"kx^2\"\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"ky^2\"\n");
    let m = msg(&text);
    assert!(
        m.contains("component name") && m.contains("limit of 256"),
        "{m}"
    );
    assert!(m.len() < 400, "{m}");
    let text = format!("name = \"{long}\"\n{}", with_coefficient("1"));
    assert!(msg(&text).contains("limit of 256"));
    let text = format!(
        "components = 1\n[parameters]\n{long} = 1\n{}",
        &with_coefficient("1")["components = 1\n".len()..]
    );
    assert!(msg(&text).contains("longer than 256"), "{}", msg(&text));
}

#[test]
fn a_long_parameter_chain_resolves_in_order() {
    // regression: resolution was cubic in the number of parameters (2000: over 10 s). The
    // worst order for the old rounds: each name refers to the next one in name order,
    // p0000 = p0001 + 1, ..., p1999 = 1, so p0000 = 2000
    let n = 2000;
    let mut text = String::from("components = 1\n[parameters]\n");
    for i in 0..n - 1 {
        text.push_str(&format!("p{i:04} = \"p{:04} + 1\"\n", i + 1));
    }
    text.push_str(&format!("p{:04} = 1\n", n - 1));
    text.push_str(&with_coefficient("\"p0000\"")["components = 1\n".len()..]);
    let f = parse("t.toml", &text).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(f.model.param("p0000"), Some(n as f64));
    // each expression is evaluated exactly once (the old rounds re-tried every pending
    // parameter: about n^2/2 evaluations)
    let raw: RawFile = toml::from_str(&text).unwrap_or_else(|e| panic!("{e}"));
    let pending: Vec<(&Spanned<String>, &Spanned<toml::Value>)> =
        raw.parameters.iter().flat_map(|p| p.iter()).collect();
    let src = Source {
        name: "t.toml",
        text: &text,
    };
    let resolved =
        resolve_parameters(&src, Units::Lab, &pending, &[]).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(
        resolved.evaluations,
        n - 1,
        "one evaluation per expression parameter"
    );
    // a cycle behind a long chain is still named
    let text = "components = 1\n[parameters]\nx = \"y + 1\"\ny = \"z\"\nz = \"y * 2\"\nw = \"x\"\n"
        .to_string()
        + &with_coefficient("1")["components = 1\n".len()..];
    let m = msg(&text);
    assert!(
        m.contains("parameters y, z refer to each other in a cycle"),
        "{m}"
    );
}

#[test]
fn locations_are_line_and_column() {
    let s = Source {
        name: "f",
        text: "ab\ncdé\nx",
    };
    assert_eq!(s.location(0), "f:1:1");
    assert_eq!(s.location(4), "f:2:2");
    assert_eq!(s.location(s.text.len() - 1), "f:3:1");
}

#[test]
fn dirac_film_matches_the_builtin_elementwise() {
    let text = r#"
components = 2
[parameters]
v = 1e6
hv = "hbar_v(v)"
m = 5
[[term]]
coefficient = "hv"
matrix = "x"
monomial = "kx"
[[term]]
coefficient = "hv"
matrix = [[0, [0, -1]], [[0, 1], 0]]
monomial = "ky"
[[term]]
coefficient = "m"
matrix = "z"
monomial = "1"
"#;
    let f = parse("t.toml", text).unwrap_or_else(|e| panic!("{e}"));
    let b = models::dirac2d(models::Dirac2dParams {
        mass_mev: 5.0,
        ..Default::default()
    })
    .unwrap_or_else(|e| panic!("{e}"));
    let p = crate::hamiltonian::FieldPoint {
        field: 3.0,
        kz: 0.0,
    };
    let h1 = LadderHamiltonian::assemble(&f.model, p, 0.0).unwrap_or_else(|e| panic!("{e}"));
    let h2 = LadderHamiltonian::assemble(&b, p, 0.0).unwrap_or_else(|e| panic!("{e}"));
    let (a, c) = (h1.dense(6), h2.dense(6));
    let scale = c.iter().map(|z| z.norm()).fold(0.0, f64::max);
    assert!((a - c).iter().all(|z| z.norm() <= 1e-13 * scale));
}

#[test]
fn problems_are_located_and_explained() {
    let m = msg("components = 2\nfoo = 1\n");
    assert!(
        m.starts_with("t.toml:2:1:") && m.contains("unknown field"),
        "{m}"
    );
    let m = msg("components = 2\n[[term]]\ncoefficient = 1\nmatrix = \"x⊗z\"\nmonomial = \"1\"\n");
    assert!(m.starts_with("t.toml:4:10:") && m.contains("4x4"), "{m}");
    let m = msg("components = 2\n[[term]]\nlabel = \"hop\"\ncoefficient = 1\nmatrix = \"+\"\nmonomial = \"kx\"\n");
    assert!(m.contains("not Hermitian") && m.contains("hop"), "{m}");
    let m = msg("components = 1\n[[term]]\ncoefficient = nan\nmatrix = \"0\"\nmonomial = \"1\"\n");
    assert!(m.starts_with("t.toml:3:15:") && m.contains("finite"), "{m}");
}

#[test]
fn a_term_model_may_reuse_a_builtin_name_and_has_no_closed_form() {
    // refused before the typed origin ("name is reserved for the built-in model")
    let text = "name = \"dirac2d\"\ncomponents = 1\n[[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"kx^2\"\n";
    let f = parse("t.toml", text).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(f.model.name(), "dirac2d");
    assert!(Origin::of(&f.model).is_none());
    assert!(
        models::expected_levels(&f.model, crate::hamiltonian::FieldPoint::field(1.0), 0.0, 3)
            .is_none()
    );
    // the built-in of that name keeps its origin and closed form
    let b = parse("b.toml", "builtin = \"dirac2d\"\n").unwrap_or_else(|e| panic!("{e}"));
    assert!(matches!(Origin::of(&b.model), Some(Origin::Dirac2d(_))));
    assert!(
        models::expected_levels(&b.model, crate::hamiltonian::FieldPoint::field(1.0), 0.0, 3)
            .is_some()
    );
}

#[test]
fn builtin_with_overrides() {
    let f = parse("b.toml", "builtin = \"dirac2d\"\n[set]\nmass_mev = 5\n")
        .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(f.model.param("mass_mev"), Some(5.0));
    let m = msg("builtin = \"dirac2d\"\n[set]\nmass = 5\n");
    assert!(
        m.starts_with("t.toml:3:1:") && m.contains("mass_mev"),
        "{m}"
    );
}

#[test]
fn set_uses_the_builtins_own_units_like_the_command_line() {
    // regression: [set] values were evaluated with lab constants (m_e = 5686 meV fs^2/nm^2)
    // even for a natural-unit built-in, while --set used the built-in's units
    let file = "builtin = \"dirac\"\n[set]\nmass = \"2 * m_e\"\nspeed = \"0.5 * c\"\n";
    let f = parse("b.toml", file).unwrap_or_else(|e| panic!("{e}"));
    let overrides = [
        ("mass".to_string(), "2 * m_e".to_string()),
        ("speed".to_string(), "0.5 * c".to_string()),
    ];
    let g = parse_with_overrides("b.toml", "builtin = \"dirac\"\n", &overrides)
        .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(f.model.units(), Units::Natural);
    // natural units: m_e = 1 and c = 1 by the definition of the units (common practice)
    let mass = f.model.param("mass").unwrap_or(f64::NAN);
    let speed = f.model.param("speed").unwrap_or(f64::NAN);
    assert!((mass - 2.0).abs() <= 1e-14, "mass = {mass}");
    assert!((speed - 0.5).abs() <= 1e-14, "speed = {speed}");
    assert_eq!(f.model.params(), g.model.params());
    // the same model: the assembled matrices agree element by element
    let p = crate::hamiltonian::FieldPoint {
        field: 0.3,
        kz: 0.2,
    };
    let h1 = LadderHamiltonian::assemble(&f.model, p, 0.0).unwrap_or_else(|e| panic!("{e}"));
    let h2 = LadderHamiltonian::assemble(&g.model, p, 0.0).unwrap_or_else(|e| panic!("{e}"));
    let (a, c) = (h1.dense(6), h2.dense(6));
    let scale = c.iter().map(|z| z.norm()).fold(0.0, f64::max);
    assert!(scale > 0.0);
    assert!((a - c).iter().all(|z| z.norm() <= 1e-13 * scale));
}
