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

use crate::error::Result;
use crate::hamiltonian::LadderHamiltonian;
use crate::levels::{Branch, LabelOrigin, LandauLabel, Level, Root, Spectrum};
use crate::model::SpectrumForm;
use crate::numeric::dense::{self, Vectors};
use crate::sectors::{SectorPlan, Symmetry};
use nalgebra::DMatrix;
use num_complex::Complex64;
use std::collections::BTreeMap;

/// Largest sector (states) continued at the spectrum's own cutoff.
pub const CONTINUATION_MAX_STATES: usize = 200;

/// Steps of the path t = 0 .. 1 before any halving.
const CONTINUATION_STEPS: usize = 4;

/// Deepest halving of one step.
const MAX_HALVINGS: u32 = 3;

/// Levels whose weight on the top orbitals of the continuation basis is below this decide the
/// step size: well inside the basis, where the labels matter. Levels nearer the cutoff mix
/// strongly with their neighbours at every step and would only make the steps tiny.
const GENUINE_TOP_WEIGHT: f64 = 1e-10;

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
    let half = count / 2;
    (0..count)
        .map(|i| {
            if i < half {
                Branch::Lower((half - i) as u32)
            } else if count % 2 == 1 && i == half {
                Branch::Unpaired
            } else {
                Branch::Upper((i + 1 - (count - half)) as u32)
            }
        })
        .collect()
}

/// Label the levels of one exact sector of Landau index `n` (see the module docs). `levels`
/// holds every level of the sector, in any order; Klein-Gordon levels (`branch` = ±1) are
/// numbered away from the gap within their own sign.
pub fn label_exact_sector(levels: &mut [Level], n: i64, family: usize) {
    let all: Vec<usize> = (0..levels.len()).collect();
    label_group(levels, &all, n, family);
}

/// [`label_exact_sector`] for the levels at indices `group` of `levels`.
fn label_group(levels: &mut [Level], group: &[usize], n: i64, family: usize) {
    let kg = group.iter().any(|&i| levels[i].branch.sign() != 0);
    if kg {
        for sign in [1i8, -1] {
            let mut idx: Vec<usize> = group
                .iter()
                .copied()
                .filter(|&i| levels[i].branch.sign() == sign)
                .collect();
            // away from the gap: ascending for +, descending for -
            idx.sort_by(|&a, &b| {
                let o = levels[a].energy.total_cmp(&levels[b].energy);
                if sign > 0 {
                    o
                } else {
                    o.reverse()
                }
            });
            for (k, i) in idx.into_iter().enumerate() {
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
        }
        return;
    }
    let mut idx: Vec<usize> = group.to_vec();
    idx.sort_by(|&a, &b| levels[a].energy.total_cmp(&levels[b].energy));
    for (i, b) in idx.into_iter().zip(branches(group.len())) {
        levels[i].label = LandauLabel {
            n,
            branch: b,
            origin: LabelOrigin::ExactSector,
            family,
        };
    }
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
        let family = g.classes[gc].components[0];
        label_group(&mut spectrum.levels, &idx, j, family);
    }
}

