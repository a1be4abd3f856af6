//! Setting fields by dotted path: `--set PATH=VALUE` overrides on a
//! scenario held as JSON.

use crate::error::ScenarioError;

/// Most dotted names an override path may have.
pub const MAX_OVERRIDE_DEPTH: usize = 8;

/// Sets one field of a scenario held as JSON, by dotted path
/// (`supply.voltage_v`, `controller.off_time_s`), to `value`.
///
/// The value is stored as a JSON number when it reads as one, as `true` /
/// `false` / `null` for those words, and as text otherwise (so engineering
/// notation such as `4.7u` is checked by the normal loader). Intermediate
/// objects are created when missing.
pub fn apply_override(
    root: &mut serde_json::Value,
    path: &str,
    value: &str,
) -> Result<(), ScenarioError> {
    let err = |reason: &str| ScenarioError::Override {
        // A path too long to be a field is shown cut short.
        path: if path.len() > 80 {
            format!("{}…", path.chars().take(60).collect::<String>())
        } else {
            path.to_string()
        },
        reason: reason.to_string(),
    };
    if path.is_empty() || path.split('.').any(str::is_empty) {
        return Err(err(
            "the path must be dotted field names, e.g. supply.voltage_v",
        ));
    }
    // The deepest field of a scenario is four names down; a longer path
    // names nothing (and must not build a nested value without bound).
    if path.split('.').count() > MAX_OVERRIDE_DEPTH || path.len() > 256 {
        return Err(err(&format!(
            "the path is deeper than any scenario field (at most {MAX_OVERRIDE_DEPTH} names, \
             256 characters)"
        )));
    }
    let parsed: serde_json::Value = match value.trim() {
        "true" => true.into(),
        "false" => false.into(),
        "null" => serde_json::Value::Null,
        v => match v.parse::<f64>() {
            Ok(x) if x.is_finite() => {
                if x.fract() == 0.0 && x.abs() < 9e15 {
                    serde_json::Value::from(x as i64)
                } else {
                    serde_json::Value::from(x)
                }
            }
            _ => serde_json::Value::String(v.to_string()),
        },
    };
    let mut node = root;
    let parts: Vec<&str> = path.split('.').collect();
    for (k, part) in parts.iter().enumerate() {
        let obj = node
            .as_object_mut()
            .ok_or_else(|| err(&format!("`{}` is not an object", parts[..k].join("."))))?;
        if k + 1 == parts.len() {
            obj.insert((*part).to_string(), parsed);
            return Ok(());
        }
        node = obj
            .entry((*part).to_string())
            .or_insert_with(|| serde_json::Value::Object(Default::default()));
    }
    Ok(())
}
