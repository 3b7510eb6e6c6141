//! Assembly: a model at one field and kz becomes a ladder-form operator
//! H = sum_(j,k) A_jk ⊗ a^dagger^j a^k with d x d matrices A_jk, whose matrix elements over the
//! truncated basis |n, alpha>, n = 0..N-1, are the exact principal submatrix P H P.
//!
//! # Formula
//! A term c M kx^p ky^q kz^r B^f contributes c B^f kz^r (sqrt(2)... ) M w_jk / l_B^(p+q) to
//! A_jk, where w_jk are the normal-ordered Weyl coefficients of [`crate::ladder::weyl_monomial`].
//! The reference energy E_ref is subtracted from A_00 in double-double arithmetic, so that a
//! rest energy m c^2 cancels exactly before anything is rounded.
//!
//! The basis order of the full matrix is orbital-major, index = n d + alpha, so the matrix is
//! block-banded with d x d blocks and half-bandwidth `band` blocks, band = the highest in-plane
//! degree of the model. Its element (m, alpha; n, beta) is
//! sum over (j, k) with j - k = m - n of A_jk[alpha, beta] <m| a^dag^j a^k |n>.

use crate::error::{Error, Result};
use crate::ladder::{ladder_element, weyl_monomial};
use crate::matrix::SpinMatrix;
use crate::model::Model;
use crate::numeric::dd::Dd;
use nalgebra::DMatrix;
use num_complex::Complex64;
use std::collections::BTreeMap;

/// Where in parameter space a spectrum is computed.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct FieldPoint {
    /// Magnetic field along z, signed, in the model's field unit (T or B/B_c).
    pub field: f64,
    /// Wave number along the field, in the inverse length unit of the model.
    pub kz: f64,
}

impl FieldPoint {
    /// A point at field `field` and kz = 0.
    pub fn field(field: f64) -> Self {
        FieldPoint { field, kz: 0.0 }
    }

    /// Check that the point can carry Landau levels.
    ///
    /// # Errors
    /// [`Error::ZeroField`] for a zero or non-finite field; [`Error::BadNumber`] for a
    /// non-finite kz.
    pub fn validate(&self) -> Result<()> {
        if !(self.field.is_finite() && self.field != 0.0) {
            return Err(Error::ZeroField { field: self.field });
        }
        if !self.kz.is_finite() {
            return Err(Error::BadNumber {
                name: "kz".into(),
                value: self.kz,
                fix: "give a finite wave number".into(),
            });
        }
        Ok(())
    }
}

/// One ladder operator a^dagger^j a^k with its spinor matrix.
#[derive(Debug, Clone)]
pub struct LadderOp {
    /// Power of a^dagger.
    pub j: u32,
    /// Power of a.
    pub k: u32,
    /// Spinor matrix A_jk (rounded to double).
    pub matrix: SpinMatrix,
    /// Rounding remainder of A_jk (double-double low part), used by the precision refinement.
    pub low: SpinMatrix,
}

impl LadderOp {
    /// Orbital shift m - n = j - k produced by this operator.
    pub fn shift(&self) -> i64 {
        self.j as i64 - self.k as i64
    }
}

/// A model assembled at one field and kz, in ladder form.
#[derive(Debug, Clone)]
pub struct LadderHamiltonian {
    /// Number of spinor components d.
    pub dim: usize,
    /// Highest |j - k| among the operators (the band half-width in orbitals).
    pub band: usize,
    /// The operators, sorted by (j, k).
    pub ops: Vec<LadderOp>,
    /// Magnetic length in the model's length unit.
    pub magnetic_length: f64,
    /// The point it was assembled at.
    pub point: FieldPoint,
    /// Reference energy subtracted from the diagonal.
    pub reference_energy: f64,
    /// Sign of qB (+1 or -1).
    pub sign_qb: f64,
    /// Rounding residues of analytically cancelling terms that were set to zero (see
    /// [`CANCELLATION_ULPS`]); their effect on every level is bounded by
    /// [`LadderHamiltonian::dropped_norm`].
    pub dropped: Vec<DroppedOp>,
}

