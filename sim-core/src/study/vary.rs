//! What a sweep varies: `PATH=START:STOP:COUNT` (evenly spaced, both ends
//! included), `PATH=v1,v2,v3` (a list), `PATH=range` or `PATH=range:COUNT`
//! (the scenario's declared `supply.input_range_v`, for `supply.voltage_v`
//! only), and the 1-D or 2-D grid the specifications span.
//!
//! Values may use engineering notation with the field's unit (`4.7u`,
//! `22uH`); the unit is taken from the field name's suffix (`_h`, `_v`, …).

use super::StudyError;
use crate::error::ScenarioError;
use crate::scenario::Scenario;
use crate::units::{parse_quantity, Unit};

/// Points a `range` specification takes when it gives no count.
pub(crate) const DEFAULT_RANGE_COUNT: usize = 11;

/// Most points one variable may take.
pub const MAX_POINTS_PER_AXIS: usize = 100_000;

/// One swept variable: a scenario field and the values it takes.
#[derive(Debug, Clone, PartialEq)]
pub struct Vary {
    /// Dotted field path, e.g. `supply.voltage_v`.
    pub path: String,
    /// The values, in sweep order.
    pub values: Vec<f64>,
    /// The specification resolved to numbers (`path=start:stop:count` or
    /// `path=v1,v2`), as it reads back to the same values.
    pub resolved: String,
}

/// The unit a field is measured in, from its name's suffix.
pub fn unit_of(path: &str) -> Unit {
    let last = path.rsplit('.').next().unwrap_or(path);
    let suffix = last.rsplit('_').next().unwrap_or("");
    match suffix {
        "v" => Unit::Volt,
        "a" => Unit::Ampere,
        "ohm" => Unit::Ohm,
        "h" => Unit::Henry,
        "f" => Unit::Farad,
        "s" => Unit::Second,
        "hz" => Unit::Hertz,
        // `_c` is a charge in coulombs (`gate_charge_c`) or a temperature.
        "c" if last.contains("charge") => Unit::Coulomb,
        "c" => Unit::Celsius,
        _ => Unit::Ratio,
    }
}

/// `n` evenly spaced values from `a` to `b`, both included (exactly).
pub(crate) fn linspace(a: f64, b: f64, n: usize) -> Vec<f64> {
    match n {
        0 => vec![],
        1 => vec![a],
        _ => (0..n)
            .map(|k| {
                if k + 1 == n {
                    b
                } else {
                    a + (b - a) * (k as f64 / (n - 1) as f64)
                }
            })
            .collect(),
    }
}

fn bad(spec: &str, reason: impl Into<String>) -> StudyError {
    StudyError::Vary {
        spec: spec.to_string(),
        reason: reason.into(),
    }
}

/// Splits `PATH=REST`.
pub(crate) fn split_spec(spec: &str) -> Result<(String, String), StudyError> {
    match spec.split_once('=') {
        Some((p, r)) if !p.trim().is_empty() && !r.trim().is_empty() => {
            Ok((p.trim().to_string(), r.trim().to_string()))
        }
        _ => Err(bad(
            spec,
            "expected PATH=START:STOP:COUNT, PATH=v1,v2,... or supply.voltage_v=range",
        )),
    }
}

fn number(spec: &str, path: &str, text: &str) -> Result<f64, StudyError> {
    parse_quantity(text, unit_of(path)).map_err(|e| bad(spec, e))
}

fn count(spec: &str, text: &str) -> Result<usize, StudyError> {
    let n: usize = text
        .trim()
        .parse()
        .map_err(|_| bad(spec, format!("`{text}` is not a whole number of points")))?;
    if n == 0 || n > MAX_POINTS_PER_AXIS {
        return Err(bad(
            spec,
            format!("the count must be 1 to {MAX_POINTS_PER_AXIS}, not {n}"),
        ));
    }
    Ok(n)
}

