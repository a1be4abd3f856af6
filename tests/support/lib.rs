//! Shared reference circuits for the cross-crate tests and benches.
