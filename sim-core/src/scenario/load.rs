//! Reading a scenario: from JSON text (with `PATH=VALUE` overrides) or from
//! a parsed JSON value, stopping at the first structural error; or listing
//! every problem of a text at once.

use super::diagnose::{
    culprit, duplicate_keys, field_in, missing_field_path, repair, structure_error, syntax,
};
use super::paths::apply_override;
use super::template::template_with_parts;
use super::Scenario;
use crate::error::{FieldProblem, ScenarioError};
use serde::Deserialize;

impl Scenario {
    /// Reads and validates a scenario from JSON text.
    pub fn from_json_str(text: &str) -> Result<Scenario, ScenarioError> {
        Scenario::from_text(text)
    }

    /// Reads and validates a scenario from JSON text after applying
    /// `PATH=VALUE` overrides (see [`apply_override`]).
    pub fn from_json_str_with_overrides(
        text: &str,
        overrides: &[(String, String)],
    ) -> Result<Scenario, ScenarioError> {
        let mut value: serde_json::Value = serde_json::from_str(text).map_err(|e| syntax(e, ""))?;
        // A key given twice is refused before the JSON value (which keeps
        // only the last) hides it.
        if let Some(e) = duplicate_keys(text).into_iter().next() {
            return Err(e);
        }
        for (path, v) in overrides {
            apply_override(&mut value, path, v)?;
        }
        if overrides.is_empty() {
            return Scenario::from_text(text);
        }
        // Read straight from the value: an error on a field an override
        // set names the override, any other the original file's line.
        match structure_error(&value) {
            None => {
                let s = Scenario::deserialize(&value).map_err(|e| ScenarioError::Syntax {
                    path: String::new(),
                    message: e.to_string(),
                    line: 0,
                    column: 0,
                })?;
                s.validate()?;
                Ok(s)
            }
            Some((path, message)) => {
                let by = overrides.iter().rev().find(|(p, _)| {
                    p == &path
                        || p.starts_with(&format!("{path}."))
                        || path.starts_with(&format!("{p}."))
                });
                if let Some((p, v)) = by {
                    return Err(ScenarioError::Override {
                        path: format!("{p}={v}"),
                        reason: format!("{path}: {message}"),
                    });
                }
                match Scenario::from_text(text) {
                    Err(e @ ScenarioError::Syntax { .. })
                        if e.problems().first().is_some_and(|f| f.path == path) =>
                    {
                        Err(e)
                    }
                    _ => Err(ScenarioError::Syntax {
                        path,
                        message,
                        line: 0,
                        column: 0,
                    }),
                }
            }
        }
    }

    /// Every problem of a scenario text with overrides, not only the
    /// first: each duplicate key, each unknown, missing or mistyped field
    /// (the reader continues past each by dropping the unknown field or
    /// putting the starter scenario's value in place of the bad one), then
    /// every value problem. Empty when the scenario loads.
    pub fn problems_in(text: &str, overrides: &[(String, String)]) -> Vec<FieldProblem> {
        let mut value: serde_json::Value = match serde_json::from_str(text) {
            Ok(v) => v,
            Err(e) => return syntax(e, "").problems(),
        };
        let mut out: Vec<FieldProblem> = duplicate_keys(text)
            .into_iter()
            .flat_map(|e| e.problems())
            .collect();
        for (path, v) in overrides {
            if let Err(e) = apply_override(&mut value, path, v) {
                out.extend(e.problems());
            }
        }
        let model = serde_json::to_value(template_with_parts()).unwrap_or_default();
        let mut seen = std::collections::HashSet::new();
        for _ in 0..MAX_LISTED_PROBLEMS {
            let Some((path, message)) = structure_error(&value) else {
                break;
            };
            if !seen.insert((path.clone(), message.clone())) {
                break;
            }
            out.push(FieldProblem {
                path: missing_field_path(&path, &message),
                value: String::new(),
                reason: message.clone(),
            });
            if !repair(&mut value, &model, &path, &message) {
                break;
            }
        }
        // The value problems too, once the structure reads (fields that
        // were put right above are not listed twice).
        if structure_error(&value).is_none() {
            if let Err(e) = Scenario::from_json_value(&value) {
                for p in e.problems() {
                    if !out.iter().any(|o| o.path == p.path) {
                        out.push(p);
                    }
                }
            }
        }
        out
    }

    /// Reads and validates a scenario already parsed as JSON (a study's
    /// point: the base scenario with values set). Goes straight from the
    /// value; only a value that fails is re-read as text, so its message
    /// is exactly the one the same file would give.
    pub fn from_json_value(value: &serde_json::Value) -> Result<Scenario, ScenarioError> {
        match Scenario::deserialize(value) {
            Ok(s) => {
                s.validate()?;
                Ok(s)
            }
            Err(_) => Scenario::from_text(&value.to_string()),
        }
    }

    fn from_text(text: &str) -> Result<Scenario, ScenarioError> {
        if let Some(e) = duplicate_keys(text).into_iter().next() {
            return Err(e);
        }
        // serde_path_to_error adds the field path to line and column.
        let de = &mut serde_json::Deserializer::from_str(text);
        let scenario: Scenario = serde_path_to_error::deserialize(de).map_err(|e| {
            let mut path = e.path().to_string();
            let inner = e.into_inner();
            // Tagged parts (diode, load, controller) are read as a whole, so
            // the path stops at the part: find the field inside it.
            if let Ok(root) = serde_json::from_str::<serde_json::Value>(text) {
                let tagged = ["diode", "load", "controller"].contains(&path.as_str());
                let message = inner.to_string();
                if let Some(field) = root
                    .get(&path)
                    .filter(|_| tagged)
                    .and_then(|v| culprit(&path, v, &message).or_else(|| field_in(v, &message)))
                {
                    path = format!("{path}.{field}");
                }
            }
            syntax(inner, &path)
        })?;
        scenario.validate()?;
        Ok(scenario)
    }
}

/// Most structural problems [`Scenario::problems_in`] lists.
const MAX_LISTED_PROBLEMS: usize = 200;