/// The symmetric part H_0 of `h` (see the module docs): every operator entry whose orbital
/// shift is consistent with shifts chosen greedily, strongest coupling first (strength: the
/// largest |A_jk(alpha, beta)| of that shift, the size of the element at low orbitals).
/// Entries of exactly zero never count. Returns `None` when nothing breaks the symmetry.
pub fn symmetric_part(h: &LadderHamiltonian) -> Option<LadderHamiltonian> {
    let d = h.dim;
    // strength of each (alpha, beta, shift)
    let mut strength: BTreeMap<(usize, usize, i64), f64> = BTreeMap::new();
    for op in &h.ops {
        for a in 0..d {
            for b in 0..d {
                let z = op.matrix[(a, b)].norm();
                if z > 0.0 {
                    let e = strength.entry((a, b, op.shift())).or_insert(0.0);
                    *e = e.max(z);
                }
            }
        }
    }
    let mut order: Vec<((usize, usize, i64), f64)> = strength.into_iter().collect();
    order.sort_by(|x, y| y.1.total_cmp(&x.1).then(x.0.cmp(&y.0)));
    // union-find with potentials: s[x] = s[root] + off[x]
    let mut parent: Vec<usize> = (0..d).collect();
    let mut off = vec![0i64; d];
    fn find(parent: &mut [usize], off: &mut [i64], x: usize) -> (usize, i64) {
        let mut r = x;
        let mut acc = 0;
        while parent[r] != r {
            acc += off[r];
            r = parent[r];
        }
        // compress
        let mut y = x;
        let mut rem = acc;
        while parent[y] != y {
            let next = parent[y];
            let oy = off[y];
            parent[y] = r;
            off[y] = rem;
            rem -= oy;
            y = next;
        }
        (r, acc)
    }
    for &((a, b, delta), _) in &order {
        // wanted: s_b - s_a = delta
        let (ra, pa) = find(&mut parent, &mut off, a);
        let (rb, pb) = find(&mut parent, &mut off, b);
        if ra != rb {
            // s_rb + pb - (s_ra + pa) = delta  =>  s_rb = s_ra + delta + pa - pb
            parent[rb] = ra;
            off[rb] = delta + pa - pb;
        }
    }
    let s: Vec<i64> = (0..d).map(|x| find(&mut parent, &mut off, x).1).collect();
    let mut sym = h.clone();
    let mut broken = false;
    for op in &mut sym.ops {
        let delta = op.shift();
        for a in 0..d {
            for b in 0..d {
                if delta != s[b] - s[a] {
                    let z = op.matrix[(a, b)];
                    if z.re != 0.0 || z.im != 0.0 {
                        broken = true;
                    }
                    op.matrix[(a, b)] = Complex64::new(0.0, 0.0);
                    op.low[(a, b)] = Complex64::new(0.0, 0.0);
                }
            }
        }
    }
    broken.then_some(sym)
}

/// Give every level of `spectrum` in a sector without exact symmetry its label by adiabatic
/// continuation (see the module docs). `h` is the ladder Hamiltonian the spectrum was solved
/// with (for the Klein-Gordon form: the squared-form operator).
///
/// # Errors
/// Those of the dense eigen-solver.
///
/// # Complexity
/// O(s^3) per step for a sector of s <= [`CONTINUATION_MAX_STATES`] states: one dense
/// eigen-solve with vectors and three or four dense products (in real arithmetic where the
/// sector is real). A symmetry-breaking term comparable to the level spacing takes some 30
/// steps (the invented tilted cone at 200 states: 31 eigen-solves, 132 before the predictor).
pub fn continue_labels(
    h: &LadderHamiltonian,
    form: SpectrumForm,
    spectrum: &mut Spectrum,
) -> Result<()> {
    let exact = spectrum.symmetry.is_exact();
    if exact || spectrum.levels.is_empty() {
        return Ok(());
    }
    let sym = symmetric_part(h);
    let h0 = sym.as_ref().unwrap_or(h);
    let sym_symmetry = Symmetry::detect(h0);
    if !sym_symmetry.is_exact() {
        return Ok(());
    }
    // class and shift of each component in the symmetric model
    // family (smallest component of the class) and shift of each component in H_0
    let mut shift_of = vec![(0usize, 0i64); h.dim];
    for c in &sym_symmetry.classes {
        for (&a, &s) in c.components.iter().zip(&c.shifts) {
            shift_of[a] = (c.components[0], s);
        }
    }
    // the full model's sectors without exact symmetry, each with its levels
    let mut by_sector: BTreeMap<crate::sectors::SectorId, Vec<usize>> = BTreeMap::new();
    for (i, l) in spectrum.levels.iter().enumerate() {
        if !spectrum.symmetry.classes[l.sector.class]
            .conservation
            .is_exact()
        {
            by_sector.entry(l.sector).or_default().push(i);
        }
    }
    let mut states = Vec::new();
    for (id, members) in by_sector {
        // cutoff of the continuation: the spectrum's own, or lower for a large sector
        let mut cutoff = spectrum.cutoff;
        loop {
            SectorPlan::new(spectrum.symmetry.clone(), cutoff).states(id, &mut states);
            if states.len() <= CONTINUATION_MAX_STATES || cutoff <= h.band + 1 {
                break;
            }
            cutoff = (cutoff * CONTINUATION_MAX_STATES / states.len()).max(h.band + 1);
        }
        let same_cutoff = cutoff == spectrum.cutoff;
        let top_from = cutoff.saturating_sub(h.band.max(1));
        let followed = follow(h, h0, sym.is_some(), &states, &shift_of, top_from)?;
        assign(spectrum, &members, &followed, form, same_cutoff);
    }
    Ok(())
}

