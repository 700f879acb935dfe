//! libFuzzer target `taxonomy`: see `hedgerow_fuzz::targets::taxonomy`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| hedgerow_fuzz::targets::taxonomy(data));
