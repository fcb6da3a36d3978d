OPENQASM 2.0;
include "qelib1.inc";
gate flip a { x b; }
qreg q[1];
flip q[0];
