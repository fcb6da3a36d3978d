OPENQASM 2.0;
include "qelib1.inc";
gate rot(theta) a { rz(phi) a; }
qreg q[1];
rot(0.5) q[0];
