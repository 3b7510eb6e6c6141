//! A seeded random and mutating driver (no cargo-fuzz) over the model-file parser and the two
//! expression languages (model-file expressions / `--set`, and `--formula` / `--case`).
//!
//! Every input must end in `Ok` or in an error whose message is one line of bounded length;
//! a panic (caught here) or a stack overflow (which aborts the test process) fails the test.
//! Model files that parse are also solved at a small cutoff, so that the numbers they carry
//! reach the assembly and the solvers.
//!
//! CI runs `fuzz_parsers_quick` (a few thousand inputs, seeded, fast). The long run is
//! ignored: `cargo test --test fuzz -- --ignored --nocapture` (1e5 inputs by default;
//! `LADDERFAN_FUZZ_CASES=N` and `LADDERFAN_FUZZ_SEED=S` change count and seed). Both print
//! how many inputs parsed, were refused, and were solved.

use ladderfan::expr::{Expr, Scope};
use ladderfan::modelfile;
use ladderfan::problem::Problem;
use ladderfan::units::Units;
use ladderfan::{FieldPoint, Settings, Spectrum};
use std::collections::BTreeMap;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::Path;

/// xorshift64* (Vigna 2016): small, seeded, reproducible.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
    fn pick<'a>(&mut self, items: &[&'a str]) -> &'a str {
        items[self.below(items.len())]
    }
}

/// Tokens that stress the parsers: brackets, quotes, signs, extreme numbers, keys.
const TOKENS: &[&str] = &[
    "(",
    ")",
    "[",
    "]",
    "{",
    "}",
    "\"",
    "'",
    "\"\"\"",
    "=",
    "==",
    ",",
    "\n",
    " ",
    "#",
    "-",
    "+",
    "*",
    "/",
    "^",
    "**",
    "1e308",
    "-1e308",
    "1e-308",
    "1e300",
    "0",
    "-0",
    "nan",
    "inf",
    "-inf",
    "18446744073709551615",
    "9223372036854775808",
    "-5",
    "1.5",
    ".",
    "e",
    "kx",
    "ky^2",
    "kz",
    "B",
    "x",
    "y",
    "z",
    "xz",
    "xxxxxxxxxxxxxxxxxxxxxxxx",
    "sqrt(",
    "hbar_v(",
    "mu_B",
    "pi",
    "components",
    "[[term]]",
    "[parameters]",
    "[defaults]",
    "[set]",
    "cutoff = 1000000000",
    "field = 0",
    "builtin = \"dirac2d\"",
    "matrix",
    "coefficient",
    "monomial",
    "\u{0}",
    "\u{feff}",
    "⊗",
    "é",
    "\t",
    "\r\n",
];

/// Names an expression may refer to (as `--set` / `[parameters]` would see them).
const NAMES: &[&str] = &[
    "a",
    "b",
    "mass",
    "n",
    "s",
    "B",
    "kz",
    "q",
    "pi",
    "mu_B",
    "hbar",
    "c",
    "e",
    "hbar2_2me",
    "metre",
    "none",
];
const FUNCS: &[&str] = &[
    "sqrt", "abs", "exp", "ln", "sin", "if", "min", "max", "hbar_v", "atan2", "round",
];

/// A random expression from the grammar, with occasional junk.
fn random_expression(rng: &mut Rng, depth: usize) -> String {
    if depth == 0 || rng.below(4) == 0 {
        return match rng.below(4) {
            0 => rng.pick(NAMES).to_string(),
            1 => rng
                .pick(&["1", "0", "2.5", "1e308", "1e-308", "-3", ".5", "1e", "0x1"])
                .to_string(),
            2 => rng.pick(TOKENS).to_string(),
            _ => format!("{}", rng.below(100)),
        };
    }
    let a = random_expression(rng, depth - 1);
    match rng.below(9) {
        0 => format!("({a})"),
        1 => format!("-{a}"),
        2 => format!(
            "{a} {} {}",
            rng.pick(&["+", "-", "*", "/", "^", "==", "<", "&&", "||"]),
            random_expression(rng, depth - 1)
        ),
        3 => format!("{}({a})", rng.pick(FUNCS)),
        4 => format!("if({a} < 1, {a}, {})", random_expression(rng, depth - 1)),
        5 => format!(
            "{}{a}{}",
            "(".repeat(rng.below(300)),
            ")".repeat(rng.below(300))
        ),
        6 => format!("{a}{}", rng.pick(TOKENS)),
        7 => "-".repeat(rng.below(500)) + &a,
        _ => format!("{a}^{a}"),
    }
}

