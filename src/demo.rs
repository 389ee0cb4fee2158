//! The built-in demo case: an invented scenario embedded in the binary.

/// The demo case file (TOML), invented for trying the tool out.
pub const DEMO_CASE: &str = include_str!("demo_case.toml");

/// The name shown for the demo case where a file name would be.
pub const DEMO_NAME: &str = "demo";
