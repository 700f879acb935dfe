//! libFuzzer target `objectness`: see `hedgerow_fuzz::targets::objectness`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| hedgerow_fuzz::targets::objectness(data));
