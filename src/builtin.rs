//! Built-in models with physical parameters. Each constructor documents its Hamiltonian, its
//! conventions and the closed form it is checked against (in [`crate::closed_form`]).
//!
//! Conventions shared by all: B is along +z and signed; the carrier charge q (units of e)
//! carries its sign; s = sign(qB) decides which in-plane combination lowers (see
//! [`crate::ladder`]). Zeeman-like terms are written `+(g/2) mu_B B sigma_z`, so a free
//! electron has g = +2.0023 here (CODATA's g_e = -2.0023 uses the opposite sign convention).

use crate::error::Result;
use crate::matrix::{identity, pauli_const};
use crate::model::{Model, ModelBuilder, Monomial};
use crate::units::{Units, BOHR_MAGNETON_MEV_PER_T, HBAR2_OVER_2ME_MEV_NM2};

/// Parameters of the effective-mass (Schrodinger) model, lab units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MassParams {
    /// Effective mass in units of the free electron mass (> 0).
    pub mass_ratio: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for MassParams {
    fn default() -> Self {
        MassParams {
            mass_ratio: 1.0,
            charge: -1.0,
        }
    }
}

/// Schrodinger (effective-mass) model, one component:
/// H = hbar^2 (kx^2 + ky^2 + kz^2) / (2 m*).
///
/// Levels: hbar omega_c (n + 1/2) + hbar^2 kz^2/(2 m*), omega_c = |qB|/m* (Landau 1930).
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass.
pub fn schrodinger(p: MassParams) -> Result<Model> {
    positive("mass_ratio", p.mass_ratio)?;
    let c = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio;
    let one = identity(1);
    Model::builder("schrodinger", 1)
        .charge(p.charge)
        .units(Units::Lab)
        .param("mass_ratio", p.mass_ratio)
        .term("hbar^2 kx^2/2m", c, one.clone(), Monomial::new(2, 0, 0))
        .term("hbar^2 ky^2/2m", c, one.clone(), Monomial::new(0, 2, 0))
        .term("hbar^2 kz^2/2m", c, one, Monomial::new(0, 0, 2))
        .degeneracy(2)
        .build()
}

/// Parameters of the Pauli model, lab units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PauliParams {
    /// Effective mass in units of the free electron mass.
    pub mass_ratio: f64,
    /// g-factor in the convention H_Z = +(g/2) mu_B B sigma_z (free electron: +2.0023).
    pub g_factor: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for PauliParams {
    fn default() -> Self {
        PauliParams {
            mass_ratio: 1.0,
            g_factor: 2.0,
            charge: -1.0,
        }
    }
}

/// Pauli model, two components (spin up, spin down along +z):
/// H = hbar^2 k^2/(2 m*) + (g/2) mu_B B sigma_z.
///
/// Levels: hbar omega_c (n + 1/2) + s (g/2) mu_B B + hbar^2 kz^2/(2 m*), s = ±1.
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass.
pub fn pauli(p: PauliParams) -> Result<Model> {
    positive("mass_ratio", p.mass_ratio)?;
    let c = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio;
    let i2 = identity(2);
    Model::builder("pauli", 2)
        .charge(p.charge)
        .units(Units::Lab)
        .param("mass_ratio", p.mass_ratio)
        .param("g", p.g_factor)
        .component_names(&["up", "down"])
        .term("hbar^2 kx^2/2m", c, i2.clone(), Monomial::new(2, 0, 0))
        .term("hbar^2 ky^2/2m", c, i2.clone(), Monomial::new(0, 2, 0))
        .term("hbar^2 kz^2/2m", c, i2, Monomial::new(0, 0, 2))
        .term(
            "zeeman",
            0.5 * p.g_factor * BOHR_MAGNETON_MEV_PER_T,
            pauli_const("z"),
            Monomial::B,
        )
        .build()
}

/// Parameters of the relativistic models, natural units (m c^2 = 1, hbar/(m c) = 1, B in B_c).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RelativisticParams {
    /// Rest energy m c^2 in units of the reference particle's m c^2 (1 for the electron).
    pub mass: f64,
    /// Speed of light (or Fermi velocity) in units of c.
    pub speed: f64,
    /// Carrier charge in units of e, signed (electron -1, positron +1).
    pub charge: f64,
}

