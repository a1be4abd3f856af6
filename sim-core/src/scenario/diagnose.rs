//! Diagnosis of structural problems: the full path of a bad field (inside
//! a tagged part too), duplicate keys, suggestions for unknown names,
//! repairs that let the reader go on to the next problem.

use super::{ControllerSpec, Diode, Load, Scenario};
use crate::error::ScenarioError;
use serde::de::Deserializer;
use serde::Deserialize;
use std::fmt;

/// The first structural problem of a scenario held as JSON: the full
/// dotted path of the field (inside a tagged part too) and the message,
/// with a suggestion for an unknown name. `None`: it reads.
pub(super) fn structure_error(value: &serde_json::Value) -> Option<(String, String)> {
    let e = serde_path_to_error::deserialize::<_, Scenario>(value).err()?;
    let mut path = e.path().to_string();
    if path == "." {
        path.clear();
    }
    let inner = e.into_inner().to_string();
    if let Some(field) = value
        .get(&path)
        .filter(|_| TAGGED_PARTS.contains(&path.as_str()))
        .and_then(|part| culprit(&path, part, &inner).or_else(|| field_in(part, &inner)))
    {
        path = format!("{path}.{field}");
    }
    Some((path, explain(&inner)))
}

/// The parts read as a whole by an internally tagged enum: serde's path
/// stops at the part.
const TAGGED_PARTS: [&str; 3] = ["diode", "load", "controller"];

/// The message reading one tagged part alone gives (None: it reads).
fn part_error(name: &str, part: &serde_json::Value) -> Option<String> {
    let e = match name {
        "diode" => Diode::deserialize(part).err(),
        "load" => Load::deserialize(part).err(),
        "controller" => ControllerSpec::deserialize(part).err(),
        _ => None,
    };
    e.map(|e| e.to_string())
}

/// The field of a tagged part an error is about, found by taking fields
/// out one at a time: the one whose absence changes the error is it
/// (a type error is raised while the fields are read, before any
/// "missing field" check, so taking out a good field leaves it).
pub(super) fn culprit(name: &str, part: &serde_json::Value, message: &str) -> Option<String> {
    let obj = part.as_object()?;
    if message.contains("unknown field") || message.contains("missing field") {
        return None;
    }
    let original = part_error(name, part)?;
    obj.keys()
        .filter(|k| !["kind", "model"].contains(&k.as_str()))
        .find(|k| {
            let mut less = obj.clone();
            less.remove(*k);
            part_error(name, &serde_json::Value::Object(less)).as_deref() != Some(&original)
        })
        .cloned()
}

/// Changes `value` so that reading goes past the problem at `path`:
/// an unknown field is dropped, a missing or bad one takes the starter
/// scenario's value (or is dropped when it has none). False when nothing
/// could be done.
pub(super) fn repair(
    value: &mut serde_json::Value,
    model: &serde_json::Value,
    path: &str,
    message: &str,
) -> bool {
    let quoted = |marker: &str| -> Option<String> {
        let i = message.find(marker)? + marker.len();
        let rest = &message[i..];
        rest.find('`').map(|j| rest[..j].to_string())
    };
    let parts: Vec<&str> = path.split('.').filter(|p| !p.is_empty()).collect();
    let lookup = |root: &serde_json::Value, parts: &[&str]| -> Option<serde_json::Value> {
        parts.iter().try_fold(root, |v, p| v.get(*p)).cloned()
    };
    // The object the field sits in, and the field's name.
    let (parent, field): (Vec<&str>, String) = if let Some(name) = quoted("missing field `") {
        // The path names the object missing it (or the field, for a
        // tagged part found by name).
        if parts.last() == Some(&name.as_str()) {
            (parts[..parts.len() - 1].to_vec(), name)
        } else {
            (parts.clone(), name)
        }
    } else if let Some(name) = quoted("unknown field `") {
        if parts.last() == Some(&name.as_str()) {
            (parts[..parts.len() - 1].to_vec(), name)
        } else {
            (parts.clone(), name)
        }
    } else if let Some((last, rest)) = parts.split_last() {
        (rest.to_vec(), (*last).to_string())
    } else {
        return false;
    };
    let mut full = parent.clone();
    full.push(&field);
    let replacement = if message.contains("unknown field") {
        None
    } else {
        lookup(model, &full)
    };
    let Some(obj) = parent
        .iter()
        .try_fold(&mut *value, |v, p| v.get_mut(*p))
        .and_then(|v| v.as_object_mut())
    else {
        return false;
    };
    match replacement {
        Some(r) => {
            obj.insert(field, r);
            true
        }
        None => obj.remove(&field).is_some(),
    }
}

