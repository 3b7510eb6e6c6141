//! Shared helpers for the level-formula verification tests (tests/verify_*.rs): solve, check a
//! list of expected levels, describe and assert a verdict.

use ladderfan::verify::{self, Agreement, ExpectedList, LevelFormula, Verdict, VerifySettings};
use ladderfan::{FieldPoint, Model, Reference, Settings, Spectrum};

pub fn ok<T>(r: ladderfan::Result<T>) -> T {
    match r {
        Ok(v) => v,
        Err(e) => panic!("{e}"),
    }
}

pub fn spectrum(m: &Model, pt: FieldPoint, cutoff: usize) -> Spectrum {
    ok(Spectrum::compute(m, pt, &Settings::with_cutoff(cutoff)))
}

pub fn run(m: &Model, pt: FieldPoint, cutoff: usize, list: &ExpectedList) -> Verdict {
    let s = spectrum(m, pt, cutoff);
    ok(verify::check(&s, list, &VerifySettings::default()))
}

pub fn describe(v: &Verdict) -> String {
    let mut out = v.verdict_line("(unit)");
    for p in v.disagreeing().take(5) {
        out.push_str(&format!(
            "\n  {} expected {} numerical {} dev {:e} allowed {:e}",
            p.expected.label, p.expected.energy, p.numerical.energy, p.deviation, p.allowed
        ));
    }
    for u in v.unmatched_numerical.iter().take(5) {
        out.push_str(&format!("\n  numerical without partner {}", u.energy));
    }
    for u in v.missing_expected.iter().take(5) {
        out.push_str(&format!(
            "\n  expected without partner {} {}",
            u.expected.label, u.expected.energy
        ));
    }
    out
}

pub fn assert_pass(v: &Verdict, what: &str, min_pairs: usize) {
    assert!(v.passed(), "{what}: {}", describe(v));
    assert!(
        v.pairs.len() >= min_pairs,
        "{what}: only {} pairs checked: {}",
        v.pairs.len(),
        describe(v)
    );
    assert!(v.pairs.iter().all(|p| p.agreement == Agreement::Agrees));
    assert!(v.verdict_line("meV").starts_with("verdict: PASS"));
    assert!(v.passed()); // the CLI exits 0 (tests/verify_cli.rs)
}

pub fn range(a: i64, b: i64) -> Vec<i64> {
    (a..=b).collect()
}

pub fn formula(f: &str) -> LevelFormula {
    LevelFormula {
        formula: f.into(),
        ..Default::default()
    }
}

pub fn from_formula(
    m: &Model,
    pt: FieldPoint,
    f: &LevelFormula,
    ns: &[i64],
    ss: &[i8],
) -> ExpectedList {
    ok(ExpectedList::from_formula(
        m,
        pt,
        Reference::Zero,
        f,
        ns,
        ss,
    ))
}
