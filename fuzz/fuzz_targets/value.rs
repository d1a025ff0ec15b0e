//! cargo-fuzz target: the value checks of `fuzz/checks.rs` on each input.
#![no_main]

use libfuzzer_sys::fuzz_target;

#[path = "../checks.rs"]
mod checks;

fuzz_target!(|data: &[u8]| {
    checks::value(data);
});
