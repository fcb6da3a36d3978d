#![no_main]
libfuzzer_sys::fuzz_target!(|data: &[u8]| sliceplan::fuzzing::qasm_circuit(data));
