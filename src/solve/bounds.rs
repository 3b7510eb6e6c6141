//! Per-level error bounds: the residual (Weinstein / Krylov-Bogoliubov) bound and the sharper
//! Kato-Temple bound.
//!
//! # Formulas
//! For a unit vector v with Rayleigh quotient rho = <v, H v> and residual r = ||H v - rho v||
//! (here r^2 = in-space residual^2 + leakage^2, the leakage being the exact norm of the part of
//! H v beyond orbital N-1):
//!
//! * residual bound: the self-adjoint H has an eigenvalue in [rho - r, rho + r]
//!   (Weinstein 1934; Krylov & Bogoliubov 1929). Stored as [`Level::bound`].
//! * Kato-Temple bound: if the open interval (alpha, beta) contains rho and exactly one
//!   eigenvalue lambda of H, then rho - r^2/(beta - rho) <= lambda <= rho + r^2/(rho - alpha),
//!   so |lambda - rho| <= r^2 / delta with delta = min(rho - alpha, beta - rho) (Temple 1928;
//!   Kato 1949). Stored as [`Level::kato_temple`].
//!
//! # How the gap is obtained (certified), and what it assumes
//! H commutes with the conserved quantity of the sector (exact J, J mod m, or the component
//! class), so the bounds hold for H restricted to the sector and only levels of the same
//! sector are neighbours. For a level i, alpha and beta come from the nearest eigenvalues of
//! the truncated sector matrix below and above it, whatever their kind: all of them are
//! known, because a dense solve returns every eigenvalue of the sector
//! ([`SectorEdges::Complete`]) and the window solver proves by Sylvester inertia counts
//! ([`crate::numeric::banded::BandedHermitian::inertia`], step 4 of [`crate::numeric::window`])
//! that its run of levels has no hole ([`SectorEdges::Partial`]: only the two outermost
//! levels, whose outer neighbour is unknown, get no bound). So the truncated sector matrix has
//! exactly one eigenvalue in (alpha, beta). A genuine neighbour j stands for an eigenvalue of
//! the untruncated operator somewhere in [E_j - b_j, E_j + b_j] (its residual bound), so the
//! gap ends at that interval's near edge. A neighbour that looks like a cutoff artefact (by
//! its weight on the top `band` orbitals or on the top quarter of the basis) is widened the
//! same way when its interval stays clear of the level; when its interval reaches the level
//! (the artefact's leakage is large), it is taken as what it certainly is, an eigenvalue of
//! the truncated matrix, and ends the gap at its own energy widened by its rounding. A side without any neighbour is free of eigenvalues
//! (alpha = -inf or beta = +inf; Temple's one-sided case). The bound is reported only when the
//! level has a neighbour on at least one side and delta > r (the residual interval fits inside
//! the gap).
//!
//! The remaining assumption: the untruncated operator has no eigenvalue in the gap that the
//! truncated matrix does not show at all (a band re-entering the energy window from beyond the
//! cutoff, see [`crate::trust::window`], which warns about it). The residual bound needs no
//! assumption. The tests check the Kato-Temple bound against the closed forms of the whole
//! catalogue, on the split and the unsplit path, and against a four times larger cutoff on a
//! warping model with an artefact inside a sector.
//!
//! A floor max(in-space residual, 4 eps |E|) is added ([`Level::in_space_residual`], which
//! includes the solver's rounding floor): the stored energy is not exactly the Rayleigh
//! quotient of its vector (they differ by at most the in-space residual), and it is rounded.
//!
//! Klein-Gordon levels (branch ±1) are energies of E^2 = m^2c^4 + 2 m c^2 lambda, not
//! eigenvalues of a self-adjoint H on the same space; they get no Kato-Temple bound.
//!
//! # References
//! (Titles, volumes and pages from memory; the inequalities themselves are textbook results,
//! e.g. B. N. Parlett, "The Symmetric Eigenvalue Problem", ch. 10, also from memory.)
//! * D. H. Weinstein, "Modified Ritz method", Proc. Natl. Acad. Sci. USA 20, 529 (1934).
//! * N. Krylov & N. Bogoliubov (1929), the same residual bound (from memory).
//! * G. Temple, "The theory of Rayleigh's principle as applied to continuous systems",
//!   Proc. R. Soc. Lond. A 119, 276 (1928).
//! * T. Kato, "On the upper and lower bounds of eigenvalues", J. Phys. Soc. Jpn. 4, 334 (1949).

