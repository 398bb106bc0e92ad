//! Scenario text and `--set` lines: an error or a model, never a panic.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        // the whole input as a scenario file
        if let Ok(sc) = icefold::Scenario::parse(text, "fuzz", &[]) {
            let _ = sc.model();
        }
        // and its first line as a --set override of the default
        let line = text.lines().next().unwrap_or("").to_string();
        let _ = icefold::Scenario::parse(icefold::io::scenario::DEFAULT_SCENARIO, "fuzz", &[line]);
    }
});
