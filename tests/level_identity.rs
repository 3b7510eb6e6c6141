//! Sector detection that survives rounding, the three level states, and convergence studies
//! that follow levels by identity (not rank) past cutoff artefacts inside a sector.

mod common;

use common::warped;
use ladderfan::hamiltonian::{LadderHamiltonian, CANCELLATION_ULPS};
use ladderfan::levels::{BoundKind, Convergence};
use ladderfan::matrix::{pauli, SpinMatrix};
use ladderfan::sectors::{Conservation, Symmetry};
use ladderfan::trust::converge::{
    auto, study, AutoSettings, ExactValues, NeededCutoff, ReferenceKind, Selection,
};
use ladderfan::{FieldPoint, Model, Monomial, Settings, Spectrum};
use proptest::prelude::*;

/// Seeded splitmix64 stream of uniform numbers in [0, 1) (common practice, from memory).
struct Stream(u64);

impl Stream {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// J mod 3 with s = (1, 0) or (0, 1): what a sigma_z (kx^3 - 3 kx ky^2) warping term on a
/// linear two-band model leaves (Fu, Phys. Rev. Lett. 103, 266801 (2009): the hexagonal
/// warping term is proportional to k+^3 + k-^3; from memory).
fn is_j_mod_3(sym: &Symmetry) -> bool {
    sym.classes.len() == 1 && sym.classes[0].conservation == Conservation::Modulo(3)
}

/// Invented parameters (meV, nm): a two-band Dirac cone (hbar v = 330 meV nm) with a cubic
/// hexagonal-warping term lam sigma_z (kx^3 - 3 kx ky^2), lam = 1000 meV nm^3. At 10 T the
/// truncated J mod 3 sectors hold a cutoff artefact near zero energy, inside a physical sector.
fn dirac_warped(lam: f64) -> Model {
    Model::builder("Dirac cone with warping (invented)", 2)
        .term("vy", 330.0, pauli("x").unwrap(), Monomial::KY)
        .term("vx", -330.0, pauli("y").unwrap(), Monomial::KX)
        .term("w1", lam, pauli("z").unwrap(), Monomial::new(3, 0, 0))
        .term(
            "w2",
            -3.0 * lam,
            pauli("z").unwrap(),
            Monomial::new(1, 2, 0),
        )
        .build()
        .unwrap()
}

#[test]
fn warping_term_gives_j_mod_3_at_200_random_fields_and_kz() {
    // before the cancellation-aware test, the rounding residue of the a^dag^2 a and a^dag a^2
    // parts (which cancel analytically) broke J mod 3 at fields such as 0.6, 1.5, 2.5, 3, 6 T
    let mut rng = Stream(0x5EC7_0001);
    for model in [warped(), dirac_warped(1500.0)] {
        for _ in 0..200 {
            let field = (0.05 + 30.0 * rng.next()) * if rng.next() < 0.5 { -1.0 } else { 1.0 };
            let kz = 2.0 * rng.next() - 1.0;
            let h = LadderHamiltonian::assemble(&model, FieldPoint { field, kz }, 0.0).unwrap();
            let sym = Symmetry::detect(&h);
            assert!(
                is_j_mod_3(&sym),
                "{} at B = {field}, kz = {kz}: {}",
                model.name(),
                sym.describe()
            );
            // whatever was dropped is rounding-sized and bounded
            let dropped = h.dropped_norm(100);
            assert!(dropped.is_finite());
            assert!(dropped <= 1e-9 * h.norm_bound(100), "dropped {dropped:e}");
        }
    }
}

#[test]
fn fields_where_the_exact_zero_test_failed_now_drop_a_bounded_residue_that_enters_the_bound() {
    // regression: the fields of the report on the Dirac cone with lam = 1500 meV nm^3
    let model = dirac_warped(1500.0);
    let mut some_dropped = false;
    for field in [0.6, 1.5, 2.5, 3.0, 6.0] {
        let h = LadderHamiltonian::assemble(&model, FieldPoint::field(field), 0.0).unwrap();
        assert!(is_j_mod_3(&Symmetry::detect(&h)), "B = {field}");
        let n = 60;
        let dropped = h.dropped_norm(n);
        some_dropped |= dropped > 0.0;
        let s =
            Spectrum::compute(&model, FieldPoint::field(field), &Settings::with_cutoff(n)).unwrap();
        // every level's residual bound includes the dropped part (Weyl's inequality)
        assert!(s.levels.iter().all(|l| l.bound >= dropped));
    }
    assert!(
        some_dropped,
        "at least one of these fields leaves a rounding residue (seen before the fix)"
    );
}

#[test]
fn a_small_genuine_coupling_is_not_mistaken_for_a_rounding_residue() {
    // sigma_x kx^2 with a coefficient 1e-8 of the others breaks J mod 3 (shift 2 between the
    // components, against shift 1 of the linear terms): 1e-8 is far above CANCELLATION_ULPS eps
    const { assert!(1e-8 > 1e3 * CANCELLATION_ULPS * f64::EPSILON) };
    let m = Model::builder("weak breaking (invented)", 2)
        .term("vy", 330.0, pauli("x").unwrap(), Monomial::KY)
        .term("vx", -330.0, pauli("y").unwrap(), Monomial::KX)
        .term("w1", 1000.0, pauli("z").unwrap(), Monomial::new(3, 0, 0))
        .term("w2", -3000.0, pauli("z").unwrap(), Monomial::new(1, 2, 0))
        .term(
            "tiny",
            330.0e-8,
            pauli("x").unwrap(),
            Monomial::new(2, 0, 0),
        )
        .build()
        .unwrap();
    let h = LadderHamiltonian::assemble(&m, FieldPoint::field(4.0), 0.0).unwrap();
    let sym = Symmetry::detect(&h);
    assert!(!is_j_mod_3(&sym), "{}", sym.describe());
    // the shift-2 operators of the tiny term survive, none of them dropped
    assert!(h
        .ops
        .iter()
        .any(|op| op.shift().abs() == 2 && op.matrix[(0, 1)].norm() > 0.0));
    assert!(h
        .dropped
        .iter()
        .all(|d| (d.j as i64 - d.k as i64).abs() != 2));
}

/// The warping polynomial lam (kx^3 - 3 kx ky^2) sigma_z written as a list of terms, rewritten:
/// each term split into `pieces` parts with random weights summing to it, a decoy term added
/// and subtracted, and the list rotated.
fn rewritten(lam: f64, pieces: usize, weights: &[f64], decoy: f64, rotate: usize) -> Model {
    let z: SpinMatrix = pauli("z").unwrap();
    let mut terms: Vec<(String, f64, SpinMatrix, Monomial)> = vec![
        ("vy".into(), 330.0, pauli("x").unwrap(), Monomial::KY),
        ("vx".into(), -330.0, pauli("y").unwrap(), Monomial::KX),
        ("mass".into(), 12.0, z.clone(), Monomial::ONE),
    ];
    for (name, c, mono) in [
        ("w1", lam, Monomial::new(3, 0, 0)),
        ("w2", -3.0 * lam, Monomial::new(1, 2, 0)),
    ] {
        let total: f64 = weights[..pieces].iter().sum();
        let mut used = 0.0;
        for (p, w) in weights[..pieces].iter().enumerate() {
            // the last piece takes the remainder, so the pieces sum to c up to rounding
            let part = if p + 1 == pieces {
                c - used
            } else {
                c * w / total
            };
            used += part;
            terms.push((format!("{name}.{p}"), part, z.clone(), mono));
        }
    }
    // add and subtract the same term: a cubic kx^2 ky sigma_z term
    terms.push(("decoy+".into(), decoy, z.clone(), Monomial::new(2, 1, 0)));
    terms.push(("decoy-".into(), -decoy, z, Monomial::new(2, 1, 0)));
    let k = rotate % terms.len();
    terms.rotate_left(k);
    let mut b = Model::builder("rewritten warping (invented)", 2);
    for (label, c, m, mono) in terms {
        b = b.term(&label, c, m, mono);
    }
    b.build().unwrap()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 32, ..ProptestConfig::default() })]

    #[test]
    fn rewriting_the_same_polynomial_keeps_the_symmetry_and_the_levels(
        lam in 100.0f64..2000.0,
        pieces in 1usize..5,
        weights in proptest::collection::vec(0.1f64..10.0, 4),
        decoy in -5000.0f64..5000.0,
        rotate in 0usize..16,
        field in 0.3f64..12.0,
    ) {
        let plain = rewritten(lam, 1, &[1.0], 0.0, 0);
        let other = rewritten(lam, pieces, &weights, decoy, rotate);
        let point = FieldPoint::field(field);
        let h = LadderHamiltonian::assemble(&other, point, 0.0).unwrap();
        let sym = Symmetry::detect(&h);
        prop_assert!(is_j_mod_3(&sym), "{}", sym.describe());
        let h0 = LadderHamiltonian::assemble(&plain, point, 0.0).unwrap();
        prop_assert_eq!(Symmetry::detect(&h0), sym);
        // same levels: tolerance scaled by the norm of the truncated matrix (common practice)
        let n = 24;
        let a = Spectrum::compute(&plain, point, &Settings::with_cutoff(n)).unwrap().energies();
        let b = Spectrum::compute(&other, point, &Settings::with_cutoff(n)).unwrap().energies();
        let scale = h0.norm_bound(n);
        prop_assert_eq!(a.len(), b.len());
        for (x, y) in a.iter().zip(&b) {
            prop_assert!((x - y).abs() <= 1e-11 * scale, "{x} vs {y}, scale {scale}");
        }
    }
}