impl Default for RelativisticParams {
    fn default() -> Self {
        RelativisticParams {
            mass: 1.0,
            speed: 1.0,
            charge: -1.0,
        }
    }
}

/// 3+1 Dirac model, four components in the Dirac (standard) representation, natural units:
/// H = c alpha . (hbar k) + beta m c^2, alpha_i = sigma_x ⊗ sigma_i, beta = sigma_z ⊗ 1.
/// Components: (upper spin up, upper spin down, lower spin up, lower spin down).
///
/// Levels (Rabi 1928; Johnson & Lippmann, Phys. Rev. 76, 828 (1949)):
/// E = ± sqrt(m^2c^4 + c^2 hbar^2 kz^2 + 2 nu hbar c^2 |qB|), nu = 0, 1, 2, ...; nu = 0 once,
/// nu >= 1 twice (spin). The reference energy is m c^2.
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass or speed.
pub fn dirac(p: RelativisticParams) -> Result<Model> {
    dirac_builder("dirac", p)?.build()
}

/// The 3+1 Dirac terms c alpha . hbar k + beta m c^2 (natural units, Dirac representation) on a
/// builder named `name`, validated; shared by [`dirac`] and the catalogue's variants, which add
/// their own terms.
pub(crate) fn dirac_builder(name: &str, p: RelativisticParams) -> Result<ModelBuilder> {
    positive("mass", p.mass)?;
    positive("speed", p.speed)?;
    let mc2 = p.mass * p.speed * p.speed;
    Ok(Model::builder(name, 4)
        .charge(p.charge)
        .units(Units::Natural)
        .param("mass", p.mass)
        .param("speed", p.speed)
        .component_names(&["u_up", "u_down", "l_up", "l_down"])
        .term("c alpha_x kx", p.speed, pauli_const("x⊗x"), Monomial::KX)
        .term("c alpha_y ky", p.speed, pauli_const("x⊗y"), Monomial::KY)
        .term("c alpha_z kz", p.speed, pauli_const("x⊗z"), Monomial::KZ)
        .term("beta m c^2", mc2, pauli_const("z⊗0"), Monomial::ONE)
        .reference_energy(mc2))
}

/// Klein-Gordon model in its squared form, one component, natural units.
///
/// The assembled operator is the Schrodinger-like O = c^2 (pi^2 + hbar^2 kz^2)/(2 m c^2) and the
/// energies are E = ± sqrt((m c^2)^2 + 2 m c^2 λ) for each eigenvalue λ of O (see
/// [`crate::model::SpectrumForm::KleinGordon`]), i.e. E^2 = m^2c^4 + c^2 hbar^2 kz^2 +
/// (2n + 1) hbar c^2 |qB|. The reference energy is m c^2.
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive mass or speed.
pub fn klein_gordon(p: RelativisticParams) -> Result<Model> {
    positive("mass", p.mass)?;
    positive("speed", p.speed)?;
    let mc2 = p.mass * p.speed * p.speed;
    let c = p.speed * p.speed / (2.0 * mc2);
    let one = identity(1);
    Model::builder("klein-gordon", 1)
        .charge(p.charge)
        .units(Units::Natural)
        .param("mass", p.mass)
        .param("speed", p.speed)
        .term("c^2 kx^2/2mc^2", c, one.clone(), Monomial::new(2, 0, 0))
        .term("c^2 ky^2/2mc^2", c, one.clone(), Monomial::new(0, 2, 0))
        .term("c^2 kz^2/2mc^2", c, one, Monomial::new(0, 0, 2))
        .klein_gordon(mc2)
        .reference_energy(mc2)
        .build()
}

/// Parameters of the 2D massive Dirac model, lab units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Dirac2dParams {
    /// Velocity in m/s.
    pub velocity_m_per_s: f64,
    /// Mass term Delta in meV (the gap is 2 |Delta|).
    pub mass_mev: f64,
    /// Valley index tau = +1 or -1 (flips the sign of the kx term).
    pub valley: i8,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for Dirac2dParams {
    fn default() -> Self {
        Dirac2dParams {
            velocity_m_per_s: 1.0e6,
            mass_mev: 0.0,
            valley: 1,
            charge: -1.0,
        }
    }
}

