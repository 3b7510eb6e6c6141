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

/// Boltzmann constant k_B, J/K (exact, CODATA 2018).
pub const BOLTZMANN: f64 = 1.380_649e-23;

/// An energy unit of the output edge (`--energy-unit`): every energy a command prints or
/// writes is multiplied by [`OutputUnits::energy_factor`] and carries this unit's name.
///
/// Natural-unit models measure energies in m c^2 with m the electron mass (the same choice
/// that makes B_c = 4.414e9 T): they may be shown in any lab unit, while a lab model cannot
/// be shown in m c^2 (its numbers are not tied to a rest mass).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum EnergyUnit {
    /// Millielectronvolt (the lab models' native unit).
    #[serde(rename = "meV")]
    MilliElectronVolt,
    /// Electronvolt.
    #[serde(rename = "eV")]
    ElectronVolt,
    /// Kelvin: E / k_B.
    #[serde(rename = "K")]
    Kelvin,
    /// Wave number in cm^-1: E / (h c).
    #[serde(rename = "cm-1")]
    InverseCentimetre,
    /// Terahertz: E / h.
    #[serde(rename = "THz")]
    Terahertz,
    /// Rest energy m c^2 of the electron (the natural-unit models' native unit).
    #[serde(rename = "mc2")]
    RestEnergy,
}

impl EnergyUnit {
    /// Every unit, in the order `--help` lists them.
    pub const ALL: [EnergyUnit; 6] = [
        EnergyUnit::MilliElectronVolt,
        EnergyUnit::ElectronVolt,
        EnergyUnit::Kelvin,
        EnergyUnit::InverseCentimetre,
        EnergyUnit::Terahertz,
        EnergyUnit::RestEnergy,
    ];

    /// The native energy unit of a unit system: meV (lab) or m c^2 (natural).
    pub fn native(units: Units) -> Self {
        match units {
            Units::Lab => EnergyUnit::MilliElectronVolt,
            Units::Natural => EnergyUnit::RestEnergy,
        }
    }

    /// The spelling on the command line (`--energy-unit`): `meV`, `eV`, `K`, `cm-1`, `THz`, `mc2`.
    pub fn flag(self) -> &'static str {
        match self {
            EnergyUnit::MilliElectronVolt => "meV",
            EnergyUnit::ElectronVolt => "eV",
            EnergyUnit::Kelvin => "K",
            EnergyUnit::InverseCentimetre => "cm-1",
            EnergyUnit::Terahertz => "THz",
            EnergyUnit::RestEnergy => "mc2",
        }
    }

    /// The suffix of column and key names (`energy_<suffix>`), spelled so that numpy's name
    /// sanitising keeps it: `meV`, `eV`, `K`, `invcm`, `THz`, `mc2`. The one place a column's
    /// energy unit is spelled.
    pub fn suffix(self) -> &'static str {
        match self {
            EnergyUnit::InverseCentimetre => "invcm",
            other => other.flag(),
        }
    }

    /// The unit as printed in table headers and plot axes: `meV`, `eV`, `K`, `cm^-1`, `THz`,
    /// `m c^2`.
    pub fn label(self) -> &'static str {
        match self {
            EnergyUnit::InverseCentimetre => "cm^-1",
            EnergyUnit::RestEnergy => "m c^2",
            other => other.flag(),
        }
    }

    /// The unit named by `text` (as [`EnergyUnit::flag`], also `cm^-1`, `invcm`, `m c^2`;
    /// case matters only between `meV` and `MeV`, which is refused).
    pub fn parse(text: &str) -> Option<Self> {
        let t = text.trim();
        match t {
            "meV" => Some(EnergyUnit::MilliElectronVolt),
            "eV" | "ev" => Some(EnergyUnit::ElectronVolt),
            "K" | "k" => Some(EnergyUnit::Kelvin),
            "cm-1" | "cm^-1" | "invcm" | "1/cm" => Some(EnergyUnit::InverseCentimetre),
            "THz" | "thz" => Some(EnergyUnit::Terahertz),
            "mc2" | "m c^2" | "mc^2" => Some(EnergyUnit::RestEnergy),
            _ => None,
        }
    }

    /// One of this unit in meV.
    ///
    /// # Formula
    /// eV: 1e3; K: k_B / (1 meV) = 8.617 333 e-2; cm^-1: h c (100 /m) / (1 meV) =
    /// 0.123 984 198; THz: h (1e12 /s) / (1 meV) = 4.135 667 7; m c^2: m_e c^2 = 5.109 989 5e8
    /// (all from the exact CODATA 2018 values of e, h, k_B, c and m_e).
    pub fn in_mev(self) -> f64 {
        match self {
            EnergyUnit::MilliElectronVolt => 1.0,
            EnergyUnit::ElectronVolt => 1e3,
            EnergyUnit::Kelvin => BOLTZMANN / MEV,
            EnergyUnit::InverseCentimetre => PLANCK * SPEED_OF_LIGHT * 100.0 / MEV,
            EnergyUnit::Terahertz => PLANCK * 1e12 / MEV,
            EnergyUnit::RestEnergy => ELECTRON_REST_ENERGY_MEV,
        }
    }
}

