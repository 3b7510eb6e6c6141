//! What the user describes: a d-component Hamiltonian as a sum of terms
//! `coefficient x matrix x monomial(kx, ky, kz) x B^p`.
//!
//! # Formula
//! H(k, B) = sum_t c_t M_t kx^{a_t} ky^{b_t} kz^{c_t} B^{p_t}, with c_t complex (energy x
//! length^(a+b+c), per field unit if p = 1), M_t a d x d complex matrix, p_t in {0, 1}.
//! In a field, kx and ky become operators through the Peierls substitution (see
//! [`crate::ladder`]); kz stays a number, a parameter of the solve.
//!
//! Hermiticity: Weyl-ordered monomials are Hermitian and linearly independent, so H is
//! Hermitian exactly when, for every monomial, the sum of `c_t M_t` over the terms that carry
//! it is a Hermitian matrix. [`ModelBuilder::build`] checks this and names the terms that fail.

use crate::error::{Error, Result};
use crate::matrix::SpinMatrix;
use crate::units::Units;
use num_complex::Complex64;
use serde::{Deserialize, Serialize};
use std::any::Any;
use std::collections::BTreeMap;
use std::fmt;
use std::sync::Arc;

/// Highest total power of kx and ky in one term.
pub const MAX_INPLANE_DEGREE: u32 = 6;

/// A monomial kx^kx ky^ky kz^kz B^field.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Default, Serialize, Deserialize,
)]
pub struct Monomial {
    /// Power of kx.
    pub kx: u32,
    /// Power of ky.
    pub ky: u32,
    /// Power of kz (kz is a number in the solve).
    pub kz: u32,
    /// Power of the magnetic field B (0 or 1): Zeeman- or anomalous-moment-like terms use 1.
    pub field: u32,
}

impl Monomial {
    /// The constant monomial 1.
    pub const ONE: Monomial = Monomial {
        kx: 0,
        ky: 0,
        kz: 0,
        field: 0,
    };
    /// kx^a ky^b kz^c.
    pub const fn new(kx: u32, ky: u32, kz: u32) -> Self {
        Monomial {
            kx,
            ky,
            kz,
            field: 0,
        }
    }
    /// kx^1.
    pub const KX: Monomial = Monomial::new(1, 0, 0);
    /// ky^1.
    pub const KY: Monomial = Monomial::new(0, 1, 0);
    /// kz^1.
    pub const KZ: Monomial = Monomial::new(0, 0, 1);
    /// B^1 (a term linear in the field, such as a Zeeman term).
    pub const B: Monomial = Monomial {
        kx: 0,
        ky: 0,
        kz: 0,
        field: 1,
    };
    /// The same monomial times B.
    pub const fn times_field(self) -> Self {
        Monomial {
            field: self.field + 1,
            ..self
        }
    }
    /// Total in-plane degree kx + ky: the highest ladder power the term produces.
    pub const fn inplane_degree(&self) -> u32 {
        self.kx + self.ky
    }
}

impl fmt::Display for Monomial {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut parts = Vec::new();
        for (name, p) in [
            ("kx", self.kx),
            ("ky", self.ky),
            ("kz", self.kz),
            ("B", self.field),
        ] {
            match p {
                0 => {}
                1 => parts.push(name.to_string()),
                _ => parts.push(format!("{name}^{p}")),
            }
        }
        if parts.is_empty() {
            write!(f, "1")
        } else {
            write!(f, "{}", parts.join(" "))
        }
    }
}

/// One term `coefficient x matrix x monomial` of a model.
#[derive(Debug, Clone, PartialEq)]
pub struct Term {
    /// Complex coefficient in energy x length^(kx+ky+kz) (per field unit when `monomial.field` = 1).
    pub coefficient: Complex64,
    /// The d x d spinor matrix.
    pub matrix: SpinMatrix,
    /// The monomial in kx, ky, kz, B.
    pub monomial: Monomial,
    /// A label used in messages and reports (e.g. `"mass"`, `"v kx sigma_x"`).
    pub label: String,
}