use crate::levels::is_cutoff_artefact;
use crate::levels::{Level, Root, Spectrum};
use crate::policy::ARTEFACT_TOP_WEIGHT;
use std::collections::BTreeMap;

/// The Kato-Temple bound r^2 / delta of a level from the residual r and the distances to the
/// nearest neighbouring eigenvalue intervals below (`room_below` = rho - alpha) and above
/// (`room_above` = beta - rho; infinite when that side is free); `None` unless both rooms
/// exceed r and at least one is finite.
///
/// # Examples
/// ```
/// use ladderfan::trust::bounds::kato_temple;
/// // r = 1e-4, nearest other eigenvalue interval 0.5 away: bound 2e-8
/// let kt = kato_temple(1e-4, 0.5, 0.7).expect("gap is open");
/// assert!((kt - 2e-8).abs() < 1e-20);
/// assert!(kato_temple(1e-4, 1e-5, 0.7).is_none());
/// // one-sided (Temple): nothing below
/// assert!(kato_temple(1e-4, f64::INFINITY, 0.5).is_some());
/// assert!(kato_temple(1e-4, f64::INFINITY, f64::INFINITY).is_none());
/// ```
pub fn kato_temple(residual: f64, room_below: f64, room_above: f64) -> Option<f64> {
    let delta = room_below.min(room_above);
    if delta.is_finite() && delta > residual && residual.is_finite() {
        Some(residual * residual / delta)
    } else {
        None
    }
}

/// Relative rounding allowance (units of eps) of a stored energy: a double holds the
/// eigenvalue to half an ulp, and the assembled coefficients (magnetic length, products of
/// parameters) carry a few ulps of relative rounding that move it by about as much.
pub const ROUNDING_ULPS: f64 = 4.0;

/// Post-process the bounds of an assembled spectrum: the Kato-Temple bounds
/// ([`apply_kato_temple`]). [`crate::Spectrum::compute`] already fills them sector by sector
/// ([`kato_temple_sector`]); call this after changing bounds by hand.
pub fn finish(spectrum: &mut Spectrum) {
    apply_kato_temple(spectrum);
}

/// Fill [`Level::kato_temple`] for every level of `spectrum` (see the module docs for the
/// gap, the floor and the assumptions). Levels must be sorted by energy and hold complete
/// sectors (no energy window applied).
///
/// # Complexity
/// O(L log L) for L levels (grouping by sector).
pub fn apply_kato_temple(spectrum: &mut Spectrum) {
    let mut by_sector: BTreeMap<_, Vec<usize>> = BTreeMap::new();
    for (i, l) in spectrum.levels.iter().enumerate() {
        if l.branch == Root::Direct {
            by_sector.entry(l.sector).or_default().push(i);
        }
    }
    for idx in by_sector.values() {
        let mut group: Vec<Level> = idx.iter().map(|&i| spectrum.levels[i]).collect();
        kato_temple_sector(&mut group, SectorEdges::Complete);
        for (&i, l) in idx.iter().zip(group) {
            spectrum.levels[i].kato_temple = l.kato_temple;
        }
    }
}

/// Whether the levels of a sector are all of its eigenvalues, or only those a window solver
/// returned (then the outermost levels have an unknown neighbour and get no Kato-Temple bound).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SectorEdges {
    /// Every eigenvalue of the sector is present.
    Complete,
    /// Only a contiguous run of the sector's eigenvalues is present.
    Partial,
}