/// Entries of one operator a^dagger^j a^k that the cancellation test set to zero.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DroppedOp {
    /// Power of a^dagger.
    pub j: u32,
    /// Power of a.
    pub k: u32,
    /// Sum over the dropped entries (alpha, beta) of |Re| + |Im| of the dropped value: an upper
    /// bound of the 2-norm of the dropped d x d spinor matrix.
    pub entry_sum: f64,
}

/// An accumulated entry of an operator matrix: real and imaginary parts in double-double, and
/// for each the sum of the magnitudes of the contributions added into it.
#[derive(Debug, Clone, Copy, Default)]
struct Entry {
    re: Dd,
    im: Dd,
    mag_re: f64,
    mag_im: f64,
}

/// Cancellation test of the assembly, in units of eps: an accumulated part whose magnitude is at
/// most `CANCELLATION_ULPS` x eps x (sum of the magnitudes of its contributions) is the rounding
/// residue of terms that cancel analytically, and is set to zero.
///
/// # Why this threshold
/// Each contribution c B^f kz^r l_B^-p w_jk M is a product of a handful of doubles (the user's
/// coefficient, powers of the field, kz and the magnetic length, the Weyl weight with its
/// square roots), so it carries a relative rounding error of at most about 10 eps; the sum of
/// such terms that cancel exactly in exact arithmetic is therefore at most ~10 eps x (sum of
/// magnitudes). 64 leaves room for longer products, and stays far below any coupling a model
/// means to contain (a term 1e-14 times the size of the terms it is added to is beyond the
/// resolution of the input). The test is invariant under rewriting the same polynomial
/// (splitting, reordering, adding and subtracting a term): only the sum of magnitudes changes.
///
/// # What it costs
/// Nothing is lost silently: the dropped parts are kept in [`LadderHamiltonian::dropped`] and
/// their norm over the truncated space ([`LadderHamiltonian::dropped_norm`]) is added to every
/// level's residual bound. Dropping a perturbation E moves no eigenvalue by more than ||E||
/// (Weyl's inequality), and for a level's Ritz vector v, ||(H + E) v - E_v v|| <= r + ||E v||.
pub const CANCELLATION_ULPS: f64 = 64.0;

/// Whether an accumulated value is the rounding residue of a cancellation (see
/// [`CANCELLATION_ULPS`]).
fn cancels(x: Dd, magnitude_sum: f64) -> bool {
    let v = (x.hi + x.lo).abs();
    v != 0.0 && v <= CANCELLATION_ULPS * f64::EPSILON * magnitude_sum
}

