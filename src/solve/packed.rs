//! The packed level record of a chunk buffer: what a sector solve leaves for the gather, in
//! fewer bytes than the public [`Level`].

use crate::levels::{Branch, Convergence, LabelOrigin, LandauLabel, Level, Root};
use crate::sectors::SectorId;

/// A level as a chunk buffer holds it between the sector solve and the gather: the fields of
/// [`Level`] except the convergence state (the gather sets it; inside the solve it is always
/// [`Convergence::NotConverged`]), with the sector as its index in the chunk's
/// [`SectorResult::sectors`], the optional Kato-Temple bound as a value and a flag, and the
/// orbital, component, family and branch count as 32-bit integers: 80 bytes instead of the
/// 112 of the public record (`size_of::<Level>()` on a 64-bit target), so fewer fresh pages
/// are written and read per level.
///
/// The orbital (below the cutoff N) fits in 32 bits whenever the solve can finish: N d levels
/// beyond 2^32 are refused by the gather ([`super::gather`]); components and families are below
/// d, branch counts below the sector size.
#[derive(Debug, Clone, Copy)]
pub(super) struct Packed {
    pub(super) energy: f64,
    bound: f64,
    kato_temple: f64,
    leakage: f64,
    in_space_residual: f64,
    label_n: i64,
    top_weight: f32,
    tail_weight: f32,
    orbital: u32,
    sector: u32,
    component: u32,
    family: u32,
    label_count: u32,
    /// 0 lower, 1 unpaired, 2 upper ([`Branch`]).
    label_side: u8,
    /// 0 exact sector, 1 continuation, 2 unlabelled ([`LabelOrigin`]).
    label_origin: u8,
    /// [`Root::sign`].
    root: i8,
    has_kato_temple: bool,
}

impl Packed {
    /// Pack `l`, a level of the chunk's sector number `sector`.
    pub(super) fn pack(l: &Level, sector: u32) -> Packed {
        let (label_side, label_count) = match l.label.branch {
            Branch::Lower(k) => (0, k),
            Branch::Unpaired => (1, 0),
            Branch::Upper(k) => (2, k),
        };
        Packed {
            energy: l.energy,
            bound: l.bound,
            kato_temple: l.kato_temple.unwrap_or(0.0),
            leakage: l.leakage,
            in_space_residual: l.in_space_residual,
            top_weight: l.top_weight,
            tail_weight: l.tail_weight,
            label_n: l.label.n,
            orbital: l.orbital as u32,
            sector,
            component: l.component,
            family: l.label.family,
            label_count,
            label_side,
            label_origin: match l.label.origin {
                LabelOrigin::ExactSector => 0,
                LabelOrigin::Continuation => 1,
                LabelOrigin::Unlabelled => 2,
            },
            root: l.branch.sign(),
            has_kato_temple: l.kato_temple.is_some(),
        }
    }

    /// Whether the level is converged at `tolerance` with energy scale `scale`: the same
    /// decision as `self.unpack(..).convergence_at(tolerance, scale) ==
    /// Convergence::Converged` ([`Level::convergence_at`]: the deciding bound, the Kato-Temple
    /// bound when known and sharper, else the residual bound, at most tolerance x
    /// max(|E|, scale)), without building the record.
    #[inline]
    pub(super) fn converged(&self, tolerance: f64, scale: f64) -> bool {
        let deciding = if self.has_kato_temple && self.kato_temple < self.bound {
            self.kato_temple
        } else {
            self.bound
        };
        deciding <= tolerance * self.energy.abs().max(scale)
    }

