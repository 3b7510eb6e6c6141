//! Parsers of flag values that clap cannot type by itself: counts, lists of whole numbers,
//! fields with a unit suffix and the output units. The unit arithmetic is the library's
//! ([`ladderfan::units`]); this file only turns text into it.

use ladderfan::units::{EnergyUnit, FieldUnit, FieldValue};
use ladderfan::{Error, Result};

/// Parse a field flag (`--field`, `--b-min`, `--b-max`): `1T`, `2.2e-10Bc` or a plain number
/// in the model's field unit ([`FieldValue::parse`]).
pub fn parse_field(s: &str) -> std::result::Result<FieldValue, String> {
    FieldValue::parse(s)
}

/// Parse `--energy-unit`: meV, eV, K, cm-1, THz or mc2.
pub fn parse_energy_unit(s: &str) -> std::result::Result<EnergyUnit, String> {
    EnergyUnit::parse(s).ok_or_else(|| {
        let all: Vec<&str> = EnergyUnit::ALL.iter().map(|u| u.flag()).collect();
        format!(
            "'{}' is not an energy unit; choose one of {}",
            ladderfan::limits::excerpt(s),
            all.join(", ")
        )
    })
}

/// Parse `--field-unit`: T or Bc.
pub fn parse_field_unit(s: &str) -> std::result::Result<FieldUnit, String> {
    FieldUnit::parse(s).ok_or_else(|| {
        format!(
            "'{}' is not a field unit; choose T or Bc (B_c = 4.414e9 T)",
            ladderfan::limits::excerpt(s)
        )
    })
}

/// A field flag's value in the model's field unit (a suffix `T`/`Bc` converted).
pub fn field_in(
    lm: &super::common::LoadedModel,
    v: Option<ladderfan::units::FieldValue>,
) -> Option<f64> {
    v.map(|f| f.in_units(lm.model.units()))
}

/// Parse a count flag (`--cutoff`, `--points`, ...): a whole number, with a message that
/// says what is wrong with a negative, fractional or huge value.
pub fn parse_count(s: &str) -> std::result::Result<usize, String> {
    let t = s.trim();
    if let Ok(n) = t.parse::<usize>() {
        return Ok(n);
    }
    match t.parse::<f64>() {
        Ok(x) if x < 0.0 => Err(format!("{t} is negative; give a whole number such as 200")),
        Ok(x) if x.fract() == 0.0 && x.is_finite() && x < 1e19 => Ok(x as usize),
        Ok(x) if x.is_finite() && x.fract() == 0.0 => {
            Err(format!("{t} is too large; give a whole number such as 200"))
        }
        _ => Err(format!("'{t}' is not a whole number; give e.g. 200")),
    }
}

/// Parse a list of whole numbers: `0..40` (both ends included, like n = 0..40), `0..=40`
/// (the same), `0,1,2,5`, `-1,1`, or a mix `0..3,7`.
///
/// # Errors
/// [`Error::Parse`] located at `flag` for anything else, an empty or reversed range, or more
/// than 1 000 000 values.
pub fn parse_int_list(text: &str, flag: &str) -> Result<Vec<i64>> {
    let err = |m: String| Error::Parse {
        location: flag.to_string(),
        message: m,
    };
    let int = |t: &str| -> Result<i64> {
        t.trim().parse::<i64>().map_err(|_| {
            err(format!(
                "'{}' is not a whole number; write e.g. 0..40 or -1,1",
                t.trim()
            ))
        })
    };
    let mut out = Vec::new();
    for part in text.split(',') {
        let part = part.trim();
        if part.is_empty() {
            return Err(err(format!(
                "empty item in '{text}'; write e.g. 0..40 or -1,1"
            )));
        }
        // a range needs '..' that is not at the start (a leading '-' is a sign)
        if let Some((a, b)) = part.split_once("..") {
            let b = b.strip_prefix('=').unwrap_or(b);
            let (a, b) = (int(a)?, int(b)?);
            if b < a {
                return Err(err(format!(
                    "the range {part} is reversed; write the smaller end first"
                )));
            }
            if b - a >= 1_000_000 {
                return Err(err(format!(
                    "the range {part} has more than 1000000 values"
                )));
            }
            out.extend(a..=b);
        } else {
            out.push(int(part)?);
        }
        if out.len() > 1_000_000 {
            return Err(err("more than 1000000 values".into()));
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn int_lists_parse_and_reject() {
        // examples of the syntax documented above (from the README, Verifying a level formula)
        assert_eq!(
            parse_int_list("0..3,7", "--n").unwrap_or_default(),
            vec![0, 1, 2, 3, 7]
        );
        let ok = |t: &str| parse_int_list(t, "--n").unwrap_or_default();
        assert_eq!(ok("0..3"), vec![0, 1, 2, 3]);
        assert_eq!(ok("0..=2"), vec![0, 1, 2]);
        assert_eq!(ok("-2..-1"), vec![-2, -1]);
        assert_eq!(ok(" -1 , 1 "), vec![-1, 1]);
        for bad in ["", "3..1", "a", "1,,2", "0..x", "1.5"] {
            assert!(parse_int_list(bad, "--n").is_err(), "{bad}");
        }
    }
}
