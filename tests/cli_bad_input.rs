//! End-to-end tests of bad input to the `ladderfan` binary: a corpus of broken model files in
//! tests/data/bad and bad flags, each exiting with code 2, one located error line and no output
//! left behind (helpers in tests/common/cli.rs).

use std::path::Path;

mod common;
use common::cli::*;
use common::Run;

/// Each broken model file with the words its error line must contain (after the location).
const BAD_FILES: &[(&str, &str, &[&str])] = &[
    (
        "bad_monomial.toml",
        "5:12",
        &["unknown factor 'kw'", "kx, ky, kz and B"],
    ),
    ("bad_pauli.toml", "4:10", &["unknown Pauli factor 'q'"]),
    (
        "bad_units.toml",
        "2:9",
        &["units = \"si\"", "\"lab\"", "\"natural\""],
    ),
    (
        "builtin_bad_parameter.toml",
        "3:1",
        &["no parameter 'mass'", "mass_mev"],
    ),
    (
        "builtin_bad_valley.toml",
        "3:10",
        &["valley = 2", "+1 or -1"],
    ),
    (
        "builtin_with_terms.toml",
        "2:1",
        &["'term' cannot be combined", "[set]"],
    ),
    (
        "component_names_count.toml",
        "2:19",
        &["3 names for 2 components"],
    ),
    (
        "cutoff_memory.toml",
        "8:10",
        &["memory limit", "MiB", "lower the cutoff"],
    ),
    (
        "cutoff_too_small.toml",
        "11:10",
        &["cutoff of 2", "3 needed", "raise the cutoff"],
    ),
    (
        "degree_too_high.toml",
        "5:12",
        &["in-plane degree 8", "at or below 6"],
    ),
    (
        "division_by_zero.toml",
        "3:15",
        &["inf", "not a finite number"],
    ),
    ("field_squared.toml", "5:12", &["B^2", "at most linear"]),
    (
        "inf_parameter.toml",
        "3:7",
        &["parameter big is inf", "finite"],
    ),
    (
        "missing_components.toml",
        "1:1",
        &["missing key 'components'"],
    ),
    (
        "nan_coefficient.toml",
        "3:15",
        &["NaN", "not a finite number"],
    ),
    (
        "non_hermitian.toml",
        "2:1",
        &["not Hermitian", "raising only", "Hermitian-conjugate"],
    ),
    (
        "non_hermitian_complex.toml",
        "2:1",
        &["not Hermitian", "imaginary sigma_x"],
    ),
    ("non_square_rows.toml", "4:10", &["not square", "[2, 1]"]),
    (
        "parameter_cycle.toml",
        "3:1",
        &["a, b refer to each other in a cycle"],
    ),
    ("syntax_error.toml", "3:15", &["TOML syntax"]),
    (
        "unknown_builtin.toml",
        "1:11",
        &["unknown built-in model 'graphite'", "dirac2d"],
    ),
    (
        "unknown_key.toml",
        "2:1",
        &["unknown field `colour`", "remove or rename"],
    ),
    (
        "unknown_parameter.toml",
        "5:15",
        &["unknown name 'hw'", "[parameters]"],
    ),
    (
        "unknown_term_key.toml",
        "3:1",
        &["unknown field `coeff`", "`coefficient`"],
    ),
    (
        "wrong_matrix_shape.toml",
        "5:10",
        &["4x4", "2 components", "2x2"],
    ),
    (
        "wrong_type.toml",
        "1:14",
        &["invalid type", "expected an integer"],
    ),
    ("zero_charge.toml", "2:10", &["charge = 0", "neutral"]),
    (
        "zero_field.toml",
        "3:9",
        &["field = 0", "non-zero magnetic field"],
    ),
];

fn assert_one_error_line(r: &Run, words: &[&str], context: &str) {
    assert_eq!(r.code, 2, "{context}: exit code {} ({})", r.code, r.stderr);
    let lines: Vec<&str> = r.stderr.lines().collect();
    assert_eq!(lines.len(), 1, "{context}: not one line: {:?}", r.stderr);
    assert!(
        lines[0].starts_with("ladderfan: error: "),
        "{context}: {}",
        lines[0]
    );
    for w in words {
        assert!(
            lines[0].contains(w),
            "{context}: '{w}' not in: {}",
            lines[0]
        );
    }
    assert!(
        r.stdout.is_empty(),
        "{context}: stdout not empty: {}",
        r.stdout
    );
}

