//! Physical constants (CODATA 2018) and the two unit systems used at the edges.
//!
//! Inside, every constant is the SI value from CODATA 2018 (Tiesinga, Mohr, Newell & Taylor,
//! Rev. Mod. Phys. 93, 025010 (2021)). A [`Model`](crate::model::Model) is stored in one of two
//! unit systems ([`Units`]):
//!
//! * [`Units::Lab`]: energies in meV, lengths in nm (so `k` in 1/nm), magnetic field in tesla.
//! * [`Units::Natural`]: energies in m c^2, lengths in the reduced Compton wavelength hbar/(m c),
//!   magnetic field in units of the critical field B_c = m^2 c^2 / (e hbar) (≈ 4.414e9 T for the
//!   electron), so that hbar = c = m = e = 1.
//!
//! The only unit-dependent quantity the solver needs is the magnetic length
//! l_B = sqrt(hbar / |q B|), returned by [`Units::magnetic_length`] in the model's length unit.

/// Speed of light in vacuum, m/s (exact, CODATA 2018).
pub const SPEED_OF_LIGHT: f64 = 299_792_458.0;
/// Planck constant h, J s (exact, CODATA 2018).
pub const PLANCK: f64 = 6.626_070_15e-34;
/// Reduced Planck constant hbar = h / (2 pi), J s (exact in the 2019 SI; CODATA 2018 lists it
/// rounded as 1.054 571 817e-34). Derived here from h so that every derived constant is
/// consistent to the last bit (a rounded hbar would shift Landau energies by 6e-10 relative).
pub const HBAR: f64 = PLANCK / (2.0 * std::f64::consts::PI);
/// Elementary charge e, C (exact, CODATA 2018).
pub const ELEMENTARY_CHARGE: f64 = 1.602_176_634e-19;
/// Electron mass m_e, kg (CODATA 2018).
pub const ELECTRON_MASS: f64 = 9.109_383_701_5e-31;
/// Bohr magneton mu_B = e hbar / (2 m_e), J/T, derived from e, hbar and m_e so that
/// hbar omega_c = 2 mu_B B holds exactly for the free electron; CODATA 2018 lists
/// 9.274 010 078 3(28)e-24 J/T (checked in the tests).
pub const BOHR_MAGNETON: f64 = ELEMENTARY_CHARGE * HBAR / (2.0 * ELECTRON_MASS);
/// Electron g-factor, CODATA 2018 sign convention (negative: moment antiparallel to spin).
///
/// ladderfan's Zeeman terms are written `+(g/2) mu_B B sigma_z`; for a free electron in that
/// convention use `-ELECTRON_G_FACTOR` = +2.002 319 304 362 56.
pub const ELECTRON_G_FACTOR: f64 = -2.002_319_304_362_56;
/// One meV in joules.
pub const MEV: f64 = 1.602_176_634e-22;
/// One nm in metres.
pub const NM: f64 = 1e-9;

/// Bohr magneton in meV/T (derived from the CODATA 2018 SI values: 5.788 381 806 0e-2).
pub const BOHR_MAGNETON_MEV_PER_T: f64 = BOHR_MAGNETON / MEV;
/// hbar in meV s.
pub const HBAR_MEV_S: f64 = HBAR / MEV;
/// hbar c in meV nm (≈ 1.973 27e5 meV nm).
pub const HBAR_C_MEV_NM: f64 = HBAR * SPEED_OF_LIGHT / MEV / NM;
/// hbar^2 / (2 m_e) in meV nm^2 (≈ 38.0998 meV nm^2).
pub const HBAR2_OVER_2ME_MEV_NM2: f64 = HBAR * HBAR / (2.0 * ELECTRON_MASS) / MEV / (NM * NM);
/// Electron rest energy m_e c^2 in meV (≈ 5.109 989 5e8 meV).
pub const ELECTRON_REST_ENERGY_MEV: f64 = ELECTRON_MASS * SPEED_OF_LIGHT * SPEED_OF_LIGHT / MEV;
/// Critical (Schwinger) field of the electron, B_c = m_e^2 c^2 / (e hbar), in tesla (≈ 4.414e9 T).
pub const ELECTRON_CRITICAL_FIELD_T: f64 =
    ELECTRON_MASS * ELECTRON_MASS * SPEED_OF_LIGHT * SPEED_OF_LIGHT / (ELEMENTARY_CHARGE * HBAR);

/// hbar times a velocity given in m/s, in meV nm: the prefactor of a linear-in-k term.
///
/// # Formula
/// `hbar v` [meV nm] = `HBAR_MEV_S * v * 1e9`.
///
/// # Examples
/// ```
/// // graphene-like v = 1e6 m/s gives hbar v ≈ 658.2 meV nm
/// let hv = ladderfan::units::hbar_v_mev_nm(1.0e6);
/// assert!((hv - 658.2119).abs() < 1e-3);
/// ```
pub fn hbar_v_mev_nm(velocity_m_per_s: f64) -> f64 {
    HBAR_MEV_S * velocity_m_per_s / NM
}

