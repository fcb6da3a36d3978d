// Demo circuit for sliceplan: estimate the phase 3/8 of a phase gate on
// target (eigenstate |1>) with three counting qubits, count[0] most
// significant, and an inverse Fourier transform written as a user gate.
// The counting qubits end in |011> exactly. Windows line endings on purpose.
OPENQASM 2.0;
include "qelib1.inc";
qreg count[3];
qreg target[1];
creg c[3];
// Inverse Fourier transform on three qubits, a most significant.
gate iqft3 a, b, c {
  swap a, c;
  h c;
  cp(-pi/2) b, c; h b;
  cp(-pi/4) a, c; cp(-pi/2) a, b; h a;
}
x target[0];
h count;
cp(2*pi*0.375) count[2], target[0];
cp(2*pi*0.375*2) count[1], target[0];
cp(2*pi*0.375*4) count[0], target[0];
iqft3 count[0], count[1], count[2];
measure count -> c;
