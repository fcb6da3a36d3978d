OPENQASM 2.0;
include "qelib1.inc";
qreg q[2];
creg c[80];
if(c==123456789012345678901234567890) x q[0];
