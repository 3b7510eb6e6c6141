//! The one expression language: a model-file parameter and a level formula see the same
//! constants, unit names and functions with the same values.

use ladderfan::expr::{constants, unit_names, Expr, Value, FUNCTIONS};
use ladderfan::units::Units;
use ladderfan::verify::formula_scope;
use ladderfan::{modelfile, FieldPoint, Model};

/// A one-component model file (invented quadratic band) whose parameter `x` is `expr`.
fn model_with(units: &str, expr: &str) -> Model {
    let text = format!(
        "components = 1\nunits = \"{units}\"\n[parameters]\nx = \"{expr}\"\n\
         [[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"kx^2\"\n\
         [[term]]\ncoefficient = 1\nmatrix = [[1]]\nmonomial = \"ky^2\"\n"
    );
    match modelfile::parse("t.toml", &text) {
        Ok(f) => f.model,
        Err(e) => panic!("{expr} in a model file: {e}"),
    }
}

/// The value of `expr` as a model-file parameter and as a level formula for that model.
fn both(units: &str, expr: &str) -> (f64, f64) {
    let m = model_with(units, expr);
    let in_file = m.param("x").unwrap_or(f64::NAN);
    let scope = formula_scope(&m, FieldPoint::field(1.0));
    let in_formula = match Expr::parse(expr, &scope, "--formula").map(|e| e.eval(&scope)) {
        Ok(Ok(Value::Num(v))) => v,
        other => panic!("{expr} in a formula: {other:?}"),
    };
    (in_file, in_formula)
}

/// A call of `f` with arguments in its domain (0.3 and 0.7 suit every function).
fn call(f: &str) -> String {
    match f {
        "hypot" | "atan2" => format!("{f}(0.3, 0.7)"),
        "min" | "max" => format!("{f}(0.3, 0.7, 0.5)"),
        "if" => "if(0.3 < 0.7, 0.3, 0.7)".to_string(),
        _ => format!("{f}(0.3)"),
    }
}

#[test]
fn every_constant_and_function_has_one_value_in_both_front_ends() {
    for (units, name) in [(Units::Lab, "lab"), (Units::Natural, "natural")] {
        let table: Vec<_> = constants(units)
            .into_iter()
            .chain(unit_names(units))
            .collect();
        // the constants the issue names are there in both unit systems (hbar was verify-only)
        for must in [
            "pi",
            "hbar",
            "e",
            "m_e",
            "c",
            "mu_B",
            "hbar2_2me",
            "hbar_c",
            "me_c2",
        ] {
            assert!(table.iter().any(|c| c.name == must), "{must} in {name}");
        }
        for c in &table {
            let (file, formula) = both(name, c.name);
            // the same table read by the same evaluator: identical, and equal to the table
            assert_eq!(file, formula, "{} in {name} units", c.name);
            assert_eq!(file, c.value, "{} in {name} units", c.name);
        }
        for f in FUNCTIONS {
            let e = call(f);
            let (file, formula) = both(name, &e);
            assert!(file.is_finite(), "{e} = {file}");
            assert_eq!(file, formula, "{e} in {name} units");
        }
    }
    // spot values: hbar = 658.2119569 meV fs and mu_B = 0.057883818060 meV/T (CODATA 2018),
    // hbar_v(1e6 m/s) = 658.2119569 meV nm; natural units hbar = 1, mu_B = 1/2
    let (hbar, _) = both("lab", "hbar");
    assert!((hbar - 658.211_956_9).abs() < 1e-6, "{hbar}");
    let (mu, _) = both("lab", "mu_B");
    assert!((mu - 0.057_883_818_060).abs() < 1e-12, "{mu}");
    let (hv, _) = both("lab", "hbar_v(1e6)");
    assert!((hv - 658.211_956_9).abs() < 1e-6, "{hv}");
    assert_eq!(both("natural", "hbar"), (1.0, 1.0));
    assert_eq!(both("natural", "mu_B"), (0.5, 0.5));
}

#[test]
fn a_model_file_parameter_may_shadow_a_constant_but_not_a_function() {
    // invented: a curvature named c (tests/data/schrodinger_kz.toml names one so)
    let text = "components = 1\n[parameters]\nc = 2.5\nd = \"2 * c\"\n\
                [[term]]\ncoefficient = \"d\"\nmatrix = [[1]]\nmonomial = \"kx^2\"\n\
                [[term]]\ncoefficient = \"d\"\nmatrix = [[1]]\nmonomial = \"ky^2\"\n";
    let f = modelfile::parse("t.toml", text).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(f.model.param("d"), Some(5.0));
    let text = text.replace("c = 2.5\nd = \"2 * c\"", "sqrt = 2.5\nd = \"2\"");
    match modelfile::parse("t.toml", &text) {
        Ok(_) => panic!("a parameter named sqrt was accepted"),
        Err(e) => assert!(e.to_string().contains("built-in function"), "{e}"),
    }
}

#[test]
fn errors_name_the_column_in_both_front_ends() {
    let text = "components = 1\n[parameters]\nx = \"1 + hbarr\"\n\
                [[term]]\ncoefficient = \"x\"\nmatrix = [[1]]\nmonomial = \"kx^2\"\n";
    match modelfile::parse("t.toml", text) {
        Ok(_) => panic!("unknown name accepted"),
        Err(e) => {
            let m = e.to_string();
            assert!(m.starts_with("t.toml:3:"), "{m}");
            assert!(
                m.contains("column 5: unknown name 'hbarr'; define it in [parameters]"),
                "{m}"
            );
        }
    }
}
