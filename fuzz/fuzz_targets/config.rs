#![no_main]
// Fuzz target: arbitrary text as a run configuration (TOML).
use dwarfbound::pipeline::config::Config;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let _ = Config::from_toml_str(text);
    }
});