impl Vary {
    /// Parses one specification against the scenario it will vary: the
    /// path must name a numeric field the scenario sets.
    pub fn parse(spec: &str, scenario: &Scenario) -> Result<Vary, StudyError> {
        let (path, rest) = split_spec(spec)?;
        scenario.numeric_field(&path).map_err(|r| bad(spec, r))?;
        let values = if rest == "range" || rest.starts_with("range:") {
            if path != "supply.voltage_v" {
                return Err(bad(
                    spec,
                    "`range` takes supply.input_range_v, so it applies to supply.voltage_v only",
                ));
            }
            let r = scenario.supply.input_range_v.ok_or_else(|| {
                bad(
                    spec,
                    "the scenario declares no supply.input_range_v; add it or give START:STOP:COUNT",
                )
            })?;
            let n = match rest.strip_prefix("range:") {
                Some(c) => count(spec, c)?,
                None => DEFAULT_RANGE_COUNT,
            };
            linspace(r.min_v, r.max_v, n)
        } else if rest.contains(':') {
            let parts: Vec<&str> = rest.split(':').collect();
            if parts.len() != 3 {
                return Err(bad(spec, "a range is START:STOP:COUNT"));
            }
            let a = number(spec, &path, parts[0])?;
            let b = number(spec, &path, parts[1])?;
            let n = count(spec, parts[2])?;
            if n > 1 && (a - b).abs() <= f64::EPSILON * a.abs().max(b.abs()) {
                return Err(bad(spec, "START equals STOP: give one value instead"));
            }
            linspace(a, b, n)
        } else {
            let v = rest
                .split(',')
                .map(|t| number(spec, &path, t))
                .collect::<Result<Vec<f64>, _>>()?;
            if v.len() > MAX_POINTS_PER_AXIS {
                return Err(bad(spec, "too many values"));
            }
            v
        };
        let resolved = format!(
            "{path}={}",
            values
                .iter()
                .map(|x| super::exact_text(*x))
                .collect::<Vec<_>>()
                .join(",")
        );
        Ok(Vary {
            path,
            values,
            resolved,
        })
    }

    /// Parses `PATH=LOW:HIGH` (a bracket for the boundary search).
    pub fn parse_bracket(
        spec: &str,
        scenario: &Scenario,
    ) -> Result<(String, f64, f64), StudyError> {
        let (path, rest) = split_spec(spec)?;
        scenario.numeric_field(&path).map_err(|r| bad(spec, r))?;
        let (lo, hi) = if rest == "range" {
            let r = scenario
                .supply
                .input_range_v
                .filter(|_| path == "supply.voltage_v")
                .ok_or_else(|| {
                    bad(
                        spec,
                        "`range` needs supply.voltage_v and a declared supply.input_range_v",
                    )
                })?;
            (r.min_v, r.max_v)
        } else {
            let parts: Vec<&str> = rest.split(':').collect();
            if parts.len() != 2 {
                return Err(bad(spec, "a bracket is LOW:HIGH"));
            }
            (
                number(spec, &path, parts[0])?,
                number(spec, &path, parts[1])?,
            )
        };
        if lo.partial_cmp(&hi) != Some(std::cmp::Ordering::Less) {
            return Err(bad(spec, "LOW must be below HIGH"));
        }
        Ok((path, lo, hi))
    }
}

/// The points of a 1-D or 2-D sweep: the first variable runs fastest, so
/// point `k` has `values[0][k % n0]` and `values[1][k / n0]`.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    /// The swept variables (one or two).
    pub axes: Vec<Vary>,
}

impl Grid {
    /// A grid of one or two variables; paths must differ.
    pub fn new(axes: Vec<Vary>) -> Result<Grid, StudyError> {
        if axes.is_empty() || axes.len() > 2 {
            return Err(StudyError::Vary {
                spec: axes
                    .iter()
                    .map(|a| a.path.clone())
                    .collect::<Vec<_>>()
                    .join(" "),
                reason: "give one --vary (1-D sweep) or two (2-D grid)".into(),
            });
        }
        if axes.len() == 2 && axes[0].path == axes[1].path {
            return Err(StudyError::Vary {
                spec: axes[1].resolved.clone(),
                reason: "the two variables must be different fields".into(),
            });
        }
        let total = axes.iter().map(|a| a.values.len()).product::<usize>();
        if total > 10_000_000 {
            return Err(StudyError::Vary {
                spec: axes[0].path.clone(),
                reason: format!("{total} points is more than one study should hold"),
            });
        }
        Ok(Grid { axes })
    }

    /// Number of points.
    pub fn len(&self) -> usize {
        self.axes.iter().map(|a| a.values.len()).product()
    }

    /// Whether the grid has no points.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Number of values along each axis.
    pub fn shape(&self) -> Vec<usize> {
        self.axes.iter().map(|a| a.values.len()).collect()
    }

    /// The scenario of point `k`: `base` with the point's values set on
    /// it directly ([`Scenario::with_values`]: no JSON round trip,
    /// validated once), the same scenario, bit for bit, as the values
    /// written into the file would give.
    pub fn scenario(&self, base: &Scenario, k: usize) -> Result<Scenario, ScenarioError> {
        point_scenario(base, &self.point(k))
    }

