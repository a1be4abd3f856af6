//! Sweeps: every point of a 1-D or 2-D [`Grid`], run to steady state in
//! parallel, one row per point.

use super::rows::{
    digest, metric_columns, row_value, Manifest, ShardInfo, StudyKind, StudyTable, STUDY_FORMAT,
};
use super::run::{run_points, RunSettings, Shard};
use super::vary::Grid;
use super::{scenario_json, scenario_with};
use crate::scenario::Scenario;
use crate::simulate::EngineKind;

/// The manifest fields every study shares.
pub(crate) fn base_manifest(
    s: &Scenario,
    kind: StudyKind,
    settings: &RunSettings,
    inputs: Vec<String>,
    points: usize,
) -> Manifest {
    let json = scenario_json(s).to_string();
    Manifest {
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
        max_supply_v: s.supply.voltage_v,
        metric_columns: metric_columns(),
        shard: None,
    }
}

/// Runs a sweep (or one shard of it). `done()` is called after each point.
pub fn sweep(
    s: &Scenario,
    grid: &Grid,
    settings: &RunSettings,
    shard: Option<Shard>,
    done: &(dyn Fn() + Sync),
) -> StudyTable {
    let n = grid.len();
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
    let range = shard.map_or(0..n, |sh| sh.range(n, manifest.chain_len));
    if let Some(sh) = shard {
        manifest.shard = Some(ShardInfo {
            shard: sh,
            first: range.start,
            end: range.end,
        });
    }
    let base = scenario_json(s);
    let results = run_points(
        range,
        settings,
        |k| {
            let sets = grid.point(k);
            let inputs = sets.iter().map(|(_, v)| *v).collect();
            (
                inputs,
                scenario_with(&base, &sets).map_err(|e| format!("invalid point: {e}")),
            )
        },
        done,
    );
    StudyTable {
        manifest,
        rows: results.iter().map(|p| row_value(p, None)).collect(),
    }
}
