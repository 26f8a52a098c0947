//! Fuzz target: see `consolute_fuzz::project_file` for what is fed and what is checked.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    let _ = consolute_fuzz::project_file(data);
});