    /// The level record, with the sector read from the chunk's `sectors` and the convergence
    /// state [`Convergence::NotConverged`].
    pub(super) fn unpack(&self, sectors: &[SectorId]) -> Level {
        Level {
            energy: self.energy,
            bound: self.bound,
            kato_temple: self.has_kato_temple.then_some(self.kato_temple),
            leakage: self.leakage,
            in_space_residual: self.in_space_residual,
            convergence: Convergence::NotConverged,
            sector: sectors[self.sector as usize],
            orbital: self.orbital as usize,
            component: self.component,
            branch: Root::from_sign(self.root),
            label: LandauLabel {
                n: self.label_n,
                branch: match self.label_side {
                    0 => Branch::Lower(self.label_count),
                    1 => Branch::Unpaired,
                    _ => Branch::Upper(self.label_count),
                },
                origin: match self.label_origin {
                    0 => LabelOrigin::ExactSector,
                    1 => LabelOrigin::Continuation,
                    _ => LabelOrigin::Unlabelled,
                },
                family: self.family,
            },
            top_weight: self.top_weight,
            tail_weight: self.tail_weight,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::Packed;
    use crate::levels::{Branch, Convergence, LabelOrigin, LandauLabel, Level, Root};
    use crate::sectors::SectorId;

    #[test]
    fn packed_levels_unpack_to_the_same_record() {
        let sectors = [
            SectorId { class: 0, label: 7 },
            SectorId {
                class: 2,
                label: -3,
            },
        ];
        let labels = [
            LandauLabel::UNLABELLED,
            LandauLabel {
                n: 12,
                branch: Branch::Upper(2),
                origin: LabelOrigin::ExactSector,
                family: 1,
            },
            LandauLabel {
                n: 0,
                branch: Branch::Unpaired,
                origin: LabelOrigin::Continuation,
                family: 0,
            },
            LandauLabel {
                n: 5,
                branch: Branch::Lower(1),
                origin: LabelOrigin::ExactSector,
                family: 3,
            },
        ];
        let roots = [Root::Antiparticle, Root::Direct, Root::Particle];
        for (i, label) in labels.into_iter().enumerate() {
            for (r, branch) in roots.into_iter().enumerate() {
                let l = Level {
                    energy: -1.25 + i as f64,
                    bound: 3e-12,
                    kato_temple: (r != 1).then_some(1e-20 * (r + 1) as f64),
                    leakage: 1e-13,
                    in_space_residual: 2e-15,
                    convergence: Convergence::NotConverged,
                    sector: sectors[r % 2],
                    orbital: 123_456 + i,
                    component: r as u32,
                    branch,
                    label,
                    top_weight: 0.25,
                    tail_weight: 0.5,
                };
                assert_eq!(Packed::pack(&l, (r % 2) as u32).unpack(&sectors), l);
            }
        }
        assert!(std::mem::size_of::<Packed>() < std::mem::size_of::<Level>());
        // the sizes the docs and the memory estimate quote (64-bit targets): a field added to
        // either record must update them
        if cfg!(target_pointer_width = "64") {
            assert_eq!(std::mem::size_of::<Packed>(), 80);
            assert_eq!(std::mem::size_of::<Level>(), 112);
        }
    }

    #[test]
    fn packed_convergence_is_the_level_convergence() {
        // Oracle: Level::convergence_at on the unpacked record, over bounds below, at and
        // above the threshold, with and without a (sharper or looser) Kato-Temple bound
        let sectors = [SectorId { class: 0, label: 0 }];
        let mut seen = [false; 2];
        for &energy in &[-3.0, -1e-7, 0.0, 2e-3, 5.0] {
            for &bound in &[1e-12, 1e-9, 2e-9, 5e-9, 1e-3] {
                for kt in [None, Some(1e-15), Some(3e-9), Some(1.0)] {
                    for &scale in &[1.0, 1e-4] {
                        let l = Level {
                            energy,
                            bound,
                            kato_temple: kt,
                            leakage: 0.0,
                            in_space_residual: 0.0,
                            convergence: Convergence::NotConverged,
                            sector: sectors[0],
                            orbital: 3,
                            component: 0,
                            branch: Root::Direct,
                            label: LandauLabel::UNLABELLED,
                            top_weight: 0.9,
                            tail_weight: 0.9,
                        };
                        let p = Packed::pack(&l, 0);
                        let want = p.unpack(&sectors).convergence_at(1e-9, scale)
                            == Convergence::Converged;
                        assert_eq!(p.converged(1e-9, scale), want, "{l:?} at scale {scale}");
                        seen[want as usize] = true;
                    }
                }
            }
        }
        assert_eq!(seen, [true, true], "both outcomes occur");
    }
}
