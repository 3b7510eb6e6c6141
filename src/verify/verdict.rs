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

impl Verdict {
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
