OPENQASM 2.0;
include "qelib1.inc";
qreg q[1];
u3(pi/2, 0) q[0];
