//! The wider model catalogue: models beyond [`crate::builtin`] whose Landau levels have a
//! published closed form (evaluated in [`crate::closed_form`], which dispatches on the model
//! names given here).
//!
//! Same conventions as [`crate::builtin`]: B along +z and signed, the charge q (units of e)
//! carries its sign, s = sign(qB), Zeeman-like terms `+(g/2) mu_B B sigma_z`. Default parameter
//! values are invented (illustrative, not fitted to any material).

use crate::builtin::bohr_magneton;
use crate::error::{Error, Result};
use crate::matrix::{identity, pauli_const};
use crate::model::{Model, Monomial};
use crate::units::{hbar_v_mev_nm, Units, HBAR2_OVER_2ME_MEV_NM2};

use crate::builtin::{dirac_builder, finite, positive, unit_sign, RelativisticParams};

/// Parameters of the 3+1 Dirac model with an anomalous magnetic moment, natural units
/// (m c^2 = 1, hbar/(m c) = 1, B in B_c).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DiracAmmParams {
    /// Rest energy m c^2 in units of the reference particle's m c^2.
    pub mass: f64,
    /// Speed of light in units of c.
    pub speed: f64,
    /// Anomalous moment in Bohr magnetons: mu' = kappa mu_B (electron: a_e ≈ 1.16e-3).
    pub anomaly_kappa: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for DiracAmmParams {
    /// Invented illustration: a strongly enhanced anomaly kappa = 0.05 so that the splitting is
    /// visible, electron mass and charge.
    fn default() -> Self {
        DiracAmmParams {
            mass: 1.0,
            speed: 1.0,
            anomaly_kappa: 0.05,
            charge: -1.0,
        }
    }
}

/// 3+1 Dirac model with an anomalous magnetic moment (Pauli term), natural units, name
/// `dirac-amm`: H = c alpha . (hbar k) + beta m c^2 + kappa mu_B B beta Sigma_z, with the
/// matrices of [`crate::builtin::dirac`] and beta Sigma_z = sigma_z ⊗ sigma_z; mu_B = 1/2 in
/// natural units (see [`bohr_magneton`]). Reference energy m c^2.
///
/// Sign convention: for q = -1 and kappa > 0 the non-relativistic limit of the upper
/// components has the Zeeman term +(1 + kappa) mu_B B sigma_z, i.e. g = 2 (1 + kappa) in the
/// crate's `+(g/2) mu_B B sigma_z` convention: kappa = a_e for the physical electron.
/// Levels in [`crate::closed_form::dirac_amm`].
///
/// # Errors
/// [`Error::BadNumber`] for a non-positive mass or speed or a non-finite kappa.
pub fn dirac_amm(p: DiracAmmParams) -> Result<Model> {
    finite("anomaly_kappa", p.anomaly_kappa)?;
    let base = RelativisticParams {
        mass: p.mass,
        speed: p.speed,
        charge: p.charge,
    };
    dirac_builder("dirac-amm", base)?
        .param("kappa", p.anomaly_kappa)
        .term(
            "kappa mu_B B beta Sigma_z",
            p.anomaly_kappa * bohr_magneton(Units::Natural),
            pauli_const("z⊗z"),
            Monomial::B,
        )
        .build()
}

/// Parameters of the tilted 2D Dirac cone, lab units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TiltedDiracParams {
    /// Cone velocity v in m/s.
    pub velocity_m_per_s: f64,
    /// Tilt velocity w in m/s along x (|w| < v).
    pub tilt_velocity_m_per_s: f64,
    /// Valley index tau = ±1 (sign of the kx sigma_x term).
    pub valley: i8,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for TiltedDiracParams {
    /// Invented illustration: v = 1e5 m/s, w = 0.4 v.
    fn default() -> Self {
        TiltedDiracParams {
            velocity_m_per_s: 1.0e5,
            tilt_velocity_m_per_s: 0.4e5,
            valley: 1,
            charge: -1.0,
        }
    }
}