/// The unit system of a model: what its numbers mean at the edges.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Units {
    /// Energies in meV, lengths in nm, wave numbers in 1/nm, field in tesla.
    Lab,
    /// Energies in m c^2, lengths in hbar/(m c), field in B_c = m^2 c^2/(e hbar); hbar = c = 1
    /// and the carrier charge is measured in units of e.
    Natural,
}

impl Units {
    /// The Bohr magneton in this unit system: meV/T for lab units; in natural units
    /// mu_B B = (1/2) (B/B_c) m c^2, so 0.5.
    pub fn bohr_magneton(self) -> f64 {
        match self {
            Units::Lab => BOHR_MAGNETON_MEV_PER_T,
            Units::Natural => 0.5,
        }
    }
    /// Magnetic length l_B = sqrt(hbar / |q B|) in the unit system's length unit.
    ///
    /// `charge` is the carrier charge in units of e (sign ignored here), `field` in the
    /// system's field unit (tesla, or B/B_c).
    ///
    /// # Formula
    /// Lab: l_B = sqrt(hbar / (|q| e |B|)) / 1 nm (25.656 nm at 1 T for |q| = e).
    /// Natural: l_B = 1 / sqrt(|q| |b|) in units of hbar/(m c), b = B/B_c.
    ///
    /// # Examples
    /// ```
    /// use ladderfan::units::Units;
    /// let l = Units::Lab.magnetic_length(1.0, -1.0);
    /// assert!((l - 25.6556).abs() < 1e-3);
    /// ```
    pub fn magnetic_length(self, field: f64, charge: f64) -> f64 {
        let qb = (charge * field).abs();
        match self {
            Units::Lab => (HBAR / (ELEMENTARY_CHARGE * qb)).sqrt() / NM,
            Units::Natural => 1.0 / qb.sqrt(),
        }
    }

    /// Name of the energy unit as printed in headers.
    pub fn energy_unit(self) -> &'static str {
        match self {
            Units::Lab => "meV",
            Units::Natural => "m c^2",
        }
    }

    /// Name of the length unit as printed in headers.
    pub fn length_unit(self) -> &'static str {
        match self {
            Units::Lab => "nm",
            Units::Natural => "hbar/(m c)",
        }
    }

    /// Name of the field unit as printed in headers.
    pub fn field_unit(self) -> &'static str {
        match self {
            Units::Lab => "T",
            Units::Natural => "B_c",
        }
    }

    /// Name of the wave-number unit (inverse length) as printed in headers.
    pub fn wavenumber_unit(self) -> &'static str {
        match self {
            Units::Lab => "1/nm",
            Units::Natural => "m c/hbar",
        }
    }

    /// One-line description for output headers, e.g. `energy meV, length nm, field T, kz 1/nm`.
    pub fn header(self) -> String {
        format!(
            "energy {}, length {}, field {}, kz {}",
            self.energy_unit(),
            self.length_unit(),
            self.field_unit(),
            self.wavenumber_unit()
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    #[test]
    fn derived_constants_match_codata_2018_listings() {
        // Listed values: CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)).
        assert!(rel(HBAR, 1.054_571_817e-34) < 1e-9);
        assert!(rel(BOHR_MAGNETON, 9.274_010_078_3e-24) < 1e-9);
        assert!(rel(BOHR_MAGNETON_MEV_PER_T, 5.788_381_806_0e-2) < 1e-9);
        assert!(rel(ELECTRON_REST_ENERGY_MEV, 0.510_998_950_00e9) < 1e-9);
        // e / m_e = 1.758 820 010 76e11 C/kg: the electron cyclotron frequency per tesla.
        assert!(rel(ELEMENTARY_CHARGE / ELECTRON_MASS, 1.758_820_010_76e11) < 1e-9);
        // hbar c = 197.326 980 4 MeV fm = 1.973 269 804e5 meV nm
        assert!(rel(HBAR_C_MEV_NM, 1.973_269_804e5) < 1e-9);
        // B_c = m^2 c^2/(e hbar) = 4.414e9 T (CODATA 2018 derived; common practice value)
        assert!(rel(ELECTRON_CRITICAL_FIELD_T, 4.414_005e9) < 1e-6);
    }

    #[test]
    fn magnetic_length_at_one_tesla() {
        // l_B = sqrt(hbar/(e B)) = 25.6556 nm at 1 T (CODATA 2018 constants; common practice value)
        assert!(rel(Units::Lab.magnetic_length(1.0, -1.0), 25.655_8) < 1e-4);
        assert!(rel(Units::Natural.magnetic_length(0.25, 1.0), 2.0) < 1e-15);
    }
}