impl LadderHamiltonian {
    /// Assemble `model` at `point`, subtracting `reference_energy` from the diagonal.
    ///
    /// # Errors
    /// [`Error::ZeroField`] for a zero or non-finite field; [`Error::BadNumber`] for a
    /// non-finite kz or reference energy.
    pub fn assemble(model: &Model, point: FieldPoint, reference_energy: f64) -> Result<Self> {
        assembly_count::record(model.name(), point);
        point.validate()?;
        if !reference_energy.is_finite() {
            return Err(Error::BadNumber {
                name: "reference energy".into(),
                value: reference_energy,
                fix: "give a finite energy".into(),
            });
        }
        let d = model.dim();
        let sign_qb = (model.charge() * point.field).signum();
        let lb = model.units().magnetic_length(point.field, model.charge());
        if !(lb.is_finite() && lb > 0.0 && lb.powi(-2).is_finite()) {
            return Err(Error::BadNumber {
                name: "magnetic length".into(),
                value: lb,
                fix: format!(
                    "the field {:e} with charge {:e} is outside the range double precision \
                     can hold (l_B = sqrt(hbar/|qB|) must be finite and non-zero); give a field \
                     and charge of moderate size",
                    point.field,
                    model.charge()
                ),
            });
        }
        // accumulate in double-double: (j,k) -> d*d entries of (re, im), each with the sum of
        // the magnitudes of its contributions (for the cancellation test, see `CANCELLATION_ULPS`)
        let mut acc: BTreeMap<(u32, u32), Vec<Entry>> = BTreeMap::new();
        let mut weyl_cache: BTreeMap<(u32, u32), crate::ladder::NormalPoly> = BTreeMap::new();
        for t in model.terms() {
            let mono = t.monomial;
            let poly = weyl_cache
                .entry((mono.kx, mono.ky))
                .or_insert_with(|| weyl_monomial(mono.kx, mono.ky, sign_qb))
                .clone();
            let scalar = t.coefficient
                * point.kz.powi(mono.kz as i32)
                * point.field.powi(mono.field as i32)
                * lb.powi(-(mono.inplane_degree() as i32));
            for (&(j, k), &w) in &poly.terms {
                let entry = acc
                    .entry((j, k))
                    .or_insert_with(|| vec![Entry::default(); d * d]);
                let f = scalar * w;
                for r in 0..d {
                    for c in 0..d {
                        let m = t.matrix[(r, c)];
                        if m == Complex64::new(0.0, 0.0) {
                            continue;
                        }
                        let e = &mut entry[r * d + c];
                        // complex product f*m with each part accumulated exactly
                        e.re = e.re + Dd::prod(f.re, m.re) - Dd::prod(f.im, m.im);
                        e.im = e.im + Dd::prod(f.re, m.im) + Dd::prod(f.im, m.re);
                        e.mag_re += (f.re * m.re).abs() + (f.im * m.im).abs();
                        e.mag_im += (f.re * m.im).abs() + (f.im * m.re).abs();
                    }
                }
            }
        }
        if reference_energy != 0.0 {
            let entry = acc
                .entry((0, 0))
                .or_insert_with(|| vec![Entry::default(); d * d]);
            for a in 0..d {
                let e = &mut entry[a * d + a];
                e.re = e.re - Dd::from_f64(reference_energy);
                e.mag_re += reference_energy.abs();
            }
        }
        let mut ops = Vec::new();
        let mut dropped = Vec::new();
        let mut band = 0usize;
        for ((j, k), mut entries) in acc {
            // cancellation-aware zero test; the diagonal of a shift-free operator (j = k,
            // alpha = beta) never decides a symmetry and keeps its small values (rest-energy
            // differences that the precision refinement needs)
            let mut removed = DMatrix::<Complex64>::zeros(d, d);
            for r in 0..d {
                for c in 0..d {
                    if j == k && r == c {
                        continue;
                    }
                    let e = &mut entries[r * d + c];
                    if cancels(e.re, e.mag_re) {
                        removed[(r, c)].re = e.re.hi + e.re.lo;
                        e.re = Dd::default();
                    }
                    if cancels(e.im, e.mag_im) {
                        removed[(r, c)].im = e.im.hi + e.im.lo;
                        e.im = Dd::default();
                    }
                }
            }
            let removed_sum: f64 = removed.iter().map(|z| z.re.abs() + z.im.abs()).sum();
            if removed_sum > 0.0 {
                dropped.push(DroppedOp {
                    j,
                    k,
                    entry_sum: removed_sum,
                });
            }
            let matrix = DMatrix::from_fn(d, d, |r, c| {
                let e = entries[r * d + c];
                Complex64::new(e.re.hi, e.im.hi)
            });
            let low = DMatrix::from_fn(d, d, |r, c| {
                let e = entries[r * d + c];
                Complex64::new(e.re.lo, e.im.lo)
            });
            let scale = matrix.iter().map(|z| z.norm()).fold(0.0, f64::max);
            if !scale.is_finite() {
                return Err(Error::BadNumber {
                    name: format!("the coefficient of a†^{j} a^{k} at this field"),
                    value: scale,
                    fix: "a coefficient times 1/l_B^(in-plane degree) overflows double \
                          precision; give coefficients, field and charge of moderate size (or \
                          change the unit system)"
                        .into(),
                });
            }
            if scale == 0.0 {
                continue;
            }
            band = band.max((j as i64 - k as i64).unsigned_abs() as usize);
            ops.push(LadderOp { j, k, matrix, low });
        }
        Ok(LadderHamiltonian {
            dim: d,
            band,
            ops,
            dropped,
            magnetic_length: lb,
            point,
            reference_energy,
            sign_qb,
        })
    }

