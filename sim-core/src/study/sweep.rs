//! Sweeps: every point of a 1-D or 2-D [`Grid`], run to steady state in
//! parallel, one row per point.

use super::rows::{
    digest, metric_columns, Columns, Incomplete, Manifest, ShardInfo, StudyKind, StudyTable,
    STUDY_FORMAT,
};
use super::run::{run_points, Hooks, PointError, PointInput, RunSettings, Shard};
use super::scenario_json;
use super::vary::Grid;
use crate::run::EngineKind;
use crate::scenario::{ControllerSpec, Scenario};
use std::ops::Range;

/// The manifest fields every study shares.
pub(crate) fn base_manifest(
    s: &Scenario,
    kind: StudyKind,
    settings: &RunSettings,
    inputs: Vec<String>,
    points: usize,
) -> Manifest {
    let value = scenario_json(s);
    let nominal_inputs: Vec<Option<f64>> = inputs
        .iter()
        .map(|p| {
            value
                .pointer(&format!("/{}", p.replace('.', "/")))
                .and_then(serde_json::Value::as_f64)
        })
        .collect();
    let nominal_inputs = if nominal_inputs.iter().any(Option::is_some) {
        nominal_inputs
    } else {
        vec![]
    };
    let json = value.to_string();
    Manifest {
        nominal_inputs,
        format: STUDY_FORMAT.into(),
        kind,
        scenario: s.name.clone(),
        scenario_digest: digest(&json),
        inputs,
        shape: vec![points],
        points,
        vary: vec![],
        seed: None,
        warm_start: settings.warm_start,
        chain_len: settings.chain_len.max(1),
        engine: match settings.engine {
            EngineKind::Exact => "exact".into(),
            EngineKind::Reference => "reference".into(),
        },
        input_notes: vec![],
        spec: None,
        inductor_saturation_a: s.inductor.saturation_current_a,
        controller_max_frequency_hz: s.parts.controller.max_frequency_hz,
        controller_min_on_time_s: s.parts.controller.min_on_time_s,
        switch_off_current_a: match s.controller {
            ControllerSpec::ConstantOffTime { peak_current_a, .. } => Some(peak_current_a),
            ControllerSpec::Hysteretic {
                upper_current_a, ..
            } => Some(upper_current_a),
            ControllerSpec::FixedDuty { .. } => None,
        },
        max_supply_v: s.supply.voltage_v,
        metric_columns: metric_columns(),
        shard: None,
        incomplete: None,
    }
}

/// The manifest of a sweep (or one shard of it), as [`sweep`] writes it,
/// known before any point runs (e.g. to head a journal of its rows).
pub fn sweep_manifest(
    s: &Scenario,
    grid: &Grid,
    settings: &RunSettings,
    shard: Option<Shard>,
) -> Manifest {
    let n = grid.len();
    let settings = &settings.for_sweep_of(s);
    let mut manifest = base_manifest(
        s,
        StudyKind::Sweep,
        settings,
        grid.axes.iter().map(|a| a.path.clone()).collect(),
        n,
    );
    manifest.shape = grid.shape();
    manifest.vary = grid.axes.iter().map(|a| a.resolved.clone()).collect();
    if let Some(k) = grid.axes.iter().position(|a| a.path == "supply.voltage_v") {
        manifest.max_supply_v = grid.axes[k]
            .values
            .iter()
            .copied()
            .fold(manifest.max_supply_v, f64::max);
    }
    if let Some(sh) = shard {
        let range = sh.range(n, manifest.chain_len);
        manifest.shard = Some(ShardInfo {
            shard: sh,
            first: range.start,
            end: range.end,
        });
    }
    manifest
}

/// The point indices a manifest's table covers (its shard, or all).
pub fn point_range(m: &Manifest) -> Range<usize> {
    m.shard.map_or(0..m.points, |i| i.first..i.end)
}

/// Runs the points of `manifest`'s range (`make(k)` gives point `k`)
/// and makes its table, marked incomplete when the run stopped at its
/// deadline.
pub(crate) fn run_table<F>(
    mut manifest: Manifest,
    settings: &RunSettings,
    make: F,
    hooks: &Hooks<'_>,
) -> StudyTable
where
    F: Fn(usize) -> PointInput + Sync,
{
    let columns: Columns = manifest.metric_columns.as_slice().into();
    let range = point_range(&manifest);
    let of = range.len();
    let run = run_points(range, settings, &columns, make, hooks);
    if run.stopped || run.rows.len() < of {
        manifest.incomplete = Some(Incomplete {
            reason: "time limit reached".into(),
            ran: run.rows.len(),
            of,
        });
    }
    StudyTable {
        manifest,
        rows: run.rows,
    }
}

/// Runs a sweep (or one shard of it), streaming rows through `hooks`.
pub fn sweep(
    s: &Scenario,
    grid: &Grid,
    settings: &RunSettings,
    shard: Option<Shard>,
    hooks: &Hooks<'_>,
) -> StudyTable {
    let settings = &settings.for_sweep_of(s);
    let manifest = sweep_manifest(s, grid, settings, shard);
    run_table(
        manifest,
        settings,
        |k| {
            let sets = grid.point(k);
            PointInput {
                inputs: sets.iter().map(|(_, v)| *v).collect(),
                label: None,
                scenario: s.with_values(&sets).map_err(PointError::InvalidPoint),
            }
        },
        hooks,
    )
}
