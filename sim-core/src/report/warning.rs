//! The warnings of a run report: [`Warning`], one variant per kind with
//! its figures as typed fields and its words as `Display` (serialised as
//! those words). Defined in [`crate::parts::advice`], below every module
//! that emits one, and re-exported here as part of the report.

pub use crate::parts::advice::{FittedCurve, SupplyEnd, Warning};
