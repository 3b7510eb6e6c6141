//! One set-up per command run: `levels`, `verify` and `export` assemble the Hamiltonian once
//! at the point of the run ([`ladderfan::hamiltonian::assemblies`]), and a split solve at
//! kz = 0 assembles once more, at a generic kz, for the label families
//! (`labelling::join_kz_families`, see `Spectrum::solve`); `export` does not label, so it
//! assembles exactly once in all.
//!
//! Each test writes the invented gapped Dirac film of tests/data/dirac_film.toml under its own
//! model name, so that tests running in parallel never share a counter key.

use super::{dispatch, Cli};
use clap::Parser;
use ladderfan::hamiltonian::{assemblies, assemblies_of};
use ladderfan::FieldPoint;
use std::path::PathBuf;

/// A private directory holding the invented film model named `name`; returns (dir, model path).
fn film(name: &str) -> (PathBuf, PathBuf) {
    let text = include_str!("../../tests/data/dirac_film.toml").replace(
        "name = \"invented-dirac-film\"",
        &format!("name = \"{name}\""),
    );
    assert!(text.contains(name), "the model name line moved");
    let dir = std::env::temp_dir().join(format!("ladderfan-{name}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap_or_else(|e| panic!("{e}"));
    let path = dir.join("film.toml");
    std::fs::write(&path, text).unwrap_or_else(|e| panic!("{e}"));
    (dir, path)
}

/// Run `ladderfan ARGS` in process; panics on a parse error, returns the command's result.
fn run(args: &[&str]) -> super::common::CliResult {
    let cli = Cli::try_parse_from(std::iter::once("ladderfan").chain(args.iter().copied()))
        .unwrap_or_else(|e| panic!("{e}"));
    dispatch(cli.command.unwrap_or_else(|| panic!("no command")))
}

/// The point of these runs: the file's default field 4 T, kz 0.
const POINT: FieldPoint = FieldPoint {
    field: 4.0,
    kz: 0.0,
};

#[test]
fn levels_assembles_once_at_its_point() {
    let name = "invented-film-one-setup-levels";
    let (dir, model) = film(name);
    let model = model.to_string_lossy().into_owned();
    run(&["levels", "--model", &model, "--cutoff", "60", "--json"])
        .unwrap_or_else(|e| panic!("{}", e.message()));
    // one set-up at (4 T, 0) for the memory check and the solve (before: three)
    assert_eq!(assemblies(name, POINT), 1);
    // and none elsewhere: the film has no kz term, so the label families need no second
    // assembly at a generic kz (a model with kz terms has one more, src/sweep.rs tests)
    assert_eq!(assemblies_of(name), 1);
    std::fs::remove_dir_all(dir).ok();
}

#[test]
fn verify_assembles_once_at_its_point() {
    let name = "invented-film-one-setup-verify";
    let (dir, model) = film(name);
    let model = model.to_string_lossy().into_owned();
    // massive 2D Dirac: E = s sqrt(Delta^2 + 2 n (hbar v / l_B)^2), n = 0 at -Delta for q = -1,
    // B > 0 (McClure, Phys. Rev. 104, 666 (1956) for Delta = 0; the mass shifts E^2 by Delta^2)
    run(&[
        "verify",
        "--model",
        &model,
        "--cutoff",
        "120",
        "--formula",
        "s*sqrt(delta^2 + 2*n*(hbar*velocity*metre/second/l_B)^2)",
        "--formula-n0",
        "-delta",
        "--n",
        "0..10",
        "--s",
        "-1,1",
        "--json",
    ])
    .unwrap_or_else(|e| panic!("{}", e.message()));
    assert_eq!(assemblies(name, POINT), 1);
    assert_eq!(assemblies_of(name), 1);
    std::fs::remove_dir_all(dir).ok();
}

#[test]
fn export_assembles_once_in_all() {
    let name = "invented-film-one-setup-export";
    let (dir, model) = film(name);
    let (model, out) = (
        model.to_string_lossy().into_owned(),
        dir.to_string_lossy().into_owned(),
    );
    for sector in [None, Some("0:3")] {
        let before = assemblies(name, POINT);
        let mut args = vec!["export", "--model", &model, "--cutoff", "30", "--out", &out];
        args.extend(sector.iter().flat_map(|s| ["--sector", *s]));
        args.push("--json");
        run(&args).unwrap_or_else(|e| panic!("{}", e.message()));
        // one set-up: the matrix, the sectors and the memory check all come from it
        assert_eq!(assemblies(name, POINT), before + 1, "{sector:?}");
    }
    // export labels nothing: no assembly at any other point
    assert_eq!(assemblies_of(name), 2);
    std::fs::remove_dir_all(dir).ok();
}
