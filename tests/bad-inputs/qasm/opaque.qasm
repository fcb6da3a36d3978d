OPENQASM 2.0;
include "qelib1.inc";
opaque magic(theta) a, b;
qreg q[2];
magic(0.1) q[0], q[1];