/// Tilted massless 2D Dirac cone, name `tilted-dirac2d`, lab units:
/// H = hbar w kx + hbar v (tau kx sigma_x + ky sigma_y), tilt along x, beta = w/v, |beta| < 1.
///
/// The tilt term couples orbitals n and n ± 1 of the same component, so no J = n + s_alpha is
/// conserved: the whole basis is one sector. Levels in
/// [`crate::closed_form::tilted_dirac2d`] (scaled by (1 - beta^2)^(3/4)).
///
/// # Errors
/// [`Error::BadNumber`] for a non-positive velocity, |w| >= v, or a valley other than ±1.
///
/// # Examples
/// ```
/// use ladderfan::{catalogue, closed_form, FieldPoint};
/// let m = catalogue::tilted_dirac2d(catalogue::TiltedDiracParams::default())?; // beta = 0.4
/// let l = closed_form::for_model(&m, FieldPoint::field(1.0), 0.0, 1).unwrap();
/// let untilted = closed_form::dirac_energy_mev(1.0e5, 1.0, -1.0);
/// assert!((l[2].energy / untilted - 0.84f64.powf(0.75)).abs() < 1e-14);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn tilted_dirac2d(p: TiltedDiracParams) -> Result<Model> {
    positive("velocity_m_per_s", p.velocity_m_per_s)?;
    finite("tilt_velocity_m_per_s", p.tilt_velocity_m_per_s)?;
    unit_sign("valley", p.valley)?;
    if p.tilt_velocity_m_per_s.abs() >= p.velocity_m_per_s {
        return Err(Error::BadNumber {
            name: "tilt_velocity_m_per_s".into(),
            value: p.tilt_velocity_m_per_s,
            fix: format!(
                "an overtilted cone (|w| >= v = {}) has no Landau levels; use |w| < v",
                p.velocity_m_per_s
            ),
        });
    }
    let hv = hbar_v_mev_nm(p.velocity_m_per_s);
    let hw = hbar_v_mev_nm(p.tilt_velocity_m_per_s);
    Model::builder("tilted-dirac2d", 2)
        .charge(p.charge)
        .units(Units::Lab)
        .param("velocity", p.velocity_m_per_s)
        .param("tilt_velocity", p.tilt_velocity_m_per_s)
        .param("valley", p.valley as f64)
        .component_names(&["A", "B"])
        .term("hbar w kx", hw, identity(2), Monomial::KX)
        .term(
            "hbar v tau kx sigma_x",
            hv * p.valley as f64,
            pauli_const("x"),
            Monomial::KX,
        )
        .term("hbar v ky sigma_y", hv, pauli_const("y"), Monomial::KY)
        .degeneracy(2)
        .build()
}

/// Parameters of the Rashba 2DEG, lab units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RashbaParams {
    /// Effective mass in units of the free electron mass.
    pub mass_ratio: f64,
    /// Rashba coefficient alpha in meV nm.
    pub rashba_mev_nm: f64,
    /// g-factor in the convention H_Z = +(g/2) mu_B B sigma_z.
    pub g_factor: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for RashbaParams {
    /// Invented illustration: m* = 0.05 m_e, alpha = 20 meV nm, g = -8.
    fn default() -> Self {
        RashbaParams {
            mass_ratio: 0.05,
            rashba_mev_nm: 20.0,
            g_factor: -8.0,
            charge: -1.0,
        }
    }
}

