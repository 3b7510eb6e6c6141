//! Labels that survive a sweep, and expectation values per level.
//!
//! # Tracking by identity
//! A level is followed across a sweep by its quantum numbers ([`crate::levels::LandauLabel`]:
//! family, Landau index n, branch), not by its rank: [`TrackKey`] is that identity and
//! [`tracks`] groups the levels of many spectra by it. Where two levels of one spectrum share the
//! quantum numbers (possible only for continued labels) they are told apart by their rank among
//! themselves, which is an identity too: levels with the same conserved quantum numbers do not
//! cross (von Neumann & Wigner, Phys. Z. 30, 467 (1929)). Levels without a label keep the rank
//! among the unlabelled levels of their family and branch. Cutoff artefacts
//! ([`is_artefact`], the one place that decides it) never enter a track, so they never take a
//! genuine level's place.
//!
//! # Expectation values
//! * [`pattern_expectation`]: sum_alpha p_alpha w_alpha for a diagonal pattern p over the
//!   components (w = component weights); e.g. p = (+1, -1) gives <sigma_z> (spin for the
//!   Pauli model, sublattice pseudospin for the 2D Dirac model). Needs no eigenvectors.
//! * [`matrix_expectation`]: <M ⊗ 1> for any Hermitian spinor matrix M (needs eigenvectors).
//! * [`orbital_content`]: mean and spread of the orbital index n, and the dominant n.

use crate::error::{Error, Result};
use crate::levels::{Branch, LabelOrigin, LandauLabel, Level, Root, Spectrum};
use crate::matrix::SpinMatrix;
use serde::Serialize;
use std::collections::BTreeMap;

/// The identity of a level across a sweep (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub struct TrackKey {
    /// Family (smallest component of the coupled set; see [`LandauLabel::family`]).
    pub family: usize,
    /// Landau index n; `None` for a level without a label.
    pub n: Option<i64>,
    /// Branch within the sector.
    pub branch: Branch,
    /// Rank among the levels of one spectrum sharing the fields above (0 almost always).
    pub copy: usize,
}

impl TrackKey {
    /// The label this key was made from, as printed for the level.
    pub fn label(&self, origin: LabelOrigin) -> LandauLabel {
        match self.n {
            Some(n) => LandauLabel {
                n,
                branch: self.branch,
                origin,
                family: self.family as u32,
            },
            None => LandauLabel::UNLABELLED,
        }
    }
}

impl std::fmt::Display for TrackKey {
    /// The printed label (`+2`, `-2`, `0`, `+1'`, `?`), then `@f<family>` for a family other
    /// than 0 and `#<copy>` for a copy other than 0 (e.g. `+1@f2`): one token, no spaces.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let text = match self.n {
            Some(_) => self.label(LabelOrigin::ExactSector).to_string(),
            None => "?".to_string(),
        };
        write!(f, "{text}")?;
        if self.family != 0 {
            write!(f, "@f{}", self.family)?;
        }
        if self.copy != 0 {
            write!(f, "#{}", self.copy)?;
        }
        Ok(())
    }
}

/// Whether a level is a cutoff artefact for tracking and tables: the single place where the
/// decision is made ([`crate::trust::converge::is_cutoff_artefact`], weight on the top
/// orbitals).
pub fn is_artefact(level: &Level) -> bool {
    crate::trust::converge::is_cutoff_artefact(level)
}

/// The track key of every level of `spectrum`, in the order of `spectrum.levels` (artefacts
/// get a key too, counted apart from the genuine levels).
///
/// # Complexity
/// O(L log L) for L levels.
pub fn track_keys(spectrum: &Spectrum) -> Vec<TrackKey> {
    let mut counters: BTreeMap<(bool, usize, Option<i64>, Branch), usize> = BTreeMap::new();
    spectrum
        .levels
        .iter()
        .map(|l| {
            let (family, n, branch) = if l.label.is_known() {
                (l.label.family as usize, Some(l.label.n), l.label.branch)
            } else {
                let b = match l.branch {
                    Root::Particle => Branch::Upper(1),
                    Root::Antiparticle => Branch::Lower(1),
                    Root::Direct => Branch::Unpaired,
                };
                (l.sector.class, None, b)
            };
            // levels are ascending in energy: the counter is the rank among equals
            let c = counters
                .entry((is_artefact(l), family, n, branch))
                .or_insert(0);
            let key = TrackKey {
                family,
                n,
                branch,
                copy: *c,
            };
            *c += 1;
            key
        })
        .collect()
}

/// One point of a track.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TrackPoint {
    /// Index of the spectrum in the sweep.
    pub point: usize,
    /// Field of that spectrum.
    pub field: f64,
    /// kz of that spectrum.
    pub kz: f64,
    /// Index of the level in that spectrum.
    pub level: usize,
    /// Energy (relative to the spectrum's reference).
    pub energy: f64,
    /// Whether the level is converged there.
    pub converged: bool,
}

/// A level followed across a sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Track {
    /// Its label.
    pub key: TrackKey,
    /// Its points, in sweep order.
    pub points: Vec<TrackPoint>,
}

