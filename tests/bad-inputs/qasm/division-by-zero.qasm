OPENQASM 2.0;
include "qelib1.inc";
qreg q[1];
rz(pi/0) q[0];
