//! The built-in profiles: the files of `drug-profiles/`, embedded at build time by file
//! stem, each with its TOML text and the same document as JSON (written by `build.rs`, so
//! that no TOML is parsed for a built-in at run time; empty when `build.rs` could not
//! convert the file).

include!(concat!(env!("OUT_DIR"), "/built_in_profiles.rs"));
