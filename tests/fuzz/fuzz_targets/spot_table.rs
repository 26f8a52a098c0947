//! Fuzz target: see `consolute_fuzz::spot_table` for what is fed and what is checked.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let _ = consolute_fuzz::spot_table(data);
});
