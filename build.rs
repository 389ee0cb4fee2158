//! Build script: link the release `ebb` binary as a position-dependent executable on
//! GNU/Linux, so that its start-up does not apply ~32,000 load-time relocations (nine in ten
//! from the time-zone tables) and dirty a megabyte of pages on every run; this brings
//! `ebb report` to within twice the start-up of an empty Rust program (docs/performance.md).
//! The cost: the executable's own code is not placed at a random address (shared libraries,
//! stack and heap still are). Debug builds, tests and benches are left as they are.

fn main() {
    println!("cargo:rerun-if-changed=build.rs");
    let var = |k: &str| std::env::var(k).unwrap_or_default();
    if var("CARGO_CFG_TARGET_OS") == "linux"
        && var("CARGO_CFG_TARGET_ENV") == "gnu"
        && var("PROFILE") == "release"
    {
        println!("cargo:rustc-link-arg-bins=-no-pie");
    }
}