/// Eigenvalues of the full sector at t = 1 (ascending) with the label each carries and its
/// weight on the top `band` orbitals of the continuation's cutoff.
type Followed = Vec<(f64, LandauLabel, f64)>;

/// The sector matrices of H_0 and of V = H - H_0 over `states`, built once per sector so that
/// every step of the path is one axpy, H(t) = H_0 + t V.
fn sector_matrices(
    h: &LadderHamiltonian,
    h0: &LadderHamiltonian,
    states: &[(usize, usize)],
) -> (DMatrix<Complex64>, DMatrix<Complex64>) {
    let s = states.len();
    let m0 = DMatrix::from_fn(s, s, |r, c| {
        let (m, a) = states[r];
        let (n, b) = states[c];
        h0.element(m, a, n, b)
    });
    let v = DMatrix::from_fn(s, s, |r, c| {
        let (m, a) = states[r];
        let (n, b) = states[c];
        h.element(m, a, n, b) - m0[(r, c)]
    });
    (m0, v)
}

/// Overlap loss 1 - |<old|new>|^2 of the worst genuine level that a step aims at: well clear of
/// the acceptance limit 1/2, so that most steps are accepted at the first try.
const TARGET_LOSS: f64 = 0.3;

/// The next step after one accepted with worst genuine overlap `worst`: against the predicted
/// vectors the loss of a smooth path grows as the fourth power of the step, so the step is
/// scaled by (target / loss)^(1/4), by at most a factor 2 either way and never beyond the first
/// step 1 / [`CONTINUATION_STEPS`].
fn next_step(step: f64, worst: f64) -> f64 {
    let loss = (1.0 - worst).max(1e-12);
    let factor = (TARGET_LOSS / loss).powf(0.25).clamp(0.5, 2.0);
    (step * factor).min(1.0 / CONTINUATION_STEPS as f64)
}

