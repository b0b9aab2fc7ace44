//! Arbitrary bytes as a capture for every reader `analyze` has, as the JSON manifest beside
//! it, and as the `.npy` and `.h` files `analyze` refuses (see `harness::capture`). Every
//! reader must return values or an error, never panic, and never yield more values than asked
//! for.
#![no_main]

#[path = "../harness.rs"]
mod harness;

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = harness::capture(data);
});
