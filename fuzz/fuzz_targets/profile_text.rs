//! Arbitrary bytes as a profile file: `parse_profile` must return `Ok` or an error, never panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    let _ = noisewright::profile::parse_profile(&text, "fuzz.toml");
});
