OPENQASM 2.0;
include "qelib1.inc";
gate h a { u2(0, pi) a; }
qreg q[1];
h q[0];
