//! Built-in models as types: one file per model, one registry.
//!
//! Each model file holds its typed parameter struct (field names carry the unit, e.g.
//! `velocity_m_per_s`, `mass_mev`; `Default` gives the listed defaults), its constructor, its
//! closed form and its metadata ([`ModelInfo`]: name, description, source, and one
//! [`ParamDoc`] per field). A constructed [`Model`] carries its typed [`Origin`], so its closed
//! form is found from what built it ([`expected_levels`]), never from its name: a model file
//! described term by term may use any name and simply has no closed form.
//!
//! One set of parameter names: the struct's field names are the names that `--set`, a model
//! file's `[set]` table, [`Model::params`] and verify formulas use (the charge is
//! [`Model::charge`], `q` in formulas). The registry reads and writes the fields through serde,
//! so a name cannot drift from its field.
//!
//! Conventions shared by all models: B is along +z and signed; the carrier charge q (units of
//! e) carries its sign; s = sign(qB) decides which in-plane combination lowers (see
//! [`crate::ladder`]). Zeeman-like terms are written `+(g/2) mu_B B sigma_z`, so a free electron
//! has g = +2.0023 here (CODATA's g_e = -2.0023 uses the opposite sign convention). Catalogue
//! defaults (dirac-amm onwards) are invented illustrations, not fitted to any material.
//!
//! # Adding a model
//! 1. Write `src/models/NAME.rs`: the parameter struct (`Serialize`, `Deserialize`, `Default`,
//!    a `charge` field), the constructor (start it with [`Origin::builder`] so the model
//!    carries its origin), the closed form if one is published, and a unit struct implementing
//!    [`BuiltinModel`] (its [`ModelInfo`] lists one [`ParamDoc`] per field, in field order).
//! 2. In this file: `mod NAME;`, its `pub use`, and one line in the `registry!` list.
//! 3. Its test: the closed form against the solver in `tests/closed_forms.rs`. The registry
//!    test below then checks defaults, names and the closed form without further edits.

use std::collections::BTreeMap;
use std::fmt;
use std::sync::Arc;

use serde::de::DeserializeOwned;
use serde::Serialize;

use crate::closed_form::ExpectedLevel;
use crate::error::{Error, Result};
use crate::hamiltonian::FieldPoint;
use crate::model::{Model, ModelBuilder, ModelOrigin};
use crate::units::Units;

pub mod bhz;
pub mod bilayer;
pub mod dirac;
pub mod dirac2d;
pub mod dirac_amm;
pub mod klein_gordon;
pub mod pauli;
pub mod rashba;
pub mod schrodinger;
mod shared;
pub mod tilted_dirac2d;
pub mod weyl;

pub use bhz::{bhz, Bhz, BhzParams};
pub use bilayer::{bilayer, Bilayer, BilayerParams};
pub use dirac::{dirac, Dirac, RelativisticParams};
pub use dirac2d::{dirac2d, Dirac2d, Dirac2dParams};
pub use dirac_amm::{dirac_amm, DiracAmm, DiracAmmParams};
pub use klein_gordon::{klein_gordon, KleinGordon};
pub use pauli::{pauli, Pauli, PauliParams};
pub use rashba::{rashba, Rashba, RashbaParams};
pub use schrodinger::{schrodinger, MassParams, Schrodinger};
pub(crate) use shared::{finite, positive};
pub use shared::{Chirality, Valley};
pub use tilted_dirac2d::{tilted_dirac2d, TiltedDirac2d, TiltedDiracParams};
pub use weyl::{weyl, Weyl, WeylParams};

/// One parameter of a built-in model: a field of its parameter struct.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParamDoc {
    /// The field name, which is also the name in `--set`, `[set]` and formulas.
    pub name: &'static str,
    /// Unit of the value (`1` for a pure number).
    pub unit: &'static str,
    /// Meaning.
    pub meaning: &'static str,
}

