//! Adiabatic continuation of the labels from the symmetric part H_0 to the full Hamiltonian
//! (see the parent module's docs).

use super::{branches, CONTINUATION_MAX_STATES};
use crate::error::Result;
use crate::hamiltonian::LadderHamiltonian;
use crate::levels::{Branch, LabelOrigin, LandauLabel, Root, Spectrum};
use crate::model::SpectrumForm;
use crate::numeric::dense::{self, Vectors};
use crate::sectors::{SectorPlan, Symmetry};
use nalgebra::DMatrix;
use num_complex::Complex64;
use rayon::prelude::*;
use std::collections::BTreeMap;

/// Steps of the path t = 0 .. 1 before any halving.
const CONTINUATION_STEPS: usize = 4;

/// Deepest halving of one step.
const MAX_HALVINGS: u32 = 3;

/// Levels whose weight on the top orbitals of the continuation basis is below this decide the
/// step size: well inside the basis, where the labels matter. Levels nearer the cutoff mix
/// strongly with their neighbours at every step and would only make the steps tiny.
const GENUINE_TOP_WEIGHT: f64 = 1e-10;

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
    // the sectors are followed in parallel (each is independent), then assigned in order
    let symmetry = &spectrum.symmetry;
    let full_cutoff = spectrum.cutoff;
    let sectors: Vec<_> = by_sector.into_iter().collect();
    let followed: Vec<(Followed, bool)> = sectors
        .par_iter()
        .map(|(id, _)| -> Result<(Followed, bool)> {
            // cutoff of the continuation: the spectrum's own, or lower for a large sector
            let mut states = Vec::new();
            let mut cutoff = full_cutoff;
            loop {
                SectorPlan::new(symmetry.clone(), cutoff).states(*id, &mut states);
                if states.len() <= CONTINUATION_MAX_STATES || cutoff <= h.band + 1 {
                    break;
                }
                cutoff = (cutoff * CONTINUATION_MAX_STATES / states.len()).max(h.band + 1);
            }
            let top_from = cutoff.saturating_sub(h.band.max(1));
            let followed = follow(h, h0, sym.is_some(), &states, &shift_of, top_from)?;
            Ok((followed, cutoff == full_cutoff))
        })
        .collect::<Result<_>>()?;
    for ((_, members), (followed, same_cutoff)) in sectors.iter().zip(&followed) {
        assign(spectrum, members, followed, form, *same_cutoff);
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

/// Follow the labels of H_0's eigenvectors along H(t) = H_0 + t V, t = 0 .. 1, over one sector
/// (`states`), with steps chosen from the worst genuine overlap loss (see the module docs).
fn follow(
    h: &LadderHamiltonian,
    h0: &LadderHamiltonian,
    broken: bool,
    states: &[(usize, usize)],
    shift_of: &[(usize, i64)],
    top_from: usize,
) -> Result<Followed> {
    let (m0, v) = sector_matrices(h, h0, states);
    let (mut vecs, mut labels, mut values) = start_basis(&m0, states, shift_of)?;
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
    order_degenerate_clusters(&values, &mut labels, &mut top);
    Ok(values
        .into_iter()
        .zip(labels)
        .zip(top)
        .map(|((e, l), t)| (e, l, t))
        .collect())
}

/// The start of the path, t = 0: the eigenvectors of H_0 on its exact sub-sectors inside this
/// sector (as columns over `states`), their exact labels and their eigenvalues.
#[allow(clippy::type_complexity)]
fn start_basis(
    m0: &DMatrix<Complex64>,
    states: &[(usize, usize)],
    shift_of: &[(usize, i64)],
) -> Result<(DMatrix<Complex64>, Vec<LandauLabel>, Vec<f64>)> {
    let s = states.len();
    let mut groups: BTreeMap<(usize, i64), Vec<usize>> = BTreeMap::new();
    for (i, &(n, a)) in states.iter().enumerate() {
        let (c, sh) = shift_of[a];
        groups.entry((c, n as i64 + sh)).or_default().push(i);
    }
    let mut vecs = DMatrix::<Complex64>::zeros(s, s);
    let mut labels = Vec::with_capacity(s);
    let mut col = 0;
    let mut values = Vec::with_capacity(s);
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
                family: family as u32,
            });
            values.push(e.values[k]);
            col += 1;
        }
    }
    Ok((vecs, labels, values))
}

/// Inside a cluster of equal `values` the overlaps cannot tell degenerate levels apart: a label
/// from deep inside the basis goes to the vector deep inside it (top weight order).
fn order_degenerate_clusters(values: &[f64], labels: &mut [LandauLabel], top: &mut [f64]) {
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
    for sign in [0i8, 1, -1] {
        let mine: Vec<usize> = members
            .iter()
            .copied()
            .filter(|&i| spectrum.levels[i].branch.sign() == sign)
            .collect();
        if mine.is_empty() {
            continue;
        }
        let cand = as_levels(followed, form, sign, spectrum.reference_energy);
        if same_cutoff && cand.len() == mine.len() {
            assign_by_rank(spectrum, mine, cand);
        } else {
            assign_by_energy(spectrum, &mine, &cand);
        }
    }
}

/// The followed values as energies of levels of the branch `sign` (for the Klein-Gordon form:
/// the root of that sign, with the branch relabelled to that side).
fn as_levels(followed: &Followed, form: SpectrumForm, sign: i8, reference: f64) -> Followed {
    followed
        .iter()
        .map(|&(lam, lab, top)| match form {
            SpectrumForm::Direct => (lam, lab, top),
            SpectrumForm::KleinGordon { rest_energy } => {
                let e =
                    crate::levels::kg_energy(lam, rest_energy, Root::from_sign(sign), reference);
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
        .collect()
}

/// Pair the levels `mine` with the candidates `cand` (as many) by rank in energy; within a
/// cluster of (nearly) equal energies by the weight on the top orbitals instead.
fn assign_by_rank(spectrum: &mut Spectrum, mut mine: Vec<usize>, mut c: Followed) {
    let scale = spectrum.energy_scale;
    c.sort_by(|a, b| a.0.total_cmp(&b.0));
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
}

/// Give each level of `mine` the label of the nearest unused candidate within the level's
/// bound plus 1e-6 of the energy scale; a level with none keeps its label.
fn assign_by_energy(spectrum: &mut Spectrum, mine: &[usize], cand: &Followed) {
    let scale = spectrum.energy_scale;
    let mut used = vec![false; cand.len()];
    for &i in mine {
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
