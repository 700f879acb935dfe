//! libFuzzer target `labels`: see `hedgerow_fuzz::targets::labels`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| hedgerow_fuzz::targets::labels(data));
