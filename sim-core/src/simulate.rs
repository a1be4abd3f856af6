//! Old paths of the run driver and the engine seam, kept while the
//! branches of the reshaping merge: the run lives in [`crate::run`], the
//! seam in [`crate::model::seam`].

// reshape shim: the run moved to `crate::run`.
pub use crate::run::drive::{drive, simulate, simulate_with_progress}; // reshape shim
pub use crate::run::result::{EngineKind, FitReport, Progress, RunOptions, SimResult, SteadyInfo}; // reshape shim
pub use crate::run::startup::{startup_transient, STARTUP_SETTLED}; // reshape shim
pub use crate::run::warnings::{DEEP_DCM_IDLE, SELV_LIMIT_V}; // reshape shim
                                                             // reshape shim
pub use crate::model::seam::{
    state_scales, ChatterGuard, CycleEngine, RunStats, MAX_ZERO_INTERVALS,
};
