//! The chopwave command.
fn main() {}