    /// Element <m, alpha| H |n, beta> of the infinite matrix (also valid beyond any cutoff).
    #[inline]
    pub fn element(&self, m: usize, alpha: usize, n: usize, beta: usize) -> Complex64 {
        let shift = m as i64 - n as i64;
        let mut sum = Complex64::new(0.0, 0.0);
        for op in &self.ops {
            if op.shift() == shift {
                let a = op.matrix[(alpha, beta)];
                if a.re != 0.0 || a.im != 0.0 {
                    sum += a * ladder_element(op.j, op.k, n);
                }
            }
        }
        sum
    }

    /// The same element in double-double (hi and lo of real and imaginary parts), for the
    /// precision refinement.
    pub fn element_dd(
        &self,
        m: usize,
        alpha: usize,
        n: usize,
        beta: usize,
    ) -> crate::numeric::dd::DdComplex {
        let shift = m as i64 - n as i64;
        let mut re = Dd::default();
        let mut im = Dd::default();
        for op in &self.ops {
            if op.shift() == shift {
                let a = op.matrix[(alpha, beta)];
                let lo = op.low[(alpha, beta)];
                if a.re == 0.0 && a.im == 0.0 && lo.re == 0.0 && lo.im == 0.0 {
                    continue;
                }
                let f = ladder_element(op.j, op.k, n);
                re = re + Dd::prod(a.re, f) + Dd::prod(lo.re, f);
                im = im + Dd::prod(a.im, f) + Dd::prod(lo.im, f);
            }
        }
        crate::numeric::dd::DdComplex { re, im }
    }

    /// For every pair of components (alpha, beta), the orbital shifts m - n through which they
    /// couple (used by the sector detection).
    pub fn couplings(&self) -> Vec<(usize, usize, i64)> {
        let mut out = Vec::new();
        for op in &self.ops {
            for a in 0..self.dim {
                for b in 0..self.dim {
                    let z = op.matrix[(a, b)];
                    if z.re != 0.0 || z.im != 0.0 {
                        out.push((a, b, op.shift()));
                    }
                }
            }
        }
        out.sort_unstable();
        out.dedup();
        out
    }

    /// Upper bound of the operator norm, on vectors of the truncated space (orbitals
    /// n = 0..cutoff-1), of the parts the cancellation test dropped ([`CANCELLATION_ULPS`]).
    ///
    /// # Formula
    /// sum over dropped operators of (sum of |dropped entries|) x max_(n < N) sqrt(n!/(n-k)!
    /// (n-k+j)!/(n-k)!): a^dagger^j a^k maps |n> to a multiple of |n - k + j>, distinct n to
    /// distinct images, so its norm on the truncated space is its largest factor, which grows
    /// with n (as N^((j+k)/2)). Zero when nothing was dropped.
    pub fn dropped_norm(&self, cutoff: usize) -> f64 {
        let n = cutoff.saturating_sub(1);
        let sum: f64 = self
            .dropped
            .iter()
            .map(|op| op.entry_sum * ladder_element(op.j, op.k, n))
            .sum();
        // a few ulps for the rounding of the factors themselves
        sum * (1.0 + 8.0 * f64::EPSILON)
    }