/// Reference levels of a warping model at 10 T from a four times larger cutoff
/// (independent of the N = 500 solve; its own bounds certify it): the genuine levels with
/// |E| < 170 meV, each with its deciding bound.
fn reference_levels(model: &Model) -> Vec<(f64, f64)> {
    let s =
        Spectrum::compute(model, FieldPoint::field(10.0), &Settings::with_cutoff(2000)).unwrap();
    s.levels
        .iter()
        .filter(|l| l.energy.abs() < 170.0 && l.is_genuine())
        .map(|l| (l.energy, l.best_bound()))
        .collect()
}

#[test]
fn cubic_warping_at_n500_keeps_every_genuine_level_genuine_and_flags_the_artefact() {
    let model = dirac_warped(1000.0);
    let reference = reference_levels(&model);
    // 15 levels: 0, ±57.9, ±82.3, ±101.7, ±118.9, ±134.8, ±150.0, ±164.9 meV (seen at
    // N = 2000, all converged there)
    assert_eq!(reference.len(), 15, "{reference:?}");
    let s =
        Spectrum::compute(&model, FieldPoint::field(10.0), &Settings::with_cutoff(500)).unwrap();
    for &(e, b) in &reference {
        let l = s
            .levels
            .iter()
            .min_by(|x, y| (x.energy - e).abs().total_cmp(&(y.energy - e).abs()))
            .unwrap();
        // the two rigorous bounds (Kato 1949 / Weinstein 1934) must overlap
        assert!(
            (l.energy - e).abs() <= l.best_bound() + b,
            "{} vs {e}: bounds {:e} {b:e}",
            l.energy,
            l.best_bound()
        );
        assert_ne!(l.convergence, Convergence::CutoffArtefact, "level {e}");
    }
    // the artefact inside a sector (energy near zero, dominant orbital at the top) is flagged
    let artefacts: Vec<_> = s
        .levels
        .iter()
        .filter(|l| l.energy.abs() < 170.0 && l.convergence == Convergence::CutoffArtefact)
        .collect();
    assert_eq!(artefacts.len(), 1, "{artefacts:?}");
    assert!(artefacts[0].orbital > 400);
    // the Kato-Temple bound is what makes most of them converged here
    let kt = s
        .levels
        .iter()
        .filter(|l| l.energy.abs() < 170.0 && l.deciding_bound().1 == BoundKind::KatoTemple)
        .count();
    assert!(kt >= 13, "{kt}");
}