/// A mutation of `seed`: flips, insertions of stress tokens, deletions, duplications and
/// splices, 1 to 8 of them.
fn mutate(rng: &mut Rng, seed: &str, other: &str) -> String {
    let mut b: Vec<u8> = seed.as_bytes().to_vec();
    for _ in 0..1 + rng.below(8) {
        let at = rng.below(b.len() + 1);
        match rng.below(7) {
            0 if !b.is_empty() => {
                let i = rng.below(b.len());
                b[i] ^= 1 << rng.below(8);
            }
            1 | 2 => {
                let t = rng.pick(TOKENS).as_bytes().to_vec();
                let reps = if rng.below(20) == 0 {
                    1 + rng.below(5000)
                } else {
                    1
                };
                for _ in 0..reps {
                    b.splice(at..at, t.iter().copied());
                }
            }
            3 if !b.is_empty() => {
                let end = (at + rng.below(40)).min(b.len());
                b.drain(at.min(end)..end);
            }
            4 if !b.is_empty() => {
                let start = rng.below(b.len());
                let end = (start + rng.below(60)).min(b.len());
                let piece = b[start..end].to_vec();
                b.splice(at..at, piece);
            }
            5 => {
                let o = other.as_bytes();
                let start = rng.below(o.len().max(1));
                let end = (start + rng.below(200)).min(o.len());
                b.splice(at..at, o[start.min(end)..end].iter().copied());
            }
            _ => {
                let e = random_expression(rng, 4);
                b.splice(at..at, format!("\"{e}\"").into_bytes());
            }
        }
    }
    String::from_utf8_lossy(&b).into_owned()
}

