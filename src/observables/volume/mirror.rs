//! Detection of a kz -> -kz mirror of a model: a fixed invertible spinor matrix U with
//! U H(kx, ky, kz) U^-1 = H(kx, ky, -kz).
//!
//! # Definition
//! Every term of a model is c kx^a ky^b kz^p B^f M (after the Peierls substitution the
//! in-plane part acts on the orbitals, M on the spinor components). A spinor matrix U that
//! commutes with M for every term of even p and anticommutes with M for every term of odd p
//! gives, term by term, U H(kz) U^-1 = H(-kz) for the truncated ladder matrix as well (U acts
//! on the components only, so it leaves the orbital cutoff alone): the spectra at kz and -kz
//! are then the same for every field and cutoff. The condition is sufficient, not necessary: a
//! model whose mirror mixes orbitals is not detected (and is integrated over [-K, K]).
//!
//! # Method
//! The conditions are linear in U: (M^T (x) 1 - s 1 (x) M) vec(U) = 0, s = (-1)^p, stacked
//! over the terms (each M scaled to unit size). Its null space comes from a singular value
//! decomposition (singular values below 1e-10 of the largest count as zero); a fixed,
//! irrational combination of the null vectors is tried as U and accepted when its smallest
//! singular value is at least 1e-6 of its largest (a null space holding only singular
//! matrices, e.g. nilpotent ones, is refused). For a model without odd powers of kz, U = 1.
//!
//! # Examples
//! A Weyl node, H = v k . sigma, has none: U would commute with sigma_x and sigma_y, so U is a
//! multiple of 1, which does not anticommute with sigma_z (its chiral level E = -v kz is not
//! even in kz). A Schrodinger electron (kz^2 only) has U = 1.

use crate::matrix::SpinMatrix;
use crate::model::Model;
use nalgebra::DMatrix;
use num_complex::Complex64;

/// Singular values of the stacked conditions below this share of the largest are zero.
const NULL_RELATIVE: f64 = 1e-10;
/// A candidate U whose smallest singular value is below this share of its largest is singular.
const INVERTIBLE_RELATIVE: f64 = 1e-6;

/// The kz -> -kz mirror of `model` (module docs): `Some(U)` when one is found, `None` when the
/// model has none of this form (then both signs of kz must be solved).
///
/// # Complexity
/// One SVD of a (T d^2) x d^2 matrix for T terms of a d-component model.
pub fn kz_mirror(model: &Model) -> Option<SpinMatrix> {
    let d = model.dim();
    let terms: Vec<(&SpinMatrix, f64)> = model
        .terms()
        .iter()
        .filter(|t| t.coefficient.norm() > 0.0)
        .map(|t| (&t.matrix, if t.monomial.kz % 2 == 1 { -1.0 } else { 1.0 }))
        .collect();
    if terms.iter().all(|&(_, s)| s > 0.0) {
        return Some(DMatrix::identity(d, d));
    }
    let n = d * d;
    let mut a = DMatrix::<Complex64>::zeros(terms.len() * n, n);
    for (t, &(m, s)) in terms.iter().enumerate() {
        let scale = m.iter().map(|z| z.norm()).fold(0.0, f64::max);
        if scale == 0.0 {
            continue;
        }
        // row (i, j) of U M - s M U, column (k, l) of U: vec index i + d j (column-major)
        for i in 0..d {
            for j in 0..d {
                let row = t * n + i + d * j;
                for k in 0..d {
                    // (U M)_ij = sum_k U_ik M_kj
                    a[(row, i + d * k)] += m[(k, j)] / scale;
                    // (M U)_ij = sum_k M_ik U_kj
                    a[(row, k + d * j)] -= s * m[(i, k)] / scale;
                }
            }
        }
    }
    let svd = a.svd(false, true);
    let v_t = svd.v_t.as_ref()?;
    let largest = svd.singular_values.iter().copied().fold(0.0, f64::max);
    let null: Vec<usize> = (0..svd.singular_values.len())
        .filter(|&i| svd.singular_values[i] <= NULL_RELATIVE * largest.max(f64::MIN_POSITIVE))
        .collect();
    if null.is_empty() {
        return None;
    }
    // a fixed irrational combination of the null vectors (rows of V^H, conjugated)
    let mut u = DMatrix::<Complex64>::zeros(d, d);
    for (r, &i) in null.iter().enumerate() {
        let c = Complex64::new(1.0, ((r as f64 + 1.0) * 0.618_033_988_749_895).fract());
        for col in 0..n {
            u[(col % d, col / d)] += c * v_t[(i, col)].conj();
        }
    }
    let sv = u.clone().singular_values();
    let (lo, hi) = sv.iter().fold((f64::INFINITY, 0.0f64), |(lo, hi), &x| {
        (lo.min(x), hi.max(x))
    });
    (hi > 0.0 && lo >= INVERTIBLE_RELATIVE * hi).then_some(u)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::models;

    /// ||U M U^-1 - s M|| over the terms, relative to ||M||.
    fn worst(model: &Model, u: &SpinMatrix) -> f64 {
        let inv = u.clone().try_inverse().expect("invertible");
        model
            .terms()
            .iter()
            .map(|t| {
                let s = if t.monomial.kz % 2 == 1 { -1.0 } else { 1.0 };
                let lhs = u * &t.matrix * &inv;
                (lhs - t.matrix.map(|z| z * s)).norm() / t.matrix.norm()
            })
            .fold(0.0, f64::max)
    }

    #[test]
    fn weyl_node_has_no_mirror_and_the_dirac_model_has_one() {
        // Weyl: U commuting with sigma_x, sigma_y is a multiple of 1 (Schur's lemma), which
        // cannot anticommute with sigma_z (common practice)
        let weyl = models::weyl(models::WeylParams::default()).unwrap();
        assert!(kz_mirror(&weyl).is_none());
        // 3+1 Dirac: U = alpha_x alpha_y beta commutes with alpha_x, alpha_y, beta and
        // anticommutes with alpha_z (Clifford algebra, common practice)
        let dirac = models::dirac(models::RelativisticParams::default()).unwrap();
        let u = kz_mirror(&dirac).expect("the Dirac model is even in kz");
        assert!(worst(&dirac, &u) < 1e-12, "{}", worst(&dirac, &u));
        // kz^2 only: the identity
        let sch = models::schrodinger(models::MassParams::default()).unwrap();
        let u = kz_mirror(&sch).unwrap();
        assert_eq!(u, DMatrix::identity(1, 1));
    }
}
