//! Zero-field bands of a model: the same terms with commuting momenta.
//!
//! # Formula
//! At B = 0 the momenta commute and every Weyl-ordered monomial is the plain product, so
//! H(kx, ky) = sum_t c_t M_t kx^a ky^b kz^c B^p, with kz and B fixed numbers; the bands are the
//! eigenvalues E_0(k) <= E_1(k) <= ... of this d x d Hermitian matrix. Terms linear in B
//! (Zeeman-like) are kept with the field given to [`Bands::new`]: with field 0 these are the
//! bare zero-field bands, with the field of a Landau-level calculation they carry the first
//! (Zeeman) correction of the semiclassical levels. [`Bands::with_orbital_moment`] adds the
//! other first-order correction, the orbital magnetic moment of the Bloch states:
//!
//! E_n(k) -> E_n(k) - sign(qB) S_n(k) / l_B^2,
//! S_n = sum_{m != n} Im(<n|dH/dkx|m><m|dH/dky|n>) / (E_n - E_m),
//!
//! the energy -m_z B of the orbital moment as a sum over bands (Xiao, Chang & Niu, Rev. Mod.
//! Phys. 82, 1959 (2010), from memory). The magnitude is that formula's; its overall sign in
//! this code's conventions (B along +z, the Peierls substitution of [`crate::ladder`]) was
//! fixed by the gapped Dirac model, whose exact levels it must move the Onsager levels towards
//! (`tests/semiclassics.rs`; the other sign doubles the miss). Terms with |E_n - E_m| below
//! 1e-12 of the energy scale are dropped (degenerate bands).
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
    /// -sign(qB) / l_B^2 when the orbital-moment correction is on.
    moment: Option<f64>,
}

/// A band energy with its unit eigenvector.
#[derive(Debug, Clone)]
pub struct BandState {
    /// Band energy E_b(k) (with the orbital-moment shift when it is on).
    pub energy: f64,
    /// Smallest distance to the neighbouring bands at this k before the orbital-moment shift
    /// (infinity for one band).
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
            moment: None,
        })
    }

    /// As [`Bands::new`] at `field`, with the orbital-moment correction of the module docs
    /// (field-linear terms also at `field`).
    ///
    /// # Errors
    /// As [`Bands::new`]; [`Error::ZeroField`] for a zero field.
    pub fn with_orbital_moment(model: &Model, kz: f64, field: f64) -> Result<Bands> {
        if field == 0.0 {
            return Err(Error::ZeroField { field });
        }
        let mut b = Bands::new(model, kz, field)?;
        let lb = model.units().magnetic_length(field, model.charge());
        b.moment = Some(-(model.charge() * field).signum() / (lb * lb));
        Ok(b)
    }

    /// Whether the orbital-moment correction is on.
    pub fn has_orbital_moment(&self) -> bool {
        self.moment.is_some()
    }

    /// dH/dkx and dH/dky at (kx, ky).
    pub fn velocity(&self, kx: f64, ky: f64) -> (DMatrix<Complex64>, DMatrix<Complex64>) {
        let mut vx = DMatrix::zeros(self.dim, self.dim);
        let mut vy = DMatrix::zeros(self.dim, self.dim);
        for t in &self.terms {
            if t.kx > 0 {
                let w = f64::from(t.kx) * kx.powi(t.kx - 1) * ky.powi(t.ky);
                vx += &t.matrix * Complex64::new(w, 0.0);
            }
            if t.ky > 0 {
                let w = f64::from(t.ky) * kx.powi(t.kx) * ky.powi(t.ky - 1);
                vy += &t.matrix * Complex64::new(w, 0.0);
            }
        }
        (vx, vy)
    }

    /// The orbital-moment energies -sign(qB) S_n / l_B^2 of every band, given the eigenpairs.
    fn moment_shifts(
        &self,
        kx: f64,
        ky: f64,
        values: &[f64],
        vectors: &DMatrix<Complex64>,
    ) -> Vec<f64> {
        let Some(factor) = self.moment else {
            return vec![0.0; values.len()];
        };
        let (vx, vy) = self.velocity(kx, ky);
        let ax = vectors.adjoint() * vx * vectors;
        let ay = vectors.adjoint() * vy * vectors;
        let tiny = 1e-12 * values.iter().fold(self.energy_scale, |a, v| a.max(v.abs()));
        (0..values.len())
            .map(|n| {
                let s: f64 = (0..values.len())
                    .filter(|&m| m != n && (values[n] - values[m]).abs() > tiny)
                    .map(|m| (ax[(n, m)] * ay[(m, n)]).im / (values[n] - values[m]))
                    .sum();
                factor * s
            })
            .collect()
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

    /// All band energies at (kx, ky), ascending before the orbital-moment shift (band n keeps
    /// its index when the shift is on).
    ///
    /// # Errors
    /// [`Error::Numerical`] if the eigen-solve fails.
    pub fn energies(&self, kx: f64, ky: f64) -> Result<Vec<f64>> {
        if self.moment.is_none() {
            return Ok(eigh(&self.hamiltonian(kx, ky), Vectors::Skip)?.values);
        }
        let e = eigh(&self.hamiltonian(kx, ky), Vectors::Compute)?;
        let vectors = e.vectors.ok_or_else(no_vectors)?;
        let shifts = self.moment_shifts(kx, ky, &e.values, &vectors);
        Ok(e.values.iter().zip(shifts).map(|(v, s)| v + s).collect())
    }

    /// Energy of band `band` (0 = lowest) at (kx, ky).
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a band index >= d; as [`Bands::energies`].
    pub fn energy(&self, band: usize, kx: f64, ky: f64) -> Result<f64> {
        self.check_band_index(band)?;
        Ok(self.energies(kx, ky)?[band])
    }

    /// Energy, gap to the neighbours and eigenvector of band `band` at (kx, ky).
    ///
    /// # Errors
    /// As [`Bands::energy`].
    pub fn state(&self, band: usize, kx: f64, ky: f64) -> Result<BandState> {
        self.check_band_index(band)?;
        let e = eigh(&self.hamiltonian(kx, ky), Vectors::Compute)?;
        let vectors = e.vectors.ok_or_else(no_vectors)?;
        let shifts = self.moment_shifts(kx, ky, &e.values, &vectors);
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
            energy: v[band] + shifts[band],
            gap: below.min(above),
            vector: vectors.column(band).into_owned(),
        })
    }

    fn check_band_index(&self, band: usize) -> Result<()> {
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

fn no_vectors() -> Error {
    Error::Numerical {
        stage: "band eigenvectors".into(),
        detail: "the dense solver returned no eigenvectors".into(),
    }
}
