//! A guard on every JSON result: a number that is not finite (which JSON would print as
//! `null`) is found, with its path, before anything is printed.
//!
//! [`first_non_finite`] walks any [`Serialize`] value with a serializer that records nothing but
//! the path of the first NaN or infinity.

use serde::ser::{self, Serialize};
use std::fmt;

/// The path (`levels[3].energy`) and value of the first non-finite number in `value`, if any.
pub fn first_non_finite<T: Serialize + ?Sized>(value: &T) -> Option<(String, f64)> {
    let mut w = Walker {
        path: Vec::new(),
        found: None,
    };
    let _ = value.serialize(&mut w);
    w.found
}

struct Walker {
    path: Vec<String>,
    found: Option<(String, f64)>,
}

impl Walker {
    fn path_text(&self) -> String {
        let mut s = String::new();
        for p in &self.path {
            if p.starts_with('[') || s.is_empty() {
                s.push_str(p);
            } else {
                s.push('.');
                s.push_str(p);
            }
        }
        s
    }
    fn float(&mut self, x: f64) -> Result<(), Stop> {
        if x.is_finite() {
            Ok(())
        } else {
            self.found = Some((self.path_text(), x));
            Err(Stop)
        }
    }
    fn nested<T: Serialize + ?Sized>(&mut self, key: String, v: &T) -> Result<(), Stop> {
        self.path.push(key);
        v.serialize(&mut *self)?;
        self.path.pop();
        Ok(())
    }
}

/// Ends the walk at the first non-finite number (or at anything it cannot walk).
#[derive(Debug)]
struct Stop;

impl fmt::Display for Stop {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("stop")
    }
}
impl std::error::Error for Stop {}
impl ser::Error for Stop {
    fn custom<M: fmt::Display>(_: M) -> Self {
        Stop
    }
}

/// A sequence or map being walked: counts its elements for the path.
struct Items<'a> {
    w: &'a mut Walker,
    index: usize,
    key: Option<String>,
}

impl Items<'_> {
    fn element<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Stop> {
        let key = format!("[{}]", self.index);
        self.index += 1;
        self.w.nested(key, v)
    }
}

macro_rules! ok {
    ($($name:ident: $t:ty),*) => {
        $(fn $name(self, _: $t) -> Result<(), Stop> { Ok(()) })*
    };
}

impl<'a> ser::Serializer for &'a mut Walker {
    type Ok = ();
    type Error = Stop;
    type SerializeSeq = Items<'a>;
    type SerializeTuple = Items<'a>;
    type SerializeTupleStruct = Items<'a>;
    type SerializeTupleVariant = Items<'a>;
    type SerializeMap = Items<'a>;
    type SerializeStruct = Items<'a>;
    type SerializeStructVariant = Items<'a>;

    ok!(serialize_bool: bool, serialize_i8: i8, serialize_i16: i16, serialize_i32: i32,
        serialize_i64: i64, serialize_u8: u8, serialize_u16: u16, serialize_u32: u32,
        serialize_u64: u64, serialize_char: char, serialize_str: &str, serialize_bytes: &[u8],
        serialize_unit_struct: &'static str);

    fn serialize_f32(self, v: f32) -> Result<(), Stop> {
        self.float(v as f64)
    }
    fn serialize_f64(self, v: f64) -> Result<(), Stop> {
        self.float(v)
    }
    fn serialize_none(self) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_some<T: Serialize + ?Sized>(self, v: &T) -> Result<(), Stop> {
        v.serialize(self)
    }
    fn serialize_unit(self) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_unit_variant(self, _: &'static str, _: u32, _: &'static str) -> Result<(), Stop> {
        Ok(())
    }
    fn serialize_newtype_struct<T: Serialize + ?Sized>(
        self,
        _: &'static str,
        v: &T,
    ) -> Result<(), Stop> {
        v.serialize(self)
    }
    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        v: &T,
    ) -> Result<(), Stop> {
        self.nested(variant.to_string(), v)
    }
    fn serialize_seq(self, _: Option<usize>) -> Result<Items<'a>, Stop> {
        Ok(Items {
            w: self,
            index: 0,
            key: None,
        })
    }
    fn serialize_tuple(self, n: usize) -> Result<Items<'a>, Stop> {
        self.serialize_seq(Some(n))
    }
    fn serialize_tuple_struct(self, _: &'static str, n: usize) -> Result<Items<'a>, Stop> {
        self.serialize_seq(Some(n))
    }
    fn serialize_tuple_variant(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        n: usize,
    ) -> Result<Items<'a>, Stop> {
        self.serialize_seq(Some(n))
    }
    fn serialize_map(self, _: Option<usize>) -> Result<Items<'a>, Stop> {
        self.serialize_seq(None)
    }
    fn serialize_struct(self, _: &'static str, _: usize) -> Result<Items<'a>, Stop> {
        self.serialize_seq(None)
    }
    fn serialize_struct_variant(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        _: usize,
    ) -> Result<Items<'a>, Stop> {
        self.serialize_seq(None)
    }
}

