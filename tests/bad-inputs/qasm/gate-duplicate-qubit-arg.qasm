OPENQASM 2.0;
include "qelib1.inc";
gate pair a, a { cx a, a; }
qreg q[2];
pair q[0], q[1];