#[test]
fn converge_follows_levels_past_an_artefact_inside_a_sector() {
    let model = dirac_warped(1000.0);
    let sel = Selection::Nearest {
        target: 0.0,
        count: 13,
    };
    let st = study(
        &model,
        FieldPoint::field(10.0),
        &Settings::default(),
        &[250, 500, 1000, 2000],
        sel,
        ExactValues::LargestCutoff,
    )
    .unwrap();
    assert_eq!(st.levels.len(), 13);
    for l in &st.levels {
        assert_eq!(l.exact, ReferenceKind::LargestCutoff);
        for e in &l.entries {
            // every genuine level is found at every cutoff, never replaced by the artefact
            let err = e.actual_error.expect("matched at every cutoff");
            if e.cutoff >= 1000 {
                // rank tracking reported 25-40 meV here; the issue asks below 1e-9 meV
                assert!(
                    err < 1e-9,
                    "level {}: error {err:e} at {}",
                    l.reference_value,
                    e.cutoff
                );
            }
            // and the bound holds against the N = 2000 value (within its own bound too)
            let b = e.bound.unwrap().min(e.kato_temple.unwrap_or(f64::INFINITY));
            let top = l.entries.last().unwrap();
            let bt = top
                .bound
                .unwrap()
                .min(top.kato_temple.unwrap_or(f64::INFINITY));
            assert!(
                err <= b + bt,
                "level {}: {err:e} > {b:e} + {bt:e}",
                l.reference_value
            );
        }
        // the needed cutoff is the first one whose deciding bound meets the tolerance (the
        // actual error there is within that bound, checked above)
        match l.needed_cutoff {
            NeededCutoff::Observed(n) => {
                let e = l.entries.iter().find(|e| e.cutoff == n).unwrap();
                assert!(e.converged);
                assert!(l
                    .entries
                    .iter()
                    .filter(|e| e.cutoff < n)
                    .all(|e| !e.converged));
            }
            other => panic!("level {}: needed {other:?}", l.reference_value),
        }
    }
}