/// A structural mutation of `seed` that keeps it valid TOML more often: the values of 1 or 2
/// `key = value` lines are replaced by random expressions, extreme numbers, Pauli strings,
/// monomials or arrays.
fn mutate_values(rng: &mut Rng, seed: &str) -> String {
    let mut lines: Vec<String> = seed.lines().map(str::to_string).collect();
    let keyed: Vec<usize> = (0..lines.len())
        .filter(|&i| lines[i].contains('=') && !lines[i].trim_start().starts_with('#'))
        .collect();
    if keyed.is_empty() {
        return seed.to_string();
    }
    for _ in 0..1 + usize::from(rng.below(4) == 0) {
        let i = keyed[rng.below(keyed.len())];
        let key = lines[i].split('=').next().unwrap_or("x").trim().to_string();
        let value = match rng.below(9) {
            0 | 1 => {
                let depth = 1 + rng.below(6);
                format!("\"{}\"", random_expression(rng, depth))
            }
            2 => rng
                .pick(&[
                    "1e308",
                    "-1e308",
                    "1e-308",
                    "0",
                    "-1",
                    "1e300",
                    "nan",
                    "inf",
                    "-0.0",
                    "9223372036854775807",
                    "-9223372036854775808",
                ])
                .to_string(),
            3 => format!(
                "\"{}\"",
                (0..1 + rng.below(8))
                    .map(|_| rng.pick(&["x", "y", "z", "0", "+", "-", "u", "d", "*"]))
                    .collect::<String>()
            ),
            4 => format!(
                "\"{}\"",
                rng.pick(&[
                    "kx",
                    "ky^2",
                    "kx^7",
                    "kx ky B",
                    "B^2",
                    "kz^3",
                    "1",
                    "kx^99999999999",
                    ""
                ])
            ),
            5 => format!(
                "[[{}, 0], [0, {}]]",
                rng.below(5),
                rng.pick(&["1", "[0, 1]", "\"a\"", "1e308"])
            ),
            6 => format!(
                "[{}]",
                (0..rng.below(5))
                    .map(|_| format!("\"{}\"", rng.pick(NAMES)))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
            7 => format!(
                "\"{} {} {}\"",
                rng.pick(&["1e2", "3", "0.5", "1e308", "1e-308", "2"]),
                rng.pick(&["*", "/", "+", "-", "^"]),
                rng.pick(&["7", "0", "1e10", "(1 + 2)", "sqrt(2)", "pi", "mu_B"])
            ),
            _ => format!("{}", rng.next() as i64),
        };
        lines[i] = format!("{key} = {value}");
    }
    lines.join("\n")
}

fn seeds() -> Vec<String> {
    let mut out = Vec::new();
    for dir in ["tests/data", "tests/data/bad"] {
        let d = Path::new(env!("CARGO_MANIFEST_DIR")).join(dir);
        let mut files: Vec<_> = std::fs::read_dir(&d)
            .into_iter()
            .flatten()
            .flatten()
            .map(|e| e.path())
            .filter(|p| p.extension().is_some_and(|x| x == "toml"))
            .collect();
        files.sort();
        for f in files {
            if let Ok(t) = std::fs::read_to_string(&f) {
                out.push(t);
            }
        }
    }
    assert!(out.len() > 10, "seed corpus not found");
    out
}

#[derive(Debug, Default)]
struct Tally {
    inputs: usize,
    parsed: usize,
    refused: usize,
    solved: usize,
    solve_refused: usize,
    expressions: usize,
    expressions_ok: usize,
}

/// An error message must be one line and of bounded length.
fn check_message(what: &str, input: &str, m: &str) {
    assert!(
        !m.contains('\n') && !m.contains('\r'),
        "{what}: multi-line error for input {:?}: {m}",
        input.chars().take(200).collect::<String>()
    );
    assert!(
        m.len() <= 2000,
        "{what}: error of {} bytes ({}...) for input {:?}",
        m.len(),
        m.chars().take(300).collect::<String>(),
        input.chars().take(200).collect::<String>()
    );
}

fn no_panic<T>(what: &str, input: &str, f: impl FnOnce() -> T) -> T {
    match catch_unwind(AssertUnwindSafe(f)) {
        Ok(v) => v,
        Err(_) => panic!(
            "{what} panicked on input {:?}",
            input.chars().take(400).collect::<String>()
        ),
    }
}

fn model_file(t: &mut Tally, text: &str) {
    t.inputs += 1;
    let parsed = no_panic("modelfile::parse", text, || {
        modelfile::parse("f.toml", text)
    });
    match parsed {
        Err(e) => {
            t.refused += 1;
            check_message("modelfile::parse", text, &e.to_string());
        }
        Ok(f) => {
            t.parsed += 1;
            // a small solve: the file's numbers reach the assembly and the solver
            let field = f.defaults.field.unwrap_or(1.0);
            // the file's own cutoff, however large, passes the memory guard or is refused by
            // it at once (issue 12 rows 1-3: a huge `[defaults] cutoff` used to abort)
            if let Some(c) = f.defaults.cutoff {
                if let Err(e) = no_panic("check_cutoff", text, || {
                    Problem::new(
                        &f.model,
                        FieldPoint::field(field),
                        &Settings::with_cutoff(c),
                    )?
                    .check_memory()
                }) {
                    check_message("check_cutoff", text, &e.to_string());
                }
            }
            let cutoff = f.model.band() + 3;
            let r = no_panic("solve", text, || {
                let mut pre = Settings::with_cutoff(cutoff);
                pre.memory_limit_mib = 64;
                Problem::new(&f.model, FieldPoint::field(field), &pre)?.check_memory()?;
                Spectrum::compute(
                    &f.model,
                    FieldPoint::field(field),
                    &Settings::with_cutoff(cutoff),
                )
            });
            match r {
                Ok(_) => t.solved += 1,
                Err(e) => {
                    t.solve_refused += 1;
                    check_message("solve", text, &e.to_string());
                }
            }
        }
    }
}

fn expression(t: &mut Tally, e: &str) {
    t.expressions += 1;
    let params = BTreeMap::from([("a".to_string(), 2.0), ("mass".to_string(), 0.5)]);
    let r = no_panic("eval_expression", e, || {
        modelfile::eval_expression(e, Units::Lab, &params, "--set x")
    });
    match r {
        Ok(x) => {
            assert!(x.is_finite(), "non-finite value accepted for {e:?}");
            t.expressions_ok += 1;
        }
        Err(err) => check_message("eval_expression", e, &err.to_string()),
    }
    let mut scope = Scope::new();
    for (i, n) in ["n", "s", "B", "kz", "q", "mass"].iter().enumerate() {
        scope.set(n, i as f64 + 0.5);
    }
    let r = no_panic("Expr::parse", e, || Expr::parse(e, &scope, "--formula"));
    match r {
        Ok(x) => {
            if let Err(m) = no_panic("Expr::eval", e, || x.eval(&scope)) {
                check_message("Expr::eval", e, &m);
            }
        }
        Err(err) => check_message("Expr::parse", e, &err.to_string()),
    }
}

fn fuzz(cases: usize, seed: u64) -> Tally {
    let corpus = seeds();
    let mut rng = Rng(seed.wrapping_mul(0x9e37_79b9_7f4a_7c15) | 1);
    let mut t = Tally::default();
    for i in 0..cases {
        match i % 4 {
            // mutated model files (half of all inputs)
            0 | 1 => {
                let a = &corpus[rng.below(corpus.len())];
                let b = &corpus[rng.below(corpus.len())];
                let text = if i % 4 == 0 {
                    mutate_values(&mut rng, a)
                } else {
                    mutate(&mut rng, a, b)
                };
                model_file(&mut t, &text);
            }
            // random and mutated expressions
            2 => {
                let depth = 1 + rng.below(8);
                let e = random_expression(&mut rng, depth);
                let e = if rng.below(3) == 0 {
                    mutate(&mut rng, &e, "(1+2)*3")
                } else {
                    e
                };
                expression(&mut t, &e);
            }
            // random bytes as a model file and as an expression
            _ => {
                let len = rng.below(300);
                let bytes: Vec<u8> = (0..len).map(|_| rng.next() as u8).collect();
                let text = String::from_utf8_lossy(&bytes).into_owned();
                model_file(&mut t, &text);
                expression(&mut t, &text);
            }
        }
    }
    t
}

fn report(t: &Tally, seed: u64) {
    println!(
        "fuzz (seed {seed}): {} model files ({} parsed, {} refused; of the parsed {} solved, {} refused at the solve), {} expressions ({} \
         evaluated to a finite value); no panic, every error one line",
        t.inputs,
        t.parsed,
        t.refused,
        t.solved,
        t.solve_refused,
        t.expressions,
        t.expressions_ok
    );
}

#[test]
fn fuzz_parsers_quick() {
    let seed = 12;
    let t = fuzz(3_000, seed);
    report(&t, seed);
    // the driver reaches both outcomes: some mutated files still parse and solve, most fail
    assert!(t.parsed > 0 && t.refused > 0 && t.solved > 0, "{t:?}");
    assert!(
        t.expressions_ok > 0 && t.expressions_ok < t.expressions,
        "{t:?}"
    );
}

#[test]
#[ignore = "long run: 1e5 inputs; cargo test --test fuzz -- --ignored --nocapture"]
fn fuzz_parsers_long() {
    let cases = std::env::var("LADDERFAN_FUZZ_CASES")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(100_000);
    let seed = std::env::var("LADDERFAN_FUZZ_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(20_261_203);
    let t = fuzz(cases, seed);
    report(&t, seed);
    assert!(t.parsed > 0 && t.refused > 0, "{t:?}");
}
