//! The spread and corners studies: the nominal run that resolves the
//! target current, the manifest, and the samples or corners run in
//! parallel.

use super::sampling::*;
use crate::run::{run_point, RunOptions};
use crate::scenario::Scenario;
use crate::scenario::SpecLimits;
use crate::study::rows::{Manifest, ShardInfo, StudyKind, StudyTable};
use crate::study::run::{Hooks, PointInput, RunSettings, Shard};
use crate::study::sweep::{base_manifest, run_table};
use crate::study::StudyError;

/// What a spread or corners study needs besides the scenario.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpreadSettings {
    /// Monte Carlo samples.
    pub samples: usize,
    /// The seed.
    pub seed: u64,
    /// Engine and warm start (samples start from the nominal design's
    /// steady state when `warm_start` is set).
    pub run: RunSettings,
}

/// The nominal run and the limits with their target resolved.
fn nominal(
    s: &Scenario,
    limits: &SpecLimits,
    run: &RunSettings,
) -> Result<(SpecLimits, RunSettings), StudyError> {
    let r = run_point(
        s,
        &RunOptions {
            engine: run.engine,
            initial_state: run.initial_state,
        },
    )
    .map_err(StudyError::Nominal)?;
    let mut l = *limits;
    if l.target_current_a.is_none() {
        l.target_current_a = Some(r.metrics.led_current_avg_a);
    }
    let mut settings = *run;
    settings.chain_len = 1;
    if run.warm_start {
        settings.initial_state = Some(r.steady.state_at_turn_on);
    }
    Ok((l, settings))
}

fn table(
    s: &Scenario,
    kind: StudyKind,
    params: &[Param],
    points: usize,
    limits: SpecLimits,
    settings: &RunSettings,
    shard: Option<Shard>,
) -> Manifest {
    let mut m = base_manifest(
        s,
        kind,
        settings,
        params.iter().map(|p| p.name.clone()).collect(),
        points,
    );
    m.input_notes = params.iter().map(Param::note).collect();
    m.spec = Some(limits);
    for p in params {
        if let ParamKind::Supply { max_v, .. } = p.kind {
            m.max_supply_v = m.max_supply_v.max(max_v);
        }
        if let ParamKind::Field { path, .. } = &p.kind {
            if path == "supply.voltage_v" {
                m.max_supply_v = m.max_supply_v.max(p.extreme(true));
            }
        }
    }
    if let Some(sh) = shard {
        let range = sh.range(points, 1);
        m.shard = Some(ShardInfo {
            shard: sh,
            first: range.start,
            end: range.end,
        });
    }
    m
}

/// Everything a spread needs before its samples run: the toleranced
/// inputs, the run settings (warm start from the nominal) and the manifest.
fn spread_setup(
    s: &Scenario,
    limits: &SpecLimits,
    settings: &SpreadSettings,
    shard: Option<Shard>,
) -> Result<(Vec<Param>, RunSettings, Manifest), StudyError> {
    let params = params(s)?;
    let (limits, run) = nominal(s, limits, &settings.run)?;
    let mut m = table(
        s,
        StudyKind::Spread,
        &params,
        settings.samples,
        limits,
        &run,
        shard,
    );
    m.seed = Some(settings.seed);
    m.warm_start = settings.run.warm_start;
    Ok((params, run, m))
}

/// The manifest [`spread`] will write, known before any sample runs (it
/// runs the nominal design, which resolves the target current).
pub fn spread_manifest(
    s: &Scenario,
    limits: &SpecLimits,
    settings: &SpreadSettings,
    shard: Option<Shard>,
) -> Result<Manifest, StudyError> {
    spread_setup(s, limits, settings, shard).map(|x| x.2)
}

/// Runs a Monte Carlo spread study (or one shard of it), streaming rows
/// through `hooks`. `limits` are the spec limits to judge (usually the
/// scenario's `spec` with command-line changes); an unset target current
/// becomes the nominal's average.
pub fn spread(
    s: &Scenario,
    limits: &SpecLimits,
    settings: &SpreadSettings,
    shard: Option<Shard>,
    hooks: &Hooks<'_>,
) -> Result<StudyTable, StudyError> {
    let (params, run, manifest) = spread_setup(s, limits, settings, shard)?;
    Ok(run_table(
        manifest,
        &run,
        |k| {
            let x = sample_inputs(&params, settings.seed, k);
            let scenario = scenario_at(s, &params, &x);
            PointInput {
                inputs: x,
                label: None,
                scenario,
            }
        },
        hooks,
    ))
}

/// Most toleranced inputs for a corners study (2ⁿ runs).
pub const MAX_CORNER_INPUTS: usize = 12;

fn corners_setup(
    s: &Scenario,
    limits: &SpecLimits,
    run: &RunSettings,
    shard: Option<Shard>,
) -> Result<(Vec<Param>, RunSettings, Manifest), StudyError> {
    let params = params(s)?;
    if params.len() > MAX_CORNER_INPUTS {
        return Err(StudyError::Scenario {
            path: "tolerances".into(),
            reason: format!(
                "{} toleranced inputs make 2^{} corners; at most {MAX_CORNER_INPUTS} inputs \
                 (use the Monte Carlo spread for more)",
                params.len(),
                params.len()
            ),
        });
    }
    let (limits, settings) = nominal(s, limits, run)?;
    let n = 1usize << params.len();
    let mut m = table(s, StudyKind::Corners, &params, n, limits, &settings, shard);
    m.warm_start = run.warm_start;
    Ok((params, settings, m))
}

/// The manifest [`corners`] will write, known before any corner runs.
pub fn corners_manifest(
    s: &Scenario,
    limits: &SpecLimits,
    run: &RunSettings,
    shard: Option<Shard>,
) -> Result<Manifest, StudyError> {
    corners_setup(s, limits, run, shard).map(|x| x.2)
}

/// Runs every corner: each toleranced input at its low or high extreme
/// (corner `k` has input `j` high when bit `j` of `k` is set), streaming
/// rows through `hooks`.
pub fn corners(
    s: &Scenario,
    limits: &SpecLimits,
    run: &RunSettings,
    shard: Option<Shard>,
    hooks: &Hooks<'_>,
) -> Result<StudyTable, StudyError> {
    let (params, settings, manifest) = corners_setup(s, limits, run, shard)?;
    Ok(run_table(
        manifest,
        &settings,
        |k| {
            let x: Vec<f64> = params
                .iter()
                .enumerate()
                .map(|(j, p)| p.extreme(k >> j & 1 == 1))
                .collect();
            let scenario = scenario_at(s, &params, &x);
            PointInput {
                inputs: x,
                label: Some(corner_label(&params, k)),
                scenario,
            }
        },
        hooks,
    ))
}

/// A corner in words: `inductor.inductance_h low, supply.voltage_v high`.
pub fn corner_label(params: &[Param], k: usize) -> String {
    params
        .iter()
        .enumerate()
        .map(|(j, p)| {
            format!(
                "{} {}",
                p.name,
                if k >> j & 1 == 1 { "high" } else { "low" }
            )
        })
        .collect::<Vec<_>>()
        .join(", ")
}