    /// The `(path, value)` settings of point `k`.
    pub fn point(&self, k: usize) -> Vec<(String, f64)> {
        let mut rest = k;
        self.axes
            .iter()
            .map(|a| {
                let n = a.values.len();
                let v = a.values[rest % n];
                rest /= n;
                (a.path.clone(), v)
            })
            .collect()
    }
}

/// `base` with each `(path, value)` of a study point set on it directly,
/// validated once (see [`Scenario::with_values`]).
pub(crate) fn point_scenario(
    base: &Scenario,
    sets: &[(String, f64)],
) -> Result<Scenario, ScenarioError> {
    base.with_values(sets)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::template;

    /// A charge ending in `_c` is in coulombs, a temperature in °C.
    #[test]
    fn charges_and_temperatures_have_their_units() {
        assert_eq!(unit_of("parts.switch.gate_charge_c"), Unit::Coulomb);
        assert_eq!(
            unit_of("parts.diode.reverse_recovery_charge_c"),
            Unit::Coulomb
        );
        assert_eq!(unit_of("parts.ambient_temperature_c"), Unit::Celsius);
        assert_eq!(unit_of("load.junction_temperature_c"), Unit::Celsius);
    }

    #[test]
    fn forms_parse() {
        let s = template();
        let v = Vary::parse("supply.voltage_v=10:14:5", &s).unwrap();
        assert_eq!(v.values.len(), 5);
        assert!((v.values[4] - 14.0).abs() < 1e-12);
        let v = Vary::parse("inductor.inductance_h=22u,47u,68uH", &s).unwrap();
        assert!((v.values[1] - 47e-6).abs() < 1e-18);
        let v = Vary::parse("supply.voltage_v=range:3", &s).unwrap();
        assert!((v.values[0] - 10.5).abs() < 1e-12 && (v.values[2] - 14.0).abs() < 1e-12);
        // The resolved text reads back to the same values.
        let again = Vary::parse(&v.resolved, &s).unwrap();
        assert_eq!(again.values, v.values);
    }

    #[test]
    fn bad_forms_say_why() {
        let s = template();
        for spec in [
            "supply.voltage_v",
            "supply.volts=1:2:3",
            "supply.voltage_v=1:2",
            "supply.voltage_v=1:2:0",
            "inductor.inductance_h=range",
            "inductor.inductance_h=4.7V:10u:3",
            "name=1:2:3",
        ] {
            let e = Vary::parse(spec, &s).unwrap_err();
            assert!(matches!(e, StudyError::Vary { .. }), "{spec}: {e}");
        }
    }

    #[test]
    fn grid_runs_first_axis_fastest() {
        let s = template();
        let g = Grid::new(vec![
            Vary::parse("supply.voltage_v=11,12,13", &s).unwrap(),
            Vary::parse("inductor.inductance_h=47u,68u", &s).unwrap(),
        ])
        .unwrap();
        assert_eq!(g.len(), 6);
        let p = g.point(4);
        assert!((p[0].1 - 12.0).abs() < 1e-12 && (p[1].1 - 68e-6).abs() < 1e-18);
    }

    /// A grid point's scenario set directly is the one the JSON route
    /// (`study::scenario_with`: exact text, override, read back) gives,
    /// serialised text equal, at every point of a 2-D grid that crosses
    /// into invalid values (then both give the same error).
    #[test]
    fn grid_point_scenario_equals_the_json_route() {
        let s = template();
        let g = Grid::new(vec![
            Vary::parse("supply.voltage_v=9:15:7", &s).unwrap(),
            Vary::parse("inductor.inductance_h=-10u,22u,33.3u,47u", &s).unwrap(),
        ])
        .unwrap();
        let base = crate::study::scenario_json(&s);
        let mut ok = 0;
        for k in 0..g.len() {
            let typed = g.scenario(&s, k);
            let json = crate::study::scenario_with(&base, &g.point(k));
            match (typed, json) {
                (Ok(a), Ok(b)) => {
                    assert_eq!(
                        serde_json::to_string(&a).unwrap(),
                        serde_json::to_string(&b).unwrap(),
                        "point {k}"
                    );
                    ok += 1;
                }
                (Err(a), Err(b)) => assert_eq!(a.to_string(), b.to_string(), "point {k}"),
                (a, b) => panic!("point {k}: {a:?} vs {b:?}"),
            }
        }
        assert!(ok >= 14, "{ok} valid points");
    }
}