/// How eigenvalues of the assembled operator map to energies.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum SpectrumForm {
    /// The operator is the Hamiltonian: eigenvalues are energies.
    Direct,
    /// Klein-Gordon form: the operator is O = (c^2 pi^2 + ...)/(2 m c^2), a Schrodinger-like
    /// operator, and the energies are E = ± sqrt((m c^2)^2 + 2 m c^2 λ) for each eigenvalue λ
    /// (both branches are reported). `rest_energy` is m c^2 in the model's energy unit.
    KleinGordon {
        /// m c^2 in the model's energy unit.
        rest_energy: f64,
    },
}

/// The typed description a model was built from, when a built-in constructor (the `models`
/// module, one layer up) built it: opaque at this layer, read back typed with `Origin::of`
/// there. A model
/// described term by term (a model file with `[[term]]`) has none, whatever its name.
pub trait ModelOrigin: Any + fmt::Debug + Send + Sync {
    /// The origin as [`Any`], for the typed read-back.
    fn as_any(&self) -> &dyn Any;
    /// The same origin with the carrier charge replaced (see [`Model::with_charge`]).
    fn with_charge(&self, charge: f64) -> Arc<dyn ModelOrigin>;
}

/// A validated model. Build one with [`Model::builder`] or a built-in constructor (`models`).
#[derive(Debug, Clone)]
pub struct Model {
    pub(crate) name: String,
    pub(crate) dim: usize,
    pub(crate) charge: f64,
    pub(crate) units: Units,
    pub(crate) terms: Vec<Term>,
    pub(crate) params: BTreeMap<String, f64>,
    pub(crate) form: SpectrumForm,
    pub(crate) reference_energy: f64,
    pub(crate) degeneracy: u32,
    pub(crate) component_names: Vec<String>,
    pub(crate) origin: Option<Arc<dyn ModelOrigin>>,
}

impl Model {
    /// Start describing a `dim`-component model (charge -1 e, lab units, no terms).
    pub fn builder(name: &str, dim: usize) -> ModelBuilder {
        ModelBuilder {
            model: Model {
                name: name.to_string(),
                dim,
                charge: -1.0,
                units: Units::Lab,
                terms: Vec::new(),
                params: BTreeMap::new(),
                form: SpectrumForm::Direct,
                reference_energy: 0.0,
                degeneracy: 1,
                component_names: Vec::new(),
                origin: None,
            },
        }
    }
    /// Model name.
    pub fn name(&self) -> &str {
        &self.name
    }
    /// Number of spinor components d.
    pub fn dim(&self) -> usize {
        self.dim
    }
    /// Carrier charge in units of e, with its sign (-1 for an electron).
    pub fn charge(&self) -> f64 {
        self.charge
    }
    /// Unit system.
    pub fn units(&self) -> Units {
        self.units
    }
    /// The terms.
    pub fn terms(&self) -> &[Term] {
        &self.terms
    }
    /// Named parameters (as given to the builder; informational and for formulas).
    pub fn params(&self) -> &BTreeMap<String, f64> {
        &self.params
    }
    /// A named parameter.
    pub fn param(&self, name: &str) -> Option<f64> {
        self.params.get(name).copied()
    }
    /// How eigenvalues map to energies.
    pub fn form(&self) -> SpectrumForm {
        self.form
    }
    /// Suggested reference energy (energies are reported relative to it when the solve
    /// settings ask for it): m c^2 for the relativistic models, 0 otherwise.
    pub fn reference_energy(&self) -> f64 {
        self.reference_energy
    }
    /// Extra degeneracy the model declares beyond the Landau degeneracy (spin or valley copies
    /// that are not among its components), used for densities.
    pub fn degeneracy(&self) -> u32 {
        self.degeneracy
    }
    /// Names of the spinor components (e.g. `A`, `B` or `up`, `down`).
    pub fn component_names(&self) -> &[String] {
        &self.component_names
    }
    /// The typed description the model was built from (see [`ModelOrigin`]); `None` for a model
    /// described term by term.
    pub fn origin(&self) -> Option<&dyn ModelOrigin> {
        self.origin.as_deref()
    }
    /// Highest in-plane degree over all terms = half-width of the ladder band.
    pub fn band(&self) -> usize {
        self.terms
            .iter()
            .map(|t| t.monomial.inplane_degree())
            .max()
            .unwrap_or(0) as usize
    }
    /// A copy with the carrier charge replaced (flip its sign to go from electron to positron
    /// or between valleys whose only difference is the sign of qB).
    pub fn with_charge(&self, charge: f64) -> Result<Model> {
        check_finite("charge", charge)?;
        if charge == 0.0 {
            return Err(Error::BadNumber {
                name: "charge".into(),
                value: charge,
                fix: "a neutral carrier has no Landau levels; use a charge such as -1 or +1 (units of e)"
                    .into(),
            });
        }
        let mut m = self.clone();
        m.charge = charge;
        m.origin = self.origin.as_ref().map(|o| o.with_charge(charge));
        Ok(m)
    }
}