/// Group the genuine levels of a sweep (spectra computed with one cutoff) by [`TrackKey`],
/// ordered by key; cutoff artefacts ([`is_artefact`]) are left out.
///
/// # Examples
/// ```
/// use ladderfan::{models, sweep, FieldPoint, Settings};
/// use ladderfan::observables::labels::tracks;
/// let m = models::schrodinger(models::MassParams::default())?;
/// let pts: Vec<_> = [1.0, 2.0, 3.0].iter().map(|&b| FieldPoint::field(b)).collect();
/// let t = tracks(&sweep::run(&m, &pts, &Settings::with_cutoff(20))?);
/// // each Landau level is its own track: E_0 grows linearly, hbar omega_c / 2 per tesla
/// assert_eq!(t[0].key.n, Some(0));
/// assert!((t[0].points[2].energy / t[0].points[0].energy - 3.0).abs() < 1e-12);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn tracks(spectra: &[Spectrum]) -> Vec<Track> {
    let mut map: BTreeMap<TrackKey, Vec<TrackPoint>> = BTreeMap::new();
    for (p, s) in spectra.iter().enumerate() {
        for (i, (key, l)) in track_keys(s).into_iter().zip(&s.levels).enumerate() {
            if is_artefact(l) {
                continue;
            }
            map.entry(key).or_default().push(TrackPoint {
                point: p,
                field: s.point.field,
                kz: s.point.kz,
                level: i,
                energy: l.energy,
                converged: l.is_converged(),
            });
        }
    }
    map.into_iter()
        .map(|(key, points)| Track { key, points })
        .collect()
}

/// sum_alpha p_alpha w_alpha per level: the expectation of the diagonal spinor matrix
/// diag(pattern) (e.g. <sigma_z> with pattern (+1, -1)).
///
/// # Errors
/// [`Error::InvalidModel`] when the pattern does not have one entry per component;
/// [`Error::Unsupported`] when the solve skipped the weights (ask for them with
/// `Settings.weights = Weights::Compute`).
pub fn pattern_expectation(spectrum: &Spectrum, pattern: &[f64]) -> Result<Vec<f64>> {
    if pattern.len() != spectrum.dim {
        return Err(Error::InvalidModel {
            what: format!(
                "a pattern of {} entries for a {}-component model",
                pattern.len(),
                spectrum.dim
            ),
            fix: "give one number per component (e.g. 1,-1 for sigma_z of a 2-component model)"
                .into(),
        });
    }
    if spectrum.weights.is_empty() && !spectrum.levels.is_empty() {
        return Err(Error::Unsupported(
            "this needs the component weights: compute the spectrum with Settings.weights = Weights::Compute"
                .into(),
        ));
    }
    Ok((0..spectrum.levels.len())
        .map(|i| {
            spectrum
                .weights_of(i)
                .iter()
                .zip(pattern)
                .map(|(w, p)| w * p)
                .sum()
        })
        .collect())
}

fn vectors(spectrum: &Spectrum) -> Result<&[crate::levels::LevelVector]> {
    spectrum.vectors.as_deref().ok_or_else(|| {
        Error::Unsupported(
            "this needs eigenvectors: compute the spectrum with Settings.vectors = Vectors::Compute"
                .into(),
        )
    })
}

/// <v| M ⊗ 1 |v> per level for a Hermitian spinor matrix M (real part; the imaginary part of
/// a Hermitian expectation vanishes).
///
/// # Errors
/// [`Error::Unsupported`] without eigenvectors; [`Error::InvalidModel`] for a matrix of the
/// wrong size.
pub fn matrix_expectation(spectrum: &Spectrum, matrix: &SpinMatrix) -> Result<Vec<f64>> {
    let d = spectrum.dim;
    if matrix.nrows() != d || matrix.ncols() != d {
        return Err(Error::InvalidModel {
            what: format!(
                "a {}x{} matrix for a {d}-component model",
                matrix.nrows(),
                matrix.ncols()
            ),
            fix: format!("give a {d}x{d} spinor matrix"),
        });
    }
    let vecs = vectors(spectrum)?;
    Ok(vecs
        .iter()
        .map(|v| {
            // group coefficients by orbital
            let mut by_n: BTreeMap<usize, Vec<(usize, num_complex::Complex64)>> = BTreeMap::new();
            for (&(n, a), &c) in v.states.iter().zip(&v.coeffs) {
                by_n.entry(n).or_default().push((a, c));
            }
            by_n.values()
                .map(|comps| {
                    let mut s = 0.0;
                    for &(a, ca) in comps {
                        for &(b, cb) in comps {
                            s += (ca.conj() * matrix[(a, b)] * cb).re;
                        }
                    }
                    s
                })
                .sum()
        })
        .collect())
}

/// Orbital content of a level.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OrbitalContent {
    /// Mean orbital index `<n>`.
    pub mean: f64,
    /// Spread `sqrt(<n^2> - <n>^2)`.
    pub spread: f64,
    /// Orbital of largest weight (as in [`crate::Level::orbital`]).
    pub dominant: usize,
}

/// Orbital content of every level.
///
/// # Errors
/// [`Error::Unsupported`] without eigenvectors.
pub fn orbital_content(spectrum: &Spectrum) -> Result<Vec<OrbitalContent>> {
    let vecs = vectors(spectrum)?;
    Ok(vecs
        .iter()
        .zip(&spectrum.levels)
        .map(|(v, l)| {
            let (mut m1, mut m2) = (0.0, 0.0);
            for (&(n, _), c) in v.states.iter().zip(&v.coeffs) {
                let p = c.norm_sqr();
                m1 += p * n as f64;
                m2 += p * (n * n) as f64;
            }
            OrbitalContent {
                mean: m1,
                spread: (m2 - m1 * m1).max(0.0).sqrt(),
                dominant: l.orbital,
            }
        })
        .collect())
}

/// Rank of every level within its (sector, branch): 0 for the lowest, counting upwards in
/// energy (the levels of a [`Spectrum`] are sorted by energy already). One entry per level of
/// `s`, in the spectrum's order.
pub fn ranks(s: &Spectrum) -> Vec<usize> {
    let mut count: BTreeMap<(usize, i64, i8), usize> = BTreeMap::new();
    s.levels
        .iter()
        .map(|l| {
            let c = count
                .entry((l.sector.class, l.sector.label, l.branch.sign()))
                .or_insert(0);
            *c += 1;
            *c - 1
        })
        .collect()
}