#[test]
fn auto_count_13_converges_on_the_genuine_levels_only() {
    let model = dirac_warped(1000.0);
    let sel = Selection::Nearest {
        target: 0.0,
        count: 13,
    };
    let mut a = AutoSettings::new(sel, 1e-9);
    a.start_cutoff = 250;
    // the issue's run went on into the memory limit; all genuine levels converge by N = 2000
    a.max_cutoff = 4000;
    let res = auto(&model, FieldPoint::field(10.0), &a).unwrap();
    assert_eq!(res.selected.len(), 13);
    assert!(res.cutoff <= 2000, "{}", res.cutoff);
    for &i in &res.selected {
        let l = &res.spectrum.levels[i];
        assert_eq!(l.convergence, Convergence::Converged, "{l:?}");
    }
}

/// The Dirac cone with warping (lam = 1000 meV nm^3, invented) as a model file.
const WARPED_FILE: &str = r#"
# invented parameters: two-band Dirac cone plus hexagonal warping
name = "warped-cone"
components = 2
charge = -1
units = "lab"
[parameters]
hv = 330.0
lam = 1000.0
[[term]]
coefficient = "hv"
matrix = "x"
monomial = "ky"
[[term]]
coefficient = "-hv"
matrix = "y"
monomial = "kx"
[[term]]
coefficient = "lam"
matrix = "z"
monomial = "kx^3"
[[term]]
coefficient = "-3*lam"
matrix = "z"
monomial = "kx ky^2"
"#;

