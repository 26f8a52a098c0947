//! Fuzz target: see `consolute_fuzz::region_of_interest` for what is fed and what is checked.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let _ = consolute_fuzz::region_of_interest(data);
});