/// Every key given twice in one object of a JSON text, each as a syntax
/// error with its path, line and column (a JSON value keeps only the
/// last, so the check reads the text itself).
pub(super) fn duplicate_keys(text: &str) -> Vec<ScenarioError> {
    use serde::de::{DeserializeSeed, MapAccess, SeqAccess, Visitor};
    struct Walk<'a> {
        path: String,
        found: &'a std::cell::RefCell<Vec<(String, String)>>,
    }
    impl<'de> DeserializeSeed<'de> for Walk<'_> {
        type Value = ();
        fn deserialize<D: Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
            d.deserialize_any(self)
        }
    }
    impl<'de> Visitor<'de> for Walk<'_> {
        type Value = ();
        fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
            f.write_str("any JSON value")
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
        fn visit_seq<A: SeqAccess<'de>>(self, mut a: A) -> Result<(), A::Error> {
            let mut k = 0;
            while a
                .next_element_seed(Walk {
                    path: format!("{}[{k}]", self.path),
                    found: self.found,
                })?
                .is_some()
            {
                k += 1;
            }
            Ok(())
        }
        fn visit_map<A: MapAccess<'de>>(self, mut a: A) -> Result<(), A::Error> {
            let mut keys = std::collections::HashSet::new();
            while let Some(key) = a.next_key::<String>()? {
                let path = if self.path.is_empty() {
                    key.clone()
                } else {
                    format!("{}.{key}", self.path)
                };
                if !keys.insert(key.clone()) {
                    self.found.borrow_mut().push((path.clone(), key));
                }
                a.next_value_seed(Walk {
                    path,
                    found: self.found,
                })?;
            }
            Ok(())
        }
    }
    let found = std::cell::RefCell::new(Vec::new());
    let mut de = serde_json::Deserializer::from_str(text);
    if (Walk {
        path: String::new(),
        found: &found,
    })
    .deserialize(&mut de)
    .is_err()
    {
        return Vec::new();
    }
    let found = found.into_inner();
    found
        .into_iter()
        .map(|(path, key)| {
            // Where the second one starts, for line and column (only when
            // the name occurs just twice in the text, so the place is sure).
            let (line, column) = if text.matches(&format!("\"{key}\"")).count() == 2 {
                locate_key(text, &key, 2)
            } else {
                (0, 0)
            };
            ScenarioError::Syntax {
                path,
                message: format!("duplicate key `{key}`: it is given twice in the same object"),
                line,
                column,
            }
        })
        .collect()
}

/// Line and column (1-based) of the `nth` occurrence of `"key"` in the
/// text (0, 0 when not found).
fn locate_key(text: &str, key: &str, nth: usize) -> (usize, usize) {
    let needle = format!("\"{key}\"");
    let Some((at, _)) = text.match_indices(&needle).nth(nth.saturating_sub(1)) else {
        return (0, 0);
    };
    let before = &text[..at];
    let line = before.matches('\n').count() + 1;
    let column = before.rfind('\n').map_or(at, |n| at - n - 1) + 1;
    (line, column)
}

