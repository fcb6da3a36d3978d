OPENQASM 2.0;
include "qelib1.inc";
gate rot(t, t) a { rz(t) a; }
qreg q[1];
rot(0.1, 0.2) q[0];