/// A field unit of the edges: `--field-unit` for output, the suffix of a field flag's value
/// for input (`--field 1T`, `--field 2.2e-10Bc`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum FieldUnit {
    /// Tesla (the lab models' native unit).
    #[serde(rename = "T")]
    Tesla,
    /// The electron's critical field B_c = m_e^2 c^2 / (e hbar) = 4.414e9 T (the natural
    /// models' native unit).
    #[serde(rename = "Bc")]
    Critical,
}

impl FieldUnit {
    /// The native field unit of a unit system: T (lab) or B_c (natural).
    pub fn native(units: Units) -> Self {
        match units {
            Units::Lab => FieldUnit::Tesla,
            Units::Natural => FieldUnit::Critical,
        }
    }

    /// The suffix of column names and flag values: `T` or `Bc`.
    pub fn suffix(self) -> &'static str {
        match self {
            FieldUnit::Tesla => "T",
            FieldUnit::Critical => "Bc",
        }
    }

    /// The unit as printed in headers and axes: `T` or `B_c`.
    pub fn label(self) -> &'static str {
        match self {
            FieldUnit::Tesla => "T",
            FieldUnit::Critical => "B_c",
        }
    }

    /// The unit named by `text`: `T`, `Bc` or `B_c`.
    pub fn parse(text: &str) -> Option<Self> {
        match text.trim() {
            "T" => Some(FieldUnit::Tesla),
            "Bc" | "B_c" => Some(FieldUnit::Critical),
            _ => None,
        }
    }

    /// One of this unit in tesla: 1, or B_c = 4.414 005e9 ([`ELECTRON_CRITICAL_FIELD_T`]).
    pub fn in_tesla(self) -> f64 {
        match self {
            FieldUnit::Tesla => 1.0,
            FieldUnit::Critical => ELECTRON_CRITICAL_FIELD_T,
        }
    }

    /// The factor that turns a value in `self` into the same field in `to`.
    pub fn factor_to(self, to: FieldUnit) -> f64 {
        if self == to {
            1.0
        } else {
            self.in_tesla() / to.in_tesla()
        }
    }
}

/// A field as typed in a flag: a number with an optional unit suffix (`1T`, `2.2e-10Bc`,
/// `5`); a plain number is in the model's own field unit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FieldValue {
    /// The number as typed.
    pub value: f64,
    /// The unit suffix, if one was typed.
    pub unit: Option<FieldUnit>,
}

