//! libFuzzer target `profile`: see `hedgerow_fuzz::targets::profile`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| hedgerow_fuzz::targets::profile(data));
