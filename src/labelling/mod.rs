//! Quantum numbers of the levels: the Landau index n and the branch, as the trade writes them.
//!
//! # Exact sectors
//! When J = n_orbital + s_alpha is exactly conserved (shifts s >= 0, the smallest 0), the
//! Landau index of every level of sector J is n = J: the index counted from the lowest allowed
//! J of the class. The branch is [`Branch`]: the levels of the sector are split at their middle,
//! counted away from the gap on either side, the middle one of an odd count unpaired. For the
//! 2D Dirac cone this gives +E_n and -E_n the same n and the lone level n = 0; for the 3+1 Dirac
//! equation it gives nu = n + 1/2 + s_z sign(qB)/2 with two levels on each side of the gap.
//!
//! # Adiabatic continuation (J mod m, or no conserved quantity)
//! Where only J mod m survives (cubic warping) or nothing does (tilt), the ladder Hamiltonian is
//! split into H = H_0 + V: H_0 keeps the couplings consistent with one set of shifts s (chosen
//! greedily by coupling strength, strongest first), V holds the symmetry-breaking rest. H_0
//! conserves J exactly and its levels carry exact labels. Along H(t) = H_0 + t V, t = 0 .. 1, each
//! level is followed by the largest overlap |<p_i(t + dt)|v_j(t + dt)>|^2 between the new
//! eigenvectors and the old ones carried forward by first-order perturbation theory,
//! p_i = v_i + dt sum_k v_k <v_k|V|v_i> / (E_i - E_k) (normalised), one to one. The predicted
//! vectors lose overlap as dt^4 on a smooth path instead of dt^2, so the step is chosen from the
//! worst loss of the last step (aiming at 0.3) and halved, at most three times, while some
//! followed level well inside the basis (top-orbital weight below 1e-10) keeps less than half
//! its weight; levels near the cutoff mix at will and do not count. So the label of the
//! symmetric model is carried to the full one. Levels labelled this way carry
//! [`LabelOrigin::Continuation`].
//!
//! # Limits
//! The continuation diagonalises each sector densely a few times; a sector larger than
//! [`CONTINUATION_MAX_STATES`] is continued at a lower cutoff and its levels matched to the
//! computed ones by energy (within their bound plus 1e-6 of the energy scale); a level with no
//! match stays [`LabelOrigin::Unlabelled`]. The unsplit oracle path (`Splitting::Off`) is not
//! labelled.

mod continuation;

pub use continuation::{continue_labels, symmetric_part};

use crate::hamiltonian::LadderHamiltonian;
use crate::levels::{Branch, LabelOrigin, LandauLabel, Level, Spectrum};
use crate::sectors::Symmetry;
use std::collections::BTreeMap;

/// Largest sector (states) continued at the spectrum's own cutoff.
pub const CONTINUATION_MAX_STATES: usize = 200;

/// Branches of `count` levels sorted by ascending energy (see [`Branch`]).
///
/// # Examples
/// ```
/// use ladderfan::labelling::branches;
/// use ladderfan::levels::Branch;
/// assert_eq!(branches(3), vec![Branch::Lower(1), Branch::Unpaired, Branch::Upper(1)]);
/// assert_eq!(branches(2), vec![Branch::Lower(1), Branch::Upper(1)]);
/// ```
pub fn branches(count: usize) -> Vec<Branch> {
    (0..count).map(|i| branch_at(i, count)).collect()
}

/// The branch of the `i`-th of `count` levels sorted by ascending energy ([`branches`]).
fn branch_at(i: usize, count: usize) -> Branch {
    let half = count / 2;
    if i < half {
        Branch::Lower((half - i) as u32)
    } else if count % 2 == 1 && i == half {
        Branch::Unpaired
    } else {
        Branch::Upper((i + 1 - (count - half)) as u32)
    }
}

/// Level indices of a sector: on the stack up to this many (every exactly conserved sector of
/// the shipped models), so labelling 1e6 sectors allocates nothing.
const SMALL_SECTOR: usize = 32;

/// `f` applied to a scratch index buffer of `len` entries (on the stack when small).
fn with_indices<R>(len: usize, f: impl FnOnce(&mut [usize]) -> R) -> R {
    if len <= SMALL_SECTOR {
        f(&mut [0usize; SMALL_SECTOR][..len])
    } else {
        f(&mut vec![0usize; len])
    }
}

