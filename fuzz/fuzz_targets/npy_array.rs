#![no_main]
libfuzzer_sys::fuzz_target!(|data: &[u8]| sliceplan::fuzzing::npy_array(data));
