OPENQASM 2.0;
include "qelib1.inc";
qreg q[4];
h q[0];
cx q[3], q[4];