/// Builder for [`Model`]; [`ModelBuilder::build`] validates.
#[derive(Debug, Clone)]
pub struct ModelBuilder {
    model: Model,
}

impl ModelBuilder {
    /// Carrier charge in units of e, with sign (electron -1, hole or positron +1).
    pub fn charge(mut self, charge: f64) -> Self {
        self.model.charge = charge;
        self
    }
    /// Unit system of all coefficients.
    pub fn units(mut self, units: Units) -> Self {
        self.model.units = units;
        self
    }
    /// Record a named parameter (for reports and formulas).
    pub fn param(mut self, name: &str, value: f64) -> Self {
        self.model.params.insert(name.to_string(), value);
        self
    }
    /// Record the typed description the model is built from (see [`ModelOrigin`]).
    pub fn origin(mut self, origin: Arc<dyn ModelOrigin>) -> Self {
        self.model.origin = Some(origin);
        self
    }
    /// Add a term with a real coefficient.
    pub fn term(
        self,
        label: &str,
        coefficient: f64,
        matrix: SpinMatrix,
        monomial: Monomial,
    ) -> Self {
        self.term_complex(label, Complex64::new(coefficient, 0.0), matrix, monomial)
    }
    /// Add a term with a complex coefficient.
    pub fn term_complex(
        mut self,
        label: &str,
        coefficient: Complex64,
        matrix: SpinMatrix,
        monomial: Monomial,
    ) -> Self {
        self.model.terms.push(Term {
            coefficient,
            matrix,
            monomial,
            label: label.to_string(),
        });
        self
    }
    /// Klein-Gordon form (see [`SpectrumForm::KleinGordon`]).
    pub fn klein_gordon(mut self, rest_energy: f64) -> Self {
        self.model.form = SpectrumForm::KleinGordon { rest_energy };
        self
    }
    /// Suggested reference energy for reports (e.g. m c^2).
    pub fn reference_energy(mut self, e: f64) -> Self {
        self.model.reference_energy = e;
        self
    }
    /// Degeneracy factor not represented by components (spin, valley), >= 1.
    pub fn degeneracy(mut self, g: u32) -> Self {
        self.model.degeneracy = g;
        self
    }
    /// Names of the components, one per component.
    pub fn component_names(mut self, names: &[&str]) -> Self {
        self.model.component_names = names.iter().map(|s| s.to_string()).collect();
        self
    }

    /// Validate and return the model.
    ///
    /// # Errors
    /// [`Error::InvalidModel`] for a zero dimension, a term whose matrix is not d x d, an in-plane
    /// degree above [`MAX_INPLANE_DEGREE`], a field power above 1, non-finite numbers, zero
    /// charge or a component-name list of the wrong length; [`Error::NotHermitian`] naming the
    /// monomial and terms whose sum is not Hermitian.
    pub fn build(self) -> Result<Model> {
        let mut m = self.model;
        let d = m.dim;
        if d == 0 {
            return Err(Error::InvalidModel {
                what: "the model has 0 components".into(),
                fix: "give at least one component".into(),
            });
        }
        check_scalars(&m)?;
        if m.component_names.is_empty() {
            m.component_names = (0..d).map(|i| format!("c{i}")).collect();
        } else if m.component_names.len() != d {
            return Err(Error::InvalidModel {
                what: format!(
                    "{} component names for {d} components",
                    m.component_names.len()
                ),
                fix: "give one name per component".into(),
            });
        }
        check_terms(&m)?;
        check_hermitian(&m)?;
        Ok(m)
    }
}

