//! PNG plots: of a run (the steady-state waveforms, the start-up from
//! power-on, the comparison with a resistor and a linear regulator) and
//! of studies (sweep curves, 2-D maps and the traced CCM/DCM boundary,
//! spread histograms).
//!
//! `canvas` holds everything the plots share (image, font, palette, page
//! head, stacked panels, chart frame and grid, axes and ticks, legend
//! column, PNG writing) so each plot module holds only what it draws.

pub(crate) mod alternatives;
pub(crate) mod canvas;
pub(crate) mod histogram;
pub(crate) mod map;
pub(crate) mod names;
pub(crate) mod sweep;
pub(crate) mod waveform;

pub use alternatives::alternatives_png;
pub use histogram::spread_histograms;
pub use map::{grid_map, MapKind};
pub use sweep::sweep_1d;
pub use waveform::{startup_png, steady_png};