/// Kato-Temple bounds for the levels of ONE sector (any order; direct-form levels, branch 0).
/// The gap on each side is measured to the nearest genuine neighbour widened by its own bound.
///
/// # Complexity
/// O(s log s) for s levels.
pub fn kato_temple_sector(levels: &mut [Level], edges: SectorEdges) {
    // small sectors (the split paths: millions of them) use a stack buffer
    let mut small = [0usize; 32];
    let mut large = Vec::new();
    let idx: &mut [usize] = if levels.len() <= small.len() {
        &mut small[..levels.len()]
    } else {
        large.resize(levels.len(), 0);
        &mut large
    };
    let mut count = 0;
    for (i, l) in levels.iter_mut().enumerate() {
        l.kato_temple = None;
        if l.branch == Root::Direct {
            idx[count] = i;
            count += 1;
        }
    }
    let idx = &mut idx[..count];
    // the solvers return ascending energies; sort only when they are not
    if idx
        .windows(2)
        .any(|w| levels[w[0]].energy > levels[w[1]].energy)
    {
        idx.sort_by(|&a, &b| levels[a].energy.total_cmp(&levels[b].energy));
    }
    let last = idx.len().saturating_sub(1);
    for (pos, &i) in idx.iter().enumerate() {
        if edges == SectorEdges::Partial && (pos == 0 || pos == last) {
            continue;
        }
        let li = &levels[i];
        if stands_for_nothing(li) {
            continue;
        }
        // the nearest eigenvalue of the truncated sector matrix on each side, artefacts
        // included (only energy, bound and top weight are read, never kato_temple)
        let below = pos.checked_sub(1).map_or(f64::NEG_INFINITY, |p| {
            upper_edge(&levels[idx[p]], li.energy)
        });
        let above = idx
            .get(pos + 1)
            .map_or(f64::INFINITY, |&j| lower_edge(&levels[j], li.energy));
        levels[i].kato_temple = kato_temple(li.bound, li.energy - below, above - li.energy)
            .map(|kt| kt + rounding_floor(li));
    }
}

/// Highest energy at which the neighbour `l` of a level at `energy` may stand for an
/// eigenvalue of the sector: the upper edge of its residual interval [E - b, E + b]; for a
/// neighbour that looks like an artefact ([`stands_for_nothing`]) and whose interval reaches
/// `energy` (so it could not bound a gap anyway), its own energy widened by its rounding (it
/// is an eigenvalue of the truncated sector matrix).
fn upper_edge(l: &Level, energy: f64) -> f64 {
    l.energy + reach(l, energy)
}

/// Lowest such energy (see [`upper_edge`]).
fn lower_edge(l: &Level, energy: f64) -> f64 {
    l.energy - reach(l, energy)
}

/// Whether a level may be taken as an eigenvalue of the truncated matrix only (a cutoff
/// artefact by its top weight, or by its weight on the top quarter of the basis), not of the
/// untruncated operator.
fn stands_for_nothing(l: &Level) -> bool {
    is_cutoff_artefact(l) || f64::from(l.tail_weight) >= ARTEFACT_TOP_WEIGHT
}

/// Half-width of the neighbour's exclusion interval (see [`upper_edge`]): its residual bound,
/// unless it looks like an artefact and that bound reaches the level itself.
fn reach(l: &Level, energy: f64) -> f64 {
    if stands_for_nothing(l) && l.bound >= (l.energy - energy).abs() {
        rounding_floor(l)
    } else {
        l.bound
    }
}

/// The part of the error that the Kato-Temple argument does not square: the stored energy E
/// differs from the Rayleigh quotient of its vector by at most the in-space residual
/// (Cauchy-Schwarz), and from the exact eigenvalue of the assembled operator by its rounding.
fn rounding_floor(l: &Level) -> f64 {
    l.in_space_residual
        .max(ROUNDING_ULPS * f64::EPSILON * l.energy.abs())
}