fn follow(
    h: &LadderHamiltonian,
    h0: &LadderHamiltonian,
    broken: bool,
    states: &[(usize, usize)],
    shift_of: &[(usize, i64)],
    top_from: usize,
) -> Result<Followed> {
    let s = states.len();
    // t = 0: exact sub-sectors of H_0 inside this sector
    let mut groups: BTreeMap<(usize, i64), Vec<usize>> = BTreeMap::new();
    for (i, &(n, a)) in states.iter().enumerate() {
        let (c, sh) = shift_of[a];
        groups.entry((c, n as i64 + sh)).or_default().push(i);
    }
    let mut vecs = DMatrix::<Complex64>::zeros(s, s);
    let mut labels = Vec::with_capacity(s);
    let mut col = 0;
    let mut values = Vec::with_capacity(s);
    let (m0, v) = sector_matrices(h, h0, states);
    for ((family, j), idx) in groups {
        let sub = DMatrix::from_fn(idx.len(), idx.len(), |r, c| m0[(idx[r], idx[c])]);
        let e = dense::eigh(&sub, Vectors::Compute)?;
        let v = e.vectors.unwrap_or_else(|| DMatrix::zeros(0, 0));
        for (k, b) in branches(idx.len()).into_iter().enumerate() {
            for (r, &i) in idx.iter().enumerate() {
                vecs[(i, col)] = v[(r, k)];
            }
            labels.push(LandauLabel {
                n: j,
                branch: b,
                origin: LabelOrigin::Continuation,
                family,
            });
            values.push(e.values[k]);
            col += 1;
        }
    }
    let mut t = 0.0;
    let mut step = 1.0 / CONTINUATION_STEPS as f64;
    let mut halvings = 0;
    let mut mix = mixing(&vecs, &values, &v);
    if !broken {
        // nothing breaks the symmetry (an unsplit sector of a symmetric model): one step
        step = 1.0;
    }
    while t < 1.0 {
        let next = (t + step).min(1.0);
        let e = dense::eigh(&(&m0 + &v * Complex64::new(next, 0.0)), Vectors::Compute)?;
        let new = e.vectors.unwrap_or_else(|| DMatrix::zeros(0, 0));
        // (predicted old, new); only genuine levels decide the step: cutoff artefacts mix at will
        let overlap = predicted_overlap(&mix, next - t, &adjoint_times(&vecs, &new));
        let genuine: Vec<bool> = (0..vecs.ncols())
            .map(|j| top_weight(&vecs, j, states, top_from) < GENUINE_TOP_WEIGHT)
            .collect();
        let (perm, worst) = greedy_match(&overlap, &genuine);
        if worst < 0.5 && halvings < MAX_HALVINGS && broken {
            step *= 0.5;
            halvings += 1;
            continue;
        }
        // new column j carries the label of old column perm[j]
        labels = perm.iter().map(|&o| labels[o]).collect();
        vecs = new;
        values = e.values;
        t = next;
        halvings = 0;
        step = next_step(step, worst);
        if t < 1.0 {
            mix = mixing(&vecs, &values, &v);
        }
    }
    let mut top: Vec<f64> = (0..vecs.ncols())
        .map(|j| top_weight(&vecs, j, states, top_from))
        .collect();
    // inside a cluster of equal values the overlaps cannot tell degenerate levels apart: a
    // label from deep inside the basis goes to the vector deep inside it (top weight order)
    let scale = values
        .iter()
        .fold(0.0f64, |m, v| m.max(v.abs()))
        .max(f64::MIN_POSITIVE);
    let mut start = 0;
    while start < values.len() {
        let mut end = start + 1;
        while end < values.len() && values[end] - values[end - 1] <= 1e-12 * scale {
            end += 1;
        }
        if end - start > 1 {
            // the solver may return any mixture of a degenerate cluster, so its top weights say
            // nothing: order the labels by n and rank the columns the same way, so that the
            // lowest n meets the computed level with the least top weight in `assign`
            let mut labs: Vec<LandauLabel> = labels[start..end].to_vec();
            labs.sort_by_key(|l| l.n);
            for (k, l) in labs.into_iter().enumerate() {
                labels[start + k] = l;
                top[start + k] = k as f64 * 1e-300;
            }
        }
        start = end;
    }
    Ok(values
        .into_iter()
        .zip(labels)
        .zip(top)
        .map(|((e, l), t)| (e, l, t))
        .collect())
}

/// Largest first-order mixing amplitude |dt <i|V|j> / (E_j - E_i)| that the predictor uses:
/// pairs that mix more than this within one step are near a crossing, where first-order
/// perturbation theory says nothing reliable, and are left to the overlaps.
const MIX_CAP: f64 = 1.0;

/// First-order (Rayleigh-Schrodinger) mixing along the path H(t) = H_0 + t V at the current
/// eigenpairs (`vecs`, `values`): entry (i, j) is <i|V|j> / (E_j - E_i), the amplitude of |i>
/// in d|j>/dt (zero on the diagonal and for exactly equal energies).
///
/// # Complexity
/// Two dense products, O(s^3).
fn mixing(vecs: &DMatrix<Complex64>, values: &[f64], v: &DMatrix<Complex64>) -> DMatrix<Complex64> {
    let w = adjoint_times(vecs, &times(v, vecs));
    DMatrix::from_fn(w.nrows(), w.ncols(), |i, j| {
        let gap = values[j] - values[i];
        if i == j || gap == 0.0 {
            Complex64::new(0.0, 0.0)
        } else {
            w[(i, j)] / gap
        }
    })
}