fn ladderfan_cli(dir: &std::path::Path, args: &[&str]) -> (i32, String, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_ladderfan"))
        .current_dir(dir)
        .args(args)
        .output()
        .expect("run ladderfan");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn scratch_dir(name: &str) -> std::path::PathBuf {
    let dir =
        std::env::temp_dir().join(format!("ladderfan-identity-{name}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join("warped.toml"), WARPED_FILE).unwrap();
    dir
}

#[test]
fn levels_default_table_at_n500_shows_genuine_levels_marked_and_hides_only_the_artefact() {
    let dir = scratch_dir("levels");
    let args = [
        "levels",
        "--model",
        "warped.toml",
        "--field",
        "10",
        "--cutoff",
        "500",
        "--count",
        "15",
    ];
    let (code, out, err) = ladderfan_cli(&dir, &args);
    assert_eq!(code, 0, "{err}");
    let rows: Vec<&str> = out
        .lines()
        .skip_while(|l| !l.starts_with("sector"))
        .skip(1)
        .collect();
    assert_eq!(rows.len(), 15, "{out}");
    // energies of the 15 genuine levels nearest zero at N = 2000 (seen; the library test above
    // checks them against the N = 2000 solve within both bounds)
    for e in [
        57.87496885,
        82.31744411,
        101.7388891,
        118.886236,
        134.8135847,
        150.040514,
    ] {
        for sign in [-1.0, 1.0] {
            // the character column holds a varying number of words (component and weight
            // pairs): look for the energy among the row's numbers
            let hit = rows.iter().any(|r| {
                r.split_whitespace()
                    .filter_map(|x| x.parse::<f64>().ok())
                    .any(|x| (x - sign * e).abs() < 1e-6 * e)
            });
            assert!(hit, "{} missing:\n{out}", sign * e);
        }
    }
    assert!(rows.iter().all(|r| !r.contains("artefact")), "{out}");
    assert!(rows
        .iter()
        .all(|r| r.ends_with("converged") || r.ends_with("not converged")));
    assert!(
        out.contains(" cutoff artefacts (artefacts hidden;"),
        "{out}"
    );
    // --show-unconverged lists the artefact, marked
    let mut all = args.to_vec();
    all.push("--show-unconverged");
    let (code, out, _) = ladderfan_cli(&dir, &all);
    assert_eq!(code, 0);
    assert_eq!(
        out.lines().filter(|l| l.ends_with("artefact")).count(),
        1,
        "{out}"
    );
    // JSON and CSV carry both bounds, which one decided, and the state
    let mut js = args.to_vec();
    js.extend(["--json", "--out", "csv"]);
    let (code, out, err) = ladderfan_cli(&dir, &js);
    assert_eq!(code, 0, "{err}");
    for key in [
        "\"residual_bound\"",
        "\"kato_temple_bound\"",
        "\"bound_from\": \"kato_temple\"",
        "\"state\": \"not_converged\"",
        "\"state\": \"converged\"",
        "\"levels_artefacts\"",
    ] {
        assert!(out.contains(key), "{key} missing");
    }
    let csv = std::fs::read_to_string(dir.join("csv/levels.csv")).unwrap();
    let header = csv.lines().find(|l| l.starts_with("sector,")).unwrap();
    assert!(
        header.contains("residual_bound_meV,kato_temple_bound_meV,bound_from,state,converged"),
        "{header}"
    );
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn converge_cli_auto_count_13_terminates_with_the_genuine_levels_converged() {
    let dir = scratch_dir("auto");
    let (code, out, err) = ladderfan_cli(
        &dir,
        &[
            "converge",
            "--model",
            "warped.toml",
            "--field",
            "10",
            "--mode",
            "auto",
            "--count",
            "13",
            "--cutoff",
            "250",
        ],
    );
    assert_eq!(code, 0, "{err}\n{out}");
    let rows: Vec<&str> = out.lines().filter(|l| l.ends_with("converged")).collect();
    assert_eq!(rows.len(), 13, "{out}");
    assert!(rows.iter().all(|r| !r.ends_with("not converged")), "{out}");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn massive_warped_model_at_n500_shows_its_genuine_levels_even_next_to_an_in_sector_artefact() {
    // tests/common warped() (invented, mass and k^2 terms): at 10 T and N = 2000 an artefact
    // sits 7.3 meV below the genuine level at 134.66 meV in the same J mod 3 sector (seen),
    // which limits that level's Kato-Temple gap: it must be shown as not converged, never as
    // an artefact, at N = 500 as at N = 2000
    let model = warped();
    let reference = reference_levels(&model);
    assert!(reference.len() >= 13, "{reference:?}");
    let s =
        Spectrum::compute(&model, FieldPoint::field(10.0), &Settings::with_cutoff(500)).unwrap();
    let mut not_converged = 0;
    for &(e, b) in &reference {
        let l = s
            .levels
            .iter()
            .min_by(|x, y| (x.energy - e).abs().total_cmp(&(y.energy - e).abs()))
            .unwrap();
        // both rigorous bounds hold, so the intervals overlap (Weinstein 1934 / Kato 1949)
        assert!(
            (l.energy - e).abs() <= l.best_bound() + b,
            "{} vs {e}",
            l.energy
        );
        assert!(l.is_genuine(), "level {e} called an artefact: {l:?}");
        not_converged += usize::from(l.convergence == Convergence::NotConverged);
    }
    assert!(
        not_converged >= 1,
        "the level next to the artefact is not converged at N = 500"
    );
}
