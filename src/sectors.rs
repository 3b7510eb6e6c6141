//! Sectors: the conserved quantity of the ladder form and the split of the basis it allows.
//!
//! # Definition
//! A coupling of component beta in orbital n to component alpha in orbital m has orbital shift
//! Delta = m - n. If integer shifts s_alpha exist with Delta = s_beta - s_alpha for every coupling,
//! then J = n + s_alpha is exactly conserved and each sector (fixed J) holds at most one state per
//! component: the spectrum splits into O(N) blocks of size <= d. If the equation holds only modulo
//! some integer m > 1 (a cubic warping term, for instance, couples with Delta = ±3 on top of the
//! linear terms, giving m = 3), then J mod m is conserved and the basis splits into m sectors.
//! Components that never couple to each other form separate classes, split independently.
//!
//! # Algorithm
//! Spanning tree over the component coupling graph fixes s (breadth first); every coupling then
//! leaves a discrepancy delta = Delta - (s_beta - s_alpha), and the modulus of a class is the gcd of
//! its discrepancies: 0 means exact conservation ([`Conservation::Exact`]), 1 means no
//! symmetry ([`Conservation::None`]), m > 1 means J mod m ([`Conservation::Modulo`]).
//! Cost O(d^2 ops).

use crate::hamiltonian::LadderHamiltonian;
use serde::{Serialize, Serializer};

/// What a component class conserves.
///
/// Reported (JSON, CSV) as its modulus, the gcd of the discrepancies of the module docs:
/// 0 for [`Conservation::Exact`], 1 for [`Conservation::None`], m for
/// [`Conservation::Modulo`]`(m)`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Conservation {
    /// J = n + s_alpha is exactly conserved: sectors of at most one state per component.
    Exact,
    /// Only J mod m is conserved (m > 1): m sectors.
    Modulo(u64),
    /// Nothing is conserved: one sector holding the whole class.
    None,
}

impl Conservation {
    /// From the gcd of the discrepancies: 0 exact, 1 none, m > 1 modulo m.
    pub fn from_modulus(m: u64) -> Self {
        match m {
            0 => Conservation::Exact,
            1 => Conservation::None,
            m => Conservation::Modulo(m),
        }
    }

    /// The modulus as reported: 0 exact, 1 none, m for modulo m.
    pub fn modulus(self) -> u64 {
        match self {
            Conservation::Exact => 0,
            Conservation::None => 1,
            Conservation::Modulo(m) => m,
        }
    }

    /// Whether J = n + s_alpha is exactly conserved.
    pub fn is_exact(self) -> bool {
        self == Conservation::Exact
    }
}

impl Serialize for Conservation {
    fn serialize<S: Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
        s.serialize_u64(self.modulus())
    }
}

/// Component classes that never couple to each other, each with its conserved quantity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ComponentClass {
    /// Components in this class, ascending.
    pub components: Vec<usize>,
    /// Shift s_alpha of each component in `components` (same order), minimum 0.
    pub shifts: Vec<i64>,
    /// What the class conserves (reported as `modulus`: 0 exact, 1 none, m for J mod m).
    #[serde(rename = "modulus")]
    pub conservation: Conservation,
}

/// The conserved quantity found, as reported with the results.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Symmetry {
    /// The component classes.
    pub classes: Vec<ComponentClass>,
}

impl Symmetry {
    /// Find the conserved quantity of an assembled Hamiltonian (see the module docs).
    pub fn detect(h: &LadderHamiltonian) -> Self {
        let d = h.dim;
        let couplings = h.couplings();
        // classes by connectivity (union-find)
        let mut parent: Vec<usize> = (0..d).collect();
        fn find(p: &mut [usize], mut x: usize) -> usize {
            while p[x] != x {
                p[x] = p[p[x]];
                x = p[x];
            }
            x
        }
        for &(a, b, _) in &couplings {
            let (ra, rb) = (find(&mut parent, a), find(&mut parent, b));
            if ra != rb {
                parent[ra.max(rb)] = ra.min(rb);
            }
        }
        let mut classes = Vec::new();
        let mut class_of = vec![usize::MAX; d];
        for a in 0..d {
            let r = find(&mut parent, a);
            if class_of[r] == usize::MAX {
                class_of[r] = classes.len();
                classes.push(Vec::new());
            }
            class_of[a] = class_of[r];
            classes[class_of[a]].push(a);
        }
        // potentials by BFS over couplings: Delta = s_beta - s_alpha  => s_beta = s_alpha + Delta
        let mut s: Vec<Option<i64>> = vec![None; d];
        let mut out = Vec::new();
        for comps in classes {
            s[comps[0]] = Some(0);
            let mut changed = true;
            while changed {
                changed = false;
                for &(a, b, delta) in &couplings {
                    if a == b {
                        continue;
                    }
                    match (s[a], s[b]) {
                        (Some(sa), None) => {
                            s[b] = Some(sa + delta);
                            changed = true;
                        }
                        (None, Some(sb)) => {
                            s[a] = Some(sb - delta);
                            changed = true;
                        }
                        _ => {}
                    }
                }
            }
            let mut g: u64 = 0;
            for &(a, b, delta) in &couplings {
                if let (Some(sa), Some(sb)) = (s[a], s[b]) {
                    if comps.contains(&a) {
                        g = gcd(g, (delta - (sb - sa)).unsigned_abs());
                    }
                }
            }
            let raw: Vec<i64> = comps.iter().map(|&c| s[c].unwrap_or(0)).collect();
            let min = raw.iter().copied().min().unwrap_or(0);
            let shifts = raw.iter().map(|x| x - min).collect();
            out.push(ComponentClass {
                components: comps,
                shifts,
                conservation: Conservation::from_modulus(g),
            });
        }
        Symmetry { classes: out }
    }