impl FieldValue {
    /// Parse `1T`, `1 T`, `-2.2e-10Bc`, `0.5B_c` or a plain number.
    ///
    /// # Errors
    /// A message naming the accepted suffixes for an unknown suffix, or saying that the
    /// number is missing.
    pub fn parse(text: &str) -> std::result::Result<Self, String> {
        let t = text.trim();
        if let Ok(value) = t.parse::<f64>() {
            return Ok(FieldValue { value, unit: None });
        }
        let cut = t
            .char_indices()
            .rev()
            .take_while(|(_, c)| c.is_ascii_alphabetic() || *c == '_')
            .last()
            .map(|(i, _)| i)
            .unwrap_or(t.len());
        // an exponent such as 1e5 is part of the number: suffixes start with T or B
        let (num, suffix) = t.split_at(cut);
        let num = num.trim();
        if suffix.is_empty() || num.is_empty() {
            return Err(format!(
                "'{t}' is not a field; write a number in the model's field unit, or with T \
                 (tesla) or Bc (B_c = 4.414e9 T), e.g. 5, 1T or 2.2e-10Bc"
            ));
        }
        let Some(unit) = FieldUnit::parse(suffix) else {
            return Err(format!(
                "'{t}' has the unknown field unit '{suffix}'; write a number in the model's field \
                 unit, or add T (tesla) or Bc (B_c = 4.414e9 T), e.g. 1T or 2.2e-10Bc"
            ));
        };
        match num.parse::<f64>() {
            Ok(value) => Ok(FieldValue {
                value,
                unit: Some(unit),
            }),
            Err(_) => Err(format!(
                "'{t}' is not a number followed by a field unit; write e.g. 1T or 2.2e-10Bc"
            )),
        }
    }

    /// The value in the native field unit of `units` (tesla for lab, B/B_c for natural).
    pub fn in_units(self, units: Units) -> f64 {
        let native = FieldUnit::native(units);
        match self.unit {
            None => self.value,
            Some(u) => self.value * u.factor_to(native),
        }
    }
}

/// The units of the output edge: energies and fields as the user asked to see them. Every
/// number the library computes is in the model's units ([`Units`]); a front end multiplies
/// energies by [`OutputUnits::energy_factor`] and fields by [`OutputUnits::field_factor`]
/// just before printing, and names the columns with [`OutputUnits::energy_column`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub struct OutputUnits {
    /// The model's unit system.
    pub system: Units,
    /// Energy unit of the output.
    pub energy: EnergyUnit,
    /// Field unit of the output.
    pub field: FieldUnit,
}

impl OutputUnits {
    /// The model's own units (no conversion).
    pub fn native(system: Units) -> Self {
        OutputUnits {
            system,
            energy: EnergyUnit::native(system),
            field: FieldUnit::native(system),
        }
    }

    /// The output units `energy` and `field` (the native ones where `None`) for a model in
    /// `system`.
    ///
    /// # Errors
    /// [`crate::Error::Parse`] at `--energy-unit` for m c^2 with a lab model (its energies are
    /// not tied to a rest mass).
    pub fn new(
        system: Units,
        energy: Option<EnergyUnit>,
        field: Option<FieldUnit>,
    ) -> crate::Result<Self> {
        let energy = energy.unwrap_or(EnergyUnit::native(system));
        if system == Units::Lab && energy == EnergyUnit::RestEnergy {
            return Err(crate::Error::Parse {
                location: "--energy-unit".into(),
                message: "mc2 is the energy unit of natural-unit models; this model is in lab \
                          units: choose meV, eV, K, cm-1 or THz"
                    .into(),
            });
        }
        Ok(OutputUnits {
            system,
            energy,
            field: field.unwrap_or(FieldUnit::native(system)),
        })
    }

    /// Multiply a model-unit energy (meV or m_e c^2) by this to get it in [`Self::energy`].
    pub fn energy_factor(&self) -> f64 {
        let native = EnergyUnit::native(self.system);
        if native == self.energy {
            1.0
        } else {
            native.in_mev() / self.energy.in_mev()
        }
    }

    /// Multiply a model-unit field (T or B/B_c) by this to get it in [`Self::field`].
    pub fn field_factor(&self) -> f64 {
        FieldUnit::native(self.system).factor_to(self.field)
    }