impl ser::SerializeSeq for Items<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_element<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Stop> {
        self.element(v)
    }
    fn end(self) -> Result<(), Stop> {
        Ok(())
    }
}
impl ser::SerializeTuple for Items<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_element<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Stop> {
        self.element(v)
    }
    fn end(self) -> Result<(), Stop> {
        Ok(())
    }
}
impl ser::SerializeTupleStruct for Items<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Stop> {
        self.element(v)
    }
    fn end(self) -> Result<(), Stop> {
        Ok(())
    }
}
impl ser::SerializeTupleVariant for Items<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Stop> {
        self.element(v)
    }
    fn end(self) -> Result<(), Stop> {
        Ok(())
    }
}
impl ser::SerializeMap for Items<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_key<T: Serialize + ?Sized>(&mut self, k: &T) -> Result<(), Stop> {
        // map keys are strings or integers in our results: take their JSON text as the name
        self.key = Some(
            serde_json::to_string(k)
                .map(|s| s.trim_matches('"').to_string())
                .unwrap_or_else(|_| "?".into()),
        );
        Ok(())
    }
    fn serialize_value<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Stop> {
        let key = self.key.take().unwrap_or_else(|| "?".into());
        self.w.nested(key, v)
    }
    fn end(self) -> Result<(), Stop> {
        Ok(())
    }
}
impl ser::SerializeStruct for Items<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_field<T: Serialize + ?Sized>(
        &mut self,
        key: &'static str,
        v: &T,
    ) -> Result<(), Stop> {
        self.w.nested(key.to_string(), v)
    }
    fn end(self) -> Result<(), Stop> {
        Ok(())
    }
}
impl ser::SerializeStructVariant for Items<'_> {
    type Ok = ();
    type Error = Stop;
    fn serialize_field<T: Serialize + ?Sized>(
        &mut self,
        key: &'static str,
        v: &T,
    ) -> Result<(), Stop> {
        self.w.nested(key.to_string(), v)
    }
    fn end(self) -> Result<(), Stop> {
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeMap;

    #[derive(serde::Serialize)]
    struct Level {
        energy: f64,
        bound: Option<f64>,
    }

    #[derive(serde::Serialize)]
    struct Outcome {
        name: String,
        levels: Vec<Level>,
        window: (f64, f64),
        params: BTreeMap<String, f64>,
    }

    #[test]
    fn the_first_non_finite_number_is_found_with_its_path() {
        let mut r = Outcome {
            name: "m".into(),
            levels: vec![
                Level {
                    energy: 1.0,
                    bound: None,
                },
                Level {
                    energy: 2.0,
                    bound: Some(f64::NAN),
                },
            ],
            window: (0.0, 1.0),
            params: BTreeMap::from([("mass".to_string(), 1.0)]),
        };
        let (path, x) = first_non_finite(&r).unwrap_or_else(|| panic!("NaN not found"));
        assert_eq!(path, "levels[1].bound");
        assert!(x.is_nan());
        r.levels[1].bound = Some(0.5);
        assert!(first_non_finite(&r).is_none(), "None is a legitimate null");
        r.params.insert("gap".into(), f64::INFINITY);
        assert_eq!(
            first_non_finite(&r).map(|p| p.0).as_deref(),
            Some("params.gap")
        );
        r.params.remove("gap");
        r.window.1 = f64::NEG_INFINITY;
        assert_eq!(
            first_non_finite(&r).map(|p| p.0).as_deref(),
            Some("window[1]")
        );
    }
}
