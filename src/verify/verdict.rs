//! The outcome of a check: settings, pairs, the [`Verdict`] and [`check`](fn@crate::verify::check) itself (see the
//! module documentation of [`crate::verify`]).

use crate::sectors::SectorId;
use serde::Serialize;

/// Which energy scale the relative tolerance multiplies.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind", content = "value")]
pub enum EnergyScale {
    /// The spectrum's typical Landau spacing ([`crate::levels::Spectrum::energy_scale`]).
    #[default]
    Spectrum,
    /// A given energy in the model's unit.
    Value(f64),
}

/// Settings of [`check`](fn@crate::verify::check).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct VerifySettings {
    /// Relative tolerance: a level agrees when |x - e| <= bound + tolerance x scale +
    /// rounding. Default 1e-8.
    pub tolerance: f64,
    /// The scale the tolerance multiplies.
    pub scale: EnergyScale,
    /// Rounding allowance of the expected values in units of eps x (|e| + |shift|)
    /// (see the module documentation). Default 16.
    pub rounding_ulps: f64,
}

impl Default for VerifySettings {
    fn default() -> Self {
        VerifySettings {
            tolerance: 1e-8,
            scale: EnergyScale::Spectrum,
            rounding_ulps: 16.0,
        }
    }
}

/// Whether a pair agrees.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Agreement {
    /// Within the allowed deviation.
    Agrees,
    /// Outside it.
    Disagrees,
}

/// The outcome of a verification.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Outcome {
    /// Every checked level agrees, none is left over and none is unresolved.
    Pass,
    /// Some level disagrees or has no partner.
    Fail,
    /// Nothing failed, but nothing could be checked (no converged level inside the window) or
    /// some expected level has only unconverged candidates.
    Inconclusive,
}

/// A numerical level as reported.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NumericalLevel {
    /// Energy relative to the spectrum's reference energy.
    pub energy: f64,
    /// Its error bound.
    pub bound: f64,
    /// Dominant orbital.
    pub orbital: usize,
    /// Dominant component.
    pub component: usize,
    /// Sector.
    pub sector: SectorId,
    /// Landau label (n and branch as the trade writes them), to set beside the expected n, s.
    pub label: crate::levels::LandauLabel,
    /// Converged, genuine but not converged, or cutoff artefact (see the README, "Reading a
    /// level").
    pub state: crate::levels::Convergence,
}

/// An expected level as reported (one state of its multiplicity).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExpectedState {
    /// Label, e.g. `n=3 s=-1`.
    pub label: String,
    /// Landau index.
    pub n: i64,
    /// Branch or spin sign.
    pub s: i8,
    /// Energy relative to the spectrum's reference energy.
    pub energy: f64,
    /// Its allowance: tolerance x scale + rounding.
    pub allowance: f64,
}

/// A checked pair.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Pair {
    /// The expected level.
    pub expected: ExpectedState,
    /// Its numerical partner.
    pub numerical: NumericalLevel,
    /// numerical - expected.
    pub deviation: f64,
    /// The allowed |deviation|: bound + allowance.
    pub allowed: f64,
    /// The verdict for this pair.
    pub agreement: Agreement,
}

/// An expected level without a converged partner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Unpartnered {
    /// The expected level.
    pub expected: ExpectedState,
    /// The nearest numerical level of any kind (converged or not), if any.
    pub nearest: Option<NumericalLevel>,
}

/// A window `(lo, hi)` with each infinite (open) side written as `None` (JSON `null`), so that
/// a serialised result never holds a non-finite number.
fn open_sides_as_null<S: serde::Serializer>(
    w: &(f64, f64),
    s: S,
) -> std::result::Result<S::Ok, S::Error> {
    let side = |x: f64| if x.is_infinite() { None } else { Some(x) };
    serde::Serialize::serialize(&(side(w.0), side(w.1)), s)
}

/// The result of [`check`](fn@crate::verify::check).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// Pass, fail or inconclusive.
    pub outcome: Outcome,
    /// Energies below are relative to this (the spectrum's reference energy).
    pub reference_energy: f64,
    /// The energy scale the tolerance multiplies.
    pub energy_scale: f64,
    /// The relative tolerance.
    pub tolerance: f64,
    /// The window checked, relative to the reference energy (infinite: open; an open side is
    /// `null` in JSON).
    #[serde(serialize_with = "open_sides_as_null")]
    pub window: (f64, f64),
    /// Whether each end of `window` is itself inside (a listed or converged level); false for
    /// an open side and for an end that is the first level the expected list does not cover.
    pub window_ends_included: (bool, bool),
    /// Pairs, ascending in expected energy; agreeing and disagreeing.
    pub pairs: Vec<Pair>,
    /// Converged numerical levels in the window that no expected level accounts for.
    pub unmatched_numerical: Vec<NumericalLevel>,
    /// Expected levels in the window with no numerical level at all within reach.
    pub missing_expected: Vec<Unpartnered>,
    /// Expected levels whose only candidates are unconverged levels that are not cutoff
    /// artefacts: not verified, so the outcome is at best inconclusive (raise the cutoff).
    pub unresolved_expected: Vec<Unpartnered>,
    /// Expected states not checked: outside the window or beyond the converged range.
    pub not_checked: usize,
    /// Largest |deviation| among agreeing pairs.
    pub worst_deviation: f64,
    /// Largest |deviation| / allowed among agreeing pairs.
    pub worst_fraction_of_allowed: f64,
}

