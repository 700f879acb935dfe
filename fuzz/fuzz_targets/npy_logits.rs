//! libFuzzer target `npy_logits`: see `hedgerow_fuzz::targets::npy_logits`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| hedgerow_fuzz::targets::npy_logits(data));