/// What a built-in model tells about itself.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModelInfo {
    /// Name used in `builtin = "..."`, `--builtin` and [`Model::name`].
    pub name: &'static str,
    /// One-line description of the Hamiltonian.
    pub summary: &'static str,
    /// Unit system.
    pub units: Units,
    /// Published source of the closed form the model is checked against.
    pub source: &'static str,
    /// Parameters, one per field of the parameter struct, in field order.
    pub params: &'static [ParamDoc],
}

/// A built-in model: implemented by a unit struct in each model file.
pub trait BuiltinModel {
    /// The typed parameters; serde names its fields for `--set` and `[set]`.
    type Params: Serialize
        + DeserializeOwned
        + Default
        + Clone
        + fmt::Debug
        + PartialEq
        + Send
        + Sync
        + 'static;
    /// Name, description, source, parameter documentation.
    fn info() -> &'static ModelInfo;
    /// The model for these parameters.
    ///
    /// # Errors
    /// [`Error::BadNumber`] for a value out of range.
    fn build(p: &Self::Params) -> Result<Model>;
    /// The closed-form levels for Landau indices 0..=max_n, sorted, relative to
    /// [`BuiltinModel::closed_form_reference`]; `None` when no closed form is known.
    fn closed_form(
        p: &Self::Params,
        point: FieldPoint,
        max_n: usize,
    ) -> Option<Result<Vec<ExpectedLevel>>>;
    /// The energy the closed form is relative to (m c^2 for the relativistic models).
    fn closed_form_reference(_p: &Self::Params) -> f64 {
        0.0
    }
}

/// The parameters as a serde map (field name -> value).
fn to_map<P: Serialize>(p: &P) -> serde_json::Map<String, serde_json::Value> {
    match serde_json::to_value(p) {
        Ok(serde_json::Value::Object(m)) => m,
        // parameter structs are plain structs of numbers: always an object
        _ => serde_json::Map::new(),
    }
}

fn from_map<P: DeserializeOwned>(
    map: serde_json::Map<String, serde_json::Value>,
    name: &str,
    value: f64,
) -> Result<P> {
    serde_json::from_value(serde_json::Value::Object(map)).map_err(|e| Error::BadNumber {
        name: name.into(),
        value,
        fix: e.to_string(),
    })
}