/// Label the levels of one exact sector of Landau index `n` (see the module docs). `levels`
/// holds every level of the sector, in any order; Klein-Gordon levels (`branch` = ±1) are
/// numbered away from the gap within their own sign.
pub fn label_exact_sector(levels: &mut [Level], n: i64, family: u32) {
    with_indices(levels.len(), |all| {
        for (i, a) in all.iter_mut().enumerate() {
            *a = i;
        }
        label_group(levels, all, n, family);
    });
}

/// [`label_exact_sector`] for the levels at indices `group` of `levels`.
fn label_group(levels: &mut [Level], group: &[usize], n: i64, family: u32) {
    let kg = group.iter().any(|&i| levels[i].branch.sign() != 0);
    if kg {
        for sign in [1i8, -1] {
            let count = group
                .iter()
                .filter(|&&i| levels[i].branch.sign() == sign)
                .count();
            with_indices(count, |idx| {
                let same_sign = group
                    .iter()
                    .copied()
                    .filter(|&i| levels[i].branch.sign() == sign);
                for (slot, i) in idx.iter_mut().zip(same_sign) {
                    *slot = i;
                }
                // away from the gap: ascending for +, descending for -
                idx.sort_by(|&a, &b| {
                    let o = levels[a].energy.total_cmp(&levels[b].energy);
                    if sign > 0 {
                        o
                    } else {
                        o.reverse()
                    }
                });
                for (k, &i) in idx.iter().enumerate() {
                    let k = k as u32 + 1;
                    levels[i].label = LandauLabel {
                        n,
                        branch: if sign > 0 {
                            Branch::Upper(k)
                        } else {
                            Branch::Lower(k)
                        },
                        origin: LabelOrigin::ExactSector,
                        family,
                    };
                }
            });
        }
        return;
    }
    with_indices(group.len(), |idx| {
        idx.copy_from_slice(group);
        idx.sort_by(|&a, &b| levels[a].energy.total_cmp(&levels[b].energy));
        for (k, &i) in idx.iter().enumerate() {
            levels[i].label = LandauLabel {
                n,
                branch: branch_at(k, group.len()),
                origin: LabelOrigin::ExactSector,
                family,
            };
        }
    });
}

/// Relabel the exact sectors of `spectrum` by the sector families of the model at a generic
/// kz: where kz = 0 splits a class that any other kz joins (the 3+1 Dirac equation: kz alpha_z
/// couples the two 2x2 blocks), the sectors with the same J of the joined class are labelled
/// together, so the labels do not depend on kz (nu = 0 of the 3+1 Dirac equation then has a
/// level on each side of the gap at every kz). `generic` is the model assembled at a kz where
/// no coupling vanishes by accident.
pub fn join_kz_families(generic: &LadderHamiltonian, spectrum: &mut Spectrum) {
    let g = Symmetry::detect(generic);
    if !g.is_exact() || g.classes.len() >= spectrum.symmetry.classes.len() {
        return;
    }
    let mut class_of = vec![(0usize, 0i64); generic.dim];
    for (ci, c) in g.classes.iter().enumerate() {
        for (&a, &s) in c.components.iter().zip(&c.shifts) {
            class_of[a] = (ci, s);
        }
    }
    // actual class -> (generic class, offset of J)
    let map: Vec<Option<(usize, i64)>> = spectrum
        .symmetry
        .classes
        .iter()
        .map(|c| {
            c.conservation.is_exact().then(|| {
                let (gc, gs) = class_of[c.components[0]];
                (gc, gs - c.shifts[0])
            })
        })
        .collect();
    let mut groups: BTreeMap<(usize, i64), Vec<usize>> = BTreeMap::new();
    for (i, l) in spectrum.levels.iter().enumerate() {
        if let Some((gc, off)) = map[l.sector.class] {
            groups
                .entry((gc, l.sector.label + off))
                .or_default()
                .push(i);
        }
    }
    for ((gc, j), idx) in groups {
        let family = g.classes[gc].components[0] as u32;
        label_group(&mut spectrum.levels, &idx, j, family);
    }
}