/// Rashba 2DEG with Zeeman term, name `rashba`, lab units, components (up, down):
/// H = hbar^2 k^2 / 2m* + alpha (ky sigma_x - kx sigma_y) + (g/2) mu_B B sigma_z.
///
/// Levels in [`crate::closed_form::rashba`] (Bychkov & Rashba 1984).
///
/// # Errors
/// [`Error::BadNumber`] for a non-positive mass or a non-finite alpha or g.
pub fn rashba(p: RashbaParams) -> Result<Model> {
    positive("mass_ratio", p.mass_ratio)?;
    finite("rashba_mev_nm", p.rashba_mev_nm)?;
    finite("g_factor", p.g_factor)?;
    let c = HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio;
    let i2 = identity(2);
    Model::builder("rashba", 2)
        .charge(p.charge)
        .units(Units::Lab)
        .param("mass_ratio", p.mass_ratio)
        .param("alpha", p.rashba_mev_nm)
        .param("g", p.g_factor)
        .component_names(&["up", "down"])
        .term("hbar^2 kx^2/2m", c, i2.clone(), Monomial::new(2, 0, 0))
        .term("hbar^2 ky^2/2m", c, i2, Monomial::new(0, 2, 0))
        .term(
            "alpha ky sigma_x",
            p.rashba_mev_nm,
            pauli_const("x"),
            Monomial::KY,
        )
        .term(
            "-alpha kx sigma_y",
            -p.rashba_mev_nm,
            pauli_const("y"),
            Monomial::KX,
        )
        .term(
            "zeeman",
            0.5 * p.g_factor * bohr_magneton(Units::Lab),
            pauli_const("z"),
            Monomial::B,
        )
        .build()
}

/// Parameters of the bilayer two-band model, lab units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BilayerParams {
    /// Effective mass m in units of the free electron mass.
    pub mass_ratio: f64,
    /// Valley index tau = ±1.
    pub valley: i8,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for BilayerParams {
    /// Invented illustration: m = 0.035 m_e, valley +1, electron charge.
    fn default() -> Self {
        BilayerParams {
            mass_ratio: 0.035,
            valley: 1,
            charge: -1.0,
        }
    }
}

/// Bilayer two-band model with quadratic off-diagonal terms, name `bilayer`, lab units,
/// components (A1, B2):
/// H = -(hbar^2 / 2m) [[0, (kx - i tau ky)^2], [(kx + i tau ky)^2, 0]]
///   = -(hbar^2 / 2m) [(kx^2 - ky^2) sigma_x + 2 tau kx ky sigma_y] (kx ky Weyl-ordered).
///
/// Levels in [`crate::closed_form::bilayer`] (McCann & Fal'ko 2006). Declared degeneracy 2
/// (spin).
///
/// # Errors
/// [`Error::BadNumber`] for a non-positive mass or a valley other than ±1.
pub fn bilayer(p: BilayerParams) -> Result<Model> {
    positive("mass_ratio", p.mass_ratio)?;
    unit_sign("valley", p.valley)?;
    let c = -HBAR2_OVER_2ME_MEV_NM2 / p.mass_ratio;
    Model::builder("bilayer", 2)
        .charge(p.charge)
        .units(Units::Lab)
        .param("mass_ratio", p.mass_ratio)
        .param("valley", p.valley as f64)
        .component_names(&["A1", "B2"])
        .term(
            "-hbar^2 kx^2/2m sigma_x",
            c,
            pauli_const("x"),
            Monomial::new(2, 0, 0),
        )
        .term(
            "+hbar^2 ky^2/2m sigma_x",
            -c,
            pauli_const("x"),
            Monomial::new(0, 2, 0),
        )
        .term(
            "-tau hbar^2 kx ky/m sigma_y",
            2.0 * c * p.valley as f64,
            pauli_const("y"),
            Monomial::new(1, 1, 0),
        )
        .degeneracy(2)
        .build()
}

/// Parameters of the four-band BHZ model, lab units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BhzParams {
    /// A in meV nm (linear coupling).
    pub a_mev_nm: f64,
    /// B in meV nm^2 (band-diagonal curvature of the mass term).
    pub b_mev_nm2: f64,
    /// C in meV (energy offset).
    pub c_mev: f64,
    /// D in meV nm^2 (particle-hole asymmetric curvature).
    pub d_mev_nm2: f64,
    /// M in meV (mass; M B > 0 is the inverted, quantum-spin-Hall regime).
    pub m_mev: f64,
    /// g-factor of the E1 band (Zeeman (g_E/2) mu_B B, sign flipped in the down block).
    pub g_e: f64,
    /// g-factor of the H1 band.
    pub g_h: f64,
    /// Carrier charge in units of e, signed.
    pub charge: f64,
}