/// The scalar checks of [`ModelBuilder::build`]: a finite non-zero charge, a finite reference
/// energy, a positive rest energy for the Klein-Gordon form, a non-zero degeneracy.
fn check_scalars(m: &Model) -> Result<()> {
    check_finite("charge", m.charge)?;
    if m.charge == 0.0 {
        return Err(Error::BadNumber {
            name: "charge".into(),
            value: 0.0,
            fix: "a neutral carrier has no Landau levels; use -1 (electron) or +1 (hole, positron)"
                .into(),
        });
    }
    check_finite("reference energy", m.reference_energy)?;
    if let SpectrumForm::KleinGordon { rest_energy } = m.form {
        if !(rest_energy.is_finite() && rest_energy > 0.0) {
            return Err(Error::BadNumber {
                name: "rest energy".into(),
                value: rest_energy,
                fix: "the Klein-Gordon form needs a positive finite m c^2".into(),
            });
        }
    }
    if m.degeneracy == 0 {
        return Err(Error::InvalidModel {
            what: "degeneracy 0".into(),
            fix: "use 1 unless spin or valley copies are not among the components".into(),
        });
    }
    Ok(())
}

/// The term checks of [`ModelBuilder::build`]: at least one term, each with a d x d matrix,
/// finite numbers, in-plane degree at most [`MAX_INPLANE_DEGREE`], at most linear in B.
fn check_terms(m: &Model) -> Result<()> {
    let d = m.dim;
    if m.terms.is_empty() {
        return Err(Error::InvalidModel {
            what: "the model has no terms".into(),
            fix: "add at least one term".into(),
        });
    }
    for t in &m.terms {
        if t.matrix.nrows() != d || t.matrix.ncols() != d {
            return Err(Error::InvalidModel {
                what: format!(
                    "term '{}' has a {}x{} matrix in a {d}-component model",
                    t.label,
                    t.matrix.nrows(),
                    t.matrix.ncols()
                ),
                fix: format!(
                    "give a {d}x{d} matrix (a Pauli string of {} factors)",
                    d.ilog2()
                ),
            });
        }
        if !(t.coefficient.re.is_finite() && t.coefficient.im.is_finite())
            || t.matrix
                .iter()
                .any(|z| !(z.re.is_finite() && z.im.is_finite()))
        {
            return Err(Error::InvalidModel {
                what: format!("term '{}' has a non-finite number", t.label),
                fix: "use finite coefficients and matrix entries".into(),
            });
        }
        if t.monomial.inplane_degree() > MAX_INPLANE_DEGREE {
            return Err(Error::InvalidModel {
                what: format!(
                    "term '{}' has in-plane degree {} ({})",
                    t.label,
                    t.monomial.inplane_degree(),
                    t.monomial
                ),
                fix: format!("keep kx + ky powers at or below {MAX_INPLANE_DEGREE}"),
            });
        }
        if t.monomial.field > 1 {
            return Err(Error::InvalidModel {
                what: format!("term '{}' has B^{}", t.label, t.monomial.field),
                fix: "terms may be at most linear in the field B".into(),
            });
        }
    }
    Ok(())
}

fn check_finite(name: &str, v: f64) -> Result<()> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(Error::BadNumber {
            name: name.into(),
            value: v,
            fix: "give a finite number".into(),
        })
    }
}

fn check_hermitian(m: &Model) -> Result<()> {
    let mut groups: BTreeMap<Monomial, (SpinMatrix, Vec<&str>)> = BTreeMap::new();
    for t in &m.terms {
        let e = groups
            .entry(t.monomial)
            .or_insert_with(|| (SpinMatrix::zeros(m.dim, m.dim), Vec::new()));
        e.0 += &t.matrix * t.coefficient;
        e.1.push(&t.label);
    }
    for (mono, (sum, labels)) in &groups {
        let scale = sum
            .iter()
            .map(|z| z.norm())
            .fold(0.0, f64::max)
            .max(f64::MIN_POSITIVE);
        for r in 0..m.dim {
            for c in 0..=r {
                let a = sum[(r, c)];
                let b = sum[(c, r)].conj();
                if (a - b).norm() > 1e-12 * scale {
                    return Err(Error::NotHermitian {
                        monomial: mono.to_string(),
                        terms: labels.join(", "),
                        row: r,
                        col: c,
                        a: format!("{a}"),
                        b: format!("{}", sum[(c, r)]),
                    });
                }
            }
        }
    }
    Ok(())
}