    /// No splitting at all: one class with every component and no conserved quantity (the
    /// oracle path).
    pub fn none(dim: usize) -> Self {
        Symmetry {
            classes: vec![ComponentClass {
                components: (0..dim).collect(),
                shifts: vec![0; dim],
                conservation: Conservation::None,
            }],
        }
    }

    /// Whether every class conserves J exactly (sectors of size <= d).
    pub fn is_exact(&self) -> bool {
        self.classes.iter().all(|c| c.conservation.is_exact())
    }

    /// Human-readable summary for reports, e.g.
    /// `J = n + s conserved, s = [0, 1] (classes {0,1})`.
    pub fn describe(&self) -> String {
        let parts: Vec<String> = self
            .classes
            .iter()
            .map(|c| {
                let comps = c
                    .components
                    .iter()
                    .map(|x| x.to_string())
                    .collect::<Vec<_>>()
                    .join(",");
                match c.conservation {
                    Conservation::Exact => format!(
                        "components {{{comps}}}: J = n + s conserved, s = {:?}",
                        c.shifts
                    ),
                    Conservation::None => format!("components {{{comps}}}: no conserved quantity"),
                    Conservation::Modulo(m) => format!(
                        "components {{{comps}}}: J mod {m} conserved, s = {:?}",
                        c.shifts
                    ),
                }
            })
            .collect();
        parts.join("; ")
    }
}

fn gcd(a: u64, b: u64) -> u64 {
    if b == 0 {
        a
    } else {
        gcd(b, a % b)
    }
}

/// Which sector a state belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub struct SectorId {
    /// Index of the component class.
    pub class: usize,
    /// J (exact symmetry), J mod m (modular) or 0 (none).
    pub label: i64,
}

/// The split of the truncated basis n = 0..cutoff-1 into sectors.
#[derive(Debug, Clone)]
pub struct SectorPlan {
    /// The symmetry used.
    pub symmetry: Symmetry,
    /// Orbital cutoff N.
    pub cutoff: usize,
}

impl SectorPlan {
    /// A plan for `symmetry` at `cutoff` orbitals per component.
    pub fn new(symmetry: Symmetry, cutoff: usize) -> Self {
        SectorPlan { symmetry, cutoff }
    }

    /// All sector ids, in a fixed order (class, then label ascending).
    pub fn sectors(&self) -> Vec<SectorId> {
        let mut out = Vec::new();
        for (ci, c) in self.symmetry.classes.iter().enumerate() {
            match c.conservation {
                Conservation::Exact => {
                    let max_s = c.shifts.iter().copied().max().unwrap_or(0);
                    for j in 0..(self.cutoff as i64 + max_s) {
                        out.push(SectorId {
                            class: ci,
                            label: j,
                        });
                    }
                }
                Conservation::None => out.push(SectorId {
                    class: ci,
                    label: 0,
                }),
                Conservation::Modulo(m) => {
                    for r in 0..m as i64 {
                        out.push(SectorId {
                            class: ci,
                            label: r,
                        });
                    }
                }
            }
        }
        out
    }

    /// The states (n, alpha) of a sector, in banded order (by n + s_alpha, then alpha).
    pub fn states(&self, id: SectorId, out: &mut Vec<(usize, usize)>) {
        out.clear();
        let c = &self.symmetry.classes[id.class];
        let n_max = self.cutoff as i64;
        match c.conservation {
            Conservation::Exact => {
                for (i, &a) in c.components.iter().enumerate() {
                    let n = id.label - c.shifts[i];
                    if (0..n_max).contains(&n) {
                        out.push((n as usize, a));
                    }
                }
            }
            other => {
                let m = other.modulus() as i64;
                let max_s = c.shifts.iter().copied().max().unwrap_or(0);
                for j in 0..(n_max + max_s) {
                    if m > 1 && j.rem_euclid(m) != id.label {
                        continue;
                    }
                    for (i, &a) in c.components.iter().enumerate() {
                        let n = j - c.shifts[i];
                        if (0..n_max).contains(&n) {
                            out.push((n as usize, a));
                        }
                    }
                }
            }
        }
    }

    /// Half-bandwidth (in states) of a sector's matrix in its banded order: couplings move
    /// J by at most `band + max shift spread`, and each J value holds at most |class| states.
    pub fn half_bandwidth(&self, id: SectorId, band: usize) -> usize {
        let c = &self.symmetry.classes[id.class];
        let spread = c.shifts.iter().copied().max().unwrap_or(0) as usize;
        let per_j = c.components.len();
        let steps = match c.conservation {
            Conservation::Exact => 0,
            Conservation::None => band + spread,
            Conservation::Modulo(m) => (band + spread).div_ceil(m as usize),
        };
        (steps + 1) * per_j - 1
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn conservation_is_reported_as_the_old_modulus() {
        // the JSON field keeps its name and integer: 0 exact, 1 none, m for J mod m
        for (c, m) in [
            (Conservation::Exact, 0),
            (Conservation::None, 1),
            (Conservation::Modulo(3), 3),
        ] {
            assert_eq!(Conservation::from_modulus(m), c);
            let class = ComponentClass {
                components: vec![0, 1],
                shifts: vec![0, 1],
                conservation: c,
            };
            let json = serde_json::to_string(&class).unwrap_or_default();
            assert_eq!(
                json,
                format!("{{\"components\":[0,1],\"shifts\":[0,1],\"modulus\":{m}}}")
            );
        }
    }
}
