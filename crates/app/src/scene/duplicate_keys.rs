//! Keys given twice in one JSON object. A JSON reader keeps one of them silently (serde_json's
//! `Value` the last), so a scene that sets `upper_arm_mm` twice would quietly lose one value;
//! this walk over the text finds each such key with its JSON path before the document is read.

use std::collections::HashSet;
use std::fmt;

use serde::de::{DeserializeSeed, Deserializer, MapAccess, SeqAccess, Visitor};

use super::problem::{Problem, child, item};

/// Every key given more than once in one object of the JSON `bytes`, as a problem at the key's
/// JSON path, in the order of the text. Empty for text that is not JSON (the parser reports it).
pub(crate) fn duplicate_keys(bytes: &[u8]) -> Vec<Problem> {
    let mut found = Vec::new();
    let mut deserializer = serde_json::Deserializer::from_slice(bytes);
    let walk = Walk {
        path: String::new(),
        found: &mut found,
    };
    if walk.deserialize(&mut deserializer).is_err() {
        return Vec::new();
    }
    found
}

/// One value being walked, at `path`.
struct Walk<'a> {
    path: String,
    found: &'a mut Vec<Problem>,
}

impl<'de> DeserializeSeed<'de> for Walk<'_> {
    type Value = ();

    fn deserialize<D: Deserializer<'de>>(self, deserializer: D) -> Result<(), D::Error> {
        deserializer.deserialize_any(self)
    }
}

impl<'de> Visitor<'de> for Walk<'_> {
    type Value = ();

    fn expecting(&self, formatter: &mut fmt::Formatter) -> fmt::Result {
        formatter.write_str("any JSON value")
    }

    fn visit_bool<E>(self, _: bool) -> Result<(), E> {
        Ok(())
    }

    fn visit_i64<E>(self, _: i64) -> Result<(), E> {
        Ok(())
    }

    fn visit_u64<E>(self, _: u64) -> Result<(), E> {
        Ok(())
    }

    fn visit_f64<E>(self, _: f64) -> Result<(), E> {
        Ok(())
    }

    fn visit_str<E>(self, _: &str) -> Result<(), E> {
        Ok(())
    }

    fn visit_unit<E>(self) -> Result<(), E> {
        Ok(())
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<(), A::Error> {
        let mut index = 0;
        while seq
            .next_element_seed(Walk {
                path: item(&self.path, index),
                found: &mut *self.found,
            })?
            .is_some()
        {
            index += 1;
        }
        Ok(())
    }

    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<(), A::Error> {
        let mut seen = HashSet::new();
        while let Some(key) = map.next_key::<String>()? {
            let path = child(&self.path, &key);
            if !seen.insert(key.clone()) {
                self.found.push(Problem::new(
                    path.clone(),
                    format!(
                        "\"{key}\" is given more than once in this object; keep one (a reader \
                         would silently use only one of them)"
                    ),
                ));
            }
            map.next_value_seed(Walk {
                path,
                found: &mut *self.found,
            })?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn paths(text: &str) -> Vec<String> {
        duplicate_keys(text.as_bytes())
            .into_iter()
            .map(|problem| problem.path)
            .collect()
    }

    #[test]
    fn a_key_given_twice_is_found_at_its_path_at_any_depth() {
        assert_eq!(paths(r#"{"a": 1, "b": 2}"#), Vec::<String>::new());
        assert_eq!(paths(r#"{"a": 1, "a": 2}"#), ["a"]);
        let nested = r#"{"arm": {"joints": [{"servo": {"mass_g": 1}}, {"servo": {"mass_g": 1, "mass_g": 2}}]}}"#;
        assert_eq!(paths(nested), ["arm.joints[1].servo.mass_g"]);
        // The same key in two different objects is no duplicate.
        assert_eq!(paths(r#"[{"a": 1}, {"a": 2}]"#), Vec::<String>::new());
        // Three times is two findings, each at the path.
        assert_eq!(paths(r#"{"x": {"k": 1, "k": 2, "k": 3}}"#), ["x.k", "x.k"]);
    }

    #[test]
    fn text_that_is_not_json_gives_no_findings() {
        assert!(paths("{\"a\": 1, \"a\": ").is_empty());
        assert!(paths("not json").is_empty());
    }
}