impl NumericalLevel {
    fn scale(&mut self, e: f64) {
        self.energy *= e;
        self.bound *= e;
    }
}

impl ExpectedState {
    fn scale(&mut self, e: f64) {
        self.energy *= e;
        self.allowance *= e;
    }
}

impl Verdict {
    /// The verdict in the output units `o`: every energy (reference energy, energy scale,
    /// window, expected and numerical energies, bounds, allowances, deviations) times
    /// [`crate::units::OutputUnits::energy_factor`]; counts, labels, the relative tolerance and
    /// the fractions of the allowed deviation unchanged. Applied once, to a verdict in the model's
    /// units; the outcome is decided before, so it cannot change.
    ///
    /// # Examples
    /// ```
    /// use ladderfan::units::{EnergyUnit, OutputUnits, Units};
    /// use ladderfan::{models, verify, FieldPoint, Reference, Settings, Spectrum};
    /// let m = models::pauli(models::PauliParams { mass_ratio: 0.5, g_factor: 3.0, charge: -1.0 })?;
    /// let pt = FieldPoint::field(2.0);
    /// let w = ladderfan::closed_form::cyclotron_energy_mev(0.5, 2.0, -1.0);
    /// let z = 1.5 * ladderfan::units::BOHR_MAGNETON_MEV_PER_T * 2.0;
    /// let ns: Vec<i64> = (0..=10).collect();
    /// let expected = verify::ExpectedList::from_fn(&m, pt, Reference::Zero, &ns, &[-1, 1], |v| {
    ///     Some(w * (v.n as f64 + 0.5) + v.s as f64 * z)
    /// })?;
    /// let spectrum = Spectrum::compute(&m, pt, &Settings::with_cutoff(40))?;
    /// let v = verify::check(&spectrum, &expected, &verify::VerifySettings::default())?;
    /// let ev = OutputUnits::new(Units::Lab, Some(EnergyUnit::ElectronVolt), None)?;
    /// let shown = v.clone().in_units(ev);
    /// // 1 eV = 1000 meV: every energy a thousand times smaller, the fractions unchanged
    /// let (a, b) = (v.pairs[3].numerical.energy, shown.pairs[3].numerical.energy);
    /// assert!((b - 1e-3 * a).abs() <= 1e-15 * a.abs());
    /// assert_eq!(shown.worst_fraction_of_allowed, v.worst_fraction_of_allowed);
    /// # Ok::<(), ladderfan::Error>(())
    /// ```
    pub fn in_units(mut self, o: crate::units::OutputUnits) -> Self {
        let e = o.energy_factor();
        self.reference_energy *= e;
        self.energy_scale *= e;
        self.window = (self.window.0 * e, self.window.1 * e);
        for p in &mut self.pairs {
            p.expected.scale(e);
            p.numerical.scale(e);
            p.deviation *= e;
            p.allowed *= e;
        }
        for l in &mut self.unmatched_numerical {
            l.scale(e);
        }
        for u in self
            .missing_expected
            .iter_mut()
            .chain(&mut self.unresolved_expected)
        {
            u.expected.scale(e);
            if let Some(n) = &mut u.nearest {
                n.scale(e);
            }
        }
        self.worst_deviation *= e;
        self
    }

    /// Whether the formula passed.
    pub fn passed(&self) -> bool {
        self.outcome == Outcome::Pass
    }

    /// The disagreeing pairs.
    pub fn disagreeing(&self) -> impl Iterator<Item = &Pair> {
        self.pairs
            .iter()
            .filter(|p| p.agreement == Agreement::Disagrees)
    }

    /// One line: `verdict: PASS: ...`, `verdict: FAIL: ...` or `verdict: INCONCLUSIVE: ...`,
    /// energies in `unit`.
    pub fn verdict_line(&self, unit: &str) -> String {
        let agree = self.pairs.len() - self.disagreeing().count();
        let bad = self.disagreeing().count();
        let extra = if self.unresolved_expected.is_empty() && self.not_checked == 0 {
            String::new()
        } else {
            format!(
                "; {} expected level(s) not checked (outside the window or the converged range), \
                 {} unresolved (partner not converged)",
                self.not_checked,
                self.unresolved_expected.len()
            )
        };
        match self.outcome {
            Outcome::Pass => format!(
                "verdict: PASS: all {agree} levels in the window agree (worst |deviation| \
                 {:.2e} {unit} = {:.1e} of the allowed){extra}",
                self.worst_deviation, self.worst_fraction_of_allowed
            ),
            Outcome::Fail => format!(
                "verdict: FAIL: {bad} of {} paired levels disagree, {} numerical level(s) have \
                 no expected partner, {} expected level(s) have no numerical partner{extra}",
                self.pairs.len(),
                self.unmatched_numerical.len(),
                self.missing_expected.len()
            ),
            Outcome::Inconclusive if !self.unresolved_expected.is_empty() => format!(
                "verdict: INCONCLUSIVE: {agree} levels agree, but {} expected level(s) inside the \
                 converged range have only unconverged candidates; raise the cutoff or narrow \
                 the window",
                self.unresolved_expected.len()
            ),
            Outcome::Inconclusive => format!(
                "verdict: INCONCLUSIVE: no converged level and no expected level to compare in \
                 the window{extra}; raise the cutoff or widen the n range"
            ),
        }
    }
}