/// 2D massive Dirac model, two components (sublattice A, B), lab units:
/// H = hbar v (tau kx sigma_x + ky sigma_y) + Delta sigma_z.
///
/// Levels (McClure, Phys. Rev. 104, 666 (1956) for Delta = 0): n >= 1:
/// E = ± sqrt(Delta^2 + 2 n hbar^2 v^2 / l_B^2); the unpaired n = 0 level sits at
/// E_0 = tau sign(qB) Delta.
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive velocity or a valley other than ±1.
pub fn dirac2d(p: Dirac2dParams) -> Result<Model> {
    positive("velocity_m_per_s", p.velocity_m_per_s)?;
    unit_sign("valley", p.valley)?;
    let hv = crate::units::hbar_v_mev_nm(p.velocity_m_per_s);
    Model::builder("dirac2d", 2)
        .charge(p.charge)
        .units(Units::Lab)
        .param("velocity", p.velocity_m_per_s)
        .param("mass", p.mass_mev)
        .param("valley", p.valley as f64)
        .component_names(&["A", "B"])
        .term(
            "hbar v tau kx sigma_x",
            hv * p.valley as f64,
            pauli_const("x"),
            Monomial::KX,
        )
        .term("hbar v ky sigma_y", hv, pauli_const("y"), Monomial::KY)
        .term("mass sigma_z", p.mass_mev, pauli_const("z"), Monomial::ONE)
        .degeneracy(2)
        .build()
}

/// Parameters of a 3D Weyl node, lab units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WeylParams {
    /// Velocity in m/s.
    pub velocity_m_per_s: f64,
    /// Chirality chi = +1 or -1.
    pub chirality: i8,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for WeylParams {
    fn default() -> Self {
        WeylParams {
            velocity_m_per_s: 3.0e5,
            chirality: 1,
            charge: -1.0,
        }
    }
}

/// 3D Weyl node, two components, lab units: H = chi hbar v (k . sigma).
///
/// Levels: n >= 1: E = ± hbar v sqrt(kz^2 + 2n / l_B^2); the chiral n = 0 level is
/// E_0 = chi sign(qB) hbar v kz (Nielsen & Ninomiya, Phys. Lett. B 130, 389 (1983)).
///
/// # Errors
/// [`crate::Error::BadNumber`] for a non-positive velocity or a chirality other than ±1.
pub fn weyl(p: WeylParams) -> Result<Model> {
    positive("velocity_m_per_s", p.velocity_m_per_s)?;
    unit_sign("chirality", p.chirality)?;
    let hv = crate::units::hbar_v_mev_nm(p.velocity_m_per_s) * p.chirality as f64;
    Model::builder("weyl", 2)
        .charge(p.charge)
        .units(Units::Lab)
        .param("velocity", p.velocity_m_per_s)
        .param("chirality", p.chirality as f64)
        .component_names(&["up", "down"])
        .term("chi hbar v kx sigma_x", hv, pauli_const("x"), Monomial::KX)
        .term("chi hbar v ky sigma_y", hv, pauli_const("y"), Monomial::KY)
        .term("chi hbar v kz sigma_z", hv, pauli_const("z"), Monomial::KZ)
        .build()
}

/// The Bohr magneton in the model's units: meV/T for lab units; in natural units
/// mu_B B = (1/2) (B/B_c) m c^2, so 0.5.
pub fn bohr_magneton(units: Units) -> f64 {
    match units {
        Units::Lab => BOHR_MAGNETON_MEV_PER_T,
        Units::Natural => 0.5,
    }
}

/// Parameter check shared by the model constructors: positive and finite.
pub(crate) fn positive(name: &str, v: f64) -> Result<()> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(crate::Error::BadNumber {
            name: name.into(),
            value: v,
            fix: "it must be a positive finite number".into(),
        })
    }
}

/// Parameter check shared by the model constructors: finite.
pub(crate) fn finite(name: &str, v: f64) -> Result<()> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(crate::Error::BadNumber {
            name: name.into(),
            value: v,
            fix: "it must be a finite number".into(),
        })
    }
}

/// Parameter check shared by the model constructors: a sign +1 or -1 (valley, chirality).
pub(crate) fn unit_sign(name: &str, v: i8) -> Result<()> {
    if v == 1 || v == -1 {
        Ok(())
    } else {
        Err(crate::Error::BadNumber {
            name: name.into(),
            value: v as f64,
            fix: "it must be +1 or -1".into(),
        })
    }
}