    /// Whether every operator matrix is real (then every sector matrix is real).
    pub fn is_real(&self) -> bool {
        self.ops
            .iter()
            .all(|op| op.matrix.iter().all(|z| z.im == 0.0))
    }

    /// Largest absolute row sum of the truncated matrix (an upper bound of its 2-norm), used to
    /// scale tolerances.
    pub fn norm_bound(&self, cutoff: usize) -> f64 {
        let d = self.dim;
        let mut best: f64 = 0.0;
        // the row sums grow with n: the largest ones sit at the top of the truncated space
        let lo = cutoff.saturating_sub(self.band + 1);
        for m in (lo..cutoff).chain(0..cutoff.min(self.band + 1)) {
            for a in 0..d {
                let mut s = 0.0;
                let n0 = m.saturating_sub(self.band);
                let n1 = (m + self.band).min(cutoff - 1);
                for n in n0..=n1 {
                    for b in 0..d {
                        s += self.element(m, a, n, b).norm();
                    }
                }
                best = best.max(s);
            }
        }
        best
    }

    /// The full truncated matrix over n = 0..cutoff-1 in orbital-major order (index n d + alpha).
    /// Dense: for oracles and small problems only.
    pub fn dense(&self, cutoff: usize) -> DMatrix<Complex64> {
        let d = self.dim;
        let size = cutoff * d;
        let mut h = DMatrix::zeros(size, size);
        for n in 0..cutoff {
            let m0 = n.saturating_sub(self.band);
            let m1 = (n + self.band).min(cutoff - 1);
            for m in m0..=m1 {
                for a in 0..d {
                    for b in 0..d {
                        h[(m * d + a, n * d + b)] = self.element(m, a, n, b);
                    }
                }
            }
        }
        h
    }

    /// Non-zero elements (row, col, value) of the truncated matrix in orbital-major order:
    /// the sparse block-banded form, O(N d^2 band) entries.
    pub fn triplets(&self, cutoff: usize) -> Vec<(usize, usize, Complex64)> {
        let d = self.dim;
        let mut out = Vec::new();
        for n in 0..cutoff {
            let m0 = n.saturating_sub(self.band);
            let m1 = (n + self.band).min(cutoff - 1);
            for m in m0..=m1 {
                for a in 0..d {
                    for b in 0..d {
                        let z = self.element(m, a, n, b);
                        if z.re != 0.0 || z.im != 0.0 {
                            out.push((m * d + a, n * d + b, z));
                        }
                    }
                }
            }
        }
        out
    }
}

/// The untruncated part of a level that the truncated basis cannot see: the exact norm of the
/// components of H v beyond orbital N-1.
///
/// # Formula
/// r_out^2 = sum over m >= N and alpha of |sum_(n < N, beta) H_(m alpha, n beta) v_(n beta)|^2,
/// where only states with n >= N - band contribute.
pub fn leakage(
    h: &LadderHamiltonian,
    cutoff: usize,
    states: &[(usize, usize)],
    v: &[Complex64],
) -> f64 {
    let mut buckets: Vec<((usize, usize), Complex64)> = Vec::new();
    for_each_outside(h, cutoff, states, v, |key, val| {
        match buckets.iter_mut().find(|(k, _)| *k == key) {
            Some((_, acc)) => *acc += val,
            None => buckets.push((key, val)),
        }
    });
    buckets
        .iter()
        .map(|(_, z)| z.norm_sqr())
        .sum::<f64>()
        .sqrt()
}