    /// The column or key name of an energy-like quantity: `<quantity>_<suffix>`, e.g.
    /// `energy_invcm`, `bound_meV` (COMMON column convention).
    pub fn energy_column(&self, quantity: &str) -> String {
        format!("{quantity}_{}", self.energy.suffix())
    }

    /// The column name of a field-like quantity, e.g. `field_T`, `field_Bc`.
    pub fn field_column(&self, quantity: &str) -> String {
        format!("{quantity}_{}", self.field.suffix())
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

    #[test]
    fn energy_units_follow_codata_2018() {
        // CODATA 2018 energy conversion factors (Tiesinga et al., Rev. Mod. Phys. 93, 025010
        // (2021), table of energy equivalents): 1 eV = 11 604.518 12 K, 8 065.543 937 cm^-1,
        // 241.798 924 2 THz; m_e c^2 = 0.510 998 950 00 MeV.
        let mev_in = |u: EnergyUnit| 1.0 / u.in_mev();
        assert!(rel(mev_in(EnergyUnit::Kelvin), 11.604_518_12) < 1e-9);
        assert!(rel(mev_in(EnergyUnit::InverseCentimetre), 8.065_543_937) < 1e-9);
        assert!(rel(mev_in(EnergyUnit::Terahertz), 0.241_798_924_2) < 1e-9);
        assert!(rel(mev_in(EnergyUnit::ElectronVolt), 1e-3) < 1e-15);
        let lab = |e| OutputUnits::new(Units::Lab, Some(e), None);
        let f = lab(EnergyUnit::InverseCentimetre).map(|o| o.energy_factor());
        assert!(rel(f.unwrap_or(0.0), 8.065_543_937) < 1e-9);
        assert!(lab(EnergyUnit::RestEnergy).is_err());
        // natural -> lab: 1 m_e c^2 = 510 998.950 00 eV (CODATA 2018)
        let nat = OutputUnits::new(Units::Natural, Some(EnergyUnit::ElectronVolt), None);
        assert!(rel(nat.map(|o| o.energy_factor()).unwrap_or(0.0), 510_998.95) < 1e-10);
        let native = OutputUnits::native(Units::Natural);
        assert_eq!(native.energy_column("energy"), "energy_mc2");
        assert_eq!(native.field_column("field"), "field_Bc");
        for u in EnergyUnit::ALL {
            assert_eq!(EnergyUnit::parse(u.flag()), Some(u));
            assert!(u.suffix().chars().all(|c| c.is_ascii_alphanumeric()));
        }
    }

    #[test]
    fn field_values_take_a_unit_suffix() {
        // B_c = 4.414 005e9 T (CODATA 2018 derived, common practice value)
        let bc = 4.414_005e9;
        let p = |t: &str| FieldValue::parse(t);
        assert_eq!(
            p("5"),
            Ok(FieldValue {
                value: 5.0,
                unit: None
            })
        );
        assert_eq!(p("1e-3").map(|f| f.value), Ok(1e-3));
        let one_t = p("1T").map(|f| f.in_units(Units::Natural)).unwrap_or(0.0);
        assert!(rel(one_t, 1.0 / bc) < 1e-6);
        let n = p("-2e-10 Bc")
            .map(|f| f.in_units(Units::Lab))
            .unwrap_or(0.0);
        assert!(rel(n, -2e-10 * bc) < 1e-6);
        assert_eq!(p("0.5B_c").map(|f| f.in_units(Units::Natural)), Ok(0.5));
        assert_eq!(p("10 T").map(|f| f.in_units(Units::Lab)), Ok(10.0));
        for bad in ["1G", "T", "1 tesla", "abc", "", "1,2", "--"] {
            let e = p(bad).err().unwrap_or_default();
            assert!(e.contains("1T") || e.contains("field unit"), "{bad}: {e}");
        }
        let o = OutputUnits::new(Units::Lab, None, Some(FieldUnit::Critical));
        assert!(rel(o.map(|o| o.field_factor()).unwrap_or(0.0), 1.0 / bc) < 1e-6);
    }
}
