//! What the parameter structs share: the sign enums (valley, chirality), written +1 or -1 in
//! `--set` and model files, and the range checks of the constructors.

use serde::{Deserialize, Deserializer, Serialize, Serializer};

use crate::error::{Error, Result};

/// A sign +1 or -1 as written in `--set` and model files.
fn sign_from(x: f64) -> Option<bool> {
    #[allow(clippy::float_cmp)] // a sign parameter must be exactly +1 or -1
    let r = if x == 1.0 {
        Some(true)
    } else if x == -1.0 {
        Some(false)
    } else {
        None
    };
    r
}

macro_rules! sign_enum {
    ($(#[$doc:meta])* $name:ident, $plus:ident, $minus:ident, $what:literal) => {
        $(#[$doc])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
        pub enum $name {
            #[doc = concat!($what, " = +1")]
            #[default]
            $plus,
            #[doc = concat!($what, " = -1")]
            $minus,
        }

        impl $name {
            #[doc = concat!("The sign ", $what, " as a number, +1.0 or -1.0.")]
            pub fn sign(self) -> f64 {
                match self {
                    $name::$plus => 1.0,
                    $name::$minus => -1.0,
                }
            }
            #[doc = concat!("From +1 or -1 (`None` for any other value).")]
            pub fn from_sign(x: f64) -> Option<Self> {
                sign_from(x).map(|p| if p { $name::$plus } else { $name::$minus })
            }
        }

        impl Serialize for $name {
            fn serialize<S: Serializer>(&self, s: S) -> std::result::Result<S::Ok, S::Error> {
                s.serialize_f64(self.sign())
            }
        }

        impl<'de> Deserialize<'de> for $name {
            fn deserialize<D: Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
                let x = f64::deserialize(d)?;
                $name::from_sign(x)
                    .ok_or_else(|| serde::de::Error::custom("it must be +1 or -1"))
            }
        }
    };
}

sign_enum!(
    /// Valley index tau of the 2D Dirac-like models: the sign of the kx sigma_x term (written
    /// +1 or -1 in `--set` and model files).
    Valley,
    Plus,
    Minus,
    "tau"
);

sign_enum!(
    /// Chirality chi of a Weyl node (written +1 or -1 in `--set` and model files).
    Chirality,
    Plus,
    Minus,
    "chi"
);

/// Parameter check shared by the model constructors: positive and finite.
pub(crate) fn positive(name: &str, v: f64) -> Result<()> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(Error::BadNumber {
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
        Err(Error::BadNumber {
            name: name.into(),
            value: v,
            fix: "it must be a finite number".into(),
        })
    }
}