/// Visit every contribution H_(m alpha, n beta) v_(n beta) with m >= N (the part of H v beyond
/// the cutoff) as `(key (m, alpha), value)`; keys repeat and must be summed by the caller.
pub fn for_each_outside(
    h: &LadderHamiltonian,
    cutoff: usize,
    states: &[(usize, usize)],
    v: &[Complex64],
    mut visit: impl FnMut((usize, usize), Complex64),
) {
    for (idx, &(n, beta)) in states.iter().enumerate() {
        if n + h.band < cutoff {
            continue;
        }
        for op in &h.ops {
            let shift = op.shift();
            if shift <= 0 {
                continue;
            }
            let m = n + shift as usize;
            if m < cutoff {
                continue;
            }
            let f = ladder_element(op.j, op.k, n);
            for alpha in 0..h.dim {
                let a = op.matrix[(alpha, beta)];
                if a.re == 0.0 && a.im == 0.0 {
                    continue;
                }
                visit((m, alpha), a * f * v[idx]);
            }
        }
    }
}

/// Diagnostic: how many times a model named `model_name` was assembled
/// ([`LadderHamiltonian::assemble`]) at exactly `point` (the same bits of B and kz) in this
/// process so far. It lets a test check that one command or one solve sets up its Hamiltonian
/// once ([`crate::problem`]); keyed by the model's name so that work on other models running at
/// the same time does not disturb the count.
///
/// # Cost and limit
/// One lock and one map update per assembly (negligible beside the O(terms x d^2) assembly).
/// At most [`ASSEMBLY_COUNT_KEYS`] distinct (name, B, kz) keys are kept; assemblies at further
/// keys are not counted, so that a long-lived process does not grow without bound.
///
/// # Examples
/// ```
/// use ladderfan::{hamiltonian, models, FieldPoint, Settings, Spectrum};
/// let model = models::schrodinger(models::MassParams { mass_ratio: 1.0, charge: -1.0 })?;
/// let point = FieldPoint::field(1.25);
/// let before = hamiltonian::assemblies(model.name(), point);
/// Spectrum::compute(&model, point, &Settings::with_cutoff(20))?;
/// // one assembly at the point; the label families of a split solve are assembled once more
/// // at a generic kz, which is another point
/// assert_eq!(hamiltonian::assemblies(model.name(), point), before + 1);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn assemblies(model_name: &str, point: FieldPoint) -> usize {
    assembly_count::count(model_name, point)
}

/// Diagnostic: assemblies of a model named `model_name` at any point so far (see
/// [`assemblies`]).
pub fn assemblies_of(model_name: &str) -> usize {
    assembly_count::total(model_name)
}

/// The most distinct (model name, B, kz) keys [`assemblies`] keeps.
pub const ASSEMBLY_COUNT_KEYS: usize = 1 << 16;

/// The store behind [`assemblies`]: counts per (model name, B, kz).
mod assembly_count {
    use super::{FieldPoint, ASSEMBLY_COUNT_KEYS};
    use std::collections::BTreeMap;
    use std::sync::Mutex;

    static COUNTS: Mutex<BTreeMap<(String, u64, u64), usize>> = Mutex::new(BTreeMap::new());

    fn key(name: &str, point: FieldPoint) -> (String, u64, u64) {
        (name.to_string(), point.field.to_bits(), point.kz.to_bits())
    }

    /// Count one assembly of `name` at `point`.
    pub(super) fn record(name: &str, point: FieldPoint) {
        if let Ok(mut m) = COUNTS.lock() {
            let k = key(name, point);
            if let Some(c) = m.get_mut(&k) {
                *c += 1;
            } else if m.len() < ASSEMBLY_COUNT_KEYS {
                m.insert(k, 1);
            }
        }
    }

    /// Assemblies of `name` at `point` so far.
    pub(super) fn count(name: &str, point: FieldPoint) -> usize {
        COUNTS
            .lock()
            .map(|m| m.get(&key(name, point)).copied().unwrap_or(0))
            .unwrap_or(0)
    }

    /// Assemblies of `name` at any point so far.
    pub(super) fn total(name: &str) -> usize {
        COUNTS
            .lock()
            .map(|m| {
                m.iter()
                    .filter(|((n, _, _), _)| n == name)
                    .map(|(_, c)| *c)
                    .sum()
            })
            .unwrap_or(0)
    }
}