/// Overlaps |<p_j|new_k>| of the predicted vectors p_j = |j> + dt sum_i mix_ij |i> (normalised;
/// amplitudes beyond [`MIX_CAP`] dropped) with the new eigenvectors, from the plain overlaps
/// `plain` = V_old^H V_new. A smooth path loses overlap as dt^2 against the old vectors but
/// as dt^4 against the predicted ones, so the steps can be longer for the same certainty.
fn predicted_overlap(
    mix: &DMatrix<Complex64>,
    dt: f64,
    plain: &DMatrix<Complex64>,
) -> DMatrix<Complex64> {
    let s = mix.nrows();
    let mut p = DMatrix::from_fn(s, s, |i, j| {
        let z = mix[(i, j)] * dt;
        if i == j {
            Complex64::new(1.0, 0.0)
        } else if z.norm() > MIX_CAP {
            Complex64::new(0.0, 0.0)
        } else {
            z
        }
    });
    for j in 0..s {
        let norm = p.column(j).norm();
        p.column_mut(j).unscale_mut(norm);
    }
    adjoint_times(&p, plain)
}

/// A B through faer's matrix product (see [`adjoint_times`]).
fn times(a: &DMatrix<Complex64>, b: &DMatrix<Complex64>) -> DMatrix<Complex64> {
    product(a, b, false)
}

/// A^H B through faer's matrix product (nalgebra's generic complex product is instantiated in
/// this crate, unoptimised in the test profile: it took 70 % of a labelled solve there).
fn adjoint_times(a: &DMatrix<Complex64>, b: &DMatrix<Complex64>) -> DMatrix<Complex64> {
    product(a, b, true)
}

/// A B or A^H B; in real arithmetic (a quarter of the work) when neither factor has an
/// imaginary part, as for the real sectors of most models.
fn product(a: &DMatrix<Complex64>, b: &DMatrix<Complex64>, adjoint: bool) -> DMatrix<Complex64> {
    let (n, p) = a.shape();
    let (rows, inner) = if adjoint { (p, n) } else { (n, p) };
    let q = b.ncols();
    let real = |m: &DMatrix<Complex64>| m.iter().all(|z| z.im == 0.0);
    if real(a) && real(b) {
        let fa = faer::Mat::<f64>::from_fn(n, p, |i, j| a[(i, j)].re);
        let fb = faer::Mat::<f64>::from_fn(inner, q, |i, j| b[(i, j)].re);
        let prod = if adjoint {
            fa.transpose() * &fb
        } else {
            &fa * &fb
        };
        return DMatrix::from_fn(rows, q, |i, j| Complex64::new(prod[(i, j)], 0.0));
    }
    let fa = faer::MatRef::from_column_major_slice(a.as_slice(), n, p);
    let fb = faer::MatRef::from_column_major_slice(b.as_slice(), inner, q);
    let prod = if adjoint { fa.adjoint() * fb } else { fa * fb };
    DMatrix::from_fn(rows, q, |i, j| prod[(i, j)])
}

/// Weight of column `j` of `vecs` on the orbitals from `top_from` on.
fn top_weight(
    vecs: &DMatrix<Complex64>,
    j: usize,
    states: &[(usize, usize)],
    top_from: usize,
) -> f64 {
    states
        .iter()
        .enumerate()
        .filter(|(_, &(n, _))| n >= top_from)
        .map(|(i, _)| vecs[(i, j)].norm_sqr())
        .sum()
}

/// One-to-one assignment of new columns to old rows by the largest |overlap|^2 first; returns
/// for each new column its old row and the smallest |overlap|^2 used by an old row marked
/// `genuine`.
fn greedy_match(overlap: &DMatrix<Complex64>, genuine: &[bool]) -> (Vec<usize>, f64) {
    let (r, c) = overlap.shape();
    let mut pairs: Vec<(f64, usize, usize)> = Vec::with_capacity(r * c);
    for j in 0..c {
        for i in 0..r {
            let p = overlap[(i, j)].norm_sqr();
            if p > 1e-6 {
                pairs.push((p, i, j));
            }
        }
    }
    pairs.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
    let mut old_used = vec![false; r];
    let mut new_of = vec![usize::MAX; c];
    let mut worst: f64 = 1.0;
    for (p, i, j) in pairs {
        if !old_used[i] && new_of[j] == usize::MAX {
            old_used[i] = true;
            new_of[j] = i;
            if genuine[i] {
                worst = worst.min(p);
            }
        }
    }
    // columns left without any overlap above 1e-6 take the remaining rows in order
    let mut free = (0..r).filter(|&i| !old_used[i]);
    for x in new_of.iter_mut() {
        if *x == usize::MAX {
            *x = free.next().unwrap_or(0);
        }
    }
    (new_of, worst)
}

