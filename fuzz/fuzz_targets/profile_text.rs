//! Arbitrary bytes as a profile file: `parse_profile` must return `Ok` or an error, never panic.
#![no_main]

#[path = "../harness.rs"]
mod harness;

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = harness::profile_text(data);
});
