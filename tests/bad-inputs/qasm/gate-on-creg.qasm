OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
creg c[2];
h c[0];
