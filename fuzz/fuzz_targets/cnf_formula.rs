#![no_main]
libfuzzer_sys::fuzz_target!(|data: &[u8]| sliceplan::fuzzing::cnf_formula(data));
