//! Fuzz target: the case-file reader (TOML parse, then validation) must never panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        if let Ok(file) = ebb::core::casefile::CaseFile::parse(text) {
            let _ = file.validate();
            // A parsed file must also write back as TOML without panicking.
            let _ = file.to_toml();
        }
    }
});
