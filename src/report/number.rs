//! JSON numbers by the Contract: finite values as JSON numbers, non-finite ones as the
//! strings `"nan"`, `"inf"` and `"-inf"` (JSON has no literal for them). Reading accepts both
//! forms, so reports parse back into the same structs.

use serde::de::{self, Deserializer, Visitor};
use serde::Serializer;
use std::fmt;

/// The Contract's text for a non-finite value, or `None` for a finite one.
pub fn non_finite_text(v: f64) -> Option<&'static str> {
    if v.is_nan() {
        Some("nan")
    } else if v == f64::INFINITY {
        Some("inf")
    } else if v == f64::NEG_INFINITY {
        Some("-inf")
    } else {
        None
    }
}

/// Serialises an `f64` (use with `#[serde(with = "number")]`).
pub fn serialize<S: Serializer>(v: &f64, s: S) -> Result<S::Ok, S::Error> {
    match non_finite_text(*v) {
        Some(t) => s.serialize_str(t),
        None => s.serialize_f64(*v),
    }
}

struct NumberVisitor;

impl Visitor<'_> for NumberVisitor {
    type Value = f64;
    fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("a number or one of \"nan\", \"inf\", \"-inf\"")
    }
    fn visit_f64<E: de::Error>(self, v: f64) -> Result<f64, E> {
        Ok(v)
    }
    fn visit_i64<E: de::Error>(self, v: i64) -> Result<f64, E> {
        Ok(v as f64)
    }
    fn visit_u64<E: de::Error>(self, v: u64) -> Result<f64, E> {
        Ok(v as f64)
    }
    fn visit_str<E: de::Error>(self, v: &str) -> Result<f64, E> {
        match v {
            "nan" => Ok(f64::NAN),
            "inf" => Ok(f64::INFINITY),
            "-inf" => Ok(f64::NEG_INFINITY),
            other => Err(E::custom(format!("not a number: {other:?}"))),
        }
    }
}

/// Deserialises an `f64` written by [`serialize`].
pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
    d.deserialize_any(NumberVisitor)
}

/// The same for `Option<f64>` (`null` for `None`); use with
/// `#[serde(default, with = "number::opt")]`.
pub mod opt {
    use super::NumberVisitor;
    use serde::de::{self, Deserializer, Visitor};
    use serde::Serializer;
    use std::fmt;

    pub fn serialize<S: Serializer>(v: &Option<f64>, s: S) -> Result<S::Ok, S::Error> {
        match v {
            Some(x) => super::serialize(x, s),
            None => s.serialize_none(),
        }
    }

    struct OptVisitor;

    impl<'de> Visitor<'de> for OptVisitor {
        type Value = Option<f64>;
        fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
            f.write_str("null, a number or one of \"nan\", \"inf\", \"-inf\"")
        }
        fn visit_none<E: de::Error>(self) -> Result<Option<f64>, E> {
            Ok(None)
        }
        fn visit_unit<E: de::Error>(self) -> Result<Option<f64>, E> {
            Ok(None)
        }
        fn visit_some<D: Deserializer<'de>>(self, d: D) -> Result<Option<f64>, D::Error> {
            d.deserialize_any(NumberVisitor).map(Some)
        }
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Option<f64>, D::Error> {
        d.deserialize_option(OptVisitor)
    }
}

#[cfg(test)]
mod tests {
    use serde::{Deserialize, Serialize};

    #[derive(Debug, Serialize, Deserialize)]
    struct T {
        #[serde(with = "super")]
        a: f64,
        #[serde(default, with = "super::opt")]
        b: Option<f64>,
    }

    #[test]
    fn non_finite_values_are_strings_and_read_back() {
        for (v, text) in [
            (f64::NAN, "\"nan\""),
            (f64::INFINITY, "\"inf\""),
            (f64::NEG_INFINITY, "\"-inf\""),
            (1.5, "1.5"),
        ] {
            let json = serde_json::to_string(&T { a: v, b: Some(v) }).unwrap();
            assert_eq!(json, format!("{{\"a\":{text},\"b\":{text}}}"));
            let back: T = serde_json::from_str(&json).unwrap();
            assert!(back.a == v || (v.is_nan() && back.a.is_nan()));
            assert!(back.b.is_some());
        }
        let none: T = serde_json::from_str("{\"a\":2,\"b\":null}").unwrap();
        assert_eq!(none.b, None);
        assert!(serde_json::from_str::<T>("{\"a\":\"many\"}").is_err());
    }
}