macro_rules! registry {
    ($($(#[$doc:meta])* $variant:ident => $model:ty),* $(,)?) => {
        /// The typed origin of a built-in model: which model, with which parameters. Carried by
        /// every [`Model`] a constructor of this module builds (read it with [`Origin::of`]).
        #[derive(Debug, Clone, PartialEq)]
        pub enum Origin {
            $($(#[$doc])* $variant(<$model as BuiltinModel>::Params),)*
        }

        impl Origin {
            /// Every built-in model with its default parameters, in listing order.
            pub fn registry() -> Vec<Origin> {
                vec![$(Origin::$variant(Default::default())),*]
            }
            /// Name, description, source and parameter documentation.
            pub fn info(&self) -> &'static ModelInfo {
                match self {
                    $(Origin::$variant(_) => <$model as BuiltinModel>::info(),)*
                }
            }
            /// Build the model.
            ///
            /// # Errors
            /// [`Error::BadNumber`] for a value out of range.
            pub fn build(&self) -> Result<Model> {
                match self {
                    $(Origin::$variant(p) => <$model as BuiltinModel>::build(p),)*
                }
            }
            /// The closed form and the energy it is relative to.
            fn closed_form_own(
                &self,
                point: FieldPoint,
                max_n: usize,
            ) -> Option<(Result<Vec<ExpectedLevel>>, f64)> {
                match self {
                    $(Origin::$variant(p) => <$model as BuiltinModel>::closed_form(p, point, max_n)
                        .map(|l| (l, <$model as BuiltinModel>::closed_form_reference(p))),)*
                }
            }
            fn map(&self) -> serde_json::Map<String, serde_json::Value> {
                match self {
                    $(Origin::$variant(p) => to_map(p),)*
                }
            }
            fn with_map(
                &self,
                map: serde_json::Map<String, serde_json::Value>,
                name: &str,
                value: f64,
            ) -> Result<Origin> {
                match self {
                    $(Origin::$variant(_) => Ok(Origin::$variant(from_map(map, name, value)?)),)*
                }
            }
        }
    };
}

registry! {
    /// [`schrodinger`](mod@schrodinger).
    Schrodinger => Schrodinger,
    /// [`pauli`](mod@pauli).
    Pauli => Pauli,
    /// [`dirac`](mod@dirac).
    Dirac => Dirac,
    /// [`klein_gordon`](mod@klein_gordon).
    KleinGordon => KleinGordon,
    /// [`dirac2d`](mod@dirac2d).
    Dirac2d => Dirac2d,
    /// [`weyl`](mod@weyl).
    Weyl => Weyl,
    /// [`dirac_amm`](mod@dirac_amm).
    DiracAmm => DiracAmm,
    /// [`tilted_dirac2d`](mod@tilted_dirac2d).
    TiltedDirac2d => TiltedDirac2d,
    /// [`rashba`](mod@rashba).
    Rashba => Rashba,
    /// [`bilayer`](mod@bilayer).
    Bilayer => Bilayer,
    /// [`bhz`](mod@bhz).
    Bhz => Bhz,
}

impl Origin {
    /// The typed origin of `model`, if a constructor of this module built it.
    pub fn of(model: &Model) -> Option<&Origin> {
        model.origin()?.as_any().downcast_ref::<Origin>()
    }

    /// The registered model called `name`, with its default parameters.
    pub fn find(name: &str) -> Option<Origin> {
        Origin::registry()
            .into_iter()
            .find(|o| o.info().name == name)
    }

    /// Name of the model.
    pub fn name(&self) -> &'static str {
        self.info().name
    }

    /// The parameter values by name, in the order of [`ModelInfo::params`] (signs as ±1).
    pub fn values(&self) -> Vec<(&'static str, f64)> {
        let map = self.map();
        self.info()
            .params
            .iter()
            .filter_map(|d| {
                map.get(d.name)
                    .and_then(|v| v.as_f64())
                    .map(|v| (d.name, v))
            })
            .collect()
    }

    /// The value of parameter `name`.
    pub fn value(&self, name: &str) -> Option<f64> {
        self.map().get(name).and_then(|v| v.as_f64())
    }

    /// The same model with parameter `name` set to `value`.
    ///
    /// # Errors
    /// [`Error::Parse`] (location `--set`) for a name that is not a parameter of the model,
    /// [`Error::BadNumber`] for a non-finite value or a sign other than ±1.
    pub fn with(&self, name: &str, value: f64) -> Result<Origin> {
        let mut map = self.map();
        if !map.contains_key(name) {
            return Err(Error::Parse {
                location: "--set".into(),
                message: self.unknown_parameter(name),
            });
        }
        let number = serde_json::Number::from_f64(value).ok_or_else(|| Error::BadNumber {
            name: name.into(),
            value,
            fix: "it must be a finite number".into(),
        })?;
        map.insert(name.to_string(), serde_json::Value::Number(number));
        self.with_map(map, name, value)
    }

    /// The same model with every `(name, value)` of `values` set (see [`Origin::with`]).
    ///
    /// # Errors
    /// As [`Origin::with`].
    pub fn with_values(&self, values: &BTreeMap<String, f64>) -> Result<Origin> {
        values
            .iter()
            .try_fold(self.clone(), |o, (k, &v)| o.with(k, v))
    }

    /// Whether `name` is a parameter of the model.
    pub fn has_parameter(&self, name: &str) -> bool {
        self.info().params.iter().any(|p| p.name == name)
    }

    /// The message for a parameter the model does not have, listing those it has.
    pub fn unknown_parameter(&self, name: &str) -> String {
        format!(
            "built-in '{}' has no parameter '{}'; its parameters are {}",
            self.name(),
            crate::limits::excerpt(name),
            self.info()
                .params
                .iter()
                .map(|p| p.name)
                .collect::<Vec<_>>()
                .join(", ")
        )
    }

    /// A builder named after the model, with its unit system, charge, origin and parameters
    /// (every field but the charge, for reports and formulas) already set: the start of every
    /// constructor.
    pub fn builder(self, dim: usize) -> ModelBuilder {
        let info = self.info();
        let mut b = Model::builder(info.name, dim).units(info.units);
        for (k, v) in self.values() {
            b = if k == "charge" {
                b.charge(v)
            } else {
                b.param(k, v)
            };
        }
        b.origin(Arc::new(self))
    }
}

impl ModelOrigin for Origin {
    fn as_any(&self) -> &dyn std::any::Any {
        self
    }
    fn with_charge(&self, charge: f64) -> Arc<dyn ModelOrigin> {
        // the charge field exists in every parameter struct and takes any finite value
        Arc::new(self.with("charge", charge).unwrap_or_else(|_| self.clone()))
    }
}

/// Names of every built-in, in listing order.
pub fn names() -> Vec<&'static str> {
    Origin::registry().iter().map(|o| o.name()).collect()
}

/// Build the built-in `name` with overrides; names absent from `values` take their defaults.
///
/// # Errors
/// [`Error::Parse`] (location `--builtin` / `--set`) for an unknown model or parameter; the
/// constructor's errors for out-of-range values.
///
/// # Examples
/// ```
/// use std::collections::BTreeMap;
/// let v = BTreeMap::from([("mass_mev".to_string(), 5.0)]);
/// let m = ladderfan::models::build("dirac2d", &v)?;
/// assert_eq!(m.param("mass_mev"), Some(5.0));
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn build(name: &str, values: &BTreeMap<String, f64>) -> Result<Model> {
    let origin = Origin::find(name).ok_or_else(|| Error::Parse {
        location: "--builtin".into(),
        message: format!(
            "unknown built-in model '{}'; choose one of {} (or list them with `ladderfan models`)",
            crate::limits::excerpt(name),
            names().join(", ")
        ),
    })?;
    origin.with_values(values)?.build()
}

/// Expected levels of `model` at `point`, relative to `reference_energy`, for Landau indices
/// 0..=max_n, sorted by energy: the closed form of the model's [`Origin`].
///
/// Returns `None` for a model without a typed origin (described term by term, whatever its
/// name), a model without a closed form, or a zero or non-finite field.
///
/// # Examples
/// ```
/// use ladderfan::{models, FieldPoint};
/// let m = models::dirac2d(models::Dirac2dParams::default())?;
/// let levels = models::expected_levels(&m, FieldPoint::field(1.0), 0.0, 2).unwrap();
/// // massless: 0, ±36.3, ±51.3 meV at 1 T (common practice values for v = 1e6 m/s)
/// assert_eq!(levels.len(), 5);
/// assert!((levels[4].energy - 36.28 * 2f64.sqrt()).abs() < 0.02);
/// # Ok::<(), ladderfan::Error>(())
/// ```
pub fn expected_levels(
    model: &Model,
    point: FieldPoint,
    reference_energy: f64,
    max_n: usize,
) -> Option<Vec<ExpectedLevel>> {
    let (levels, own_ref) = Origin::of(model)?.closed_form_own(point, max_n)?;
    let shift = own_ref - reference_energy;
    if !shift.is_finite() {
        return None;
    }
    Some(
        levels
            .ok()?
            .into_iter()
            .map(|mut l| {
                l.energy += shift;
                l
            })
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_model_builds_with_defaults_and_has_its_closed_form() {
        // All eleven models had a closed form before the move (looked up by name then).
        let all = Origin::registry();
        assert_eq!(all.len(), 11);
        for o in &all {
            let m = match o.build() {
                Ok(m) => m,
                Err(e) => panic!("{}: {e}", o.name()),
            };
            assert_eq!(m.name(), o.name());
            assert_eq!(Origin::of(&m), Some(o), "{}", o.name());
            assert_eq!(m.units(), o.info().units);
            let l = expected_levels(&m, FieldPoint::field(1.0), m.reference_energy(), 3);
            assert!(l.is_some_and(|l| l.len() >= 4), "{}", o.name());
        }
        let mut names = names();
        names.sort_unstable();
        names.dedup();
        assert_eq!(names.len(), all.len(), "names are unique");
    }

    #[test]
    fn set_names_are_the_struct_fields() {
        for o in Origin::registry() {
            let fields: Vec<String> = o.map().keys().cloned().collect();
            let mut docs: Vec<String> = o.info().params.iter().map(|p| p.name.into()).collect();
            docs.sort();
            assert_eq!(fields, docs, "{}", o.name()); // serde_json maps are sorted by key
            let m = match o.build() {
                Ok(m) => m,
                Err(e) => panic!("{}: {e}", o.name()),
            };
            // every field but the charge is a model parameter, with its value
            for (k, v) in o.values() {
                if k == "charge" {
                    assert_eq!(m.charge(), v);
                } else {
                    assert_eq!(m.param(k), Some(v), "{} {k}", o.name());
                }
            }
            assert_eq!(m.params().len() + 1, o.values().len(), "{}", o.name());
            // and each one is accepted by --set / [set]
            for (k, v) in o.values() {
                match o.with(k, v) {
                    Ok(same) => assert_eq!(same, o),
                    Err(e) => panic!("{} {k}: {e}", o.name()),
                }
            }
            assert!(o.with("no_such_parameter", 1.0).is_err());
        }
    }

    #[test]
    fn signs_are_enums_written_as_plus_minus_one() {
        let o = Origin::find("dirac2d").unwrap_or(Origin::Dirac2d(Dirac2dParams::default()));
        let flipped = o.with("valley", -1.0);
        assert!(matches!(
            flipped,
            Ok(Origin::Dirac2d(Dirac2dParams {
                valley: Valley::Minus,
                ..
            }))
        ));
        match o.with("valley", 0.5) {
            Err(Error::BadNumber { name, fix, .. }) => {
                assert_eq!(name, "valley");
                assert!(fix.contains("+1 or -1"), "{fix}");
            }
            other => panic!("{other:?}"),
        }
        assert_eq!(Chirality::from_sign(-1.0), Some(Chirality::Minus));
        assert_eq!(Chirality::Minus.sign(), -1.0);
    }

    #[test]
    fn expected_levels_shift_the_reference_and_need_an_origin() {
        let m = match dirac(RelativisticParams::default()) {
            Ok(m) => m,
            Err(e) => panic!("{e}"),
        };
        let pt = FieldPoint::field(0.2);
        let rel = expected_levels(&m, pt, 1.0, 3).unwrap_or_default();
        let abs = expected_levels(&m, pt, 0.0, 3).unwrap_or_default();
        assert_eq!(rel.len(), 8);
        for (r, a) in rel.iter().zip(&abs) {
            assert!((a.energy - r.energy - 1.0).abs() < 1e-15);
        }
        // a model described term by term has no closed form, whatever its name
        let other = Model::builder("dirac", 1)
            .term(
                "x",
                1.0,
                crate::matrix::identity(1),
                crate::model::Monomial::ONE,
            )
            .build();
        match other {
            Ok(o) => assert!(expected_levels(&o, pt, 0.0, 3).is_none()),
            Err(e) => panic!("{e}"),
        }
        assert!(expected_levels(&m, FieldPoint::field(0.0), 0.0, 3).is_none());
    }

    #[test]
    fn with_charge_carries_the_origin_along() {
        let m = match dirac(RelativisticParams::default()).and_then(|m| m.with_charge(1.0)) {
            Ok(m) => m,
            Err(e) => panic!("{e}"),
        };
        assert_eq!(Origin::of(&m).and_then(|o| o.value("charge")), Some(1.0));
    }
}
