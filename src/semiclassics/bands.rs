//! Zero-field bands of a model: the same terms with commuting momenta.
//!
//! # Formula
//! At B = 0 the momenta commute and every Weyl-ordered monomial is the plain product, so
//! H(kx, ky) = sum_t c_t M_t kx^a ky^b kz^c B^p, with kz and B fixed numbers; the bands are the
//! eigenvalues E_0(k) <= E_1(k) <= ... of this d x d Hermitian matrix. Terms linear in B
//! (Zeeman-like) are kept with the field given to [`Bands::new`]: with field 0 these are the
//! bare zero-field bands, with the field of a Landau-level calculation they carry the first
//! (Zeeman) correction of the semiclassical levels. The orbital magnetic moment of the Bloch
//! states is not added.
//!
//! Energies are absolute (the model's energy unit, not relative to its reference energy).

use crate::error::{Error, Result};
use crate::model::{Model, SpectrumForm};
use crate::numeric::dense::{eigh, Vectors};
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

/// One in-plane monomial kx^a ky^b with its matrix coefficient (kz and B already multiplied in).
#[derive(Debug, Clone)]
struct PlaneTerm {
    kx: i32,
    ky: i32,
    matrix: DMatrix<Complex64>,
}

/// The Bloch Hamiltonian H(kx, ky) of a model at fixed kz and Zeeman field.
#[derive(Debug, Clone)]
pub struct Bands {
    dim: usize,
    terms: Vec<PlaneTerm>,
    energy_scale: f64,
}

/// A band energy with its unit eigenvector.
#[derive(Debug, Clone)]
pub struct BandState {
    /// Band energy E_b(k).
    pub energy: f64,
    /// Smallest distance to the neighbouring bands at this k (infinity for one band).
    pub gap: f64,
    /// Unit eigenvector u_b(k).
    pub vector: DVector<Complex64>,
}

impl Bands {
    /// The bands of `model` at wave number `kz` (1/length) with field-linear terms evaluated at
    /// `zeeman_field` (0 for the bare zero-field bands).
    ///
    /// # Errors
    /// [`Error::Unsupported`] for a model in Klein-Gordon form (its operator is not the
    /// Hamiltonian); [`Error::BadNumber`] for a non-finite kz or field.
    pub fn new(model: &Model, kz: f64, zeeman_field: f64) -> Result<Bands> {
        for (name, v) in [("kz", kz), ("field", zeeman_field)] {
            if !v.is_finite() {
                return Err(Error::BadNumber {
                    name: name.into(),
                    value: v,
                    fix: "give a finite number".into(),
                });
            }
        }
        if let SpectrumForm::KleinGordon { .. } = model.form() {
            return Err(Error::Unsupported(format!(
                "model '{}' is in Klein-Gordon form: its operator is not the Hamiltonian, so it \
                 has no Bloch bands here; use a model written as a Hamiltonian (e.g. dirac)",
                model.name()
            )));
        }
        let d = model.dim();
        let mut terms: Vec<PlaneTerm> = Vec::new();
        let mut scale = 0.0f64;
        for t in model.terms() {
            let factor = t.coefficient
                * kz.powi(t.monomial.kz as i32)
                * zeeman_field.powi(t.monomial.field as i32);
            let m = DMatrix::from_fn(d, d, |r, c| t.matrix[(r, c)] * factor);
            let (a, b) = (t.monomial.kx as i32, t.monomial.ky as i32);
            if a + b == 0 {
                scale = scale.max(m.iter().map(|z| z.norm()).fold(0.0, f64::max));
            }
            match terms.iter_mut().find(|p| p.kx == a && p.ky == b) {
                Some(p) => p.matrix += m,
                None => terms.push(PlaneTerm {
                    kx: a,
                    ky: b,
                    matrix: m,
                }),
            }
        }
        Ok(Bands {
            dim: d,
            terms,
            energy_scale: scale,
        })
    }

    /// Number of bands d.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Largest matrix norm of the k-independent part (a scale for tolerances; may be 0).
    pub fn energy_scale(&self) -> f64 {
        self.energy_scale
    }

    /// The d x d matrix H(kx, ky).
    pub fn hamiltonian(&self, kx: f64, ky: f64) -> DMatrix<Complex64> {
        let mut h = DMatrix::zeros(self.dim, self.dim);
        for t in &self.terms {
            let w = kx.powi(t.kx) * ky.powi(t.ky);
            if w != 0.0 || (t.kx == 0 && t.ky == 0) {
                h += &t.matrix * Complex64::new(w, 0.0);
            }
        }
        h
    }

    /// All band energies at (kx, ky), ascending.
    ///
    /// # Errors
    /// [`Error::Numerical`] if the eigen-solve fails.
    pub fn energies(&self, kx: f64, ky: f64) -> Result<Vec<f64>> {
        Ok(eigh(&self.hamiltonian(kx, ky), Vectors::Skip)?.values)
    }

    /// Energy of band `band` (0 = lowest) at (kx, ky).
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a band index >= d; as [`Bands::energies`].
    pub fn energy(&self, band: usize, kx: f64, ky: f64) -> Result<f64> {
        self.check_band(band)?;
        Ok(self.energies(kx, ky)?[band])
    }

    /// Energy, gap to the neighbours and eigenvector of band `band` at (kx, ky).
    ///
    /// # Errors
    /// As [`Bands::energy`].
    pub fn state(&self, band: usize, kx: f64, ky: f64) -> Result<BandState> {
        self.check_band(band)?;
        let e = eigh(&self.hamiltonian(kx, ky), Vectors::Compute)?;
        let vectors = e.vectors.ok_or_else(|| Error::Numerical {
            stage: "band eigenvectors".into(),
            detail: "the dense solver returned no eigenvectors".into(),
        })?;
        let v = &e.values;
        let below = if band > 0 {
            v[band] - v[band - 1]
        } else {
            f64::INFINITY
        };
        let above = if band + 1 < v.len() {
            v[band + 1] - v[band]
        } else {
            f64::INFINITY
        };
        Ok(BandState {
            energy: v[band],
            gap: below.min(above),
            vector: vectors.column(band).into_owned(),
        })
    }

    fn check_band(&self, band: usize) -> Result<()> {
        if band >= self.dim {
            return Err(Error::BadNumber {
                name: "band".into(),
                value: band as f64,
                fix: format!(
                    "the model has {} bands, numbered 0 (lowest) to {}",
                    self.dim,
                    self.dim - 1
                ),
            });
        }
        Ok(())
    }
}