/// The field of a tagged part that an error message is about.
pub(super) fn field_in(part: &serde_json::Value, message: &str) -> Option<String> {
    let obj = part.as_object()?;
    for marker in ["missing field `", "unknown field `"] {
        if let Some(i) = message.find(marker) {
            let rest = &message[i + marker.len()..];
            return rest.find('`').map(|j| rest[..j].to_string());
        }
    }
    if message.contains("unknown variant") {
        return ["kind", "model"]
            .into_iter()
            .find(|k| obj.contains_key(*k))
            .map(str::to_string);
    }
    // The message quotes the offending value in backticks: find the key
    // holding it.
    let quoted: Vec<&str> = message.split('`').skip(1).step_by(2).collect();
    obj.iter().find_map(|(k, v)| {
        let shown = match v {
            serde_json::Value::String(s) => s.clone(),
            other => other.to_string(),
        };
        quoted.contains(&shown.as_str()).then(|| k.clone())
    })
}

pub(super) fn syntax(e: serde_json::Error, path: &str) -> ScenarioError {
    let message = e.to_string();
    // serde_json appends " at line L column C"; keep the message clean.
    let message = match message.rfind(" at line ") {
        Some(i) => message[..i].to_string(),
        None => message,
    };
    let message = explain(&message);
    ScenarioError::Syntax {
        path: if path == "." {
            String::new()
        } else {
            path.to_string()
        },
        message,
        line: e.line(),
        column: e.column(),
    }
}

/// Adds what a reader needs to a serde message: the nearest known field
/// for an unknown one, the unit of a missing one.
fn explain(message: &str) -> String {
    let quoted = |after: &str| -> Option<String> {
        let i = message.find(after)? + after.len();
        let rest = &message[i..];
        rest.find('`').map(|j| rest[..j].to_string())
    };
    if let Some(name) = quoted("unknown field `").or_else(|| quoted("unknown variant `")) {
        let known: Vec<&str> = message
            .split("expected one of ")
            .nth(1)
            .or_else(|| message.split("expected ").nth(1))
            .map(|list| list.split(", ").map(|k| k.trim_matches('`')).collect())
            .unwrap_or_default();
        if let Some(best) = known
            .iter()
            .filter(|k| !k.is_empty())
            .min_by_key(|k| edit_distance(&name, k))
            .filter(|k| edit_distance(&name, k) <= name.len().max(3) / 2)
        {
            return format!("{message}; did you mean `{best}`?");
        }
        return message.to_string();
    }
    if let Some(name) = quoted("missing field `") {
        if let Some(unit) = unit_of(&name) {
            return format!("{message} (a value in {unit})");
        }
    }
    message.to_string()
}

/// The unit a field's name ends in, in words.
pub fn unit_of(field: &str) -> Option<&'static str> {
    let suffixes = [
        ("_v", "volts, e.g. 12 or \"12V\""),
        ("_a", "amperes, e.g. 0.7 or \"700m\""),
        ("_ohm", "ohms, e.g. 0.05 or \"50m\""),
        ("_h", "henries, e.g. 4.7e-5 or \"47u\""),
        ("_f", "farads, e.g. 1e-5 or \"10u\""),
        ("_s", "seconds, e.g. 2e-6 or \"2u\""),
        ("_hz", "hertz, e.g. 4e5 or \"400k\""),
        ("_c", "degrees Celsius"),
    ];
    suffixes
        .iter()
        .find(|(suffix, _)| field.ends_with(suffix))
        .map(|(_, unit)| *unit)
}

/// Levenshtein distance between two short names.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let cost = usize::from(ca != *cb);
            cur[j + 1] = (prev[j] + cost).min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// The path a problem is listed under: a missing field's own path
/// (`supply.voltage_v`, `name`) rather than its section's (or the empty
/// top level).
pub(super) fn missing_field_path(path: &str, message: &str) -> String {
    let name = message
        .split_once("missing field `")
        .and_then(|(_, rest)| rest.split_once('`'))
        .map(|(name, _)| name);
    match name {
        Some(name) if path.is_empty() => name.to_string(),
        Some(name) if path.rsplit('.').next() != Some(name) => format!("{path}.{name}"),
        _ => path.to_string(),
    }
}