/// Hand the followed labels to the spectrum's levels of one sector: by rank when the
/// continuation ran at the spectrum's cutoff over the whole sector, else by nearest energy
/// within the level's bound plus 1e-6 of the energy scale.
fn assign(
    spectrum: &mut Spectrum,
    members: &[usize],
    followed: &Followed,
    form: SpectrumForm,
    same_cutoff: bool,
) {
    let reference = spectrum.reference_energy;
    let scale = spectrum.energy_scale;
    for sign in [0i8, 1, -1] {
        let mine: Vec<usize> = members
            .iter()
            .copied()
            .filter(|&i| spectrum.levels[i].branch.sign() == sign)
            .collect();
        if mine.is_empty() {
            continue;
        }
        // energies of the followed values as levels of this branch
        let cand: Vec<(f64, LandauLabel, f64)> = followed
            .iter()
            .map(|&(lam, lab, top)| match form {
                SpectrumForm::Direct => (lam, lab, top),
                SpectrumForm::KleinGordon { rest_energy } => {
                    let e = crate::levels::kg_energy(
                        lam,
                        rest_energy,
                        Root::from_sign(sign),
                        reference,
                    );
                    let k = match lab.branch {
                        Branch::Upper(k) | Branch::Lower(k) => k,
                        Branch::Unpaired => 1,
                    };
                    let branch = if sign > 0 {
                        Branch::Upper(k)
                    } else {
                        Branch::Lower(k)
                    };
                    (e, LandauLabel { branch, ..lab }, top)
                }
            })
            .collect();
        if same_cutoff && cand.len() == mine.len() {
            let mut c = cand.clone();
            c.sort_by(|a, b| a.0.total_cmp(&b.0));
            let mut mine = mine.clone();
            mine.sort_by(|&a, &b| {
                let (la, lb) = (&spectrum.levels[a], &spectrum.levels[b]);
                la.energy.total_cmp(&lb.energy)
            });
            // within a cluster of (nearly) equal energies the rank is not an identity: pair
            // by the weight on the top orbitals instead (a cutoff artefact has weight there)
            let mut start = 0;
            while start < c.len() {
                let mut end = start + 1;
                while end < c.len() {
                    let l = &spectrum.levels[mine[end]];
                    let tol = l.bound + 1e-9 * l.energy.abs().max(scale);
                    if c[end].0 - c[end - 1].0 > tol {
                        break;
                    }
                    end += 1;
                }
                let mut ci: Vec<usize> = (start..end).collect();
                ci.sort_by(|&a, &b| c[a].2.total_cmp(&c[b].2));
                let mut li: Vec<usize> = mine[start..end].to_vec();
                li.sort_by(|&a, &b| {
                    let (la, lb) = (&spectrum.levels[a], &spectrum.levels[b]);
                    la.top_weight.total_cmp(&lb.top_weight)
                });
                for (k, i) in ci.into_iter().zip(li) {
                    spectrum.levels[i].label = c[k].1;
                }
                start = end;
            }
            continue;
        }
        let mut used = vec![false; cand.len()];
        for &i in &mine {
            let l = spectrum.levels[i];
            let tol = l.bound + 1e-6 * l.energy.abs().max(scale);
            let best = cand
                .iter()
                .enumerate()
                .filter(|(k, _)| !used[*k])
                .map(|(k, c)| (k, (c.0 - l.energy).abs()))
                .min_by(|a, b| a.1.total_cmp(&b.1));
            if let Some((k, dist)) = best {
                if dist <= tol {
                    used[k] = true;
                    spectrum.levels[i].label = cand[k].1;
                }
            }
        }
    }
}
