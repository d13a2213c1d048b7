//! Arbitrary bytes as a model file: the parser must return a model or a diagnostic, never
//! panic, and a diagnostic must render.
#![no_main]

use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        match fieldgrade::plan::parse(Path::new("fuzz.toml"), text) {
            Ok(model) => {
                let _ = model.geometry.validate();
            }
            Err(e) => {
                let _ = e.to_string();
            }
        }
    }
});
