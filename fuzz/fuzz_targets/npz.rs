//! libFuzzer target `npz`: see `hedgerow_fuzz::targets::npz`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| hedgerow_fuzz::targets::npz(data));
