OPENQASM 2.0;
// 2^20 qubits in a, one more in b: over the 2^20-qubit cap.
qreg a[1048576];
qreg b[1];
U(0,0,0) b[0];