impl Default for BhzParams {
    /// Invented illustration of an inverted well: A = 365 meV nm, B = -700 meV nm^2, C = 0,
    /// D = -500 meV nm^2, M = -10 meV, g_E = 20, g_H = 2.
    fn default() -> Self {
        BhzParams {
            a_mev_nm: 365.0,
            b_mev_nm2: -700.0,
            c_mev: 0.0,
            d_mev_nm2: -500.0,
            m_mev: -10.0,
            g_e: 20.0,
            g_h: 2.0,
            charge: -1.0,
        }
    }
}

/// Four-band BHZ model, name `bhz`, lab units, components (E1 up, H1 up, E1 down, H1 down):
/// H = diag(h(k), h*(-k)) + (mu_B B / 2) diag(g_E, g_H, -g_E, -g_H), with
/// h(k) = C - D k^2 + A (kx sigma_x - ky sigma_y) + (M - B k^2) sigma_z,
/// h*(-k) = C - D k^2 - A (kx sigma_x + ky sigma_y) + (M - B k^2) sigma_z.
///
/// As Pauli strings (spin block ⊗ orbital): C 0⊗0, -D k^2 0⊗0, (M - B k^2) 0⊗z, A kx z⊗x,
/// -A ky 0⊗y, Zeeman (mu_B B/2)(g_E z⊗u + g_H z⊗d).
/// Levels in [`crate::closed_form::bhz`].
///
/// # Errors
/// [`Error::BadNumber`] for a non-finite parameter.
///
/// # References
/// B. A. Bernevig, T. L. Hughes & S.-C. Zhang, Science 314, 1757 (2006).
pub fn bhz(p: BhzParams) -> Result<Model> {
    for (name, v) in [
        ("a_mev_nm", p.a_mev_nm),
        ("b_mev_nm2", p.b_mev_nm2),
        ("c_mev", p.c_mev),
        ("d_mev_nm2", p.d_mev_nm2),
        ("m_mev", p.m_mev),
        ("g_e", p.g_e),
        ("g_h", p.g_h),
    ] {
        finite(name, v)?;
    }
    let mu = 0.5 * bohr_magneton(Units::Lab);
    let i4 = identity(4);
    let oz = pauli_const("0⊗z");
    Model::builder("bhz", 4)
        .charge(p.charge)
        .units(Units::Lab)
        .param("A", p.a_mev_nm)
        .param("B", p.b_mev_nm2)
        .param("C", p.c_mev)
        .param("D", p.d_mev_nm2)
        .param("M", p.m_mev)
        .param("g_E", p.g_e)
        .param("g_H", p.g_h)
        .component_names(&["E1_up", "H1_up", "E1_down", "H1_down"])
        .term("C", p.c_mev, i4.clone(), Monomial::ONE)
        .term("-D kx^2", -p.d_mev_nm2, i4.clone(), Monomial::new(2, 0, 0))
        .term("-D ky^2", -p.d_mev_nm2, i4, Monomial::new(0, 2, 0))
        .term("M sigma_z", p.m_mev, oz.clone(), Monomial::ONE)
        .term(
            "-B kx^2 sigma_z",
            -p.b_mev_nm2,
            oz.clone(),
            Monomial::new(2, 0, 0),
        )
        .term("-B ky^2 sigma_z", -p.b_mev_nm2, oz, Monomial::new(0, 2, 0))
        .term(
            "A kx tau_z sigma_x",
            p.a_mev_nm,
            pauli_const("z⊗x"),
            Monomial::KX,
        )
        .term(
            "-A ky sigma_y",
            -p.a_mev_nm,
            pauli_const("0⊗y"),
            Monomial::KY,
        )
        .term("zeeman E1", mu * p.g_e, pauli_const("z⊗u"), Monomial::B)
        .term("zeeman H1", mu * p.g_h, pauli_const("z⊗d"), Monomial::B)
        .build()
}