#[test]
fn every_broken_model_file_exits_2_with_a_located_line_and_leaves_no_file() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/bad");
    let mut on_disk: Vec<String> = std::fs::read_dir(&dir)
        .into_iter()
        .flatten()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".toml"))
        .collect();
    on_disk.sort();
    let mut listed: Vec<String> = BAD_FILES.iter().map(|b| b.0.to_string()).collect();
    listed.sort();
    assert_eq!(
        on_disk, listed,
        "every file in tests/data/bad needs an expectation here"
    );
    assert!(BAD_FILES.len() >= 20);
    for (file, at, words) in BAD_FILES {
        for cmd in ["levels", "fan"] {
            let out = scratch(&format!("bad-{cmd}-{file}"));
            let path = format!("tests/data/bad/{file}");
            let r = run(&[cmd, "--model", &path, "--out", &out.display().to_string()]);
            let located = format!("ladderfan: error: {path}:{at}: ");
            let mut all = vec![located.as_str()];
            all.extend_from_slice(words);
            assert_one_error_line(&r, &all, &format!("{cmd} {file}"));
            assert!(!out.exists(), "{cmd} {file}: output directory was created");
        }
    }
}

#[test]
fn bad_flags_exit_2_with_one_line_and_leave_no_file() {
    let cases: &[(&[&str], &[&str])] = &[
        (
            &["levels", "--builtin", "dirac2d", "--field", "0"],
            &["--field", "field is 0"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--field", "nan"],
            &["--field", "not a finite number"],
        ),
        (
            &["levels", "--builtin", "graphite"],
            &["--builtin", "unknown built-in model 'graphite'"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--set", "mass=3"],
            &["no parameter 'mass'", "mass_mev"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--set", "mass_mev"],
            &["--set", "not KEY=VALUE"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--set", "mass_mev=1/0"],
            &["--set mass_mev", "not a finite number"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--set", "valley=3"],
            &["valley = 3", "+1 or -1"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--cutoff", "1"],
            &["--cutoff", "below the 2 needed"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--cutoff", "100000000"],
            &["--cutoff", "memory limit"],
        ),
        (
            &["levels", "--builtin", "dirac2d", "--memory-limit-mib", "0"],
            &["--memory-limit-mib", "positive"],
        ),
        (
            &[
                "levels",
                "--model",
                "tests/data/dirac_film.toml",
                "--set",
                "nope=2",
            ],
            &["--set nope", "no parameter 'nope'", "delta"],
        ),
        (
            &["levels", "--model", "tests/data/no-such-file.toml"],
            &["cannot read model file", "no-such-file.toml"],
        ),
        (
            &[
                "levels",
                "--model",
                "tests/data/dirac_film.toml",
                "--builtin",
                "dirac2d",
            ],
            &["cannot be used with"],
        ),
        (&["levels"], &["no model given", "--builtin"]),
        (&["levels", "--bogus"], &["unexpected argument '--bogus'"]),
        (&["frobnicate"], &["unrecognized subcommand"]),
        (
            &[
                "fan",
                "--builtin",
                "dirac2d",
                "--b-min",
                "-1",
                "--b-max",
                "1",
                "--points",
                "3",
            ],
            &["B = 0", "one sign"],
        ),
        (
            &[
                "fan",
                "--builtin",
                "dirac2d",
                "--grid",
                "log",
                "--b-min",
                "-1",
                "--b-max",
                "2",
            ],
            &["--grid", "log grid"],
        ),
        (
            &["fan", "--builtin", "dirac2d", "--points", "1"],
            &["--points", "at least 2"],
        ),
        (
            &[
                "fan",
                "--builtin",
                "dirac2d",
                "--emin",
                "5",
                "--emax",
                "1",
                "--points",
                "3",
            ],
            &["--emin", "window"],
        ),
        (
            &[
                "dispersion",
                "--builtin",
                "weyl",
                "--threads",
                "0",
                "--points",
                "3",
            ],
            &["--threads", "at least 1"],
        ),
        (
            &["dispersion", "--builtin", "weyl", "--field", "0"],
            &["--field", "field is 0"],
        ),
        (
            &["export", "--builtin", "dirac2d", "--sector", "5"],
            &["--sector", "CLASS:LABEL"],
        ),
        (
            &[
                "export",
                "--builtin",
                "dirac2d",
                "--cutoff",
                "4",
                "--sector",
                "0:99",
            ],
            &["--sector", "does not exist"],
        ),
    ];
    for (i, (args, words)) in cases.iter().enumerate() {
        let out = scratch(&format!("flag-{i}"));
        let mut a: Vec<&str> = args.to_vec();
        let outs = out.display().to_string();
        // every command that writes files takes --out; point it at a fresh path
        if matches!(
            a.first(),
            Some(&("levels" | "fan" | "dispersion" | "export"))
        ) {
            a.extend(["--out", &outs]);
        }
        let r = run(&a);
        assert_one_error_line(&r, words, &format!("{args:?}"));
        assert!(!out.exists(), "{args:?}: output directory was created");
    }
}
