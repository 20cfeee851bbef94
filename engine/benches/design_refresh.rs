//! Placeholder replaced when the analyses land.
fn main() {}
