#![no_main]
libfuzzer_sys::fuzz_target!(|data: &[u8]| sliceplan::fuzzing::einsum_equation(data));
